#!/usr/bin/python3
# tap_scenario_test.py - run one tap_traffic scenario under the tap (preloaded and linked, 1..4 ranks) and check every record.
#
# usage: tap_scenario_test.py SCENARIO TAP_SO TRAFFIC TRAFFIC_LINKED DUMP [NP...]
# Extra settings for the tap come from the environment of this script
# (MSGCENSUS_TAP_ZSTD, MSGCENSUS_TAP_BLOCK_RECORDS are passed on).
import collections
import os
import shlex
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import tap_expect  # noqa: E402

FIELDS = ("rank", "op", "dir", "peer", "bytes", "comm_id", "comm_size", "tag",
          "flags", "t_start", "t_end")


def preload_value(tap_so):
    """LD_PRELOAD for the tap: a sanitizer build of it needs the sanitizer
    runtimes first in the list of preloaded libraries."""
    out = subprocess.run(["ldd", tap_so], capture_output=True, text=True).stdout
    rts = [f.split()[2] for f in out.splitlines()
           if ("libasan.so" in f or "libubsan.so" in f) and "=>" in f]
    return ":".join(rts + [tap_so])


def run_mpi(np_, argv, env_vars, preload=None):
    mpirun = shlex.split(os.environ["MC_MPIRUN"])
    cmd = mpirun + ["-np", str(np_)]
    for k, v in env_vars.items():
        cmd += ["-x", "%s=%s" % (k, v)]
    if preload:
        cmd += ["-x", "LD_PRELOAD=%s" % preload_value(preload)]
    # The suite's Open MPI settings (vader without single-copy) leave no
    # default one-sided component that can create a window; name the ones
    # that work over shared memory.
    env = dict(os.environ)
    env.setdefault("OMPI_MCA_osc", "sm,pt2pt,rdma")
    return subprocess.run(cmd + argv, capture_output=True, text=True, timeout=120,
                          env=env)


def dump(dumper, tdir, np_):
    files = [os.path.join(tdir, "rank-%06d.mct" % r) for r in range(np_)]
    missing = [f for f in files if not os.path.exists(f)]
    assert not missing, "missing trace files: %s" % missing
    p = subprocess.run([dumper] + files, capture_output=True, text=True)
    assert p.returncode == 0, "trace does not verify: " + p.stderr
    heads, recs = {}, collections.defaultdict(list)
    for line in p.stdout.splitlines():
        f = line.split(",")
        if f[0] == "#file":
            heads[int(f[1])] = (int(f[2]), int(f[3]), int(f[4]), int(f[5]))
            continue
        r = dict(zip(FIELDS, f))
        for k in FIELDS:
            if k != "op":
                r[k] = int(r[k])
        recs[r["rank"]].append(r)
    return heads, recs


def match_rank(w, actual, want):
    """Match the rank's communicator ids to the expected symbols by their
    records (each id's records must equal one symbol's, fields other than the
    id compared), then compare everything. Communicators whose records are
    alike are paired in sorted order of id and name, which is the same on
    every rank when the ids agree. Returns {symbol: id} or raises."""
    strip = lambda t: t[:4] + t[5:]
    by_id = collections.defaultdict(collections.Counter)
    for r in actual:
        if r["comm_id"] != 0:
            by_id[r["comm_id"]][(r["op"], r["dir"], r["peer"], r["bytes"], r["comm_size"],
                                 r["tag"], r["flags"])] += 1
    by_sym = collections.defaultdict(collections.Counter)
    for x in want:
        if x[4] != "world":
            by_sym[x[4]][strip(x)] += 1
    groups_id, groups_sym = collections.defaultdict(list), collections.defaultdict(list)
    for cid, c in by_id.items():
        groups_id[frozenset(c.items())].append(cid)
    for sym, c in by_sym.items():
        groups_sym[frozenset(c.items())].append(sym)
    m = {0: "world"}
    for key, cids in groups_id.items():
        syms = groups_sym.get(key, [])
        if len(syms) == len(cids):
            m.update(zip(sorted(cids), sorted(syms)))
    got_key = lambda r: (r["op"], r["dir"], r["peer"], r["bytes"],
                         m.get(r["comm_id"], r["comm_id"]), r["comm_size"], r["tag"],
                         r["flags"])
    want_c = collections.Counter(want)
    got = collections.Counter(got_key(r) for r in actual)
    if got != want_c:
        raise AssertionError("rank %d: records differ from the expected ones\n"
                             "  missing: %s\n  unexpected: %s" %
                             (w, sorted((want_c - got).items(), key=str),
                              sorted((got - want_c).items(), key=str)))
    return {v: k for k, v in m.items()}


