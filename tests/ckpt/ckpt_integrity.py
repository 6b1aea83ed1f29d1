#!/usr/bin/python3
"""ckpt_integrity.py - what a failed or killed reduce leaves at the output
path, and the per-source checksum of the summary.

  kill_read   kill -9 of 'mpirun -np 2 msgcensus reduce' while it reads:
              no file at the target and no temporary file; the next run
              writes the summary.
  kill_write  kill -9 while rank 0 writes the summary (the moment its
              temporary file '.NAME.tmp-HOST-PID' appears; tried again
              when the kill lands after the rename): no file at the
              target, only that recognisable temporary file; the next run
              removes it, says so, keeps a temporary file of another host,
              and writes a complete summary (2 M distinct sizes in 'all',
              read back with h5py).
  checksum    the sources table has a checksum per file equal to
              'xxhsum -H1' (Debian xxhash) over the block checksums taken
              from the block headers; a trace rewritten with one record
              changed by one byte gets another checksum (and again the
              reference value), the other files keep theirs, and the same
              records rewritten unchanged keep it.
  usage       bad values of --max-memory / --checkpoint-unit / --checkpoint
              are usage errors (exit 2); --help lists the options.
"""
import os
import re
import shutil
import socket
import subprocess
import sys
import tempfile

import h5py  # Debian python3-h5py
import numpy as np  # Debian python3-numpy

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from ckpt_common import (CLI, assert_same_summary, big_campaign,  # noqa: E402
                         block_checksums, kill9, reading, reduce_argv, run,
                         start, wait_for)


def temps_of(outdir, base):
    return sorted(f for f in os.listdir(outdir)
                  if f.startswith("." + base + ".tmp-"))


def test_kill_read(tmp):
    camp = os.path.join(tmp, "big")
    big_campaign(camp)
    outdir = os.path.join(tmp, "out")
    os.mkdir(outdir)
    out = os.path.join(outdir, "s.h5")
    proc, f = start(reduce_argv(2, camp, out, "--quiet"),
                    os.path.join(tmp, "kill.log"))
    # Killed while a rank has a trace file of the campaign open.
    wait_for(lambda: reading(out, camp), proc, "a rank reading the campaign")
    kill9(proc, f, out)
    left = os.listdir(outdir)
    assert left == [], "after kill -9 while reading: %s" % left
    run(reduce_argv(2, camp, out, "--quiet"))
    ref = os.path.join(tmp, "ref.h5")
    run(reduce_argv(3, camp, ref, "--quiet"))
    nd = assert_same_summary(ref, out)
    assert os.listdir(outdir) == ["s.h5"], os.listdir(outdir)
    print("killed while reading: nothing at the target, no temporary file; "
          "rerun: %d datasets as a clean run" % nd)


def test_kill_write(tmp, gen):
    camp = os.path.join(tmp, "distinct")
    os.mkdir(camp)
    n = 2_000_000
    run([gen, camp, "2", str(n)])
    outdir = os.path.join(tmp, "out")
    os.mkdir(outdir)
    out = os.path.join(outdir, "w.h5")
    # The summary (32 MB here) is written and made durable in one piece
    # once it is complete in memory, so the temporary file lives for tens
    # of milliseconds; a kill that comes after the rename is tried again.
    for attempt in range(1, 6):
        proc, f = start(reduce_argv(2, camp, out, "--quiet"),
                        os.path.join(tmp, "kill.log"))
        wait_for(lambda: temps_of(outdir, "w.h5"), proc,
                 "the temporary summary file")
        kill9(proc, f, out)
        if not os.path.exists(out):
            break
        print("attempt %d: the kill came after the rename; again" % attempt)
        for name in os.listdir(outdir):
            os.unlink(os.path.join(outdir, name))
    left = sorted(os.listdir(outdir))
    assert not os.path.exists(out), "summary at the target after every kill"
    host = "".join(c if c.isascii() and (c.isalnum() or c in "._-") else "_"
                   for c in socket.gethostname())[:64]
    assert len(left) == 1 and re.fullmatch(
        r"\.w\.h5\.tmp-%s-\d+" % re.escape(host), left[0]), left
    # A leftover of another host is not this host's to judge: kept.
    foreign = os.path.join(outdir, ".w.h5.tmp-other-host.example-1")
    open(foreign, "w").close()
    r = run(reduce_argv(2, camp, out))
    assert "removed 1 temporary file(s) of an interrupted run: %s/%s" \
        % (outdir, left[0]) in r.stderr, r.stderr
    assert sorted(os.listdir(outdir)) == sorted(
        ["w.h5", os.path.basename(foreign)]), os.listdir(outdir)
    with h5py.File(out, "r") as h:
        sizes = h["populations/all/hist_sizes"][...]
        counts = h["populations/all/hist_counts"][...]
    assert len(sizes) == n and np.all(counts == 1), (len(sizes), counts.max())
    print("killed while writing (attempt %d): only %s left (never the "
          "target); the rerun removed it and wrote %d distinct sizes"
          % (attempt, left[0], len(sizes)))


