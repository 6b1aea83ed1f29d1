#!/usr/bin/python3
# tap_env_test.py - the tap's settings and failure behaviour: off switch, default directory, bad settings, unwritable directory, threads.
#
# usage: tap_env_test.py TAP_SO TRAFFIC TRAFFIC_LINKED DUMP THREADS
import collections
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import tap_scenario_test as sc  # noqa: E402

TAP, TRAFFIC, LINKED, DUMP, THREADS = sys.argv[1:6]


def test_off_switch_writes_nothing():
    with tempfile.TemporaryDirectory() as tmp:
        d = os.path.join(tmp, "t")
        p = sc.run_mpi(2, [TRAFFIC, "ring"], {"MSGCENSUS_TAP_DIR": d,
                                              "MSGCENSUS_TAP_OFF": "1"}, preload=TAP)
        assert p.returncode == 0 and p.stdout == "" and p.stderr == "", p
        assert not os.path.exists(d), "MSGCENSUS_TAP_OFF=1 created %s" % d


def test_default_directory_is_msgcensus_trace():
    with tempfile.TemporaryDirectory() as tmp:
        mpirun = sc.shlex.split(os.environ["MC_MPIRUN"])
        env = dict(os.environ, OMPI_MCA_osc="sm,pt2pt,rdma")
        env.pop("MSGCENSUS_TAP_DIR", None)
        p = subprocess.run(mpirun + ["-np", "2", "-x", "LD_PRELOAD=" + sc.preload_value(TAP), TRAFFIC, "ring"],
                           cwd=tmp, env=env, capture_output=True, text=True, timeout=120)
        assert p.returncode == 0 and p.stdout == "", p
        heads, recs = sc.dump(DUMP, os.path.join(tmp, "msgcensus-trace"), 2)
        assert sorted(heads) == [0, 1]


def expect_one_error_line_per_rank(p, np_, what):
    assert p.returncode == 0, "%s: the application failed: %s" % (what, p.stderr)
    assert p.stdout == "", "%s: stdout %r" % (what, p.stdout)
    lines = [ln for ln in p.stderr.splitlines() if ln.startswith("msgcensus-tap:")]
    assert len(lines) == np_, "%s: want %d error lines, got %r" % (what, np_, p.stderr)


def test_unwritable_directory_reports_once_and_app_succeeds():
    with tempfile.TemporaryDirectory() as tmp:
        blocker = os.path.join(tmp, "file")
        open(blocker, "w").close()  # a file where a directory should be
        p = sc.run_mpi(2, [TRAFFIC, "all"], {"MSGCENSUS_TAP_DIR": blocker + "/sub"},
                       preload=TAP)
        expect_one_error_line_per_rank(p, 2, "unwritable directory")


def test_bad_block_records_reports_once_and_app_succeeds():
    with tempfile.TemporaryDirectory() as tmp:
        d = os.path.join(tmp, "t")
        for bad in ("abc", "0", "99999999999"):
            p = sc.run_mpi(2, [LINKED, "ring"], {"MSGCENSUS_TAP_DIR": d,
                                                 "MSGCENSUS_TAP_BLOCK_RECORDS": bad})
            expect_one_error_line_per_rank(p, 2, "MSGCENSUS_TAP_BLOCK_RECORDS=" + bad)
            assert "MSGCENSUS_TAP_BLOCK_RECORDS" in p.stderr
            assert not os.path.exists(os.path.join(d, "rank-000000.mct"))


def test_thread_multiple_records_every_message():
    # tap_threads.c: 2 threads x 200 messages of (t+1) ints on two dups.
    with tempfile.TemporaryDirectory() as tmp:
        d = os.path.join(tmp, "t")
        for np_ in (2, 3):
            p = sc.run_mpi(np_, [THREADS], {"MSGCENSUS_TAP_DIR": d,
                                            "MSGCENSUS_TAP_BLOCK_RECORDS": "64"},
                           preload=TAP)
            assert p.returncode == 0 and p.stdout == "", p.stderr
            heads, recs = sc.dump(DUMP, d, np_)
            ids = collections.defaultdict(set)
            for w in range(np_):
                c = collections.Counter()
                for r in recs[w]:
                    c[(r["op"], r["dir"], r["bytes"], r["peer"])] += 1
                    ids[r["bytes"] // 4].add(r["comm_id"])
                right, left = (w + 1) % np_, (w - 1) % np_
                want = collections.Counter()
                for t in (0, 1):
                    want[("MPI_Isend", 1, 4 * (t + 1), right)] = 200
                    want[("MPI_Recv", 2, 4 * (t + 1), left)] = 200
                assert c == want, "rank %d: %s" % (w, c)
            # Each dup has one id on all ranks; the two dups differ.
            assert len(ids[1]) == 1 and len(ids[2]) == 1 and ids[1] != ids[2], ids


def test_library_exports_only_mpi_symbols_and_needs_no_hdf5():
    # The version script keeps mc_*, zstd and xxHash symbols local, so they
    # cannot clash with an application's; the tap must not pull in HDF5.
    # Every C entry point has its Fortran twin and no other is exported.
    nm = subprocess.run(["nm", "-D", "--defined-only", TAP], capture_output=True,
                        text=True, check=True).stdout
    names = [ln.split()[-1] for ln in nm.splitlines() if ln.strip()]
    assert names, "no exported symbols"
    c_names = {n for n in names if n.startswith("MPI_")}
    # Fortran entry points (tap_fortran*.c): mpi_xxx_ for exactly the C
    # entry points MPI_Xxx (gfortran's naming of the mpif.h / mpi module
    # procedures, common practice).
    f_names = {n for n in names if n.startswith("mpi_") and n.endswith("_")}
    bad = [n for n in names if not (n in c_names or n in f_names or n.startswith("MPIX_"))]
    assert not bad, "exported beyond MPI_/MPIX_/mpi_..._: %s" % bad[:10]
    assert f_names == {n.lower() + "_" for n in c_names}, (
        "Fortran and C entry points differ: %s" %
        sorted(f_names ^ {n.lower() + "_" for n in c_names})[:10])
    for wanted in ("MPI_Send", "MPI_Irecv", "MPI_Waitall", "MPI_Alltoallv", "MPI_Put",
                   "MPI_Neighbor_alltoall", "MPIX_Allreduce_init", "MPI_Finalize"):
        assert wanted in names, wanted
    needed = subprocess.run(["readelf", "-d", TAP], capture_output=True, text=True,
                            check=True).stdout
    assert "hdf5" not in needed.lower(), needed


if __name__ == "__main__":
    for name, fn in list(globals().items()):
        if name.startswith("test_"):
            fn()
            print("ok:", name)
