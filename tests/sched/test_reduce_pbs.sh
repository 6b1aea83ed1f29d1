#!/bin/bash
# test_reduce_pbs.sh - reduce.pbs submitted to Slurm (sbatch reads its #PBS lines): mpirun in the allocation, summary checked and archived.
. "$(dirname "$0")/sched-lib.sh"

start_slurm 4
camp=$WORK/halo-pbs
make_campaign "$camp" 4 20 11

# A reference summary outside any scheduler: the reducer under plain mpirun.
# shellcheck disable=SC2086 # MC_MPIRUN is "mpirun --oversubscribe"
${MC_MPIRUN:-mpirun --oversubscribe} -np 2 "$MC_CLI" reduce "$camp" -o "$WORK/ref.h5" --label halo-pbs --quiet ||
    fail "reference reduce under mpirun failed"

# sbatch honours #PBS directives but sets no PBS_* variables (and the qsub wrapper's
# -W block=true returns 0 even for a failed job), so the job goes in with sbatch --wait.
MC_CAMPAIGN=$camp MC_SUMMARY=$WORK/out/pbs.h5 MC_ARCHIVE=$WORK/archive MC_MIN_BYTES_PER_RANK=0 \
    submit_wait "$WORK/pbs.out" "$JOBS/reduce.pbs" || { show "$WORK/pbs.out"; fail "reduce.pbs job failed"; }
out=$WORK/pbs.out
grep -q 'running: mpirun, 4 rank(s)' "$out" || { show "$out"; fail "reduce.pbs did not use mpirun on the 4 slots of '#PBS -l select=1:ncpus=4:mpiprocs=4'"; }
grep -q 'record totals agree' "$out" || { show "$out"; fail "no record check"; }
grep -q '^#PBS -l walltime=01:00:00' "$JOBS/reduce.pbs" || fail "template lost its walltime line"
[ -r "$WORK/archive/pbs.manifest.txt" ] || fail "no manifest archived"
"$MC_PYTHON" "$(dirname "$0")/h5summary.py" same "$WORK/ref.h5" "$WORK/out/pbs.h5" || fail "PBS job's summary differs from plain mpirun's"
ok "reduce.pbs under sbatch: 4 ranks by mpirun, same datasets as a plain mpirun reduce (h5py), archived"

# The same script through Slurm's qsub wrapper (slurm-wlm-torque), as a PBS user would type it.
# The wrapper ignores '#PBS -j oe' and '-o': output goes to reduce.pbs.o<id> and .e<id> in the
# submission directory; its -W block=true returns 0 even for a failed job, so the job's exit
# code comes from scontrol.
mkdir -p "$WORK/qsub"
id=$(cd "$WORK/qsub" && MC_CAMPAIGN=$camp MC_SUMMARY=$WORK/out/qsub.h5 qsub -V "$JOBS/reduce.pbs") || fail "qsub refused reduce.pbs"
id=${id//[!0-9]/}
st=$(wait_job "$id" "$JOB_TIMEOUT") || fail "qsub job $id still $st"
code=$(scontrol show job "$id" | sed -n 's/.* ExitCode=\([0-9]*:[0-9]*\).*/\1/p')
[ "$st" = COMPLETED ] && [ "$code" = 0:0 ] || { cat "$WORK/qsub/reduce.pbs."[oe]"$id" >&2 || true; fail "qsub job ended $st ($code)"; }
grep -q 'record totals agree' "$WORK/qsub/reduce.pbs.e$id" || fail "qsub job's output has no record check"
"$MC_PYTHON" "$(dirname "$0")/h5summary.py" same "$WORK/ref.h5" "$WORK/out/qsub.h5" || fail "qsub job's summary differs"
ok "reduce.pbs through qsub -V: completed, same datasets"

# As a PBS server runs it (no Slurm): the job starts in $HOME with PBS_O_WORKDIR, PBS_NODEFILE
# (one line per slot) and PBS_JOBID set; reduce.pbs finds jobscripts/ under PBS_O_WORKDIR and
# gives Debian's mpirun (built without PBS support) --hostfile $PBS_NODEFILE.
printf 'localhost\nlocalhost\nlocalhost\n' >"$WORK/nodefile"
(cd "${HOME:-/}" && env -u SLURM_CONF -u MC_JOBSCRIPTS PBS_O_WORKDIR="$MC_SRC" PBS_NODEFILE="$WORK/nodefile" \
    PBS_JOBID=7.pbs-test MC_CAMPAIGN="$camp" MC_SUMMARY="$WORK/out/pbs-env.h5" MC_MIN_BYTES_PER_RANK=0 \
    bash "$JOBS/reduce.pbs") >"$WORK/pbs-env.out" 2>&1 || { show "$WORK/pbs-env.out"; fail "reduce.pbs in a PBS-like environment failed"; }
grep -q 'job:        PBS job 7.pbs-test' "$WORK/pbs-env.out" || { show "$WORK/pbs-env.out"; fail "PBS_JOBID not reported"; }
grep -q 'running: mpirun, 3 rank(s)' "$WORK/pbs-env.out" || { show "$WORK/pbs-env.out"; fail "not 3 ranks from the 3 slots of PBS_NODEFILE"; }
"$MC_PYTHON" "$(dirname "$0")/h5summary.py" same "$WORK/ref.h5" "$WORK/out/pbs-env.h5" || fail "PBS-environment summary differs"
ok "reduce.pbs with PBS's variables and no Slurm: 3 ranks from PBS_NODEFILE via mpirun --hostfile, same datasets"
