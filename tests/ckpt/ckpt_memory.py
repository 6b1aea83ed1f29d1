#!/usr/bin/python3
"""ckpt_memory.py - 'msgcensus reduce --max-memory SIZE' on a campaign of
10 M distinct message sizes (2 files, 480 MB of trace written by
gen_distinct with the library's writer; kept in the build directory and
removed at the end).

  64MiB  the reading stops: exit 1, one message naming the file, the step,
         what was needed and what holds it (distinct sizes), the hint, no
         summary and no temporary file.
  1GiB   the reading fits, building the summary would not: exit 1 with the
         same kind of message for that step, nothing written.
  2GiB   completes; the "all" population has exactly the 10 M sizes the
         generator wrote, each once (recomputed with NumPy from the
         generator's permutation, read back with h5py).
"""
import os
import re
import shutil
import sys
import tempfile

import h5py  # Debian python3-h5py
import numpy as np  # Debian python3-numpy

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from ckpt_common import ours, reduce_argv, run  # noqa: E402

N = int(os.environ.get("MC_MEMORY_SIZES", "10000000"))
MASK = np.uint64((1 << 34) - 1)


def expected_sizes(n):
    """1 + perm(i) for i < n: the permutation of gen_distinct.c, in NumPy
    (uint64 arithmetic wraps modulo 2^64, then the mask takes it modulo
    2^34)."""
    x = np.arange(n, dtype=np.uint64)
    with np.errstate(over="ignore"):
        x = (x * np.uint64(0x9E3779B97F4A7C15)) & MASK
        x ^= x >> np.uint64(17)
        x = (x * np.uint64(0xBF58476D1CE4E5B9)) & MASK
        x ^= x >> np.uint64(15)
    return np.sort(x + np.uint64(1))


def refused(camp, out, limit, stage):
    r = run(reduce_argv(2, camp, out, "--max-memory", limit), check=False)
    assert r.returncode == 1, (limit, r.returncode, r.stderr)
    lines = ours(r.stderr)
    err = [l for l in lines if "resource limit exceeded" in l]
    assert len(err) == 1, r.stderr
    m = re.search(r"\(%s needs ([\d.]+ [MG]iB)( \(\d+ bytes\))?, above "
                  r"--max-memory ([\d.]+ [MG]iB)( \(\d+ bytes\))?: (\d+) "
                  r"distinct sizes, 0 per-communicator keys \(0 sizes\), (\d+) "
                  r"matrix entries\)" % stage, err[0])
    assert m, err[0]
    k = int(m.group(5))
    # What holds the memory: the sizes this rank has seen so far (reading),
    # or all of them after the merge (building).
    assert (0 < k < N) if stage == "reading" else (k == N), err[0]
    assert any(l.startswith("msgcensus: hint:") and "--max-memory" in l
               for l in lines), r.stderr
    assert "--per-comm" in r.stderr, r.stderr
    assert not os.path.exists(out), "summary written despite the limit"
    left = [f for f in os.listdir(os.path.dirname(out)) if ".tmp-" in f]
    assert not left, left
    return err[0]


def main():
    if len(sys.argv) != 2:
        print("usage: ckpt_memory.py GEN_DISTINCT", file=sys.stderr)
        return 2
    tmp = tempfile.mkdtemp(prefix="memory-", dir=os.getcwd())
    try:
        camp = os.path.join(tmp, "distinct")
        os.mkdir(camp)
        run([sys.argv[1], camp, "2", str(N)])
        out = os.path.join(tmp, "s.h5")
        e1 = refused(camp, out, "64MiB", "reading")
        e2 = refused(camp, out, "1GiB", "building the summary")
        run(reduce_argv(2, camp, out, "--max-memory", "2GiB", "--quiet"))
        with h5py.File(out, "r") as h:
            sizes = h["populations/all/hist_sizes"][...]
            counts = h["populations/all/hist_counts"][...]
        assert len(sizes) == N, len(sizes)
        assert np.array_equal(sizes, expected_sizes(N)), "sizes differ"
        assert np.all(counts == 1)
        print("64MiB: %s\n1GiB: %s\n2GiB: %d distinct sizes, as generated"
              % (e1, e2, len(sizes)))
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
