#!/usr/bin/python3
# tap_reduce_test.py - record known traffic with the tap, reduce it with 'msgcensus reduce', check histograms, matrix and rank totals with h5py.
#
# usage: tap_reduce_test.py TAP_SO TRAFFIC TRAFFIC_LINKED DUMP
# The expected records come from tap_expect.py (the MPI standard's
# definitions); the expected histograms are made from them with NumPy's
# np.unique (an outside reference for the counting), and the summary is read
# with h5py. Population rules: docs/summary-format.md.
import collections
import os
import shlex
import subprocess
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import tap_expect  # noqa: E402
import tap_scenario_test as sc  # noqa: E402

TAP, TRAFFIC, LINKED, DUMP = sys.argv[1:5]
# Every scenario, including collectives with per-peer records
# (MC_RF_PER_PEER): those enter no population, total or matrix, since the
# call's own record counts the same bytes (docs/trace-format.md, byte conventions).
SCENARIOS = ["ring", "p2pmore", "halo", "sendrecv", "coll", "persist", "rma", "neighbor",
             "comms", "errors"]
NP = 4


def hist(sizes):
    """Exact histogram (sizes ascending, counts) by np.unique (NumPy)."""
    if not sizes:
        return [], []
    u, c = np.unique(np.asarray(sizes, dtype=np.uint64), return_counts=True)
    return u.tolist(), c.tolist()


def pop(f, name):
    g = f["populations"][name.replace("/", ":")]
    stats = {row["metric"].decode().rstrip("\0"): row for row in g["stats"][()]}
    return g["hist_sizes"][()].tolist(), g["hist_counts"][()].tolist(), stats


def main():
    with tempfile.TemporaryDirectory(prefix="mc-tap-reduce-") as tmp:
        tdir = os.path.join(tmp, "campaign")
        p = sc.run_mpi(NP, [TRAFFIC] + SCENARIOS, {"MSGCENSUS_TAP_DIR": tdir}, preload=TAP)
        assert p.returncode == 0 and p.stdout == "", p.stderr
        out = os.path.join(tmp, "summary.h5")
        mpirun = shlex.split(os.environ["MC_MPIRUN"])
        r = subprocess.run(mpirun + ["-np", "2", os.environ["MC_CLI"], "reduce", "--quiet",
                                     tdir, "-o", out], capture_output=True, text=True,
                           timeout=120)
        assert r.returncode == 0, "reduce failed: " + r.stderr

        want = {w: [x for s in SCENARIOS for x in tap_expect.expected(s, w, NP)]
                for w in range(NP)}
        # Expected populations (docs/summary-format.md, "Which records go where").
        groups = collections.defaultdict(list)
        for w, recs in want.items():
            for op, d, peer, nbytes, comm, size, tag, flags in recs:
                if flags & tap_expect.PER_PEER:
                    continue
                cat = tap_expect.category(op)
                if cat == "p2p":
                    groups["p2p_recv" if d == tap_expect.RECV else "p2p"].append(nbytes)
                else:
                    groups[cat].append(nbytes)
                if not (cat == "p2p" and d == tap_expect.RECV):
                    groups["all"].append(nbytes)
        with h5py.File(out, "r") as f:
            for name in ("all", "p2p", "p2p_recv", "coll", "onesided"):
                sizes, counts, stats = pop(f, name)
                ws, wc = hist(groups[name])
                assert (sizes, counts) == (ws, wc), "%s: %s != %s" % (name, (sizes, counts), (ws, wc))
                assert stats["count"]["exact"] == len(groups[name]), name
                assert stats["total_bytes"]["exact"] == sum(groups[name]), name
                print("ok: population %s: %d messages, %d bytes" %
                      (name, len(groups[name]), sum(groups[name])))
            # Matrix: point-to-point sends by (source rank, destination).
            m = f["matrix"]
            got = {(int(s), int(d)): (int(n), int(b)) for s, d, n, b in
                   zip(m["src"][()], m["dst"][()], m["msgs"][()], m["bytes"][()])}
            exp = collections.defaultdict(lambda: [0, 0])
            for w, recs in want.items():
                for op, d, peer, nbytes, comm, size, tag, flags in recs:
                    if flags & tap_expect.PER_PEER:
                        continue
                    if tap_expect.category(op) == "p2p" and d == tap_expect.SEND and peer >= 0:
                        exp[(w, peer)][0] += 1
                        exp[(w, peer)][1] += nbytes
            assert got == {k: tuple(v) for k, v in exp.items()}, (got, dict(exp))
            print("ok: matrix, %d entries" % len(got))
            # Per-rank totals.
            ranks = {int(row["rank"]): row for row in f["ranks"][()]}
            assert sorted(ranks) == list(range(NP))
            for w, recs in want.items():
                tot = collections.Counter()
                for op, d, peer, nbytes, comm, size, tag, flags in recs:
                    if flags & tap_expect.PER_PEER:
                        continue
                    cat = tap_expect.category(op)
                    key = {"p2p": "recv" if d == tap_expect.RECV else "p2p",
                           "coll": "coll", "onesided": "os"}[cat]
                    tot[key + "_msgs"] += 1
                    tot[key + "_bytes"] += nbytes
                for k in ("p2p_msgs", "p2p_bytes", "recv_msgs", "recv_bytes", "coll_msgs",
                          "coll_bytes", "os_msgs", "os_bytes"):
                    assert int(ranks[w][k]) == tot[k], "rank %d %s: %d != %d" % (
                        w, k, int(ranks[w][k]), tot[k])
            print("ok: rank totals")


if __name__ == "__main__":
    main()
