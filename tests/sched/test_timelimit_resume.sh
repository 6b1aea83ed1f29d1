#!/bin/bash
# test_timelimit_resume.sh - a reduce job killed midway, as at its wall-clock limit, resumes from its checkpoint when resubmitted and writes the same summary.
#
# How the kill is made: `scancel JOBID` takes the job down exactly as Slurm's time limit does
# (SIGCONT and SIGTERM to every step and the batch shell, SIGKILL KillWait seconds later; KillWait
# is 2 s in local-slurm.sh's slurm.conf). A real --time=1 limit is too slow for a test: a job
# with --time=1 got its SIGTERM 88 s after it started on this machine (one minute is the least,
# and the controller checks limits periodically), at a point that depends on the machine's speed.
# Here the job is cancelled as soon as its first unit is checkpointed: within seconds, with most
# of the reduction still to do. (Freezing the job first with scontrol suspend would pin the point
# better, but Slurm then ends it without the SIGTERM a time limit sends.) When the reduce is over
# before the kill, or had checkpointed every unit by the time the kill took effect (a fast
# machine), the campaign is made 4 times larger and the test tries again.
. "$(dirname "$0")/sched-lib.sh"

if ! has_checkpoint; then
    echo "SKIP: 'msgcensus reduce --help' lists no --checkpoint option in this build, so a killed"
    echo "      reduce job cannot resume yet; this test runs once the option exists."
    exit "$SKIP"
fi

start_slurm 2
ckpt=$WORK/ckpt
# Small units (when the reducer lets us choose) make many checkpoints out of a small campaign.
unit_args=
if "$MC_CLI" reduce --help | grep -q -- '--checkpoint-unit'; then unit_args="--checkpoint-unit 32KiB"; fi
export MC_SUMMARY=$WORK/out/big.h5 MC_CHECKPOINT=$ckpt MC_RANKS=2 MC_REDUCE_ARGS=${MC_SCHED_RESUME_REDUCE_ARGS:-$unit_args}

# Checkpoint files written so far (the reducer's finished units).
ckpt_files() { find "$ckpt" -maxdepth 1 -type f -name '*.ckpt' 2>/dev/null | wc -l; }

# kill_midway STEPS: a zstd campaign of 32 ranks (32 files, so at least 16 units per reducer
# rank) and STEPS steps, a reference summary, and a
# reduce job stopped after its first checkpoint. Returns 1 when the job finished before it
# could be stopped (the campaign was too small for this machine), 0 when it was killed.
kill_midway() {
    local steps=$1 t0 id st
    rm -rf "$WORK/halo" "$WORK/ref.h5" "$WORK/out" "$ckpt"
    make_campaign "$WORK/halo" 32 "$steps" 9 --zstd
    export MC_CAMPAIGN=$WORK/halo
    t0=$(date +%s.%N)
    # shellcheck disable=SC2086 # MC_MPIRUN is "mpirun --oversubscribe"
    ${MC_MPIRUN:-mpirun --oversubscribe} -np 2 "$MC_CLI" reduce "$MC_CAMPAIGN" -o "$WORK/ref.h5" --label halo --quiet ||
        fail "reference reduce failed"
    note "$steps steps, $(du -sh "$MC_CAMPAIGN" | cut -f1): uninterrupted reduce $(awk -v a="$t0" -v b="$(date +%s.%N)" 'BEGIN {printf "%.2f", b - a}') s"
    id=$(sbatch --parsable --no-requeue --chdir="$WORK" --output="$WORK/first.out" --ntasks=2 "$JOBS/reduce.slurm")
    id=${id%%;*}
    # Kill it the way the time limit does as soon as a unit is checkpointed.
    local tries=1200
    until [ "$(ckpt_files)" -gt 0 ]; do
        st=$(job_state "$id")
        case $st in PENDING | RUNNING | CONFIGURING | "") ;; *) note "job ended $st before its first checkpoint"; return 1 ;; esac
        tries=$((tries - 1))
        [ "$tries" -gt 0 ] || fail "no checkpoint after 60 s"
        sleep 0.05
    done
    scancel "$id"
    note "job $id cancelled with $(ckpt_files) unit(s) checkpointed"
    st=$(wait_job "$id" 30) || fail "killed job still $st"
    [ "$st" = CANCELLED ] || { note "job ended $st, not by the kill"; return 1; }
    return 0
}

# resume_after_kill: resubmit the killed job; it must resume from its checkpoint. Sets n_ckpt,
# n_res and n_units. Returns 1 when every unit had been checkpointed before the kill took
# effect (the reduction was all but over: nothing shows a partial resume), 0 otherwise.
resume_after_kill() {
    [ ! -e "$MC_SUMMARY" ] || fail "a summary exists after the kill"
    n_ckpt=$(ckpt_files)
    [ "$n_ckpt" -gt 0 ] || fail "the checkpoint is gone after the kill"
    grep -q 'stopped by SIGTERM (time limit or cancel); resubmit the same job to resume' "$WORK/first.out" ||
        { show "$WORK/first.out"; fail "the killed job did not say how to resume"; }
    # Resubmit the same job: it resumes and writes the reference's summary.
    submit_wait "$WORK/second.out" --ntasks=2 "$JOBS/reduce.slurm" || { show "$WORK/second.out"; fail "resubmitted job failed"; }
    grep -q 'resuming from checkpoint' "$WORK/second.out" || { show "$WORK/second.out"; fail "the resubmitted job did not see its checkpoint"; }
    local resumed
    resumed=$(sed -n 's/.*resumed: \([0-9]*\) of \([0-9]*\) units.*/\1 \2/p' "$WORK/second.out")
    [ -n "$resumed" ] || { show "$WORK/second.out"; fail "the reducer did not say how many units it resumed"; }
    read -r n_res n_units <<<"$resumed"
    [ "$n_res" -ge 1 ] || fail "resumed $n_res of $n_units units: want some"
    if [ "$n_res" -ge "$n_units" ]; then
        note "all $n_units units were checkpointed before the kill took effect"
        return 1
    fi
    return 0
}

killed=0
for steps in ${MC_SCHED_RESUME_STEPS:-1600 6400 25600}; do
    kill_midway "$steps" || continue
    if resume_after_kill; then killed=1; break; fi
done
[ "$killed" = 1 ] || { show "$WORK/first.out"; fail "every reduce finished, or checkpointed every unit, before it could be killed midway"; }
grep -q 'record totals agree' "$WORK/second.out" || fail "no record check after resuming"
"$MC_PYTHON" "$(dirname "$0")/h5summary.py" same "$WORK/ref.h5" "$MC_SUMMARY" ||
    fail "the resumed summary differs from the uninterrupted one"
[ ! -e "$ckpt" ] || [ -z "$(find "$ckpt" -name '*.ckpt')" ] || fail "checkpoint files left after the successful run"
ok "killed after $n_ckpt checkpointed unit(s), resubmitted, resumed $n_res of $n_units units: same datasets as an uninterrupted reduce (h5py)"
