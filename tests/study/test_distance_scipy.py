#!/usr/bin/python3
"""W1 on log2(size) and the two-sample KS statistic of mc_distance_compute(),
checked against SciPy (Debian python3-scipy): scipy.stats.wasserstein_distance
with u_weights/v_weights = counts and on the expanded data, and
scipy.stats.ks_2samp(...).statistic on the expanded data. The log2 bins of
mc_log2_bin() are checked against Python's exact integers:
floor(k * log2(s)) = (s**k).bit_length() - 1."""
import math
import random
import subprocess
import sys

import numpy as np
from scipy import stats

DRIVER = sys.argv[1]


def axis(s):
    # The documented placement: log2(s) for s >= 1, size 0 at -1.
    return -1.0 if s == 0 else math.log2(s)


def hist_arg(h):
    return ",".join(f"{s}:{c}" for s, c in sorted(h.items()))


def random_hist(rng, n_distinct, max_count, with_zero):
    h = {}
    families = [(8, 64), (4096, 8), (1 << 20, 4), (3, 2)]
    while len(h) < n_distinct:
        base, spread = rng.choice(families)
        s = base * rng.randint(1, spread) + rng.randint(0, 7)
        h[s] = h.get(s, 0) + rng.randint(1, max_count)
    if with_zero:
        h[0] = rng.randint(1, max_count)
    return h


def run_dist(a, b):
    out = subprocess.run([DRIVER, "dist", hist_arg(a), hist_arg(b)], check=True,
                         capture_output=True, text=True).stdout.split()
    return float(out[0]), float(out[1]), int(out[2])


def expand(h):
    return np.repeat(np.array([axis(s) for s in sorted(h)]),
                     [h[s] for s in sorted(h)])


def check_pair(a, b, label):
    w1, ks, ks_at = run_dist(a, b)
    sa, sb = sorted(a), sorted(b)
    # SciPy with weights: no expansion.
    ref_w = stats.wasserstein_distance([axis(s) for s in sa], [axis(s) for s in sb],
                                       u_weights=[a[s] for s in sa],
                                       v_weights=[b[s] for s in sb])
    assert abs(w1 - ref_w) <= 1e-9 * max(1.0, ref_w), (label, w1, ref_w)
    xa, xb = expand(a), expand(b)
    # SciPy on the expanded data: the same number again.
    ref_we = stats.wasserstein_distance(xa, xb)
    assert abs(w1 - ref_we) <= 1e-9 * max(1.0, ref_we), (label, w1, ref_we)
    ref_ks = stats.ks_2samp(xa, xb).statistic
    assert abs(ks - ref_ks) <= 1e-12, (label, ks, ref_ks)
    # ks_at: the supremum is reached just after that size.
    na, nb = len(xa), len(xb)
    fa = sum(a[s] for s in sa if s <= ks_at) / na
    fb = sum(b[s] for s in sb if s <= ks_at) / nb
    assert abs(abs(fa - fb) - ks) <= 1e-12, (label, ks_at)


def main():
    rng = random.Random(20261202)
    cases = 0
    for i in range(40):
        a = random_hist(rng, rng.randint(1, 40), 50, i % 3 == 0)
        b = random_hist(rng, rng.randint(1, 40), 50, i % 4 == 0)
        check_pair(a, b, f"random {i}")
        cases += 1
    # Ties everywhere: same sizes, different counts.
    a = {8: 10, 64: 10, 4096: 10}
    b = {8: 5, 64: 20, 4096: 5}
    check_pair(a, b, "same support")
    check_pair(a, a, "identical")
    check_pair({0: 7}, {0: 1, 1: 1}, "zeros")
    cases += 3

    sizes = [0, 1, 2, 3, 181, 182, 1448, 3037000499, 3037000500,
             2**63 - 1, 2**63, 2**64 - 1] + [rng.randint(1, 2**64 - 1) for _ in range(200)]
    for k in (1, 2, 3, 4, 7, 16):
        out = subprocess.run([DRIVER, "bins", str(k)] + [str(s) for s in sizes],
                             check=True, capture_output=True, text=True).stdout
        for s, line in zip(sizes, out.splitlines()):
            b, lo, hi, rc, rep = (int(t) for t in line.split())
            if s == 0:
                assert b == -1 and lo == 0 and hi == 0, line
                continue
            want = (s ** k).bit_length() - 1  # exact integers
            assert b == want, (k, s, b, want)
            assert rc == 0 and lo <= s <= hi and lo <= rep <= hi, (k, s, line)
            assert (lo ** k).bit_length() - 1 == b, (k, s, "lo in bin")
            if lo > 1:
                assert ((lo - 1) ** k).bit_length() - 1 < b, (k, s, "lo is first")
            if hi < 2**64 - 1:
                assert ((hi + 1) ** k).bit_length() - 1 > b, (k, s, "hi is last")
            cases += 1
    print(f"ok: {cases} checks against scipy.stats and exact integers")


if __name__ == "__main__":
    main()
