#!/bin/bash
# reduce-steps.sh - the steps of a reduce job: verify the campaign, reduce it (resumably), check the summary, archive it.
#
# reduce.slurm and reduce.pbs run this inside their allocation; you can also run it by hand
# inside an interactive allocation (salloc ...), or on a workstation with MC_LAUNCHER=mpirun.
#
# Usage: reduce-steps.sh [CAMPAIGN_DIR]
#
# Parameters, as environment variables (sbatch and qsub -V pass the submitting shell's):
#   MC_CAMPAIGN        campaign directory (rank-NNNNNN.mct files); or the first argument. Required.
#   MC_SUMMARY         summary to write (default: CAMPAIGN.h5, beside the campaign directory)
#   MC_JOBDIR          where the job keeps its notes and checkpoint between submissions
#                      (default: SUMMARY without .h5, plus .job)
#   MC_CHECKPOINT      checkpoint directory, used when `msgcensus reduce --help` lists
#                      --checkpoint (default: MC_JOBDIR/checkpoint)
#   MC_ARCHIVE         archive directory: the summary and a manifest are copied there after the
#                      check (default: empty = no archive step)
#   MC_LABEL           run label stored in the summary (default: the campaign directory's name)
#   MC_LAUNCHER        srun or mpirun (default: srun inside Slurm, mpirun elsewhere)
#   MC_SRUN_ARGS       srun's options (default: --mpi=pmix; --mpi=pmi2 does not work with
#                      Debian's Open MPI)
#   MC_MPIRUN          the mpirun command (default: mpirun)
#   MC_MPIRUN_ARGS     mpirun's options (default: --hostfile $PBS_NODEFILE when PBS set it)
#   MC_RANKS           reducer ranks (default: reducer-ranks.sh's advice, see docs/batch.md)
#   MC_RANKS_PER_NODE, MC_MIN_BYTES_PER_RANK
#                      passed to reducer-ranks.sh
#   MC_BIN             the msgcensus command (default: msgcensus from PATH)
#   MC_VERIFY          1 (default) = run msgcensus verify first; 0 = leave it out (the reduce
#                      still checks every block's checksum and stops at the first damage)
#   MC_SKIP_DAMAGED    1 = when verify finds damage, reduce anyway with --skip-damaged (damaged
#                      blocks are counted in the summary, not reduced); default 0 = stop
#   MC_REDUCE_ARGS     more options for `msgcensus reduce` (e.g. --per-comm)
#   MC_CHECKSUM        sha256 (default, sha256sum) or xxh64 (xxhsum -H1, faster) for the manifest
#   MC_HASH_JOBS       checksum processes at once (default: nproc)
#
# Exit status: 0 when the summary is written, checked (and archived when asked); 1 otherwise,
# with the reason on stderr; 2 on bad parameters.
#
# Nothing here deletes or compresses raw traces: that is release-raw-traces.sh, run by hand.
set -euo pipefail

prog=reduce-job
say() { printf '%s: %s\n' "$prog" "$*" >&2; }
die() { printf '%s: error: %s\n' "$prog" "$*" >&2; exit 1; }
bad() { printf '%s: %s\n' "$prog" "$*" >&2; exit 2; }
step() { printf '\n== %s  %s\n' "$(date -u +%H:%M:%S)" "$*" >&2; }