def xxhsum_of_blocks(path, scratch):
    """The summary's per-file checksum, computed outside the project:
    xxhsum -H1 (XXH64) over the raw_xxh64 fields of the block headers."""
    with open(scratch, "wb") as f:
        f.write(b"".join(block_checksums(path)))
    out = subprocess.run(["xxhsum", "-H1", scratch], capture_output=True,
                         text=True, check=True).stdout
    return int(out.split()[0], 16)


def source_sums(summary):
    with h5py.File(summary, "r") as h:
        t = h["sources"][...]
        assert "checksum" in t.dtype.names, t.dtype
    return {(r["path"].decode() if isinstance(r["path"], bytes)
             else r["path"]): int(r["checksum"]) for r in t}


def rewrite(camp, name, csv_text, tmp):
    src = os.path.join(tmp, "edit.csv")
    with open(src, "w") as f:
        f.write(csv_text)
    run([CLI, "import", "-q", src, "-o", os.path.join(camp, name),
         "--block-records", "64", "--force"])
    run([CLI, "verify", "-q", os.path.join(camp, name)])


def test_checksum(tmp):
    camp = os.path.join(tmp, "c")
    run([CLI, "synth", "-q", "-o", camp, "--ranks", "4", "--steps", "50",
         "--block-records", "64"])
    names = sorted(f for f in os.listdir(camp) if f.endswith(".mct"))
    scratch = os.path.join(tmp, "sums.bin")
    s0 = os.path.join(tmp, "s0.h5")
    run(reduce_argv(2, camp, s0, "--quiet"))
    sums0 = source_sums(s0)
    assert sorted(sums0) == names
    for nm in names:
        assert sums0[nm] == xxhsum_of_blocks(os.path.join(camp, nm), scratch), nm
    victim = names[1]
    text = run([CLI, "export", os.path.join(camp, victim)]).stdout
    # The same records rewritten: the same checksum.
    rewrite(camp, victim, text, tmp)
    s1 = os.path.join(tmp, "s1.h5")
    run(reduce_argv(2, camp, s1, "--quiet"))
    assert source_sums(s1) == sums0
    # One record one byte larger (the 'bytes' column of the 20th record).
    lines = text.splitlines(keepends=True)
    head = [i for i, l in enumerate(lines) if l.startswith("op,")][0]
    cols = lines[head].strip().split(",")
    j = head + 20
    row = lines[j].rstrip("\n").split(",")
    k = cols.index("bytes")
    row[k] = str(int(row[k]) + 1)
    lines[j] = ",".join(row) + "\n"
    rewrite(camp, victim, "".join(lines), tmp)
    s2 = os.path.join(tmp, "s2.h5")
    run(reduce_argv(3, camp, s2, "--quiet"))
    sums2 = source_sums(s2)
    assert sums2[victim] != sums0[victim], "checksum did not change"
    assert sums2[victim] == xxhsum_of_blocks(os.path.join(camp, victim),
                                             scratch)
    for nm in names:
        if nm != victim:
            assert sums2[nm] == sums0[nm], nm
    print("checksums equal xxhsum -H1 of the block checksums; one byte of "
          "one record of %s: %016x -> %016x, other files unchanged"
          % (victim, sums0[victim], sums2[victim]))


def test_usage(tmp):
    """Bad option values are usage errors (exit 2), before MPI starts."""
    for args, what in ((["--max-memory", "0"], "--max-memory needs a positive"),
                       (["--max-memory", "2GB"], "--max-memory needs a positive"),
                       (["--max-memory"], "--max-memory needs a positive"),
                       (["--checkpoint-unit", "4MiB"], "needs --checkpoint"),
                       (["--checkpoint"], "--checkpoint needs a directory")):
        r = run([CLI, "reduce", tmp, "-o", os.path.join(tmp, "s.h5")] + args,
                check=False)
        assert r.returncode == 2, (args, r.returncode, r.stderr)
        assert what in r.stderr, (args, r.stderr)
    h = run([CLI, "reduce", "--help"]).stdout
    for opt in ("--checkpoint DIR", "--checkpoint-unit SIZE",
                "--max-memory SIZE"):
        assert opt in h, opt
    print("usage errors: exit 2 with the option named; --help lists the "
          "options")


def main():
    if len(sys.argv) < 2 or sys.argv[1] not in ("kill_read", "kill_write",
                                                "checksum", "usage"):
        print("usage: ckpt_integrity.py kill_read|kill_write GEN|checksum|"
              "usage", file=sys.stderr)
        return 2
    tmp = tempfile.mkdtemp(prefix="integrity-%s-" % sys.argv[1],
                           dir=os.getcwd())
    try:
        if sys.argv[1] == "kill_read":
            test_kill_read(tmp)
        elif sys.argv[1] == "kill_write":
            test_kill_write(tmp, sys.argv[2])
        elif sys.argv[1] == "usage":
            test_usage(tmp)
        else:
            test_checksum(tmp)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
