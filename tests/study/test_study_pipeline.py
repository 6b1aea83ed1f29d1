#!/usr/bin/python3
"""compare, plot and share on synthetic campaigns: a strong-scaling series
(8, 16, 32 ranks, deck-a) and a second input (deck-b, 16 ranks), written by
`msgcensus synth` and reduced with `msgcensus reduce` under mpirun.

Outside references: the histograms are read back with h5py; the distances
are recomputed with scipy.stats.wasserstein_distance (u_weights/v_weights =
counts, on log2(size) with size 0 at -1) and scipy.stats.ks_2samp on the
expanded data (Debian python3-scipy); SVG files are parsed with
xml.etree.ElementTree; the coarsened histograms of a shared copy are
recomputed here with Python's exact integers."""
import csv
import io
import json
import math
import os
import shlex
import shutil
import socket
import subprocess
import sys
import xml.etree.ElementTree as ET

import h5py
import numpy as np
from scipy import stats

CLI = os.environ["MC_CLI"]
MPIRUN = shlex.split(os.environ.get("MC_MPIRUN", "mpirun --oversubscribe"))
WORK = os.path.abspath("study_pipeline")
SVG = "{http://www.w3.org/2000/svg}"
CENTERS = ["mean", "median", "mode", "harmonic", "geometric", "quadratic", "trimean"]


def run(args, expect=0, **kw):
    p = subprocess.run(args, capture_output=True, text=True, **kw)
    if p.returncode != expect:
        sys.exit(f"FAIL: {' '.join(args)} -> {p.returncode}\n{p.stdout}\n{p.stderr}")
    return p


def make_campaigns():
    shutil.rmtree(WORK, ignore_errors=True)
    os.makedirs(WORK)
    runs = [("a8", 8, "deck-a"), ("a16", 16, "deck-a"), ("a32", 32, "deck-a"),
            ("b16", 16, "deck-b")]
    files = []
    for name, ranks, deck in runs:
        camp = os.path.join(WORK, name)
        run([CLI, "synth", "-o", camp, "--ranks", str(ranks), "--steps", "12",
             "--seed", "3", "--input", deck, "--scaling", "strong", "-q"])
        out = os.path.join(WORK, name + ".h5")
        run(MPIRUN + ["-np", "2", CLI, "reduce", camp, "-o", out, "--label", deck,
                      "--per-comm", "-q"])
        files.append(out)
    return files


def pops_of(path):
    """{name: (sizes, counts, stats rows by metric)} from the file."""
    out = {}
    with h5py.File(path, "r") as f:
        for g in f["populations"].values():
            name = g.attrs["name"]
            name = name.decode() if isinstance(name, bytes) else name
            rows = {r["metric"].decode().rstrip("\0"): r for r in g["stats"][:]}
            out[name] = (g["hist_sizes"][:].astype(np.uint64),
                         g["hist_counts"][:].astype(np.uint64), rows)
    return out


def axis(s):
    return np.where(s == 0, -1.0, np.log2(np.maximum(s, 1).astype(float)))


def best_of(rows):
    # Rank 1 is the smallest MAD; ties are broken by report order.
    ranked = [c for c in CENTERS if c in rows and rows[c]["rank"] == 1]
    return ranked[0] if ranked else None


def check_compare(files):
    text = run([CLI, "compare"] + files).stdout
    widest = max(len(line) for line in text.splitlines())
    assert widest <= 80, f"compare text is {widest} columns"
    for i, f in enumerate(files):
        assert f"R{i + 1}" in text and os.path.basename(f) in text
    assert "deck-b, 16 ranks" in text and "deck-a, 32 ranks" in text

    doc = json.loads(run([CLI, "compare", "--format", "json"] + files).stdout)
    assert [r["app_ranks"] for r in doc["runs"]] == [8, 16, 32, 16]
    data = [pops_of(f) for f in files]
    checked = 0
    for pop in doc["populations"]:
        name = pop["name"]
        bests = set()
        for i, r in enumerate(pop["runs"]):
            have = name in data[i] and data[i][name][1].sum() > 0
            assert (r is not None) == have, (name, i)
            if r is None:
                continue
            sizes, counts, rows = data[i][name]
            assert r["messages"] == int(counts.sum())
            assert r["bytes"] == int((sizes * counts).sum())
            assert r["best"] == best_of(rows), (name, i, r["best"])
            bests.add(r["best"])
        assert pop["best_differs"] == (len(bests) > 1), name
        for d in pop["distances"]:
            a, b = data[d["a"] - 1][name], data[d["b"] - 1][name]
            # scipy.stats.wasserstein_distance with the counts as weights
            w1 = stats.wasserstein_distance(axis(a[0]), axis(b[0]),
                                            u_weights=a[1].astype(float),
                                            v_weights=b[1].astype(float))
            assert abs(d["w1_log2"] - w1) <= 1e-9 * max(1.0, w1), (name, d, w1)
            # scipy.stats.ks_2samp on the expanded data (small campaigns)
            ks = stats.ks_2samp(np.repeat(axis(a[0]), a[1].astype(np.int64)),
                                np.repeat(axis(b[0]), b[1].astype(np.int64))).statistic
            assert abs(d["ks"] - ks) <= 1e-12, (name, d, ks)
            checked += 1
    assert checked >= 6 * 5, checked

    table = list(csv.reader(io.StringIO(
        run([CLI, "compare", "--format", "csv", "--population", "p2p"] + files).stdout)))
    header = table[0]
    assert all(len(row) == len(header) for row in table), "ragged CSV"
    kinds = [row[0] for row in table[1:]]
    assert kinds.count("run") == 4 and kinds.count("distance") == 6
    run([CLI, "compare", "--population", "no-such-pop"] + files, expect=1)
    run([CLI, "compare"], expect=2)
    return data


