#!/usr/bin/env bash
# acceptance.sh - the reducer's check at scale, too big for the test suite:
# write a 64-rank synthetic campaign of several GiB, reduce it under
# mpirun -np 1..4, and check that every dataset of the four summaries is
# bit-identical (h5py, Debian python3-h5py), that NumPy's mean and median
# from a stored histogram match the stored statistics, and that the report
# fits an 80-column terminal.
#
# usage: scripts/acceptance.sh [--build DIR] [--work DIR] [--size 3GiB]
#                              [--ranks "1 2 3 4"] [--keep]
#   --work DIR  where the campaign and the summaries go (default
#               /tmp/mc-acceptance); it must not exist yet, or hold only
#               what an earlier run of this script left there
#   --keep      keep the campaign (default: delete it at the end; only
#               the directory this script wrote is ever deleted)
set -euo pipefail
src=$(cd "$(dirname "$0")/.." && pwd)
BUILD=$src/build
WORK=/tmp/mc-acceptance
SIZE=3GiB
RANKS="1 2 3 4"
KEEP=0
while [ $# -gt 0 ]; do
  case $1 in
  --build) BUILD=$2; shift ;;
  --work) WORK=$2; shift ;;
  --size) SIZE=$2; shift ;;
  --ranks) RANKS=$2; shift ;;
  --keep) KEEP=1 ;;
  -h|--help) sed -n '2,15p' "$0"; exit 0 ;;
  *) echo "acceptance.sh: unknown option $1" >&2; exit 2 ;;
  esac
  shift
done
CLI=$BUILD/msgcensus
[ -x "$CLI" ] || { echo "acceptance.sh: no $CLI (scripts/build.sh first)" >&2; exit 1; }
if [ -e "$WORK" ] && [ ! -f "$WORK/.mc-acceptance" ]; then
  echo "acceptance.sh: $WORK exists and was not made by this script; pick another --work" >&2
  exit 2
fi
mkdir -p "$WORK"
touch "$WORK/.mc-acceptance"
cleanup() { [ "$KEEP" = 1 ] || rm -rf "$WORK/campaign"; }
trap cleanup EXIT
[ "$(id -u)" -eq 0 ] && export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
MPIRUN="mpirun --oversubscribe"

echo "== synth: 64 ranks, deck-b, $SIZE in $WORK/campaign"
rm -rf "$WORK/campaign"
"$CLI" synth -q -o "$WORK/campaign" --ranks 64 --input deck-b --target-size "$SIZE" --seed 7
du -sh "$WORK/campaign" | cut -f1 | sed 's/^/   on disk: /'
sums=()
for p in $RANKS; do
  out=$WORK/summary.$p.h5
  echo "== reduce under mpirun -np $p (--per-comm)"
  $MPIRUN -np "$p" "$CLI" reduce "$WORK/campaign" -o "$out" --per-comm --label deck-b --force 2>&1 |
    grep '^reduce:' | sed 's/^/   /'
  sums+=("$out")
done

echo "== compare every dataset with the first summary (h5py)"
MC_CLI=$CLI /usr/bin/python3 - "$src/tests/reduce" "${sums[@]}" <<'EOF'
import sys
sys.path.insert(0, sys.argv.pop(1))
import h5py  # Debian python3-h5py
import numpy as np  # Debian python3-numpy
from reduce_common import datasets, same  # bit-identical, NaN-safe

ref = datasets(sys.argv[1])
bad = 0
for path in sys.argv[2:]:
    d = datasets(path)
    diff = sorted(set(d) ^ set(ref)) + sorted(k for k in ref if k in d and not same(ref[k], d[k]))
    print("   %s: %d datasets, %s" % (path, len(d), "all identical" if not diff else "DIFFER: %s" % diff[:5]))
    bad += len(diff)

# NumPy from the stored histogram of all messages: the weighted mean
# (np.average) and the median as np.median defines it (docs/statistics.md),
# found in the cumulative counts instead of repeating billions of sizes.
with h5py.File(sys.argv[1], "r") as h:
    g = h["populations/all"]
    sizes = g["hist_sizes"][...].astype(np.float64)
    counts = g["hist_counts"][...].astype(np.int64)
    stats = {r["metric"].decode(): r["value"] for r in g["stats"][...]}
mean = np.average(sizes, weights=counts)
cum = np.cumsum(counts)
n = int(cum[-1])
lo = sizes[np.searchsorted(cum, (n + 1) // 2)]  # the ((n+1)//2)-th value
hi = sizes[np.searchsorted(cum, n // 2 + 1)]    # the (n//2+1)-th value
med = lo if n % 2 else (lo + hi) / 2            # as np.median
print("   all messages: %d; mean %.9g (stored %.9g), median %.9g (stored %.9g)"
      % (n, mean, stats["mean"], med, stats["median"]))
if not (np.isclose(mean, stats["mean"], rtol=1e-12, atol=0)
        and np.isclose(med, stats["median"], rtol=1e-15, atol=0)):
    bad += 1
    print("   MISMATCH with NumPy")
sys.exit(1 if bad else 0)
EOF

echo "== report (first lines; widest line must fit 80 columns)"
"$CLI" report "${sums[0]}" >"$WORK/report.txt"
head -25 "$WORK/report.txt" | sed 's/^/   /'
width=$(awk '{ if (length($0) > w) w = length($0) } END { print w + 0 }' "$WORK/report.txt")
echo "   widest line: $width columns"
[ "$width" -le 80 ] || { echo "acceptance.sh: report wider than 80 columns" >&2; exit 1; }
echo "== acceptance: passed (summaries kept in $WORK)"
