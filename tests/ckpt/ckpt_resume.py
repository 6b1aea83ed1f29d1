#!/usr/bin/python3
"""ckpt_resume.py - 'msgcensus reduce --checkpoint DIR' killed with SIGKILL
midway under mpirun and started again.

  same_p    killed at P = 2 once 3 checkpoints exist, restarted at P = 2:
            every checkpoint left is used ("resumed: K of M"), no summary
            and no temporary file exist after the kill, and the summary is
            identical in every dataset to an uninterrupted run without
            checkpoint (h5py and h5diff); the directory is removed after.
  other_p   killed at P = 2, restarted at P = 3; killed at P = 4, restarted
            at P = 1: units do not depend on P, so every checkpoint is used.
  stale     after the kill one campaign file gets a new modification time
            and another one other contents (another size): a warning names
            each file, exactly their checkpoints are dropped, and the
            summary equals an uninterrupted run on the changed campaign.
  damaged   after the kill one checkpoint gets a flipped byte, one is cut
            to 40 bytes, a temporary file of a killed writer and a foreign
            file are added: the two are redone with a warning, the
            temporary file is removed, the foreign file stays (and with it
            the directory), and the summary is identical.
  options   checkpoints written without --per-comm are not used by a run
            with --per-comm (other options), which equals its reference.
  unwritable  a checkpoint path that is a file is refused (exit 1, nothing
            written); a checkpoint directory removed during the run makes
            the later saves fail: one warning, a count at the end, and the
            run completes with the identical summary.
Each reference summary comes from a run without --checkpoint, i.e. from the
fair-share plan of plan.c, so the comparison also shows that the fixed-size
units of checkpointed runs give the same datasets.
"""
import os
import re
import shutil
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from ckpt_common import (assert_same_summary, big_campaign, ckpt_files,  # noqa: E402
                         ckpt_source, ckpt_temps, kill_after_checkpoints,
                         ours, reduce_argv, resumed, run, start, synth,
                         wait_for)

UNIT = ["--checkpoint-unit", "4MiB"]


def reference(camp, out, nprocs=2, *extra):
    run(reduce_argv(nprocs, camp, out, "--quiet", *extra))


def check_killed_state(tmp, out, ck, left):
    assert left, "no checkpoint survived the kill"
    assert not os.path.exists(out), "summary exists after the kill"
    outdir = os.path.dirname(out)
    stray = [f for f in os.listdir(outdir) if ".tmp-" in f]
    assert not stray, "temporary summary left after a kill while reading: %s" \
        % stray


def killed_run(tmp, camp, at_least=3, *extra):
    """A P = 2 run with checkpoints, killed once AT_LEAST exist:
    (target, checkpoint directory, checkpoint files left)."""
    out = os.path.join(tmp, "out.h5")
    ck = os.path.join(tmp, "ck")
    left = kill_after_checkpoints(reduce_argv(2, camp, out, "--checkpoint",
                                              ck, *UNIT, *extra),
                                  ck, os.path.join(tmp, "kill.log"), marker=ck,
                                  at_least=at_least)
    check_killed_state(tmp, out, ck, left)
    return out, ck, left


def kill_resume(tmp, camp, ref, p_kill, p_resume, tag):
    out = os.path.join(tmp, "out-%s.h5" % tag)
    ck = os.path.join(tmp, "ck-%s" % tag)
    left = kill_after_checkpoints(reduce_argv(p_kill, camp, out,
                                              "--checkpoint", ck, *UNIT),
                                  ck, os.path.join(tmp, "kill-%s.log" % tag),
                                  marker=ck)
    check_killed_state(tmp, out, ck, left)
    r = run(reduce_argv(p_resume, camp, out, "--checkpoint", ck, *UNIT))
    n, m = resumed(r.stderr)
    # Every checkpoint the kill left is complete (atomic rename), and the
    # units do not depend on P: all of them are used.
    assert n == len(left), (n, len(left), r.stderr)
    assert 0 < n < m, (n, m)
    nd = assert_same_summary(ref, out)
    assert not os.path.exists(ck), "checkpoint directory left after success"
    assert "removed %d checkpoint file(s) and the directory" % m in r.stderr, \
        r.stderr
    print("P=%d killed with %d of %d units saved, P=%d resumed: %d datasets "
          "identical" % (p_kill, n, m, p_resume, nd))


