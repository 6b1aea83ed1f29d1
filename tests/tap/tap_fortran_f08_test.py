#!/usr/bin/python3
# tap_fortran_f08_test.py - a program that starts MPI past the tap (the
# mpi_f08 Fortran module) runs normally, writes no trace, and each process
# says so once on stderr; a process that never starts MPI says nothing.
#
# usage: tap_fortran_f08_test.py TAP_SO F08_PROGRAM
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from tap_scenario_test import preload_value, run_mpi  # noqa: E402

MSG = "msgcensus-tap: this process started MPI without passing through the tap"


def main():
    tap_so, prog = sys.argv[1:3]
    for np_ in (1, 2):
        with tempfile.TemporaryDirectory(prefix="mc-tap-") as tmp:
            tdir = os.path.join(tmp, "traces")
            p = run_mpi(np_, [prog], {"MSGCENSUS_TAP_DIR": tdir}, preload=tap_so)
            assert p.returncode == 0, "np=%d: exit %d\n%s" % (np_, p.returncode, p.stderr)
            n = (p.stderr + p.stdout).count(MSG)
            assert n == np_, "np=%d: %d notices, want one per process:\n%s" % (np_, n, p.stderr)
            assert not os.path.exists(tdir), "a trace directory was made"
            print("ok: mpi_f08 program, np=%d: runs, no trace, %d notices" % (np_, n))
            # The notice is off with the tap switched off.
            p = run_mpi(np_, [prog], {"MSGCENSUS_TAP_DIR": tdir, "MSGCENSUS_TAP_OFF": "1"},
                        preload=tap_so)
            assert p.returncode == 0 and MSG not in p.stderr + p.stdout, p.stderr
    # A process that never starts MPI (here /bin/true with the tap
    # preloaded, as a job script's helper commands may be) says nothing.
    env = dict(os.environ, LD_PRELOAD=preload_value(tap_so))
    p = subprocess.run(["/bin/true"], env=env, capture_output=True, text=True)
    assert p.returncode == 0 and p.stderr == "" and p.stdout == "", p.stderr
    print("ok: a process without MPI prints nothing")
    return 0


if __name__ == "__main__":
    sys.exit(main())
