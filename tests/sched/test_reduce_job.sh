#!/bin/bash
# test_reduce_job.sh - reduce.slurm under a real Slurm: verify, reduce (srun --mpi=pmix, and mpirun), check, archive.
. "$(dirname "$0")/sched-lib.sh"

start_slurm 4
camp=$WORK/halo-4
make_campaign "$camp" 4 30 7
nfiles=$(find "$camp" -name '*.mct' | wc -l)

# 1. srun --mpi=pmix, the ranks from reducer-ranks.sh (no per-rank minimum: 4 slots -> 4 ranks),
#    archive into $WORK/archive.
MC_CAMPAIGN=$camp MC_SUMMARY=$WORK/out/srun.h5 MC_ARCHIVE=$WORK/archive MC_MIN_BYTES_PER_RANK=0 \
    submit_wait "$WORK/srun.out" --ntasks=4 "$JOBS/reduce.slurm" || { show "$WORK/srun.out"; fail "srun job failed"; }
grep -q 'advice: 4 rank(s)' "$WORK/srun.out" || { show "$WORK/srun.out"; fail "reducer-ranks.sh did not advise 4 ranks"; }
grep -q 'running: srun, 4 rank(s)' "$WORK/srun.out" || { show "$WORK/srun.out"; fail "not launched with srun on 4 ranks"; }
grep -q 'record totals agree' "$WORK/srun.out" || { show "$WORK/srun.out"; fail "no record check in the job output"; }
[ "$("$MC_PYTHON" "$(dirname "$0")/h5summary.py" attr "$WORK/out/srun.h5" reducer_ranks)" = 4 ] ||
    fail "the summary does not say 4 reducer ranks"
ok "reduce.slurm with srun --mpi=pmix on 4 ranks"

# 2. mpirun inside the allocation, 3 ranks given by MC_RANKS, no archive.
MC_CAMPAIGN=$camp MC_SUMMARY=$WORK/out/mpirun.h5 MC_LAUNCHER=mpirun MC_RANKS=3 \
    submit_wait "$WORK/mpirun.out" --ntasks=4 "$JOBS/reduce.slurm" || { show "$WORK/mpirun.out"; fail "mpirun job failed"; }
grep -q 'running: mpirun, 3 rank(s)' "$WORK/mpirun.out" || { show "$WORK/mpirun.out"; fail "not launched with mpirun on 3 ranks"; }
grep -q 'no archive step' "$WORK/mpirun.out" || fail "archive step not skipped without MC_ARCHIVE"
# Same campaign, other launcher and rank count: the same datasets (h5py).
"$MC_PYTHON" "$(dirname "$0")/h5summary.py" same "$WORK/out/srun.h5" "$WORK/out/mpirun.h5" ||
    fail "srun and mpirun summaries differ"
ok "reduce.slurm with mpirun on 3 ranks gives the same summary"

# 3. The archive: summary copy, manifest, checksums.
base=srun
man=$WORK/archive/$base.manifest.txt
[ -r "$man" ] || fail "no manifest in the archive"
cmp -s "$WORK/out/srun.h5" "$WORK/archive/srun.h5" || fail "archived summary differs from the job's"
field() { sed -n "s/^$1: //p" "$man"; }
[ "$(field campaign)" = "$camp" ] || fail "manifest campaign '$(field campaign)' is not $camp"
[ "$(field files)" = "$nfiles" ] || fail "manifest files $(field files), want $nfiles"
# Bytes and checksums against coreutils (stat, sha256sum), outside the project.
want_bytes=$(stat -c %s "$camp"/*.mct | awk '{b+=$1} END {print b}')
[ "$(field bytes)" = "$want_bytes" ] || fail "manifest bytes $(field bytes), want $want_bytes"
[ "$(field tool_version)" = "$("$MC_CLI" --version)" ] || fail "manifest tool_version '$(field tool_version)'"
[ "$(field summary_sha256)" = "$(sha256sum "$WORK/archive/srun.h5" | cut -d' ' -f1)" ] || fail "summary sha256"
(cd "$camp" && sha256sum --quiet -c "$WORK/archive/$(field checksums)") || fail "sha256sum -c of the manifest's checksums failed"
[ "$(wc -l <"$WORK/archive/$(field checksums)")" = "$nfiles" ] || fail "checksum list is not one line per trace"
# The record total: manifest = summary (h5py) = verify.
verify_records=$("$MC_CLI" verify "$camp" | sed -n 's/.*[ ;]\([0-9][0-9]*\) records.*/\1/p')
[ "$(field records)" = "$verify_records" ] || fail "manifest records $(field records), verify counts $verify_records"
[ "$("$MC_PYTHON" "$(dirname "$0")/h5summary.py" attr "$WORK/out/srun.h5" records_read)" = "$verify_records" ] ||
    fail "summary records_read differs from verify's total"
# The summary's sources table (h5py): one row per trace, with its size (stat) and a record
# count that adds up to verify's total.
"$MC_PYTHON" "$(dirname "$0")/h5summary.py" sources "$WORK/out/srun.h5" >"$WORK/sources.txt"
[ "$(wc -l <"$WORK/sources.txt")" = "$nfiles" ] || fail "summary lists $(wc -l <"$WORK/sources.txt") sources, want $nfiles"
while read -r path bytes _ _; do
    [ "$(stat -c %s "$camp/$(basename "$path")")" = "$bytes" ] || fail "$path: summary says $bytes bytes"
done <"$WORK/sources.txt"
[ "$(awk '{r+=$3} END {print r}' "$WORK/sources.txt")" = "$verify_records" ] || fail "per-source records do not add up to verify's total"
ok "archive: summary copy, manifest fields and checksums agree with sha256sum, stat and verify"

# 4. Resubmitting a finished job checks the existing summary instead of reducing again.
MC_CAMPAIGN=$camp MC_SUMMARY=$WORK/out/srun.h5 MC_ARCHIVE=$WORK/archive \
    submit_wait "$WORK/again.out" --ntasks=2 "$JOBS/reduce.slurm" || { show "$WORK/again.out"; fail "resubmitted job failed"; }
grep -q 'not reducing again' "$WORK/again.out" || { show "$WORK/again.out"; fail "finished job reduced again"; }
grep -q 'reusing .*verify.txt' "$WORK/again.out" || { show "$WORK/again.out"; fail "unchanged campaign verified again"; }
ok "resubmitting a finished job rechecks and re-archives without reducing"