here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
tmpfiles=()
cleanup() { [ ${#tmpfiles[@]} = 0 ] || rm -f "${tmpfiles[@]}"; }
trap cleanup EXIT
# At its time limit (or on scancel) Slurm sends SIGTERM to every process of the job, then SIGKILL
# KillWait seconds later; PBS does the same at its walltime. Say what that means for this job.
on_term() {
    if [ "${has_checkpoint:-0}" = 1 ]; then
        say "stopped by SIGTERM (time limit or cancel); resubmit the same job to resume from ${checkpoint:-its checkpoint}"
    else
        say "stopped by SIGTERM (time limit or cancel); this msgcensus has no checkpoint, a resubmitted job starts over"
    fi
    exit 143
}
trap on_term TERM

# ---- parameters ------------------------------------------------------------
campaign=${1:-${MC_CAMPAIGN:-}}
[ -n "$campaign" ] || bad "no campaign: set MC_CAMPAIGN or pass the directory as the first argument"
[ -d "$campaign" ] || die "$campaign: campaign directory not found"
campaign=$(cd "$campaign" && pwd)
name=$(basename "$campaign")
summary=${MC_SUMMARY:-$(dirname "$campaign")/$name.h5}
case $summary in /*) ;; *) summary=$PWD/$summary ;; esac
jobdir=${MC_JOBDIR:-${summary%.h5}.job}
checkpoint=${MC_CHECKPOINT:-$jobdir/checkpoint}
archive=${MC_ARCHIVE:-}
label=${MC_LABEL:-$name}
bin=${MC_BIN:-msgcensus}
skip_damaged=${MC_SKIP_DAMAGED:-0}
do_verify=${MC_VERIFY:-1}
checksum=${MC_CHECKSUM:-sha256}
hash_jobs=${MC_HASH_JOBS:-$(nproc)}
if [ -n "${MC_LAUNCHER:-}" ]; then launcher=$MC_LAUNCHER
elif [ -n "${SLURM_JOB_ID:-}" ]; then launcher=srun
else launcher=mpirun
fi
read -r -a srun_args <<<"${MC_SRUN_ARGS:---mpi=pmix}"
read -r -a mpirun_cmd <<<"${MC_MPIRUN:-mpirun}"
if [ -n "${MC_MPIRUN_ARGS+set}" ]; then
    read -r -a mpirun_args <<<"$MC_MPIRUN_ARGS"
elif [ -n "${PBS_NODEFILE:-}" ]; then
    mpirun_args=(--hostfile "$PBS_NODEFILE")
else
    mpirun_args=()
fi
read -r -a reduce_args <<<"${MC_REDUCE_ARGS:-}"

case $launcher in srun | mpirun) ;; *) bad "MC_LAUNCHER must be srun or mpirun, not '$launcher'" ;; esac
case $skip_damaged in 0 | 1) ;; *) bad "MC_SKIP_DAMAGED must be 0 or 1" ;; esac
case $do_verify in 0 | 1) ;; *) bad "MC_VERIFY must be 0 or 1" ;; esac
[ -z "${MC_RANKS:-}" ] || [[ $MC_RANKS =~ ^[1-9][0-9]*$ ]] || bad "MC_RANKS must be a positive number, not '$MC_RANKS'"
case $checksum in
sha256) hash_cmd=(sha256sum) sums_name=SHA256SUMS ;;
xxh64) hash_cmd=(xxhsum -H1) sums_name=XXH64SUMS ;;
*) bad "MC_CHECKSUM must be sha256 or xxh64, not '$checksum'" ;;
esac
command -v "$bin" >/dev/null 2>&1 || die "'$bin' not found: put msgcensus on PATH or set MC_BIN"
command -v "${hash_cmd[0]}" >/dev/null 2>&1 || die "${hash_cmd[0]} not found (MC_CHECKSUM=$checksum)"
mkdir -p "$jobdir" "$(dirname "$summary")"

version=$("$bin" --version)
has_checkpoint=0
if "$bin" reduce --help 2>/dev/null | grep -q -- '--checkpoint'; then has_checkpoint=1; fi

step "reduce job for $campaign"
say "tool:       $version"
say "summary:    $summary"
say "job notes:  $jobdir"
if [ "$has_checkpoint" = 1 ]; then
    say "checkpoint: $checkpoint (a job killed at its time limit resumes from here when resubmitted)"
else
    say "checkpoint: none (this msgcensus has no 'reduce --checkpoint'; a killed job starts over)"
fi
say "archive:    ${archive:-none (MC_ARCHIVE not set)}"
jobname=${SLURM_JOB_ID:+Slurm job $SLURM_JOB_ID}${PBS_JOBID:+PBS job $PBS_JOBID}
say "job:        ${jobname:-outside a batch system} on $(hostname)"

# ---- helpers -----------------------------------------------------------------

# launch N CMD...: run CMD as an MPI job of N ranks inside the allocation.
launch() {
    local n=$1
    shift
    case $launcher in
    srun) srun "${srun_args[@]}" -n "$n" "$@" ;;
    mpirun) "${mpirun_cmd[@]}" "${mpirun_args[@]}" -np "$n" "$@" ;;
    esac
}

# The campaign's trace files, one name per line, sorted.
trace_files() {
    find "$campaign" -maxdepth 1 -type f -name '*.mct' -printf '%f\n' | LC_ALL=C sort
}

# A fingerprint of the campaign's names, sizes and modification times: verify's
# result is reused by a resubmitted job only while it is unchanged.
campaign_stamp() {
    find "$campaign" -maxdepth 1 -type f -name '*.mct' -printf '%f %s %T@\n' | LC_ALL=C sort | sha256sum | cut -d' ' -f1
}

# The record total of verify's last line: "verify: 8 files ok, 0 damaged; 40 blocks, 655360 records, 30 MiB".
verify_records_of() { sed -n 's/^verify: .*[ ;]\([0-9][0-9]*\) records.*/\1/p' "$1" | tail -n1; }

# The record total that `msgcensus report` prints: "records: 655360 read, 0 rejected".
report_records_of() { sed -n 's/^records:[[:space:]]*\([0-9][0-9]*\).*/\1/p' "$1" | head -n1; }
# File counts: verify's "verify: 8 files ok, ..." and report's "application: 8 ranks, 8 files, ...".
verify_files_of() { sed -n 's/^verify: \([0-9][0-9]*\) files ok.*/\1/p' "$1" | tail -n1; }
report_files_of() { sed -n 's/^application: .*[ ,]\([0-9][0-9]*\) files.*/\1/p' "$1" | head -n1; }

# ---- 1. verify -----------------------------------------------------------------
step "1/4 verify the campaign"
stamp=$(campaign_stamp)
if [ "$do_verify" = 0 ]; then
    say "MC_VERIFY=0: not verifying; the reduce checks every block and stops at damage"
    : >"$jobdir/verify.txt"
    [ "$skip_damaged" = 0 ] || reduce_args+=(--skip-damaged)
elif [ -s "$jobdir/verify.ok" ] && [ "$(cat "$jobdir/verify.ok")" = "$stamp" ] && [ -s "$jobdir/verify.txt" ]; then
    say "campaign unchanged since an earlier job verified it; reusing $jobdir/verify.txt"
    cat "$jobdir/verify.txt" >&2
else
    rm -f "$jobdir/verify.ok"
    set +e
    "$bin" verify "$campaign" >"$jobdir/verify.txt" 2>"$jobdir/verify.err"
    rc=$?
    set -e
    cat "$jobdir/verify.txt" "$jobdir/verify.err" >&2
    if [ "$rc" = 0 ]; then
        echo "$stamp" >"$jobdir/verify.ok"
    elif [ "$rc" = 1 ] && [ "$skip_damaged" = 1 ]; then
        say "verify found damage (above); MC_SKIP_DAMAGED=1: reducing anyway, damaged blocks skipped and counted"
        reduce_args+=(--skip-damaged)
    elif [ "$rc" = 1 ]; then
        die "verify found damage in $campaign (see the message above); not reducing. Repair or replace the file, or set MC_SKIP_DAMAGED=1 to reduce without the damaged blocks"
    else
        die "msgcensus verify failed with status $rc"
    fi
fi
verify_records=$(verify_records_of "$jobdir/verify.txt")

# ---- 2. reduce -------------------------------------------------------------------
step "2/4 reduce"
if [ -e "$summary" ]; then
    # The reducer renames a complete summary into place, so one that exists is whole.
    say "$summary exists (an earlier job wrote it); not reducing again, checking it. Remove it to reduce anew."
    if [ "$has_checkpoint" = 1 ] && [ -d "$checkpoint" ]; then
        say "note: checkpoint $checkpoint is still there (the job that wrote the summary ended before removing it); remove it by hand"
    fi
else
    if [ -n "${MC_RANKS:-}" ]; then
        ranks=$MC_RANKS
        say "ranks: $ranks (MC_RANKS)"
    else
        ranks=$("$here/reducer-ranks.sh" --explain "$campaign")
    fi
    ckpt_args=()
    if [ "$has_checkpoint" = 1 ]; then
        if [ -d "$checkpoint" ] && [ -n "$(ls -A "$checkpoint" 2>/dev/null)" ]; then
            say "resuming from checkpoint $checkpoint"
        fi
        ckpt_args=(--checkpoint "$checkpoint")
    fi
    say "running: $launcher, $ranks rank(s): $bin reduce $campaign -o $summary"
    set +e
    launch "$ranks" "$bin" reduce "$campaign" -o "$summary" --label "$label" \
        "${ckpt_args[@]}" "${reduce_args[@]}"
    rc=$?
    set -e
    [ "$rc" = 0 ] || die "msgcensus reduce failed with status $rc (its message is above)${ckpt_args:+; resubmit to resume from $checkpoint}"
fi
[ -s "$summary" ] || die "reduce reported success but $summary is missing or empty"

# ---- 3. check the summary ----------------------------------------------------------
step "3/4 check the summary"
"$bin" report "$summary" >"$jobdir/report.txt" 2>"$jobdir/report.err" ||
    { cat "$jobdir/report.err" >&2; die "msgcensus report cannot read $summary"; }
summary_records=$(report_records_of "$jobdir/report.txt")
[ -n "$summary_records" ] || die "no 'records:' line in the report of $summary ($jobdir/report.txt)"
if [ -n "$verify_records" ] && [ "$skip_damaged" = 0 ]; then
    [ "$summary_records" = "$verify_records" ] ||
        die "record totals differ: verify counted $verify_records, the summary holds $summary_records"
    verify_files=$(verify_files_of "$jobdir/verify.txt")
    summary_files=$(report_files_of "$jobdir/report.txt")
    [ "$summary_files" = "$verify_files" ] ||
        die "file counts differ: verify checked ${verify_files:-?} files, the summary holds ${summary_files:-?}"
    say "record totals agree: $summary_records records in $summary_files files (verify and summary)"
else
    say "summary holds $summary_records records (verify's total not compared: ${verify_records:+damaged blocks skipped}${verify_records:-verify printed no total})"
fi

# ---- 4. archive ------------------------------------------------------------------------
step "4/4 archive"
if [ -z "$archive" ]; then
    say "MC_ARCHIVE not set: no archive step. The summary is $summary"
    exit 0
fi
mkdir -p "$archive"
archive=$(cd "$archive" && pwd)
base=$(basename "$summary" .h5)
dest=$archive/$base.h5
if [ -e "$dest" ] && ! cmp -s "$summary" "$dest"; then
    die "$dest exists and differs from $summary; not overwriting an archived summary (move it away first)"
fi

say "checksumming $(trace_files | wc -l) trace files with ${hash_cmd[*]} ($hash_jobs at once)"
sums_tmp=$archive/.$base.$sums_name.tmp.$$
manifest_tmp=$archive/.$base.manifest.tmp.$$
copy_tmp=$archive/.$base.h5.tmp.$$
tmpfiles+=("$sums_tmp" "$manifest_tmp" "$copy_tmp")
(cd "$campaign" && trace_files | tr '\n' '\0' | xargs -0 -r -n 16 -P "$hash_jobs" "${hash_cmd[@]}") |
    LC_ALL=C sort -k2 >"$sums_tmp"
nfiles=$(wc -l <"$sums_tmp")
bytes=$(cd "$campaign" && trace_files | tr '\n' '\0' | xargs -0 -r stat -c %s | awk '{b+=$1} END {printf "%.0f\n", b}')

cp "$summary" "$copy_tmp"
cmp -s "$summary" "$copy_tmp" || die "copy of the summary into $archive differs from the original"
mv -f "$copy_tmp" "$dest"
summary_sha=$(sha256sum "$dest" | cut -d' ' -f1)

cat >"$manifest_tmp" <<EOF
# Archive manifest of a msgcensus summary (written by reduce-steps.sh). The checksums of the
# raw traces are in the file named by 'checksums'; release-raw-traces.sh checks all of it.
format: msgcensus-archive-manifest 1
created: $(date -u +%Y-%m-%dT%H:%M:%SZ)
campaign: $campaign
files: $nfiles
bytes: $bytes
records: $summary_records
tool_version: $version
summary: $base.h5
summary_sha256: $summary_sha
checksum_tool: ${hash_cmd[*]}
checksums: $base.$sums_name
job: ${SLURM_JOB_ID:+slurm:$SLURM_JOB_ID}${PBS_JOBID:+pbs:$PBS_JOBID}
EOF
mv -f "$sums_tmp" "$archive/$base.$sums_name"
mv -f "$manifest_tmp" "$archive/$base.manifest.txt"
say "archived: $dest"
say "manifest: $archive/$base.manifest.txt ($nfiles files, $bytes bytes, checksums in $base.$sums_name)"
say "the raw traces are untouched; to release them later, see jobscripts/release-raw-traces.sh"
