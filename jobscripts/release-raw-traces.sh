#!/bin/bash
# release-raw-traces.sh - delete (or compress) a campaign's raw traces, by hand only, after its archived summary checks out against the manifest.
#
# Usage: release-raw-traces.sh [--dry-run] [--yes] [--compress] [--jobs N] MANIFEST
#
#   MANIFEST     ARCHIVE/NAME.manifest.txt, written by the archive step of reduce.slurm /
#                reduce.pbs (reduce-steps.sh)
#   --dry-run    run every check and list what would be removed; change nothing
#   --yes        do not ask for confirmation (for scripts; read the cautions first)
#   --compress   instead of deleting, compress each trace with zstd (rank-N.mct becomes
#                rank-N.mct.zst; the original goes only after zstd has tested the copy).
#                msgcensus reads .mct files only: decompress before reducing again
#   --jobs N     checksum processes at once (default: nproc)
#   -h, --help   this text
#
# Environment: MC_BIN, the msgcensus command (default: msgcensus from PATH).
#
# Nothing runs this automatically, and it does nothing until all of these hold:
#   1. the archived summary named by the manifest exists and its sha256 matches the manifest;
#   2. `msgcensus report` reads it, and its record total equals the manifest's;
#   3. every trace the manifest lists that is still in the campaign directory has the checksum
#      the manifest recorded (they are the very files that were summarised), and the manifest's
#      file count and bytes add up.
# Then it lists exactly the files it will remove and their bytes, prints the cautions, and
# asks you to type 'yes' (or takes --yes). Only files named in the manifest are touched; any
# other file in the campaign directory is listed as kept, and the directory itself stays.
# A record of what was done is appended to ARCHIVE/NAME.released.txt.
#
# Exit status: 0 done (or dry run passed), 1 a check failed or you declined, 2 bad usage.
set -euo pipefail

prog=release-raw-traces
say() { printf '%s: %s\n' "$prog" "$*" >&2; }
die() { printf '%s: refusing: %s\n' "$prog" "$*" >&2; exit 1; }
usage() { sed -n '2,/^set -euo/{/^set -euo/d;s/^# \{0,1\}//;p}' "$0"; }
usage_error() { printf '%s: %s\nTry '\''release-raw-traces.sh --help'\''.\n' "$prog" "$*" >&2; exit 2; }

dry_run=0 yes=0 compress=0 jobs=$(nproc) manifest=
while [ $# -gt 0 ]; do
    case $1 in
    --dry-run) dry_run=1; shift ;;
    --yes) yes=1; shift ;;
    --compress) compress=1; shift ;;
    --jobs) jobs=${2:?--jobs needs a number}; shift 2 ;;
    -h | --help) usage; exit 0 ;;
    -*) usage_error "unknown option '$1'" ;;
    *) [ -z "$manifest" ] || usage_error "one manifest only"; manifest=$1; shift ;;
    esac
done
[ -n "$manifest" ] || usage_error "no manifest given"
[[ $jobs =~ ^[1-9][0-9]*$ ]] || usage_error "--jobs wants a positive number"
[ -r "$manifest" ] || die "$manifest: cannot read the manifest"
bin=${MC_BIN:-msgcensus}
command -v "$bin" >/dev/null 2>&1 || die "'$bin' not found: put msgcensus on PATH or set MC_BIN"
[ "$compress" = 0 ] || command -v zstd >/dev/null 2>&1 || die "--compress needs zstd"

archive=$(cd "$(dirname "$manifest")" && pwd)

# field KEY: the value of 'KEY: value' in the manifest (exactly one such line).
field() {
    local v n
    n=$(grep -c "^$1: " "$manifest" || true)
    [ "$n" = 1 ] || die "$manifest: expected one '$1:' line, found $n"
    v=$(sed -n "s/^$1: //p" "$manifest")
    printf '%s' "$v"
}

