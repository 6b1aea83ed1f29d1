# shellcheck shell=bash disable=SC2034 # sourced: the variables are for the tests
# sched-lib.sh - what the batch-script tests share: a work directory, a private Slurm, synthetic campaigns, job submission.
# Sourced by tests/sched/test_*.sh; they run from their build directory with the environment
# of mc_script_test (MC_CLI, MC_SRC, MC_BUILD, MC_PYTHON, and Open MPI's run-as-root variables,
# which sbatch passes on to the jobs).
set -euo pipefail

: "${MC_CLI:?MC_CLI must name the msgcensus command}"
: "${MC_SRC:?MC_SRC must name the source directory}"
MC_PYTHON=${MC_PYTHON:-/usr/bin/python3}
SKIP=77 # ctest SKIP_RETURN_CODE of the sched tests

TEST=$(basename "$0" .sh)
WORK=$PWD/$TEST.d
JOBS=$MC_SRC/jobscripts
LOCAL_SLURM=$MC_SRC/tests/sched/local-slurm.sh
export MC_BIN=$MC_CLI
# A job that does not end within this many seconds fails the test (ctest's own timeout
# would kill the test before its trap could stop the cluster).
JOB_TIMEOUT=${MC_SCHED_JOB_TIMEOUT:-100}
# Daemons of an earlier, killed run of this test are stopped before its directory goes.
"$LOCAL_SLURM" stop "$WORK/slurm"
rm -rf "$WORK"
mkdir -p "$WORK"

fail() { echo "FAIL ($TEST): $*" >&2; exit 1; }
ok() { echo "ok ($TEST): $*"; }
note() { echo "-- ($TEST) $*"; }

# Start a private Slurm for this test; it is stopped, by process id, when the test exits.
start_slurm() {
    "$LOCAL_SLURM" start "$WORK/slurm" "${1:-4}"
    trap stop_slurm EXIT
    "$LOCAL_SLURM" watch "$WORK/slurm" $$
    # shellcheck source=/dev/null # written by local-slurm.sh start
    . "$WORK/slurm/env.sh"
}
stop_slurm() {
    local rc=$?
    "$LOCAL_SLURM" stop "$WORK/slurm" || true
    return "$rc"
}

# make_campaign DIR RANKS STEPS [SEED] [synth options...]: a synthetic campaign.
make_campaign() {
    local dir=$1 ranks=$2 steps=$3 seed=${4:-1}
    shift 4 || shift $#
    "$MC_CLI" synth -o "$dir" --ranks "$ranks" --steps "$steps" --seed "$seed" --quiet "$@" ||
        fail "msgcensus synth -o $dir failed"
}

# submit_wait OUT SBATCH-ARGS... SCRIPT [ARGS...]: submit, wait for the job to end, return its
# exit status, output in OUT. (`sbatch --wait` does the same, but polls at 2 s and more; this
# polls scontrol at 0.2 s, which keeps the suite short.) A job still running after JOB_TIMEOUT
# seconds fails the test. --no-requeue: a job whose launch fails ends instead of waiting, held.
submit_wait() {
    local out=$1 id st code
    shift
    id=$(sbatch --parsable --no-requeue --chdir="$WORK" --output="$out" "$@") || fail "sbatch $* refused the job"
    id=${id%%;*}
    st=$(wait_job "$id" "$JOB_TIMEOUT") || { show "$out"; squeue >&2 || true; fail "job $id still $st after $JOB_TIMEOUT s"; }
    # ExitCode=STATUS:SIGNAL of the batch script.
    code=$(scontrol show job "$id" | sed -n 's/.* ExitCode=\([0-9]*\):\([0-9]*\).*/\1 \2/p')
    [ -n "$code" ] || fail "no exit code for job $id"
    # shellcheck disable=SC2086 # split "STATUS SIGNAL"
    set -- $code
    [ "$2" = 0 ] || return $((128 + $2))
    return "$1"
}

# show FILE: print a job's output file into the test log.
show() { echo "---- $1"; cat "$1" || true; echo "----"; }

# State of a job known to the controller (COMPLETED, FAILED, CANCELLED, TIMEOUT, ...).
job_state() { scontrol show job "$1" 2>/dev/null | sed -n 's/.*JobState=\([A-Z_]*\).*/\1/p'; }

# wait_job ID SECONDS: wait until job ID has left the queue; prints its final state.
wait_job() {
    local id=$1 secs=$2 st
    local tries=$((secs * 5))
    while :; do
        st=$(job_state "$id")
        case $st in
        PENDING | RUNNING | CONFIGURING | COMPLETING | SUSPENDED | "") ;;
        *) echo "$st"; return 0 ;;
        esac
        tries=$((tries - 1))
        [ "$tries" -gt 0 ] || { echo "$st"; return 1; }
        sleep 0.2
    done
}

# has_checkpoint: this msgcensus lists 'reduce --checkpoint'.
has_checkpoint() { "$MC_CLI" reduce --help 2>/dev/null | grep -q -- '--checkpoint'; }
