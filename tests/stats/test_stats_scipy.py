#!/usr/bin/python3
"""test_stats_scipy.py - every statistic of stats_driver against NumPy/SciPy on random data sets."""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
import scipy.signal
import scipy.stats

DRIVER = sys.argv[1]
LEVELS = [0.01, 0.05, 0.25, 0.50, 0.75, 0.95, 0.99]
failures = []


def check(ok, what):
    if not ok:
        failures.append(what)
        print("FAIL:", what)


def close(got, want, what, rel=1e-12):
    check(abs(got - want) <= rel * max(1.0, abs(want)), f"{what}: got {got!r}, want {want!r}")


def run(sizes=None, seed=None, n=None):
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "sizes.txt")
        if sizes is not None:
            np.savetxt(path, np.asarray(sizes, dtype=np.uint64), fmt="%d")
            out = subprocess.run([DRIVER, path], check=True, capture_output=True, text=True)
        else:
            out = subprocess.run([DRIVER, "--seed", str(seed), str(n), path], check=True,
                                 capture_output=True, text=True)
            sizes = np.loadtxt(path, dtype=np.uint64)
    return json.loads(out.stdout), np.asarray(sizes, dtype=np.uint64)


def log2_bins(x, b):
    """Our bin layout (docs/statistics.md), in exact integer arithmetic:
    bin i >= 0 holds [ceil(2^(i/b)), ceil(2^((i+1)/b))); size 0 has its own."""
    def edge(i):
        if i % b == 0:
            return 1 << (i // b)
        # smallest e with e^b >= 2^i
        e = int(math.ceil(2.0 ** (i / b)))
        while e > 1 and (e - 1) ** b >= 2 ** i:
            e -= 1
        while e ** b < 2 ** i:
            e += 1
        return e
    has_zero = bool((x == 0).any())
    first = 1 if has_zero else int(x.min())
    top = int(x.max())
    bins = [(0, 1)] if has_zero else []
    if top > 0:
        i = 0
        while True:
            lo, hi = edge(i), edge(i + 1)
            i += 1
            if lo == hi or hi <= first:
                continue
            bins.append((lo, hi))
            if top < hi:
                break
    counts = [int(((x >= lo) & (x < hi)).sum()) for lo, hi in bins]
    return bins, counts


def compare(name, r, x):
    xf = x.astype(np.float64)
    pos = xf[xf > 0]
    n = len(x)
    check(r["count"] == n, f"{name} count")
    check(r["zero_count"] == int((x == 0).sum()), f"{name} zero_count")
    check(r["distinct"] == len(np.unique(x)), f"{name} distinct")
    check(r["total_bytes"] == sum(int(v) for v in x), f"{name} total_bytes")
    check(r["min"] == int(x.min()) and r["max"] == int(x.max()), f"{name} min/max")
    check(r["positive_count"] == len(pos), f"{name} positive_count")
    # NumPy 1.24: np.mean, np.median, np.std(ddof=0), sqrt(mean(x^2))
    close(r["mean"], float(np.mean(xf)), f"{name} mean")
    close(r["median"], float(np.median(xf)), f"{name} median")
    close(r["stddev"], float(np.std(xf, ddof=0)), f"{name} stddev", 1e-9)
    close(r["quadratic"], math.sqrt(float(np.mean(xf * xf))), f"{name} quadratic")
    # SciPy 1.10: scipy.stats.hmean, scipy.stats.gmean over positive sizes
    if len(pos):
        close(r["harmonic"], float(scipy.stats.hmean(pos)), f"{name} harmonic")
        close(r["geometric"], float(scipy.stats.gmean(pos)), f"{name} geometric", 1e-11)
    else:
        check(r["harmonic"] == 0 and r["geometric"] == 0, f"{name} undefined means are 0")
    # NumPy 1.24: np.percentile(method='linear') = Hyndman & Fan rule 7
    want_q = np.percentile(xf, [100 * p for p in LEVELS], method="linear")
    for p, got, want in zip(LEVELS, r["quantiles"], want_q):
        close(got, float(want), f"{name} quantile {p}")
    # NumPy 1.24: np.unique counts give every tied mode; scipy.stats.mode the
    # smallest of them.
    vals, cnts = np.unique(x, return_counts=True)
    tied = [int(v) for v in vals[cnts == cnts.max()]]
    check(r["modes"] == tied, f"{name} all modes {r['modes']} vs {tied}")
    m = scipy.stats.mode(x, keepdims=False)
    check(r["mode"] == int(m.mode) and r["mode_count"] == int(m.count), f"{name} mode")
    check(r["mode_ties"] == len(tied), f"{name} mode_ties")
    # Tukey's hinges: np.median of the lower and upper ceil(n/2) values
    s = np.sort(xf)
    half = (n + 1) // 2
    h1, h3 = float(np.median(s[:half])), float(np.median(s[n - half:]))
    close(r["hinge_lo"], h1, f"{name} hinge_lo")
    close(r["hinge_hi"], h3, f"{name} hinge_hi")
    close(r["trimean"], (h1 + 2 * float(np.median(s)) + h3) / 4, f"{name} trimean")
    # Byte-weighted quantiles from np.cumsum (exact integers via Python ints)
    total = sum(int(v) for v in x)
    if total:
        ux = np.unique(x)
        cum = np.cumsum([int(v) * int(c) for v, c in zip(vals, cnts)], dtype=object)
        for p, got in zip(LEVELS, r["byte_quantiles"]):
            want = next(int(v) for v, c in zip(ux, cum) if c >= p * total)
            check(int(got) == want, f"{name} byte quantile {p}: {got} vs {want}")
    # SciPy 1.10: median_abs_deviation(center=callable, scale=1.0) for every
    # candidate center.
    for cname, f in r["fitness"].items():
        if not isinstance(f, dict) or not f["defined"]:
            continue
        c = f["value"]
        want = float(scipy.stats.median_abs_deviation(
            xf, center=lambda a, axis=None, c=c: c, scale=1.0))
        close(f["mad"], want, f"{name} MAD({cname})")
    fit = r["fitness"]
    defined = {k: v for k, v in fit.items() if isinstance(v, dict) and v["defined"]}
    best_mad = min(v["mad"] for v in defined.values())
    check(fit[fit["best"]]["mad"] == best_mad and fit[fit["best"]]["rank"] == 1,
          f"{name} best center")
    if best_mad > 0:
        close(fit["mad_ratio_mean"], fit["mean"]["mad"] / best_mad, f"{name} mad ratio")
    # Top sizes: np.unique, ordered by count descending then size ascending
    order = np.lexsort((vals, -cnts))[:5]
    want_top = [[int(vals[i]), int(cnts[i])] for i in order]
    check([t[:2] for t in r["top"]] == want_top, f"{name} top sizes")
    for t in r["top"]:
        close(t[2], t[1] / n, f"{name} top share")
    # Peaks: scipy.signal.find_peaks with prominence on the bin counts padded
    # with a zero bin at each end (topographic prominence, sea level 0).
    bins, bc = log2_bins(x, 2)
    padded = np.concatenate([[0], np.asarray(bc, dtype=np.float64), [0]])
    idx, props = scipy.signal.find_peaks(padded, prominence=0.01 * n)
    want_pk = sorted(((float(pr) / n, bins[i - 1][0]) for i, pr in
                      zip(idx, props["prominences"])), key=lambda t: (-t[0], t[1]))
    got_pk = [(p["prominence"], p["lo"]) for p in r["peaks"]]
    check(len(got_pk) == len(want_pk), f"{name} number of peaks {len(got_pk)} vs {len(want_pk)}")
    for (gp, glo), (wp, wlo) in zip(got_pk, want_pk):
        close(gp, wp, f"{name} peak prominence")
        check(glo == wlo, f"{name} peak bin {glo} vs {wlo}")
    check(sum(p["count"] for p in r["peaks"]) <= n, f"{name} basins within total")
    # Mixture: the reported log-likelihood and BIC recomputed with
    # scipy.stats.norm on log2 of the positive sizes (Schwarz 1978 BIC).
    g = r["gmm"]
    if len(pos):
        lx = np.log2(pos)
        dens = sum(w * scipy.stats.norm.pdf(lx, mu, sg)
                   for w, mu, sg in zip(g["weight"], g["mu"], g["sigma"]))
        ll = float(np.sum(np.log(dens)))
        close(g["loglik"], ll, f"{name} gmm loglik", 1e-9)
        k = g["ncomp"]
        close(g["bic"], (3 * k - 1) * math.log(len(pos)) - 2 * ll, f"{name} gmm bic", 1e-9)
        close(sum(g["weight"]), 1.0, f"{name} gmm weights sum", 1e-9)
        check(all(a <= b for a, b in zip(g["mu"], g["mu"][1:])), f"{name} gmm sorted by mu")
    else:
        check(g["rc"] != 0 and g["ncomp"] == 0, f"{name} gmm without positive sizes")


rng = np.random.default_rng(2024)
cases = {
    # lognormal sizes around 4 KiB with some zero-byte messages
    "lognormal_zeros": np.concatenate([
        np.round(rng.lognormal(12, 1.5, 3001)).astype(np.uint64), np.zeros(40, np.uint64)]),
    # multimodal halo-exchange mix: control words, faces, bulk transfers
    "multimodal": np.concatenate([
        rng.integers(8, 65, 5000), 4096 * rng.integers(1, 9, 3000),
        (1 << 20) + rng.integers(0, 1 << 16, 800)]).astype(np.uint64),
    # even count with ties between modes
    "ties_even": np.array([4, 4, 8, 8, 16, 16, 1024, 3], dtype=np.uint64),
    # odd count, a single value and zeros
    "single_value": np.full(7, 512, dtype=np.uint64),
    "with_zeros_odd": np.array([0, 0, 0, 7, 9, 1 << 40, 5], dtype=np.uint64),
    "only_zeros": np.zeros(5, dtype=np.uint64),
}
for name, x in cases.items():
    r, xs = run(sizes=x)
    compare(name, r, xs)
for seed in (1, 2, 3):
    r, xs = run(seed=seed, n=4000 + seed)
    compare(f"generated_{seed}", r, xs)

print("failures:", len(failures))
sys.exit(1 if failures else 0)