[ "$(field format)" = "msgcensus-archive-manifest 1" ] || die "$manifest: not a msgcensus archive manifest (format 1)"
campaign=$(field campaign)
m_files=$(field files)
m_bytes=$(field bytes)
m_records=$(field records)
m_summary=$(field summary)
m_summary_sha=$(field summary_sha256)
m_tool=$(field checksum_tool)
m_sums=$(field checksums)
case $m_tool in
sha256sum) hash_cmd=(sha256sum) ;;
"xxhsum -H1") hash_cmd=(xxhsum -H1) ;;
*) die "$manifest: unknown checksum_tool '$m_tool'" ;;
esac
case $m_summary$m_sums in */*) die "$manifest: summary and checksums must be names inside the archive directory" ;; esac
sums=$archive/$m_sums
summary=$archive/$m_summary

say "manifest:  $manifest"
say "campaign:  $campaign ($m_files files, $m_bytes bytes, $m_records records)"

# ---- 1. the archived summary is the one the manifest names -------------------------------
[ -r "$summary" ] || die "archived summary $summary is missing"
sha=$(sha256sum "$summary" | cut -d' ' -f1)
[ "$sha" = "$m_summary_sha" ] || die "$summary: sha256 $sha differs from the manifest's $m_summary_sha"
say "check 1/3: archived summary $m_summary matches the manifest's sha256"

# ---- 2. the summary reads and holds the manifest's records --------------------------------
report=$("$bin" report "$summary" 2>&1) || { printf '%s\n' "$report" >&2; die "msgcensus report cannot read $summary"; }
s_records=$(printf '%s\n' "$report" | sed -n 's/^records:[[:space:]]*\([0-9][0-9]*\).*/\1/p' | head -n1)
s_files=$(printf '%s\n' "$report" | sed -n 's/^application: .*[ ,]\([0-9][0-9]*\) files.*/\1/p' | head -n1)
[ -n "$s_records" ] || die "no 'records:' line in the report of $summary"
[ "$s_records" = "$m_records" ] || die "the summary holds $s_records records, the manifest says $m_records"
[ "$s_files" = "$m_files" ] || die "the summary holds ${s_files:-?} files, the manifest says $m_files"
say "check 2/3: msgcensus report reads the summary: $s_records records in $s_files files, as in the manifest"