def test_same_p(tmp, camp, ref):
    kill_resume(tmp, camp, ref, 2, 2, "same")


def test_other_p(tmp, camp, ref):
    kill_resume(tmp, camp, ref, 2, 3, "2to3")
    kill_resume(tmp, camp, ref, 4, 1, "4to1")


def test_stale(tmp, camp, ref):
    out, ck, left = killed_run(tmp, camp, 15)
    by_file = {}
    for c in left:
        by_file.setdefault(ckpt_source(os.path.join(ck, c)), []).append(c)
    assert len(by_file) >= 3, "checkpoints of only %s" % sorted(by_file)
    touched, replaced = sorted(by_file)[:2]
    # New modification time, same bytes.
    p = os.path.join(camp, touched)
    st = os.stat(p)
    os.utime(p, ns=(st.st_atime_ns, st.st_mtime_ns + 1_000_000_000))
    # Other contents: the same rank from a shorter run.
    other = os.path.join(tmp, "short")
    synth(other, "--ranks", "8", "--steps", "30", "--block-records", "4")
    old_size = os.path.getsize(os.path.join(camp, replaced))
    shutil.copyfile(os.path.join(other, replaced), os.path.join(camp, replaced))
    new_size = os.path.getsize(os.path.join(camp, replaced))
    ref2 = os.path.join(tmp, "ref-changed.h5")
    reference(camp, ref2)
    r = run(reduce_argv(2, camp, out, "--checkpoint", ck, *UNIT))
    warn = [l for l in ours(r.stderr) if "warning" in l]
    assert any("%s/%s changed since its checkpoints were written "
               "(modification time changed); %d checkpoint(s) discarded"
               % (camp, touched, len(by_file[touched])) in l for l in warn), \
        r.stderr
    assert any("%s/%s changed since its checkpoints were written (size %d -> "
               "%d bytes); %d checkpoint(s) discarded"
               % (camp, replaced, old_size, new_size, len(by_file[replaced]))
               in l for l in warn), r.stderr
    n, m = resumed(r.stderr)
    assert n == len(left) - len(by_file[touched]) - len(by_file[replaced]), \
        (n, len(left), r.stderr)
    assert n > 0, "no checkpoint of an unchanged file was used"
    nd = assert_same_summary(ref2, out)
    print("changed %s (mtime) and %s (size %d -> %d): %d + %d checkpoints "
          "dropped, %d resumed, %d datasets identical"
          % (touched, replaced, old_size, new_size, len(by_file[touched]),
             len(by_file[replaced]), n, nd))


