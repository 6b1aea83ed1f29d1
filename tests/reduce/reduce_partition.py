#!/usr/bin/python3
"""reduce_partition.py - the partition plan under 1..7 reducer ranks.

  totals     every record is counted exactly once: for P = 1..7 on a very
             uneven campaign the summary's record total and per-file counts
             equal the counts read from the block headers with NumPy-free
             byte parsing (docs/trace-format.md), and files are split.
  identical  every dataset of the summary is bit-identical for P = 1, 2, 3,
             4 and 7 (compared with h5py, Debian python3-h5py), on a zstd
             campaign without footers (block-walk splitting) with
             per-communicator populations.
  formats    the same campaign written in trace formats 1.0 (XXH64 block
             checksums) and 2.0 (XXH3) reduces, at P = 1 and 3, to the same
             datasets but the files' checksums, and each file's checksum is
             `xxhsum -H1` (Debian xxhash) over its stored block checksums.
"""
import os
import subprocess
import sys
import tempfile

import h5py  # Debian python3-h5py
import numpy as np  # Debian python3-numpy

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from reduce_common import (block_checksums, campaign_files, datasets,
                           reduce_cmd, records_of_file, run, same, synth)


def test_totals(tmp):
    camp = os.path.join(tmp, "uneven")
    synth(camp, "--ranks", "6", "--steps", "40", "--uneven",
          "--block-records", "128")
    files = campaign_files(camp)
    # Independent count: the nrecords fields of the block headers.
    expect = {f: records_of_file(os.path.join(camp, f)) for f in files}
    total = sum(expect.values())
    sizes = [os.path.getsize(os.path.join(camp, f)) for f in files]
    assert max(sizes) > 4 * min(sizes), "campaign is not uneven: %s" % sizes
    for p in range(1, 8):
        out = os.path.join(tmp, "t%d.h5" % p)
        r = run(reduce_cmd(p, camp, "-o", out, "--verbose", "--quiet"))
        with h5py.File(out, "r") as h:
            got = int(h.attrs["records_read"])
            assert got == total, "P=%d: %d records, expected %d" % (p, got, total)
            assert int(h.attrs["records_rejected"]) == 0
            src = h["sources"][...]
            for row in src:
                name = row["path"].decode() if isinstance(row["path"], bytes) \
                    else row["path"]
                assert int(row["records"]) == expect[name], (p, name)
            hist_total = int(h["populations/all/hist_counts"][...].sum()) + \
                int(h["populations/p2p_recv/hist_counts"][...].sum())
            assert hist_total == total, (p, hist_total, total)
        print("P=%d: %d records" % (p, got))
    # With 7 ranks on 6 uneven files the largest files must be split.
    r = run(reduce_cmd(7, camp, "-o", os.path.join(tmp, "v.h5"), "--verbose"))
    line = [l for l in r.stderr.splitlines() if "files split" in l]
    assert line, r.stderr
    nsplit = int(line[0].split(" units, ")[1].split()[0])
    assert nsplit >= 1, line[0]


def test_formats(tmp):
    args = ["--ranks", "4", "--steps", "40", "--uneven", "--block-records",
            "200"]
    camps = {}
    for fmt in ("1", "2"):
        camps[fmt] = os.path.join(tmp, "f" + fmt)
        synth(camps[fmt], *args, "--trace-format", fmt)
        for f in campaign_files(camps[fmt]):
            with open(os.path.join(camps[fmt], f), "rb") as fh:
                assert fh.read(10)[8:10] == bytes([int(fmt), 0]), (fmt, f)
    ref = None
    for fmt in ("1", "2"):
        for p in (1, 3):
            out = os.path.join(tmp, "f%s-%d.h5" % (fmt, p))
            run(reduce_cmd(p, camps[fmt], "-o", out, "--per-comm"))
            d = datasets(out)
            src = d.pop("sources")
            for row in src:
                name = row["path"].decode() if isinstance(row["path"], bytes) \
                    else row["path"]
                seq = os.path.join(tmp, "sums.bin")
                with open(seq, "wb") as fh:
                    fh.write(b"".join(block_checksums(
                        os.path.join(camps[fmt], name))))
                want = subprocess.run(["xxhsum", "-H1", seq],
                                      capture_output=True, text=True,
                                      check=True).stdout.split()[0]
                assert format(int(row["checksum"]), "016x") == want, name
            if ref is None:
                ref, ref_src = d, src
                continue
            assert sorted(d) == sorted(ref), (fmt, p)
            for k in ref:
                assert same(ref[k], d[k]), (fmt, p, k)
            for n in src.dtype.names:
                if n != "checksum":
                    assert src[n].tolist() == ref_src[n].tolist(), (fmt, p, n)
            if fmt == "2":
                assert (src["checksum"] != ref_src["checksum"]).all()
            print("format %s, P=%d: %d datasets identical to format 1, P=1"
                  % (fmt, p, len(d)))


def test_identical(tmp):
    camp = os.path.join(tmp, "zc")
    synth(camp, "--ranks", "5", "--steps", "30", "--uneven", "--zstd",
          "--no-footer", "--block-records", "100")
    ref = None
    for p in (1, 2, 3, 4, 7):
        out = os.path.join(tmp, "i%d.h5" % p)
        run(reduce_cmd(p, camp, "-o", out, "--per-comm"))
        d = datasets(out)
        if ref is None:
            ref = d
            assert any(k.startswith("populations/comm:") for k in d), d.keys()
            continue
        assert sorted(d) == sorted(ref), (p, sorted(set(d) ^ set(ref)))
        for k in ref:
            assert same(ref[k], d[k]), (p, k)
        print("P=%d: %d datasets identical to P=1" % (p, len(d)))


def main():
    mode = sys.argv[1]
    with tempfile.TemporaryDirectory() as tmp:
        {"totals": test_totals, "identical": test_identical,
         "formats": test_formats}[mode](tmp)
    return 0


if __name__ == "__main__":
    sys.exit(main())