# ---- 3. the traces on disk are the ones that were summarised ---------------------------------
[ -d "$campaign" ] || die "campaign directory $campaign not found"
[ -r "$sums" ] || die "checksum list $sums is missing"
n_listed=$(wc -l <"$sums")
[ "$n_listed" = "$m_files" ] || die "$sums lists $n_listed files, the manifest says $m_files"
listed=$(awk '{print $2}' "$sums" | LC_ALL=C sort)
while IFS= read -r f; do
    case $f in "" | */* | .* ) die "$sums: bad file name '$f'" ;; esac
done <<<"$listed"
present=$(cd "$campaign" && printf '%s\n' "$listed" | while IFS= read -r f; do if [ -f "$f" ]; then printf '%s\n' "$f"; fi; done)
gone=$(LC_ALL=C comm -23 <(printf '%s\n' "$listed") <(printf '%s\n' "$present" | sed '/^$/d'))
others=$(cd "$campaign" && find . -maxdepth 1 -mindepth 1 -printf '%f\n' | LC_ALL=C sort |
    LC_ALL=C comm -23 - <(printf '%s\n' "$listed"))
[ -n "$present" ] || die "none of the $m_files listed traces is left in $campaign; nothing to release"

# The sizes of the whole list must add up to the manifest's bytes while every file is there.
if [ -z "$gone" ]; then
    total=$(cd "$campaign" && printf '%s\n' "$present" | tr '\n' '\0' | xargs -0 stat -c %s | awk '{b+=$1} END {printf "%.0f\n", b}')
    [ "$total" = "$m_bytes" ] || die "the listed traces hold $total bytes now, the manifest says $m_bytes"
fi
say "checking the checksums of $(printf '%s\n' "$present" | wc -l) trace files (${hash_cmd[*]}, $jobs at once)"
now=$(cd "$campaign" && printf '%s\n' "$present" | tr '\n' '\0' | xargs -0 -r -n 16 -P "$jobs" "${hash_cmd[@]}" | LC_ALL=C sort -k2)
bad_files=$(LC_ALL=C join -j 2 -o 0,1.1,2.1 <(printf '%s\n' "$now") <(LC_ALL=C sort -k2 "$sums") | awk '$2 != $3 {print $1}')
[ -z "$bad_files" ] || die "these traces differ from the ones summarised (checksum mismatch): $(printf '%s\n' "$bad_files" | tr '\n' ' ')"
say "check 3/3: every trace left on disk has the checksum recorded in the manifest"

# ---- what would be removed ---------------------------------------------------------------
n_present=$(printf '%s\n' "$present" | wc -l)
bytes_present=$(cd "$campaign" && printf '%s\n' "$present" | tr '\n' '\0' | xargs -0 stat -c %s | awk '{b+=$1} END {printf "%.0f\n", b}')
action=$([ "$compress" = 1 ] && echo "compress with zstd (then remove the originals)" || echo "DELETE")
echo
echo "The following $n_present files ($bytes_present bytes) in $campaign will be: $action"
(cd "$campaign" && printf '%s\n' "$present" | tr '\n' '\0' | xargs -0 stat -c '  %s bytes  %n')
if [ -n "$gone" ]; then echo "Already gone (listed in the manifest, not on disk): $(printf '%s\n' "$gone" | wc -l) files"; fi
if [ -n "$others" ]; then
    echo "Kept (not in the manifest, not touched):"
    printf '%s\n' "$others" | sed 's/^/  /'
fi
cat <<EOF

CAUTION
  - Raw traces hold every recorded call; the summary keeps exact histograms and totals but not
    the individual records. Once deleted they cannot be reduced again with other options.
  - Check your site's data-retention policy and your project's agreements (data-management
    plan, sponsor or partner terms) before deleting or compressing raw data.
  - There is no undo. Make sure no one else still needs these files, and that the archive
    directory ($archive) is on storage that is kept.
EOF
echo
if [ "$dry_run" = 1 ]; then
    say "dry run: all checks passed; nothing was changed"
    exit 0
fi

if [ "$yes" = 0 ]; then
    [ -t 0 ] || die "standard input is not a terminal; rerun with --yes to confirm (after reading the cautions), or --dry-run"
    printf "Type 'yes' to %s these %s files (%s bytes): " "$([ "$compress" = 1 ] && echo compress || echo delete)" "$n_present" "$bytes_present"
    read -r answer
    [ "$answer" = yes ] || die "not confirmed; nothing was changed"
fi

# ---- act --------------------------------------------------------------------------------
log=$archive/${m_summary%.h5}.released.txt
done_n=0 done_bytes=0
while IFS= read -r f; do
    path=$campaign/$f
    size=$(stat -c %s "$path")
    if [ "$compress" = 1 ]; then
        zstd -q -T0 -f "$path" -o "$path.zst"
        zstd -q -t "$path.zst" || die "zstd's test of $path.zst failed; $path kept"
        rm -f "$path"
    else
        rm -f "$path"
    fi
    done_n=$((done_n + 1))
    done_bytes=$((done_bytes + size))
done <<<"$present"
verb=$([ "$compress" = 1 ] && echo compressed || echo deleted)
printf '%s %s %s files, %s bytes, of %s (manifest %s) by %s\n' "$(date -u +%Y-%m-%dT%H:%M:%SZ)" \
    "$verb" "$done_n" "$done_bytes" "$campaign" "$(basename "$manifest")" "$(id -un)" >>"$log"
say "$verb $done_n files ($done_bytes bytes); recorded in $log"