def test_damaged(tmp, camp, ref):
    out, ck, left = killed_run(tmp, camp, 4)
    temps = ckpt_temps(ck)
    flipped, cut = os.path.join(ck, left[0]), os.path.join(ck, left[1])
    size = os.path.getsize(flipped)
    with open(flipped, "r+b") as f:
        f.seek(size // 2)
        b = f.read(1)
        f.seek(size // 2)
        f.write(bytes([b[0] ^ 0x01]))
    os.truncate(cut, 40)
    with open(os.path.join(ck, ".mcck-0123456789abcdef.ckpt.tmp-999999"),
              "wb") as f:
        f.write(b"MCCKUNIT half written")
    with open(os.path.join(ck, "notes.txt"), "w") as f:
        f.write("not a checkpoint\n")
    r = run(reduce_argv(2, camp, out, "--checkpoint", ck, *UNIT))
    lines = ours(r.stderr)
    assert any("checkpoint unusable, reading its unit again" in l and
               left[0] in l and "block checksum mismatch" in l
               for l in lines), r.stderr
    assert any("checkpoint damaged, removed" in l and left[1] in l
               for l in lines), r.stderr
    assert "removed %d unfinished temporary file(s)" % (len(temps) + 1) \
        in r.stderr, r.stderr
    n, m = resumed(r.stderr)
    assert n == len(left) - 2, (n, len(left))
    nd = assert_same_summary(ref, out)
    assert sorted(os.listdir(ck)) == ["notes.txt"], os.listdir(ck)
    assert "holds other files and stays" in r.stderr, r.stderr
    print("%d checkpoints, 1 flipped byte, 1 cut, %d temporary file(s): %d "
          "resumed, %d datasets identical" % (len(left), len(temps) + 1, n, nd))


def test_options(tmp, camp, ref):
    out, ck, left = killed_run(tmp, camp)
    ref_pc = os.path.join(tmp, "ref-per-comm.h5")
    reference(camp, ref_pc, 2, "--per-comm")
    r = run(reduce_argv(2, camp, out, "--checkpoint", ck, "--per-comm", *UNIT))
    assert "%d checkpoint(s) of this campaign were written with other options" \
        % len(left) in r.stderr, r.stderr
    n, _ = resumed(r.stderr)
    assert n == 0, r.stderr
    nd = assert_same_summary(ref_pc, out)
    print("%d checkpoints without --per-comm ignored by --per-comm: %d "
          "datasets identical" % (len(left), nd))


def test_unwritable(tmp, camp, ref):
    out = os.path.join(tmp, "out.h5")
    ck = os.path.join(tmp, "ck")
    # A checkpoint path that is a file: refused before any work.
    with open(os.path.join(tmp, "plain"), "w") as f:
        f.write("x\n")
    r = run(reduce_argv(2, camp, out, "--checkpoint",
                        os.path.join(tmp, "plain")), check=False)
    assert r.returncode == 1, r.returncode
    assert "checkpoint path is not a directory" in r.stderr, r.stderr
    assert not os.path.exists(out)
    # The directory disappears while the run saves units: every later save
    # fails; the run warns, goes on, and its summary is exact.
    proc, f = start(reduce_argv(2, camp, out, "--checkpoint", ck, *UNIT),
                    os.path.join(tmp, "run.log"))
    wait_for(lambda: len(ckpt_files(ck)) >= 2, proc, "2 checkpoint files")
    # Moved away in one step (a save landing during a recursive delete
    # would make it fail), then deleted.
    os.rename(ck, ck + ".gone")
    shutil.rmtree(ck + ".gone")
    assert proc.wait() == 0, open(os.path.join(tmp, "run.log")).read()
    f.close()
    text = open(os.path.join(tmp, "run.log")).read()
    assert "msgcensus: warning: checkpoint not saved (the run goes on" in text, \
        text
    m = re.search(r"checkpoint: (\d+) unit\(s\) could not be saved", text)
    assert m and int(m.group(1)) >= 1, text
    nd = assert_same_summary(ref, out)
    assert not os.path.exists(ck)
    print("checkpoint path a file: refused (exit 1); directory removed "
          "midway: %s units not saved, %d datasets identical"
          % (m.group(1), nd))


TESTS = {"same_p": test_same_p, "unwritable": test_unwritable, "other_p": test_other_p, "stale": test_stale,
         "damaged": test_damaged, "options": test_options}


def main():
    if len(sys.argv) != 2 or sys.argv[1] not in TESTS:
        print("usage: ckpt_resume.py {%s}" % ",".join(TESTS), file=sys.stderr)
        return 2
    # The campaign (about 170 MB) lives in the build directory and goes
    # when the test ends, passed or not.
    tmp = tempfile.mkdtemp(prefix="ckpt-%s-" % sys.argv[1], dir=os.getcwd())
    try:
        camp = os.path.join(tmp, "big")
        big_campaign(camp)
        ref = os.path.join(tmp, "ref.h5")
        reference(camp, ref)
        TESTS[sys.argv[1]](tmp, camp, ref)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
