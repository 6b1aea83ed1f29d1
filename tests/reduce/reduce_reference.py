#!/usr/bin/python3
"""reduce_reference.py - the summary against references outside the project.

The summary is read with h5py (Debian python3-h5py). From each stored exact
histogram the mean, median and quantiles are recomputed with NumPy (Debian
python3-numpy: np.average, np.median, np.quantile with its default 'linear'
method, which is definition 7 of Hyndman & Fan 1996, the rule of
docs/statistics.md) and the MAD about the median with SciPy
(scipy.stats.median_abs_deviation, unscaled). Every per-op histogram, the
category populations, the per-rank totals and the send matrix are checked
against an independent count of the raw records that `msgcensus export`
writes as CSV for every file (the exact expected histograms are computed
here in Python). The per-file checksum of the sources table is checked with
Debian's xxhsum (xxhash package, `xxhsum -H1` = XXH64) over the block
checksums taken from the block headers (definition in
docs/summary-format.md).
"""
import collections
import csv
import os
import subprocess
import sys
import tempfile

import h5py  # Debian python3-h5py
import numpy as np  # Debian python3-numpy
from scipy.stats import median_abs_deviation  # Debian python3-scipy

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from reduce_common import (block_checksums, campaign_files, reduce_cmd, run,
                           synth)

# MPI categories by name (the MPI-4 standard's chapters: point-to-point,
# collective incl. neighbourhood, one-sided).
P2P = {"MPI_Send", "MPI_Isend", "MPI_Irecv", "MPI_Recv", "MPI_Sendrecv"}
ONESIDED_PREFIX = ("MPI_Put", "MPI_Get", "MPI_Accumulate", "MPI_Rput",
                   "MPI_Rget", "MPI_Raccumulate", "MPI_Fetch_and_op",
                   "MPI_Compare_and_swap", "MPI_Get_accumulate",
                   "MPI_Rget_accumulate")
OWN_DIR = {"MPI_Isend": "send", "MPI_Send": "send", "MPI_Irecv": "recv",
           "MPI_Recv": "recv", "MPI_Put": "send", "MPI_Get": "recv"}


def category(op):
    if op in P2P:
        return "p2p"
    if op in ONESIDED_PREFIX:
        return "onesided"
    return "coll"


def stored_hist(h, group):
    g = h["populations"][group]
    return g["hist_sizes"][...], g["hist_counts"][...]


def stat_rows(h, group):
    rows = h["populations"][group]["stats"][...]
    return {r["metric"].decode().rstrip("\0"): r for r in rows}


def many_sizes_campaign(camp, tmp):
    """Four ranks of records with random sizes, peers and operations
    (seeded), some of them per-peer records, imported from CSV: far more
    distinct (operation, size, peer) triples than the reducer's combiner
    has slots, so its evictions are exercised."""
    import random
    rng = random.Random(20261202)
    ops = [("MPI_Isend", "send"), ("MPI_Irecv", "recv"),
           ("MPI_Allreduce", "none"), ("MPI_Put", "send"),
           ("MPI_Alltoallv", "none"), ("MPI_Sendrecv", "send")]
    os.makedirs(camp)
    for r in range(4):
        path = os.path.join(tmp, "r%d.csv" % r)
        t = 1000
        with open(path, "w") as f:
            f.write("# app_rank=%d\n# app_size=4\n" % r)
            f.write("op,dir,peer,bytes,comm_id,comm_size,tag,t_start_ns,"
                    "t_end_ns,flags\n")
            for i in range(20000):
                op, d = rng.choice(ops)
                size = rng.choice([rng.randrange(0, 1 << 40),
                                   rng.randrange(0, 64), 8 << rng.randrange(20)])
                peer = -1 if d == "none" else rng.randrange(0, 4)
                flags = 4 if op == "MPI_Alltoallv" and i % 3 == 0 else 0
                if flags:
                    peer = rng.randrange(0, 4)
                f.write("%s,%s,%d,%d,%d,4,%d,%d,%d,%d\n" % (
                    op, d, peer, size, rng.randrange(3), -1 if d == "none" else 5,
                    t, t + 100, flags))
                t += 200
        run([os.environ["MC_CLI"], "import", path, "-o",
             os.path.join(camp, "rank-%06d.mct" % r), "--block-records",
             "1000"])


def main():
    with tempfile.TemporaryDirectory() as tmp:
        camp = os.path.join(tmp, "c")
        # deck-b has MPI_Put, so every category is present.
        synth(camp, "--ranks", "8", "--steps", "20", "--input", "deck-b",
              "--block-records", "64")
        check(camp, tmp)
        camp = os.path.join(tmp, "many")
        many_sizes_campaign(camp, tmp)
        check(camp, tmp)
    return 0


