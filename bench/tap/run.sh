#!/bin/bash
# run.sh - added cost of the tap per MPI call: bench_tap_overhead with and without the tap, alternating, medians of several runs.
# usage: bench/tap/run.sh BUILD_DIR [RUNS] [ITERS]
set -euo pipefail
build=${1:?usage: run.sh BUILD_DIR [RUNS] [ITERS]}
runs=${2:-7}
iters=${3:-20000}
bench=$build/bench/bench_tap_overhead
tap=$build/libmsgcensus-tap.so
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
export OMPI_MCA_btl=${OMPI_MCA_btl:-self,vader}
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
# One rank (self loop: the tap's own cost, no partner to wait for) and two
# ranks (ping-pong and message loop, which on a loaded 2-core machine also
# measure scheduling noise). Runs alternate so drifts in load hit both.
echo "load before: $(cut -d' ' -f1-3 /proc/loadavg)"
for ((i = 0; i < runs; i++)); do
  for np in 1 2; do
    mpirun --oversubscribe -np $np "$bench" "$iters" without$np >> "$out/res"
    mpirun --oversubscribe -np $np -x LD_PRELOAD="$tap" -x MSGCENSUS_TAP_DIR="$out/trace" \
      "$bench" "$iters" with$np >> "$out/res"
    rm -rf "$out/trace"
  done
done
echo "load after: $(cut -d' ' -f1-3 /proc/loadavg)"
/usr/bin/python3 - "$out/res" <<'PY'
import statistics, sys
rows = {}
for line in open(sys.argv[1]):
    f = line.split()
    rows.setdefault(f[0], []).append([float(x) for x in f[2::2]])
cases = (("self loop ns/call, 1 rank", 1, 2), ("pingpong ns/call, 2 ranks", 2, 0),
         ("message loop ns/msg, 2 ranks", 2, 1))
print("%-30s %10s %10s %10s" % ("median of %d runs" % len(rows["with1"]), "without", "with", "added"))
for name, np_, k in cases:
    a = statistics.median(r[k] for r in rows["without%d" % np_])
    b = statistics.median(r[k] for r in rows["with%d" % np_])
    print("%-30s %10.1f %10.1f %10.1f" % (name, a, b, b - a))
PY
