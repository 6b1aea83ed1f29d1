#!/usr/bin/python3
"""reduce_safety.py - output safety and damage handling of 'msgcensus reduce'.

  overwrite  an existing summary is never replaced without --force (exit 1,
             file untouched); with --force it is replaced.
  damaged    a damaged block stops the run on every rank (P = 1, 2, 3):
             exit 1, one message naming the file, block and offset, no file
             at the target and no temporary file left.
  skip       --skip-damaged counts exactly: records = clean total minus the
             damaged block's records (from its block header), rejected =
             those records, and the sources table lists the skipped block.
The summaries are read with h5py (Debian python3-h5py).
"""
import hashlib
import os
import re
import sys
import tempfile

import h5py  # Debian python3-h5py

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from reduce_common import (blocks_of, campaign_files, flip_byte, reduce_cmd,
                           records_of_file, run, synth)


def ours(stderr):
    """Our lines of stderr (mpirun adds its own note on a non-zero exit)."""
    return [l for l in stderr.splitlines() if l.startswith("msgcensus")]


def sha(path):
    return hashlib.sha256(open(path, "rb").read()).hexdigest()


def test_overwrite(tmp):
    camp = os.path.join(tmp, "c")
    synth(camp, "--ranks", "2", "--steps", "5")
    out = os.path.join(tmp, "s.h5")
    with open(out, "w") as f:
        f.write("precious\n")
    before = sha(out)
    for p in (0, 2):
        r = run(reduce_cmd(p, camp, "-o", out), check=False)
        assert r.returncode == 1, (p, r.returncode, r.stderr)
        assert "output exists" in r.stderr and "--force" in r.stderr, r.stderr
        assert len(ours(r.stderr)) == 1, r.stderr
        assert sha(out) == before, "existing file was modified"
    run(reduce_cmd(2, camp, "-o", out, "--force"))
    with h5py.File(out, "r") as h:
        assert h.attrs["format_name"] == "msgcensus-summary"
    assert not [f for f in os.listdir(tmp) if ".tmp-" in f]


def damaged_campaign(tmp):
    camp = os.path.join(tmp, "d")
    synth(camp, "--ranks", "4", "--steps", "40", "--block-records", "32")
    files = campaign_files(camp)
    clean = sum(records_of_file(os.path.join(camp, f)) for f in files)
    victim = os.path.join(camp, files[1])
    blocks = blocks_of(victim)
    assert len(blocks) >= 3
    off, nrec, stored = blocks[2]
    flip_byte(victim, off + 40 + stored // 2)  # inside block 2's payload
    return camp, files[1], off, nrec, clean


def test_damaged(tmp):
    camp, victim, off, _, _ = damaged_campaign(tmp)
    out = os.path.join(tmp, "s.h5")
    for p in (0, 1, 2, 3):
        r = run(reduce_cmd(p, camp, "-o", out), check=False)
        assert r.returncode == 1, (p, r.returncode, r.stderr)
        lines = ours(r.stderr)
        assert len(lines) == 1, r.stderr
        assert re.search(r"%s: block 2 at offset %d: block checksum mismatch"
                         % (re.escape(victim), off), lines[0]), lines[0]
        assert not os.path.exists(out), "partial summary left at the target"
        assert not [f for f in os.listdir(tmp) if ".tmp-" in f], os.listdir(tmp)


def test_skip(tmp):
    camp, victim, _, nrec, clean = damaged_campaign(tmp)
    for p in (1, 3):
        out = os.path.join(tmp, "k%d.h5" % p)
        run(reduce_cmd(p, camp, "-o", out, "--skip-damaged"))
        with h5py.File(out, "r") as h:
            assert int(h.attrs["records_read"]) == clean - nrec
            assert int(h.attrs["records_rejected"]) == nrec
            src = {r["path"].decode() if isinstance(r["path"], bytes)
                   else r["path"]: r for r in h["sources"][...]}
            row = src[victim]
            assert int(row["skipped_blocks"]) == 1
            assert int(row["skipped_records"]) == nrec
            status = row["status"]
            status = status.decode() if isinstance(status, bytes) else status
            assert status.startswith("skipped: 1 block(s)") and "block 2" in status, status
            for name, r in src.items():
                if name != victim:
                    assert r["status"] in (b"ok", "ok"), (name, r["status"])
            total = int(h["populations/all/hist_counts"][...].sum()) + \
                int(h["populations/p2p_recv/hist_counts"][...].sum())
            assert total == clean - nrec


def main():
    with tempfile.TemporaryDirectory() as tmp:
        {"overwrite": test_overwrite, "damaged": test_damaged,
         "skip": test_skip}[sys.argv[1]](tmp)
    return 0


if __name__ == "__main__":
    sys.exit(main())
