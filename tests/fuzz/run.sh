#!/usr/bin/env bash
# run.sh - build the libFuzzer harnesses and run each for its share of a time
# budget; exits non-zero on any finding (crash, sanitizer report, broken
# invariant, timeout, memory limit).
#
#   tests/fuzz/run.sh SECONDS [HARNESS...]
#
# SECONDS is the total budget, split evenly over the harnesses (at least 5 s
# each). HARNESS names a subset: trace_reader trace_fixup trace_decode csv.
# Environment: MC_FUZZ_BUILD (build dir, default <src>/build-fuzz),
# MC_FUZZ_JOBS (build jobs, default 2). The working corpus grows in
# $MC_FUZZ_BUILD/fuzz/work-<harness> between runs; the committed seeds in
# tests/fuzz/corpus/ are only read. Findings land in
# $MC_FUZZ_BUILD/fuzz/findings/.
set -euo pipefail
src=$(cd "$(dirname "$0")/../.." && pwd)
budget=${1:?usage: run.sh SECONDS [HARNESS...]}
shift
[[ $budget =~ ^[0-9]+$ ]] || { echo "run.sh: SECONDS must be a whole number" >&2; exit 2; }
all=(trace_reader trace_fixup trace_decode csv)
harnesses=("${@:-${all[@]}}")
build=${MC_FUZZ_BUILD:-$src/build-fuzz}
jobs=${MC_FUZZ_JOBS:-2}

# harness -> seed corpus, dictionary, longest input
declare -A corpus=([trace_reader]=trace [trace_fixup]=trace [trace_decode]=trace [csv]=csv)
declare -A dict=([trace_reader]=trace.dict [trace_fixup]=trace.dict [trace_decode]=trace.dict [csv]=csv.dict)
declare -A maxlen=([trace_reader]=65536 [trace_fixup]=65536 [trace_decode]=4096 [csv]=16384)
for h in "${harnesses[@]}"; do
  [[ -n ${corpus[$h]:-} ]] || { echo "run.sh: unknown harness '$h' (known: ${all[*]})" >&2; exit 2; }
done

echo "== configure and build $build"
if [[ ! -f $build/CMakeCache.txt ]]; then
  CC=clang cmake -S "$src" -B "$build" -DMC_BUILD_FUZZ=ON -DMC_SANITIZE=ON \
    -DMC_BUILD_TAP=OFF -DMC_BUILD_TESTS=OFF -DMC_BUILD_BENCH=OFF >/dev/null
fi
targets=(fuzz_make_corpus)
for h in "${harnesses[@]}"; do targets+=("fuzz_$h"); done
if ! cmake --build "$build" -j"$jobs" --target "${targets[@]}" >"$build/fuzz-build.log" 2>&1; then
  tail -30 "$build/fuzz-build.log"
  echo "run.sh: build failed (log $build/fuzz-build.log)" >&2
  exit 2
fi

bin=$build/fuzz
findings=$bin/findings
mkdir -p "$findings"
# Fresh seeds from the current writer and exporter, next to the committed
# ones (so a format change never leaves the fuzzer without valid inputs).
fresh=$bin/fresh-seeds
rm -rf "$fresh"
mkdir -p "$fresh/trace" "$fresh/csv"
"$bin/fuzz_make_corpus" "$fresh/trace" "$fresh/csv" >/dev/null

share=$(( budget / ${#harnesses[@]} ))
(( share >= 5 )) || share=5
status=0
summary=()
for h in "${harnesses[@]}"; do
  work=$bin/work-$h
  mkdir -p "$work"
  log=$bin/$h.log
  echo "== fuzz_$h for ${share}s (log $log)"
  set +e
  ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 \
  UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
  "$bin/fuzz_$h" -max_total_time="$share" -rss_limit_mb=2048 -timeout=10 \
    -max_len="${maxlen[$h]}" -dict="$src/tests/fuzz/${dict[$h]}" \
    -artifact_prefix="$findings/$h-" -print_final_stats=1 \
    "$work" "$src/tests/fuzz/corpus/${corpus[$h]}" "$fresh/${corpus[$h]}" \
    >"$log" 2>&1
  rc=$?
  set -e
  runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log" | tail -1)
  cov=$(grep -Eo 'cov: [0-9]+' "$log" | tail -1 || true)
  if (( rc != 0 )); then
    status=1
    echo "!! fuzz_$h: finding (exit $rc); last lines of the log:"
    tail -25 "$log"
    ls -1 "$findings"/"$h"-* 2>/dev/null || true
  fi
  summary+=("fuzz_$h: ${share}s, ${runs:-?} executions, ${cov:-cov: ?}, corpus $(ls "$work" | wc -l) files, exit $rc")
done
echo "== summary"
printf '%s\n' "${summary[@]}"
exit $status
