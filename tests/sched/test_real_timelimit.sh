#!/bin/bash
# test_real_timelimit.sh - a reduce job ended by Slurm's own wall-clock limit (--time=1, state
# TIMEOUT) resumes from its checkpoint when resubmitted and writes the same summary.
#
# test_timelimit_resume.sh covers the same path in seconds with scancel (the same signals); this
# one lets the real limit fire, which takes about a minute and a half here (one minute is the
# least a job can ask for, and the controller checks limits periodically). So that the reduce
# is still running when the limit comes, the test holds its ranks back from the moment they
# start: SIGSTOP, and SIGCONT for 10 ms of every 8 s, so they checkpoint some units
# but cannot finish. Slurm sends SIGCONT before its SIGTERM, and SIGKILL KillWait (2 s) later,
# so a held rank ends as at a real limit.
. "$(dirname "$0")/sched-lib.sh"

if ! has_checkpoint; then
    echo "SKIP: 'msgcensus reduce' has no --checkpoint option in this build"
    exit "$SKIP"
fi

start_slurm 2
ckpt=$WORK/ckpt
export MC_SUMMARY=$WORK/out/tl.h5 MC_CHECKPOINT=$ckpt MC_RANKS=2 MC_REDUCE_ARGS="--checkpoint-unit 32KiB"
ckpt_files() { find "$ckpt" -maxdepth 1 -type f -name '*.ckpt' 2>/dev/null | wc -l; }

make_campaign "$WORK/halo" 32 25600 9 --zstd
export MC_CAMPAIGN=$WORK/halo
# shellcheck disable=SC2086 # MC_MPIRUN is "mpirun --oversubscribe"
${MC_MPIRUN:-mpirun --oversubscribe} -np 2 "$MC_CLI" reduce "$MC_CAMPAIGN" -o "$WORK/ref.h5" --label halo --quiet ||
    fail "reference reduce failed"

id=$(sbatch --parsable --no-requeue --time=1 --chdir="$WORK" --output="$WORK/first.out" --ntasks=2 "$JOBS/reduce.slurm")
id=${id%%;*}
t0=$(date +%s)

# The reducer ranks of this job: processes named msgcensus whose arguments name the campaign.
ranks() { ps -eo pid=,comm=,args= | awk -v c="$MC_CAMPAIGN" '$2 == "msgcensus" && index($0, c) && / reduce / {print $1}'; }

while :; do
    st=$(job_state "$id")
    case $st in PENDING | RUNNING | CONFIGURING | COMPLETING | "") ;; *) break ;; esac
    [ $(($(date +%s) - t0)) -lt 240 ] || { scancel "$id"; fail "no time limit after 240 s"; }
    pids=$(ranks)
    if [ -z "$pids" ]; then
        sleep 0.05
        continue
    fi
    # shellcheck disable=SC2086 # a list of pids
    kill -STOP $pids 2>/dev/null || true
    sleep 7.99
    # shellcheck disable=SC2086
    kill -CONT $pids 2>/dev/null || true
    sleep 0.01
done
st=$(wait_job "$id" 30) || fail "job $id still $st"
[ "$st" = TIMEOUT ] || { show "$WORK/first.out"; fail "job ended $st, not by its time limit"; }
n_ckpt=$(ckpt_files)
note "job $id ended TIMEOUT after $(($(date +%s) - t0)) s with $n_ckpt unit(s) checkpointed"
[ ! -e "$MC_SUMMARY" ] || fail "a summary exists after the time limit"
[ "$n_ckpt" -gt 0 ] || fail "the checkpoint is gone after the time limit"

submit_wait "$WORK/second.out" --ntasks=2 "$JOBS/reduce.slurm" || { show "$WORK/second.out"; fail "resubmitted job failed"; }
resumed=$(sed -n 's/.*resumed: \([0-9]*\) of \([0-9]*\) units.*/\1 \2/p' "$WORK/second.out")
[ -n "$resumed" ] || { show "$WORK/second.out"; fail "the reducer did not say how many units it resumed"; }
read -r n_res n_units <<<"$resumed"
[ "$n_res" -ge 1 ] && [ "$n_res" -lt "$n_units" ] || fail "resumed $n_res of $n_units units: want some, not all"
"$MC_PYTHON" "$(dirname "$0")/h5summary.py" same "$WORK/ref.h5" "$MC_SUMMARY" ||
    fail "the resumed summary differs from the uninterrupted one"
ok "ended by the time limit (TIMEOUT) with $n_ckpt unit(s) checkpointed, resubmitted, resumed $n_res of $n_units: same datasets as an uninterrupted reduce (h5py)"
