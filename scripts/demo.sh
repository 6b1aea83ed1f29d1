#!/usr/bin/env bash
# demo.sh - the main job on a demo campaign: install what is missing, build,
# write a synthetic 64-rank campaign (a 3-D halo-exchange solver), check it,
# reduce it under mpirun on all cores and print the report.
set -euo pipefail
src=$(cd "$(dirname "$0")/.." && pwd)
"$src/scripts/deps.sh"
"$src/scripts/build.sh" "$src/build" -DMC_BUILD_TESTS=OFF
mc="$src/build/msgcensus"
demo=${MC_DEMO_DIR:-$src/demo}
mkdir -p "$demo"
np=$(nproc)
[ "$(id -u)" -eq 0 ] && export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1

echo "== synth: 64-rank halo-exchange campaign in $demo/campaign"
"$mc" synth -o "$demo/campaign" --ranks 64 --steps 200 --seed 1 --input deck-a --force
echo "== verify"
"$mc" verify "$demo/campaign"
echo "== reduce with $np reducer ranks"
mpirun --oversubscribe -np "$np" "$mc" reduce "$demo/campaign" -o "$demo/summary.h5" \
       --label deck-a --force
echo "== report"
"$mc" report "$demo/summary.h5"