def check(camp, tmp):
    """Reduce @camp under 2 ranks and check every table against a count
    of the records that `msgcensus export` gives as CSV."""
    # Independent count from the CSV text of every file.
    hist = collections.defaultdict(collections.Counter)  # (op,dir) -> sizes
    comms = collections.defaultdict(collections.Counter)  # comm -> sizes
    ranks = collections.defaultdict(lambda: [0] * 8)
    matrix = collections.Counter()
    matrix_bytes = collections.Counter()
    nrec = 0
    for f in campaign_files(camp):
        text = run([os.environ["MC_CLI"], "export",
                    os.path.join(camp, f)]).stdout
        lines = text.splitlines()
        me = int([l for l in lines if l.startswith("# app_rank=")][0]
                 .split("=")[1])
        for row in csv.DictReader(l for l in lines if not l.startswith("#")):
            op, d, b = row["op"], row["dir"], int(row["bytes"])
            nrec += 1
            # Per-peer records repeat bytes of their call's own record:
            # read, counted in records_read, in no population or table
            # (docs/trace-format.md, byte conventions).
            if int(row["flags"]) & 4:
                continue
            hist[(op, d)][b] += 1
            cat = category(op)
            if not (cat == "p2p" and d == "recv"):
                comms[int(row["comm_id"])][b] += 1
            if cat == "p2p" and d == "recv":
                ranks[me][2] += 1
                ranks[me][3] += b
            elif cat == "p2p":
                ranks[me][0] += 1
                ranks[me][1] += b
                if int(row["peer"]) >= 0:
                    matrix[(me, int(row["peer"]))] += 1
                    matrix_bytes[(me, int(row["peer"]))] += b
            elif cat == "coll":
                ranks[me][4] += 1
                ranks[me][5] += b
            else:
                ranks[me][6] += 1
                ranks[me][7] += b
    assert any(category(op) == "onesided" for op, _ in hist), hist.keys()
    out = os.path.join(tmp, os.path.basename(camp) + ".h5")
    run(reduce_cmd(2, camp, "-o", out, "--per-comm"))
    with h5py.File(out, "r") as h:
        assert h.attrs["format_name"] == "msgcensus-summary"
        assert int(h.attrs["records_read"]) == nrec
        # Per-op populations: exactly the recounted histograms.
        for (op, d), c in hist.items():
            group = "op:%s" % op if OWN_DIR.get(op, "none") == d \
                else "op:%s:%s" % (op, d)
            s, n = stored_hist(h, group)
            exp = sorted(c.items())
            assert list(s) == [k for k, _ in exp], group
            assert list(n) == [v for _, v in exp], group
            name = h["populations"][group].attrs["name"]
            assert name == group.replace(":", "/"), name
        # Category populations (docs/summary-format.md rules).
        for pop, pred in (
                ("all", lambda o, d: not (category(o) == "p2p" and d == "recv")),
                ("p2p", lambda o, d: category(o) == "p2p" and d != "recv"),
                ("p2p_recv", lambda o, d: category(o) == "p2p" and d == "recv"),
                ("coll", lambda o, d: category(o) == "coll"),
                ("onesided", lambda o, d: category(o) == "onesided")):
            c = collections.Counter()
            for (o, d), hc in hist.items():
                if pred(o, d):
                    c.update(hc)
            s, n = stored_hist(h, pop)
            exp = sorted(c.items())
            assert list(s) == [k for k, _ in exp], pop
            assert list(n) == [v for _, v in exp], pop
            # Statistics against NumPy / SciPy on the expanded sample.
            x = np.repeat(s.astype(np.float64), n.astype(np.int64))
            st = stat_rows(h, pop)
            assert int(st["count"]["exact"]) == x.size
            assert int(st["total_bytes"]["exact"]) == int(
                (s.astype(object) * n.astype(object)).sum())
            mean = np.average(s.astype(np.float64), weights=n)
            assert abs(st["mean"]["value"] - mean) <= 1e-9 * max(1, mean), pop
            assert st["median"]["value"] == np.median(x), pop
            q = h["populations"][pop]["quantiles"][...]
            for row in q:
                ref = np.quantile(x, row["level"])
                assert abs(row["value"] - ref) <= 1e-9 * max(1, ref), \
                    (pop, row["level"], row["value"], ref)
            mad = median_abs_deviation(x, center=np.median, scale=1.0)
            assert abs(st["median"]["mad"] - mad) <= 1e-9 * max(1, mad), pop
            print("%-9s n=%-6d mean=%.3f median=%g MAD=%g: NumPy/SciPy agree"
                  % (pop, x.size, mean, np.median(x), mad))
        # Per-communicator populations: the records of "all" by comm_id.
        got_comms = sorted(int(g.attrs["name"].split("/")[1])
                           for g in h["populations"].values()
                           if g.attrs["name"].startswith("comm/"))
        assert got_comms == sorted(comms), (got_comms, sorted(comms))
        for cid, c in comms.items():
            s, n = stored_hist(h, "comm:%d" % cid)
            exp = sorted(c.items())
            assert list(s) == [k for k, _ in exp], cid
            assert list(n) == [v for _, v in exp], cid
        # Per-rank totals and the send matrix.
        for row in h["ranks"][...]:
            r = int(row["rank"])
            got = [int(row[k]) for k in (
                "p2p_msgs", "p2p_bytes", "recv_msgs", "recv_bytes",
                "coll_msgs", "coll_bytes", "os_msgs", "os_bytes")]
            assert got == ranks[r], (r, got, ranks[r])
        m = h["matrix"]
        got = {(int(a), int(b)): int(c) for a, b, c in
               zip(m["src"][...], m["dst"][...], m["msgs"][...])}
        assert got == dict(matrix), "matrix differs"
        got = {(int(a), int(b)): int(c) for a, b, c in
               zip(m["src"][...], m["dst"][...], m["bytes"][...])}
        assert got == dict(matrix_bytes), "matrix bytes differ"
        keys = list(zip(m["src"][...], m["dst"][...]))
        assert keys == sorted(keys), "matrix not sorted by (src, dst)"
        for row in h["sources"][...]:
            name = row["path"].decode() if isinstance(row["path"], bytes) \
                else row["path"]
            seq = os.path.join(tmp, "sums.bin")
            with open(seq, "wb") as f:
                f.write(b"".join(block_checksums(os.path.join(camp, name))))
            ref = subprocess.run(["xxhsum", "-H1", seq], capture_output=True,
                                 text=True, check=True).stdout.split()[0]
            assert format(int(row["checksum"]), "016x") == ref, name


if __name__ == "__main__":
    sys.exit(main())
