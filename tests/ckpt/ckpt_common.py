"""ckpt_common.py - helpers of the checkpoint tests: reduce in the
background, kill -9 the whole mpirun job, read checkpoint headers, and
compare two summaries dataset by dataset with h5py and h5diff."""
import os
import re
import signal
import subprocess
import sys
import time

import numpy as np  # Debian python3-numpy

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "reduce"))
from reduce_common import (CLI, MPIRUN, block_checksums, run,  # noqa: E402,F401
                           synth)

sys.path.insert(0, os.path.join(HERE, "..", "sched"))
# Every dataset and the root attributes but the run's own (created,
# elapsed_seconds, host, reducer_ranks), read with h5py.
from h5summary import items as datasets  # noqa: E402


def reduce_argv(nprocs, camp, out, *extra):
    """The reduce command under mpirun -np NPROCS, notes on (no --quiet)."""
    return MPIRUN + ["-np", str(nprocs), CLI, "reduce", camp, "-o", out] + \
        list(extra)


def ours(text):
    """Our lines of stderr (mpirun adds its own notes on failures)."""
    return [l for l in text.splitlines()
            if l.startswith("msgcensus") or l.startswith("reduce:")]


def big_campaign(path, steps=None):
    """About 170 MB in blocks of 4 records: some seconds of reading with 2
    ranks, and hundreds of thousands of blocks per file."""
    steps = steps or os.environ.get("MC_CKPT_STEPS", "24000")
    synth(path, "--ranks", "8", "--steps", str(steps), "--block-records", "4")


def ckpt_files(d):
    """Finished checkpoint files of directory D (sorted)."""
    if not os.path.isdir(d):
        return []
    return sorted(f for f in os.listdir(d)
                  if f.startswith("mcck-") and f.endswith(".ckpt"))


def ckpt_temps(d):
    if not os.path.isdir(d):
        return []
    return sorted(f for f in os.listdir(d)
                  if f.startswith(".mcck-") and ".tmp-" in f)


def ckpt_source(path):
    """The campaign file name recorded in a checkpoint header
    (docs/summary-format.md, "Checkpoints": u32 length at offset 76, the
    name from offset 80)."""
    with open(path, "rb") as f:
        head = f.read(80)
        assert head[:8] == b"MCCKUNIT", path
        n = int.from_bytes(head[76:80], "little")
        return f.read(n).decode()


def _job_pids(marker):
    """Processes whose command line holds MARKER (our unique paths)."""
    pids = []
    for d in os.listdir("/proc"):
        if not d.isdigit() or int(d) == os.getpid():
            continue
        try:
            with open("/proc/%s/cmdline" % d, "rb") as f:
                cmd = f.read().replace(b"\0", b" ").decode(errors="replace")
        except OSError:
            continue
        if marker in cmd and "msgcensus" in cmd:
            pids.append(int(d))
    return pids


def reading(marker, camp):
    """True while a process of the job (MARKER on its command line) holds a
    file of the campaign directory CAMP open: the reading phase."""
    camp = os.path.realpath(camp) + "/"
    for pid in _job_pids(marker):
        try:
            fds = os.listdir("/proc/%d/fd" % pid)
        except OSError:
            continue
        for fd in fds:
            try:
                if os.readlink("/proc/%d/fd/%s" % (pid, fd)).startswith(camp):
                    return True
            except OSError:
                pass
    return False


def start(argv, log):
    """Start ARGV in its own session, output to LOG."""
    f = open(log, "w")
    return subprocess.Popen(argv, stdout=f, stderr=subprocess.STDOUT,
                            start_new_session=True), f


def kill9(proc, logf, marker):
    """SIGKILL the job's ranks (the processes with MARKER on their command
    line) at once, then mpirun's process group, then whatever of the job is
    left (Open MPI may start ranks in their own group); wait until no
    process with MARKER on its command line is left."""
    for pid in _job_pids(marker):
        try:
            os.kill(pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except ProcessLookupError:
        pass
    proc.wait()
    logf.close()
    for _ in range(200):
        left = _job_pids(marker)
        if not left:
            return
        for pid in left:
            try:
                os.kill(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
        time.sleep(0.05)
    raise AssertionError("processes of the killed job remain: %s"
                         % _job_pids(marker))


def wait_for(cond, proc, what, timeout=120.0):
    """Poll COND every 10 ms while PROC runs; fail if PROC ends first."""
    t0 = time.time()
    while not cond():
        if proc.poll() is not None:
            raise AssertionError("the run ended (%d) before %s; make the "
                                 "campaign bigger (MC_CKPT_STEPS)"
                                 % (proc.returncode, what))
        if time.time() - t0 > timeout:
            raise AssertionError("no %s after %.0f s" % (what, timeout))
        time.sleep(0.01)


def kill_after_checkpoints(argv, ck, log, marker, at_least=3):
    """Run ARGV until CK holds AT_LEAST checkpoint files, kill -9 it, and
    return the checkpoint files left."""
    proc, f = start(argv, log)
    wait_for(lambda: len(ckpt_files(ck)) >= at_least, proc,
             "%d checkpoint files" % at_least)
    kill9(proc, f, marker)
    return ckpt_files(ck)


def resumed(stderr):
    """(N, M) of the 'resumed: N of M units from checkpoint' note."""
    m = re.search(r"resumed: (\d+) of (\d+) units from checkpoint", stderr)
    assert m, stderr
    return int(m.group(1)), int(m.group(2))


def assert_same_summary(ref, got):
    """Every dataset (name, dtype, shape, values) and every root attribute
    but the run's own are identical (h5py), and h5diff finds no difference
    in any top-level object (HDF5's own comparison tool, hdf5-tools)."""
    da, aa = datasets(ref)
    db, ab = datasets(got)
    tops = sorted({name.split("/")[0] for name in da})
    assert sorted(da) == sorted(db), (sorted(set(da) ^ set(db)))
    for name in da:
        x, y = da[name], db[name]
        assert x.dtype == y.dtype and x.shape == y.shape, name
        assert np.array_equal(x, y), "dataset %s differs" % name
    assert sorted(aa) == sorted(ab)
    for k in aa:
        assert np.array_equal(np.asarray(aa[k]), np.asarray(ab[k])), k
    for top in tops:
        p = subprocess.run(["h5diff", ref, got, "/" + top, "/" + top],
                           capture_output=True, text=True)
        assert p.returncode == 0, "h5diff /%s: %s%s" % (top, p.stdout,
                                                        p.stderr)
    return len(da)
