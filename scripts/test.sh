#!/usr/bin/env bash
# test.sh - the full test suite: install what is missing, build with warnings
# as errors, run every test; then build with ASan/UBSan and run them again.
set -euo pipefail
src=$(cd "$(dirname "$0")/.." && pwd)
"$src/scripts/deps.sh" --test
jobs=$(nproc)
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1

echo "== build (warnings are errors)"
"$src/scripts/build.sh" "$src/build-test" -DMC_WERROR=ON
echo "== tests"
ctest --test-dir "$src/build-test" --output-on-failure -j"$jobs" --timeout 900

echo "== build with AddressSanitizer + UndefinedBehaviorSanitizer"
"$src/scripts/build.sh" "$src/build-asan" -DMC_WERROR=ON -DMC_SANITIZE=ON -DMC_BUILD_BENCH=OFF
echo "== tests under sanitizers"
ctest --test-dir "$src/build-asan" --output-on-failure -j"$jobs" --timeout 1800 -LE nosan

echo "== fuzzing the trace reader, the decoders and the CSV importer (60 s, ASan/UBSan)"
MC_FUZZ_BUILD="$src/build-fuzz" "$src/tests/fuzz/run.sh" 60
