#!/usr/bin/env bash
# build.sh - configure and build msgcensus.
#   scripts/build.sh [BUILD_DIR] [extra cmake options...]
set -euo pipefail
src=$(cd "$(dirname "$0")/.." && pwd)
dir=${1:-$src/build}
shift || true
cmake -S "$src" -B "$dir" -DCMAKE_BUILD_TYPE=RelWithDebInfo "$@" >/dev/null
cmake --build "$dir" -j"$(nproc)"