def svg_root(path):
    root = ET.parse(path).getroot()
    assert root.tag == SVG + "svg", path
    return root


def by_class(root, cls):
    return [e for e in root.iter() if cls in (e.get("class") or "").split()]


def texts(root):
    return ["".join(e.itertext()) for e in root.iter(SVG + "text")]


def check_plot(files, data):
    out = os.path.join(WORK, "figs16")
    run([CLI, "plot", files[1], "-o", out])
    pops = data[1]
    nonempty = [n for n, (s, c, r) in pops.items() if c.sum() > 0]
    for name in nonempty:
        safe = "".join(ch if ch.isalnum() or ch in "-." else "_" for ch in name)
        root = svg_root(os.path.join(out, f"sizes-{safe}.svg"))
        title = root.find(SVG + "title").text
        assert name in title and "deck-a, 16 ranks" in title, title
        assert by_class(root, "axis") and len(by_class(root, "axis")) == 2
        assert by_class(root, "legend")
        rows = pops[name][2]
        defined = [c for c in CENTERS if c in rows and rows[c]["rank"] > 0]
        markers = [m.get("data-center") for m in by_class(root, "marker")]
        assert sorted(markers) == sorted(defined), (name, markers, defined)
        ticks = [t for t in texts(root) if t.endswith((" B", "KiB", "MiB"))]
        assert ticks, "no size ticks in units"
        spikes = by_class(root, "spikes")[0]
        assert 1 <= len(spikes.findall(SVG + "line")) <= len(pops[name][0])
        cdf = svg_root(os.path.join(out, f"cdf-{safe}.svg"))
        lines = by_class(cdf, "cdf")
        has_bytes = int((pops[name][0] * pops[name][1]).sum()) > 0
        assert len(lines) == (2 if has_bytes else 1), name
    mad = svg_root(os.path.join(out, "mad.svg"))
    assert len(by_class(mad, "row")) == len(nonempty)
    assert len(by_class(mad, "best-ring")) == len(nonempty)

    # The 32-rank matrix in at most 4 x 4 tiles of 8 x 8 ranks: the tiles
    # drawn are exactly the non-empty tiles of the matrix read with h5py.
    out32 = os.path.join(WORK, "figs32")
    run([CLI, "plot", files[2], "-o", out32, "--tiles", "4", "--population", "p2p"])
    with h5py.File(files[2], "r") as f:
        src, dst = f["matrix/src"][:], f["matrix/dst"][:]
    want = {(int(s) // 8, int(d) // 8) for s, d in zip(src, dst)}
    for w in ("msgs", "bytes"):
        root = svg_root(os.path.join(out32, f"matrix-{w}.svg"))
        assert any("tiles of 8 x 8 ranks" in t for t in texts(root))
        tiles = by_class(root, "tiles")[0].findall(SVG + "rect")
        assert len(tiles) == len(want), (len(tiles), len(want))
    assert sorted(os.listdir(out32)) == ["cdf-p2p.svg", "mad.svg", "matrix-bytes.svg",
                                          "matrix-msgs.svg", "sizes-p2p.svg"]

    ov = os.path.join(WORK, "overlay.svg")
    run([CLI, "plot", "--overlay"] + files + ["-o", ov, "--population", "p2p"])
    root = svg_root(ov)
    assert len(by_class(root, "run")) == 4
    assert len(by_class(root, "cdf")) == 4
    assert any("W1" in t for t in texts(root))
    run([CLI, "plot", files[0], files[1], "-o", out], expect=2)

    # Same summary, byte-identical figures.
    again = os.path.join(WORK, "figs16-again")
    run([CLI, "plot", files[1], "-o", again])
    for name in os.listdir(out):
        with open(os.path.join(out, name), "rb") as a, \
                open(os.path.join(again, name), "rb") as b:
            assert a.read() == b.read(), f"{name} differs between two runs"


def check_usage():
    for cmd in ("compare", "plot", "share"):
        p = run([CLI, cmd, "--help"])
        assert p.stdout.startswith("usage: msgcensus " + cmd)
        p = run([CLI, cmd, "--no-such-option"], expect=2)
        assert "Try 'msgcensus " + cmd + " --help'" in p.stderr


def bin_of(s, k):
    return -1 if s == 0 else (s ** k).bit_length() - 1  # exact integers


def first_in_bin(b, k):
    lo, hi = 1, 2 ** 64 - 1
    if bin_of(lo, k) >= b:
        return lo
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if bin_of(mid, k) >= b:
            hi = mid
        else:
            lo = mid
    return hi


def rep_of(b, k):
    if b == -1:
        return 0
    lo, hi = first_in_bin(b, k), first_in_bin(b + 1, k) - 1
    return min(max(int(math.floor(2 ** ((b + 0.5) / k) + 0.5)), lo), hi)


def all_strings(f):
    found = []

    def visit(name, obj):
        found.append(name)
        for k, v in obj.attrs.items():
            found.append(f"{k}={v!r}")
        if isinstance(obj, h5py.Dataset) and obj.size:
            found.append(repr(obj[()]))
    for k, v in f.attrs.items():
        found.append(f"{k}={v!r}")
    f.visititems(visit)
    return "\n".join(found)


def check_share(files, data):
    src = files[1]
    out = os.path.join(WORK, "a16-shared.h5")
    p = run([CLI, "share", src, "-o", out, "--bins", "log2/2", "--round-counts", "10"])
    assert "caution" in p.stderr and "release review" in p.stderr
    host = socket.gethostname()
    with h5py.File(src, "r") as f:
        orig_host = f.attrs["host"]
        orig_host = orig_host.decode() if isinstance(orig_host, bytes) else orig_host
        assert f["ranks"].shape[0] > 0 and f["matrix/src"].shape[0] > 0
    # The original carries the fields the copy must not: the checks can fail.
    before = all_strings(h5py.File(src, "r"))
    assert ".mct" in before and (host in before or orig_host in before)
    with h5py.File(out, "r") as f:
        text = all_strings(f)
        for secret in (host, orig_host, WORK, ".mct", os.path.join(WORK, "a16")):
            assert secret not in text, f"shared copy still holds {secret!r}"
        # Dropped tables are left out of the file altogether.
        for group in ("ranks", "sources", "matrix"):
            assert group not in f, group
        names = [g.attrs["name"] for g in f["populations"].values()]
        names = [n.decode() if isinstance(n, bytes) else n for n in names]
        assert not [n for n in names if n.startswith("comm")], names
        assert int(f.attrs["approximate"]) == 1
        note = f.attrs["shared_note"]
        note = note.decode() if isinstance(note, bytes) else note
        assert "log2/2" in note and "multiple of 10" in note and "approximate" in note
    shared = pops_of(out)
    for name, (sizes, counts, rows) in data[1].items():
        if name.startswith("comm"):
            continue
        want = {}
        for s, c in zip(sizes.tolist(), counts.tolist()):
            b = bin_of(s, 2)
            want[b] = want.get(b, 0) + c
        # nearest multiple of 10, halves up; bins that reach 0 are dropped
        want = {rep_of(b, 2): (c + 5) // 10 * 10 for b, c in want.items()}
        want = {s: c for s, c in want.items() if c > 0}
        if not want:
            assert name not in shared or shared[name][1].sum() == 0
            continue
        got = dict(zip(shared[name][0].tolist(), shared[name][1].tolist()))
        assert got == want, (name, got, want)
        assert int(shared[name][2]["count"]["exact"]) == sum(want.values())
    report = run([CLI, "report", out]).stdout
    assert "approximate" in report

    # No overwrite without --force; the first copy stays as it was.
    size = os.path.getsize(out)
    p = run([CLI, "share", src, "-o", out], expect=1)
    assert "force" in p.stderr and os.path.getsize(out) == size
    run([CLI, "share", src, "-o", out, "--force", "-q"])
    kept = os.path.join(WORK, "a16-kept.h5")
    run([CLI, "share", src, "-o", kept, "--keep-ranks", "--keep-matrix",
         "--keep-comms", "--bins", "log2/4"])
    with h5py.File(kept, "r") as f:
        assert f["ranks"].shape[0] > 0 and f["matrix/src"].shape[0] > 0
        assert any(n.startswith("comm") for n in f["populations"])
    run([CLI, "share", src, "-o", kept + "x", "--bins", "log2/17"], expect=2)


def main():
    check_usage()
    files = make_campaigns()
    data = check_compare(files)
    check_plot(files, data)
    check_share(files, data)
    shutil.rmtree(WORK, ignore_errors=True)
    print("ok: compare, plot and share on synthetic campaigns")


if __name__ == "__main__":
    main()
