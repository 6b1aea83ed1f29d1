#!/bin/bash
# test_campaign_chain.sh - campaign.slurm runs the "application" and chains reduce.slurm after it with --dependency=afterok.
# Usage: test_campaign_chain.sh [TAP_LIB RING_APP]
# Cases 1 and 2 use `msgcensus synth` standing in for the application (MC_APP_LAUNCHER=none: it
# writes the campaign itself, no tap). Case 3, when the tap library and ring_app.c's program are
# given, runs a real MPI program under the tap with srun --mpi=pmix.
. "$(dirname "$0")/sched-lib.sh"
TAP=${1:-}
RING=${2:-}

start_slurm 4
camp=$WORK/halo-chain

# 1. A campaign job that succeeds: the reduce job runs after it and archives the summary.
MC_CAMPAIGN=$camp MC_APP_LAUNCHER=none MC_SUMMARY=$WORK/out/chain.h5 MC_ARCHIVE=$WORK/archive \
    MC_MIN_BYTES_PER_RANK=0 MC_REDUCE_SBATCH_ARGS="--output=$WORK/reduce-%j.out" \
    submit_wait "$WORK/campaign.out" --ntasks=1 "$JOBS/campaign.slurm" \
    "$MC_CLI" synth -o "$camp" --ranks 4 --steps 20 --seed 3 --quiet ||
    { show "$WORK/campaign.out"; fail "campaign job failed"; }
campaign_id=$(sed -n 's/.*reduce job [0-9]* submitted; it starts when job \([0-9]*\) ends.*/\1/p' "$WORK/campaign.out")
reduce_id=$(sed -n 's/.*reduce job \([0-9]*\) submitted.*/\1/p' "$WORK/campaign.out")
[ -n "$reduce_id" ] || { show "$WORK/campaign.out"; fail "campaign job did not submit a reduce job"; }
grep -q 'application done: 4 trace files' "$WORK/campaign.out" || { show "$WORK/campaign.out"; fail "no traces reported"; }
# Slurm recorded the dependency on the campaign job (it stays in scontrol's view, MinJobAge).
scontrol show job "$reduce_id" | grep -q "Dependency=\(afterok:$campaign_id\|(null)\)" || fail "reduce job has an unexpected dependency"
st=$(wait_job "$reduce_id" 120) || fail "reduce job $reduce_id still $st after 120 s"
[ "$st" = COMPLETED ] || { show "$WORK/reduce-$reduce_id.out"; fail "reduce job ended $st"; }
grep -q 'record totals agree' "$WORK/reduce-$reduce_id.out" || fail "reduce job did not check the summary"
# It ran with reduce.slurm's own #SBATCH --ntasks=4, not the 1 task of the job that submitted it.
grep -q 'allocation: 4 slots' "$WORK/reduce-$reduce_id.out" || { show "$WORK/reduce-$reduce_id.out"; fail "reduce job did not get its own 4 tasks"; }
[ -r "$WORK/archive/chain.manifest.txt" ] && [ -r "$WORK/archive/chain.h5" ] || fail "nothing archived"
# The reduce job started only after the campaign job had ended (Slurm's own times).
end_c=$(scontrol show job "$campaign_id" | sed -n 's/.*EndTime=\([^ ]*\).*/\1/p')
start_r=$(scontrol show job "$reduce_id" | sed -n 's/.*StartTime=\([^ ]*\).*/\1/p')
[ "$(date -d "$start_r" +%s)" -ge "$(date -d "$end_c" +%s)" ] || fail "reduce started $start_r, before the campaign ended $end_c"
ok "campaign job $campaign_id then reduce job $reduce_id (afterok): summary checked and archived"

# 2. A campaign job that fails: its reduce job never runs (--kill-on-invalid-dep=yes cancels it).
rc=0
MC_CAMPAIGN=$WORK/halo-failed MC_APP_LAUNCHER=none MC_SUMMARY=$WORK/out/failed.h5 \
    MC_REDUCE_SBATCH_ARGS="--ntasks=1 --output=$WORK/reduce-%j.out" \
    submit_wait "$WORK/failed.out" --ntasks=1 "$JOBS/campaign.slurm" /bin/false || rc=$?
[ "$rc" != 0 ] || fail "campaign job with a failing application succeeded"
reduce_id=$(sed -n 's/.*reduce job \([0-9]*\) submitted.*/\1/p' "$WORK/failed.out")
[ -n "$reduce_id" ] || { show "$WORK/failed.out"; fail "no reduce job submitted"; }
st=$(wait_job "$reduce_id" 30) || fail "reduce job of a failed campaign still $st after 30 s"
[ "$st" = CANCELLED ] || fail "reduce job of a failed campaign ended $st, want CANCELLED"
[ ! -e "$WORK/out/failed.h5" ] || fail "a summary appeared for a failed campaign"
ok "a failed campaign job cancels its dependent reduce job"

# 3. A real MPI program under the tap (srun --mpi=pmix, LD_PRELOAD), reduced by the chained job.
if [ -z "$TAP" ] || [ -z "$RING" ]; then
    note "no tap library and ring program given: case 3 (application under the tap) not run"
    exit 0
fi
# A sanitizer build of the tap needs its runtimes preloaded first (in ldd's order).
preload=$(ldd "$TAP" | awk '/lib(asan|ubsan)\.so/ {printf "%s:", $3}')$TAP
steps=10
MC_CAMPAIGN=$WORK/ring MC_TAP_LIB=$preload MC_SUMMARY=$WORK/out/ring.h5 MC_MIN_BYTES_PER_RANK=0 \
    MC_REDUCE_SBATCH_ARGS="--ntasks=2 --output=$WORK/reduce-%j.out" \
    submit_wait "$WORK/ring.out" --ntasks=4 "$JOBS/campaign.slurm" "$RING" "$steps" ||
    { show "$WORK/ring.out"; fail "campaign job of ring_app under the tap failed"; }
grep -q 'application done: 4 trace files' "$WORK/ring.out" || { show "$WORK/ring.out"; fail "the tap did not write 4 traces"; }
reduce_id=$(sed -n 's/.*reduce job \([0-9]*\) submitted.*/\1/p' "$WORK/ring.out")
st=$(wait_job "$reduce_id" 120) || fail "reduce job $reduce_id still $st"
[ "$st" = COMPLETED ] || { show "$WORK/reduce-$reduce_id.out"; fail "reduce of the tapped campaign ended $st"; }
# The MPI_Isend census against the program's construction: 4 ranks x 10 steps, sizes cycling
# 16, 1024, 65536 B, so 4 x (4, 3, 3) messages. One MPI_Isend call is one message of
# count x 1 byte (MPI_BYTE), by the MPI standard's definition of the send.
"$MC_PYTHON" - "$WORK/out/ring.h5" <<'PY' || fail "MPI_Isend histogram of the tapped run is not the program's"
import sys
import h5py  # Debian's python3-h5py
with h5py.File(sys.argv[1], "r") as f:
    g = f["populations/op:MPI_Isend"]
    got = dict(zip(g["hist_sizes"][()].tolist(), g["hist_counts"][()].tolist()))
want = {16: 4 * 4, 1024: 4 * 3, 65536: 4 * 3}
print("MPI_Isend sizes:counts", got, "want", want)
sys.exit(0 if got == want else 1)
PY
ok "ring_app under the tap (srun --mpi=pmix) then the chained reduce: MPI_Isend census as constructed"
