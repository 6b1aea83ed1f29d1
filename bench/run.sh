#!/usr/bin/env bash
# run.sh - run every benchmark and write docs/performance.md from their output.
# Never run by ctest: timing is not a pass/fail matter on shared machines.
#
# usage: bench/run.sh [--build DIR] [--quick]
#   --quick   smaller campaigns and fewer runs (for a first look)
set -euo pipefail
src=$(cd "$(dirname "$0")/.." && pwd)
BUILD=$src/build
QUICK=0
while [ $# -gt 0 ]; do
  case $1 in
  --build) BUILD=$2; shift ;;
  --quick) QUICK=1 ;;
  -h|--help) sed -n '2,6p' "$0"; exit 0 ;;
  *) echo "run.sh: unknown option $1" >&2; exit 2 ;;
  esac
  shift
done
[ -x "$BUILD/msgcensus" ] || { echo "run.sh: build first (scripts/build.sh $BUILD)" >&2; exit 1; }
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
out=$src/docs/performance.md
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
if [ "$QUICK" = 1 ]; then SIZE=256MiB; BIG=1GiB; RUNS=3; SYNTH=512MiB; else SIZE=1GiB; BIG=8GiB; RUNS=7; SYNTH=2GiB; fi

section() { # title, command...
  local title=$1; shift
  echo "== $title" >&2
  { echo "## $title"; echo; echo '```'; echo "\$ $*" | sed "s|$src/||g"; "$@" 2>&1 | sed "s|$src/||g"; echo '```'; echo; } >> "$tmp/body"
}

synth_vs_dd() {
  local d=$tmp/synth
  echo "load before: $(cut -d' ' -f1-3 /proc/loadavg)"
  for i in 1 2 3; do
    rm -rf "$d" "$tmp/dd"; sync
    /usr/bin/time -f "synth --target-size $SYNTH: %e s" "$BUILD/msgcensus" synth -o "$d" --ranks 8 \
      --target-size "$SYNTH" --seed "$i" --quiet
    sync
    /usr/bin/time -f "dd of the same size: %e s" dd if=/dev/zero of="$tmp/dd" bs=1M \
      count=$(( $(du -sm "$d" | cut -f1) )) status=none
    sync
  done
  rm -rf "$d" "$tmp/dd"
}

section "Histogram insert and statistics (bench_hist)" "$BUILD/bench/bench_hist"
section "Trace decode (bench_decode)" "$BUILD/bench/bench_decode"
section "Writing campaigns (msgcensus synth against dd)" synth_vs_dd
section "Reduction (bench/run_reduce.sh)" "$src/bench/run_reduce.sh" --build "$BUILD" --size "$SIZE" --runs "$RUNS" --big "$BIG" --profile
section "Tap overhead per MPI call (bench/tap/run.sh)" "$src/bench/tap/run.sh" "$BUILD"

{
  echo "# Performance"
  echo
  echo "Written by \`bench/run.sh\` on $(date -u '+%Y-%m-%d %H:%M UTC'), commit $(git -C "$src" rev-parse --short HEAD),"
  echo "$(nproc) cores ($(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //')), $(free -g | awk '/Mem/{print $2}') GiB."
  echo "Every figure below is the raw output of that run; the discussion in"
  echo "\`docs/performance-notes.md\` says what limits each one. Machines here are shared:"
  echo "each benchmark reports medians (or the best of several runs where it says so),"
  echo "and ratios are measured within one run."
  echo
  cat "$tmp/body"
} > "$out"
echo "wrote $out" >&2
