#!/bin/bash
# test_release_raw_traces.sh - release-raw-traces.sh removes (or compresses) exactly the archived campaign's traces, and only after every check and a confirmation.
. "$(dirname "$0")/sched-lib.sh"

REL=$JOBS/release-raw-traces.sh
# archive_campaign NAME: a campaign, reduced and archived by reduce-steps.sh run outside any
# scheduler (mpirun launcher); prints the manifest's path.
archive_campaign() {
    local camp=$WORK/$1
    make_campaign "$camp" 3 15 "${#1}"
    MC_CAMPAIGN=$camp MC_SUMMARY=$WORK/out/$1.h5 MC_ARCHIVE=$WORK/archive MC_LAUNCHER=mpirun \
        MC_MPIRUN="${MC_MPIRUN:-mpirun --oversubscribe}" MC_RANKS=2 \
        "$JOBS/reduce-steps.sh" >"$WORK/$1.steps.out" 2>&1 || { show "$WORK/$1.steps.out"; fail "reduce-steps.sh on $1 failed"; }
    echo "$WORK/archive/$1.manifest.txt"
}
snapshot() { (cd "$1" && ls -A | LC_ALL=C sort && sha256sum ./*.mct 2>/dev/null) | sha256sum; }

man=$(archive_campaign halo-a)
camp=$WORK/halo-a
echo "lab notes, not a trace" >"$camp/notes.txt"
before=$(snapshot "$camp")

# 1. Not a terminal and no --yes: refuses, changes nothing.
rc=0
"$REL" "$man" </dev/null >"$WORK/noyes.out" 2>&1 || rc=$?
[ "$rc" = 1 ] || { show "$WORK/noyes.out"; fail "without --yes and no terminal: status $rc, want 1"; }
grep -q 'not a terminal' "$WORK/noyes.out" || fail "no reason given for refusing"
[ "$(snapshot "$camp")" = "$before" ] || fail "files changed without confirmation"
ok "refuses without --yes when stdin is not a terminal"

# 2. A typed answer other than 'yes' (through a terminal, by script(1)) declines.
if command -v script >/dev/null 2>&1; then
    rc=0
    echo no | script -qec "$REL $man" /dev/null >"$WORK/no.out" 2>&1 || rc=$?
    grep -q "Type 'yes'" "$WORK/no.out" || { show "$WORK/no.out"; fail "no confirmation prompt on a terminal"; }
    grep -q 'not confirmed' "$WORK/no.out" || { show "$WORK/no.out"; fail "answer 'no' not treated as declining"; }
    [ "$(snapshot "$camp")" = "$before" ] || fail "files changed after answering 'no'"
    ok "asks on a terminal and declines on 'no'"
fi

# 3. --dry-run: every check, the exact list and byte count, the cautions; nothing changes.
"$REL" --dry-run "$man" >"$WORK/dry.out" 2>&1 || { show "$WORK/dry.out"; fail "dry run failed"; }
n=$(ls "$camp"/*.mct | wc -l)
bytes=$(stat -c %s "$camp"/*.mct | awk '{b+=$1} END {print b}')
grep -q "The following $n files ($bytes bytes) in $camp will be: DELETE" "$WORK/dry.out" ||
    { show "$WORK/dry.out"; fail "dry run does not list $n files of $bytes bytes"; }
for f in "$camp"/*.mct; do
    grep -q "$(stat -c %s "$f") bytes  $(basename "$f")\$" "$WORK/dry.out" || fail "dry run does not list $(basename "$f")"
done
sed -n '/^Kept (not in the manifest/,/^$/p' "$WORK/dry.out" | grep -q '^  notes.txt$' || fail "dry run does not say notes.txt is kept"
grep -q "data-retention policy" "$WORK/dry.out" || fail "no data-retention caution"
grep -q "There is no undo" "$WORK/dry.out" || fail "no 'no undo' caution"
grep -q "dry run: all checks passed; nothing was changed" "$WORK/dry.out" || fail "dry run did not say it changed nothing"
[ "$(snapshot "$camp")" = "$before" ] || fail "dry run changed files"
ok "--dry-run lists exactly the $n traces ($bytes bytes), keeps notes.txt, prints the cautions, changes nothing"

# 4. A trace that differs from the summarised one blocks everything.
victim=$(ls "$camp"/*.mct | sed -n 2p)
cp "$victim" "$WORK/victim.orig"
printf 'X' | dd of="$victim" bs=1 seek=100 conv=notrunc status=none
rc=0
"$REL" --yes "$man" >"$WORK/tampered.out" 2>&1 || rc=$?
[ "$rc" = 1 ] || { show "$WORK/tampered.out"; fail "tampered trace: status $rc, want 1"; }
grep -q "checksum mismatch.*$(basename "$victim")" "$WORK/tampered.out" || { show "$WORK/tampered.out"; fail "tampered trace not named"; }
ls "$camp"/*.mct >/dev/null || fail "traces removed despite a mismatch"
cp "$WORK/victim.orig" "$victim"
[ "$(snapshot "$camp")" = "$before" ] || fail "campaign not restored"
ok "refuses when a trace's checksum differs from the manifest"

# 5. A summary that is not the archived one, or a manifest whose totals disagree, blocks too.
mkdir -p "$WORK/archive-bad"
cp "$WORK/archive/halo-a."* "$WORK/archive-bad/"
printf 'X' | dd of="$WORK/archive-bad/halo-a.h5" bs=1 seek=2000 conv=notrunc status=none
rc=0
"$REL" --yes "$WORK/archive-bad/halo-a.manifest.txt" >"$WORK/badsum.out" 2>&1 || rc=$?
[ "$rc" = 1 ] && grep -q 'sha256 .* differs from the manifest' "$WORK/badsum.out" || { show "$WORK/badsum.out"; fail "altered summary accepted"; }
cp "$WORK/archive/halo-a.h5" "$WORK/archive-bad/"
sed -i 's/^records: \([0-9]*\)$/records: 1\1/' "$WORK/archive-bad/halo-a.manifest.txt"
rc=0
"$REL" --yes "$WORK/archive-bad/halo-a.manifest.txt" >"$WORK/badrec.out" 2>&1 || rc=$?
[ "$rc" = 1 ] && grep -q 'the summary holds .* records, the manifest says' "$WORK/badrec.out" || { show "$WORK/badrec.out"; fail "record mismatch accepted"; }
[ "$(snapshot "$camp")" = "$before" ] || fail "files changed by a refused release"
ok "refuses an altered summary and a manifest whose record total disagrees with the summary"

# 6. --yes: removes exactly the listed traces, keeps notes.txt and the directory, logs it.
"$REL" --yes "$man" >"$WORK/yes.out" 2>&1 || { show "$WORK/yes.out"; fail "release --yes failed"; }
[ -z "$(ls "$camp"/*.mct 2>/dev/null)" ] || fail "traces left after release"
[ -f "$camp/notes.txt" ] || fail "notes.txt (not in the manifest) was removed"
grep -q "deleted $n files, $bytes bytes, of $camp" "$WORK/archive/halo-a.released.txt" || fail "no release record"
[ -r "$WORK/archive/halo-a.h5" ] && "$MC_CLI" report "$WORK/archive/halo-a.h5" >/dev/null || fail "archived summary unreadable after release"
rc=0
"$REL" --yes "$man" >"$WORK/again.out" 2>&1 || rc=$?
[ "$rc" = 1 ] && grep -q 'nothing to release' "$WORK/again.out" || { show "$WORK/again.out"; fail "second release did not refuse"; }
ok "--yes deletes the $n listed traces only, keeps other files, records the release"

# 7. --compress, on a campaign archived with xxh64 checksums (MC_CHECKSUM=xxh64, xxhsum -H1):
#    .mct.zst files whose content (zstd -dc, Debian's zstd) has the manifest's checksum.
man_b=$(MC_CHECKSUM=xxh64 archive_campaign halo-bb)
camp_b=$WORK/halo-bb
grep -q '^checksum_tool: xxhsum -H1$' "$man_b" || fail "MC_CHECKSUM=xxh64 not recorded in the manifest"
"$REL" --yes --compress "$man_b" >"$WORK/compress.out" 2>&1 || { show "$WORK/compress.out"; fail "release --compress failed"; }
[ -z "$(ls "$camp_b"/*.mct 2>/dev/null)" ] || fail "originals left after --compress"
sums_b=$WORK/archive/$(sed -n 's/^checksums: //p' "$man_b")
while read -r sum f; do
    [ "$(zstd -dc "$camp_b/$f.zst" | xxhsum -H1 | cut -d' ' -f1)" = "$sum" ] || fail "$f.zst does not decompress to the archived trace"
done <"$sums_b"
grep -q 'compressed 3 files' "$WORK/archive/halo-bb.released.txt" || fail "no compress record"
ok "--compress leaves .zst copies that decompress to the manifest's xxh64 checksums"