def check(scenario, np_, heads, recs, have_pcoll):
    assert sorted(heads) == list(range(np_)), heads
    sym_ids = collections.defaultdict(set)
    for w in range(np_):
        size, blocks, nrec, footer = heads[w]
        assert size == np_, "rank %d: header says %d ranks" % (w, size)
        assert footer == 1, "rank %d: no footer" % w
        assert nrec == len(recs[w]), "rank %d: count mismatch" % w
        per_block = int(os.environ.get("MSGCENSUS_TAP_BLOCK_RECORDS", "16384"))
        # One block per full buffer, plus the partial one flushed at
        # MPI_Finalize: the tap holds at most one block in memory.
        assert blocks == -(-nrec // per_block), "rank %d: %d blocks" % (w, blocks)
        if scenario == "persist":
            want = tap_expect.persist(w, np_, have_pcoll)
        else:
            want = tap_expect.expected(scenario, w, np_)
        for r in recs[w]:
            assert r["t_end"] >= r["t_start"], r
        for sym, cid in match_rank(w, recs[w], want).items():
            sym_ids[sym].add(cid)
    # The same communicator has the same id on every member; different
    # communicators have different ids; only MPI_COMM_WORLD has id 0.
    for sym, cids in sym_ids.items():
        assert len(cids) == 1, "communicator %s has ids %s" % (sym, cids)
    all_ids = [next(iter(c)) for c in sym_ids.values()]
    assert len(all_ids) == len(set(all_ids)), "id clash: %s" % dict(sym_ids)
    assert all(c not in (0, 1) for s, c in zip(sym_ids, all_ids) if s != "world")


def main():
    scenario, tap_so, traffic, linked, dumper = sys.argv[1:6]
    nps = [int(x) for x in sys.argv[6:]] or [1, 2, 3, 4]
    have_pcoll = os.environ.get("MC_TAP_HAVE_PCOLL", "1") == "1"
    extra = {k: os.environ[k] for k in ("MSGCENSUS_TAP_ZSTD", "MSGCENSUS_TAP_BLOCK_RECORDS")
             if k in os.environ}
    for np_ in nps:
        for mode in ("preload", "linked"):
            with tempfile.TemporaryDirectory(prefix="mc-tap-") as tmp:
                tdir = os.path.join(tmp, "traces", "run")  # created by the tap
                env = dict(extra, MSGCENSUS_TAP_DIR=tdir)
                if mode == "preload":
                    p = run_mpi(np_, [traffic, scenario], env, preload=tap_so)
                else:
                    p = run_mpi(np_, [linked, scenario], env)
                what = "%s np=%d %s" % (scenario, np_, mode)
                assert p.returncode == 0, "%s: exit %d\n%s" % (what, p.returncode, p.stderr)
                assert p.stdout == "", "%s: unexpected stdout %r" % (what, p.stdout)
                assert "msgcensus-tap:" not in p.stderr, "%s: %s" % (what, p.stderr)
                heads, recs = dump(dumper, tdir, np_)
                check(scenario, np_, heads, recs, have_pcoll)
                print("ok: %s (%d records)" % (what, sum(len(v) for v in recs.values())))


if __name__ == "__main__":
    main()
