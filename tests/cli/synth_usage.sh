#!/bin/bash
# synth_usage.sh - synth's command line: usage errors exit 2, a non-empty directory is refused without --force.
set -uo pipefail
T=$(mktemp -d "${TMPDIR:-/tmp}/synth_use.XXXXXX")
trap 'rm -rf "$T"' EXIT
fail() { echo "FAIL: $*"; exit 1; }

# expect STATUS STDERR-PATTERN ARGS...: exit status and a message pattern.
expect() {
    local want=$1 pat=$2; shift 2
    "$MC_CLI" synth "$@" >"$T/out" 2>"$T/err"
    local got=$?
    [ "$got" -eq "$want" ] || fail "synth $* exited $got, want $want: $(cat "$T/err")"
    [ -z "$pat" ] || grep -q -- "$pat" "$T/err" || fail "synth $*: stderr lacks '$pat': $(cat "$T/err")"
}

expect 2 "output directory" --ranks 4
expect 2 "unknown option '--bogus'" -o "$T/x" --bogus
expect 2 "not a number" -o "$T/x" --ranks 0
expect 2 "not a number" -o "$T/x" --steps 12q
expect 2 "needs a value" -o "$T/x" --ranks
expect 2 "unknown input 'deck-z'" -o "$T/x" --input deck-z
expect 2 "weak or strong" -o "$T/x" --scaling medium
expect 2 "exclude each other" -o "$T/x" --steps 5 --target-size 1MiB
expect 2 "applies to --scaling weak" -o "$T/x" --scaling strong --local 8
expect 2 "applies to --scaling strong" -o "$T/x" --global 64
expect 2 "not N or NxNxN" -o "$T/x" --local 8x8
expect 2 "not N or NxNxN" -o "$T/x" --scaling strong --global 0x4x4
expect 2 "thinner than halo" -o "$T/x" --input deck-b --local 1
expect 2 "thinner than halo" -o "$T/x" --scaling strong --global 3 --ranks 8 --input deck-b
[ ! -e "$T/x" ] || fail "a usage error created the output directory"

"$MC_CLI" synth --help >"$T/out" 2>"$T/err" || fail "--help exit status"
grep -q "usage: msgcensus synth" "$T/out" || fail "--help not on stdout"
[ ! -s "$T/err" ] || fail "--help wrote to stderr"

# An output path that is a regular file is a failed run (exit 1).
echo x >"$T/plain"
expect 1 "cannot read directory" -o "$T/plain" --ranks 2 --steps 3

# A non-empty directory is refused (exit 1) and left as it was.
mkdir "$T/full" && echo keep >"$T/full/notes.txt"
expect 1 "not empty" -o "$T/full" --ranks 2 --steps 3
[ "$(ls "$T/full")" = "notes.txt" ] || fail "refused run touched the directory"
# --force writes the campaign beside the other file and warns first.
expect 0 "" -o "$T/full" --ranks 2 --steps 3 --force -q
[ -f "$T/full/rank-000001.mct" ] && [ -f "$T/full/notes.txt" ] || fail "--force"
# Replacing a larger campaign removes rank files past the new rank count,
# with a caution on stderr even under --quiet.
"$MC_CLI" synth -q -o "$T/big" --ranks 5 --steps 3 || fail "big"
expect 0 "caution" -o "$T/big" --ranks 3 --steps 3 --force -q
[ "$(ls "$T/big" | grep -c '^rank-')" -eq 3 ] || fail "stale rank files left"

# --target-size prints the chosen step count and lands at or below it.
"$MC_CLI" synth -o "$T/ts" --ranks 4 --target-size 2MiB 2>"$T/err" || fail "target"
grep -q "steps" "$T/err" || fail "chosen steps not printed"
sz=$(cat "$T"/ts/rank-*.mct | wc -c)
[ "$sz" -le $((2 * 1048576)) ] && [ "$sz" -gt $((2 * 1048576 * 9 / 10)) ] ||
    fail "campaign of $sz bytes for a 2 MiB target"
grep -q "^synth: wrote" "$T/err" || fail "no result line"
# --quiet silences progress and the result line.
"$MC_CLI" synth -q -o "$T/q" --ranks 2 --steps 3 2>"$T/err" || fail "quiet"
[ ! -s "$T/err" ] || fail "--quiet printed: $(cat "$T/err")"
echo ok
