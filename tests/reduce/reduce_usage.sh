#!/bin/bash
# reduce_usage.sh - command-line contract of 'msgcensus reduce' and
# 'msgcensus report': --help to stdout with status 0, usage errors to stderr
# with status 2 (before MPI starts), a missing summary with status 1.
set -u
fail() { echo "FAIL: $*" >&2; exit 1; }
expect() { # STATUS CMD...: run, check the exit status
    local want=$1; shift
    "$@" >out.txt 2>err.txt
    local got=$?
    [ "$got" = "$want" ] || fail "$* exited $got, expected $want: $(cat err.txt)"
}
T=$(mktemp -d) || exit 1
trap 'rm -rf "$T"' EXIT
cd "$T" || exit 1
expect 0 "$MC_CLI" reduce --help
grep -q '^usage: msgcensus reduce' out.txt || fail "reduce --help: no usage on stdout"
[ -s err.txt ] && fail "reduce --help wrote to stderr"
expect 2 "$MC_CLI" reduce
grep -q "no campaign directory" err.txt || fail "reduce without args: $(cat err.txt)"
expect 2 "$MC_CLI" reduce somewhere
grep -q "no output given" err.txt || fail "reduce without -o: $(cat err.txt)"
expect 2 "$MC_CLI" reduce somewhere -o x.h5 --bogus
grep -q "unknown option '--bogus'" err.txt || fail "unknown option: $(cat err.txt)"
expect 1 "$MC_CLI" reduce no-such-dir -o x.h5 --quiet
grep -q "^msgcensus: no-such-dir: cannot open" err.txt || fail "missing campaign: $(cat err.txt)"
[ -e x.h5 ] && fail "a summary was written for a missing campaign"
mkdir camp && "$MC_CLI" synth -q -o camp --ranks 2 --steps 2 || fail "synth"
expect 1 "$MC_CLI" reduce camp -o no/such/dir/x.h5 --quiet
grep -q "^msgcensus: no/such/dir/x.h5: cannot open file (its directory is not writable)" err.txt ||
    fail "unwritable output directory: $(cat err.txt)"
# --verbose adds the phase times; they add up to the elapsed time of the
# result line (each printed to 1 ms).
expect 0 "$MC_CLI" reduce camp -o v.h5 --verbose
line=$(grep '^reduce: phases: ' err.txt) || fail "reduce --verbose: no phase line: $(cat err.txt)"
total=$(sed -n 's/^reduce: .* in \([0-9.]*\) s .*/\1/p' err.txt)
sum=$(echo "$line" | grep -o '[0-9.]* s' | awk '{ s += $1 } END { print s }')
awk -v a="$total" -v b="$sum" 'BEGIN { d = a - b; exit !(d < 0.0025 && d > -0.0025) }' ||
    fail "phases add up to $sum s, the result line says $total s"
expect 0 "$MC_CLI" report --help
grep -q '^usage: msgcensus report' out.txt || fail "report --help"
expect 2 "$MC_CLI" report
expect 2 "$MC_CLI" report x.h5 --format yaml
grep -q "unknown format 'yaml'" err.txt || fail "report --format yaml: $(cat err.txt)"
expect 1 "$MC_CLI" report missing.h5
grep -q "^msgcensus: missing.h5: cannot open file" err.txt || fail "report missing: $(cat err.txt)"
echo "ok: reduce and report usage"
