#!/bin/bash
# cli_verify.sh - the verify, import and export subcommands: exit codes, messages naming file, block and offset, campaign checks.
set -u
here=$(cd "$(dirname "$0")" && pwd)
work=$(mktemp -d /tmp/mc-cli-verify-XXXXXX)
trap 'rm -rf "$work"' EXIT
cd "$work"
fails=0
check() { # check NAME COND...
    local name=$1; shift
    if "$@"; then echo "ok - $name"; else echo "FAIL - $name"; fails=$((fails + 1)); fi
}
run() { # run EXPECTED_STATUS CMD... ; output in out.txt, err.txt
    local want=$1; shift
    "$@" >out.txt 2>err.txt
    local got=$?
    if [ "$got" != "$want" ]; then
        echo "  status $got, expected $want: $*"; cat err.txt; return 1
    fi
}
has() { grep -qF -- "$2" "$1" || { echo "  '$2' not in $1:"; cat "$1"; return 1; }; }

mkdir camp
for r in 0 1 2; do
    "$here/gen_csv.sh" $r 3 700 > r$r.csv
    "$MC_CLI" import r$r.csv -o camp/rank-00000$r.mct --block-records 100 || exit 1
done

check "intact campaign exits 0" run 0 "$MC_CLI" verify camp
check "total line counts files, blocks, records" has out.txt "verify: 3 files ok, 0 damaged; 21 blocks, 2100 records"
check "verbose lists good files" run 0 "$MC_CLI" verify --verbose camp
check "verbose line names rank" has out.txt "camp/rank-000001.mct: rank 1 of 3, 7 blocks, 700 records"
check "quiet prints nothing when intact" run 0 "$MC_CLI" verify --quiet camp
check "quiet stdout is empty" test ! -s out.txt
check "help goes to stdout with status 0" run 0 "$MC_CLI" verify --help
check "help text" has out.txt "usage: msgcensus verify"
check "no argument is a usage error" run 2 "$MC_CLI" verify
check "unknown option is a usage error" run 2 "$MC_CLI" verify --frobnicate camp

# A flipped bit in the payload of block 3 of rank 1: block 3 starts at
# 128 + 3 * (40 + 100 * 48) = 14648.
cp -r camp flip
printf '\x55' | dd of=flip/rank-000001.mct bs=1 seek=$((14648 + 40 + 777)) conv=notrunc status=none
check "flipped bit exits 1" run 1 "$MC_CLI" verify flip
check "message names file, block and offset" has err.txt "msgcensus: flip/rank-000001.mct: block 3 at offset 14648: block checksum mismatch (stored 0x"
check "total line counts the damaged file" has out.txt "verify: 2 files ok, 1 damaged"
check "damage is printed in quiet mode too" run 1 "$MC_CLI" verify -q flip/rank-000001.mct
check "quiet damage line" has err.txt "block 3 at offset 14648"

# Truncated inside block 5 of rank 2 (no footer either).
cp -r camp cut
truncate -s $((128 + 5 * 4840 + 1000)) cut/rank-000002.mct
check "truncated file exits 1" run 1 "$MC_CLI" verify cut
check "truncation names the block" has err.txt "cut/rank-000002.mct: block 5 at offset 24328: file truncated (block payload cut short"

# Missing footer only (cut at a block boundary): intact, but reported.
cp -r camp nofoot
truncate -s $((128 + 7 * 4840)) nofoot/rank-000000.mct
check "file without footer is intact" run 0 "$MC_CLI" verify nofoot
check "missing footer is counted" has out.txt "1 files without footer"

mkdir empty
check "empty directory exits 1" run 1 "$MC_CLI" verify empty
check "empty directory message" has err.txt "msgcensus: empty: no data (no trace files (*.mct) in the directory)"

cp -r camp dup
cp dup/rank-000001.mct dup/copy-of-1.mct
check "duplicate rank exits 1" run 1 "$MC_CLI" verify dup
check "duplicate rank message" has err.txt "two files claim the same application rank (copy-of-1.mct and rank-000001.mct both claim rank 1)"

mkdir size
cp camp/rank-000000.mct camp/rank-000001.mct size/
"$here/gen_csv.sh" 2 4 10 > s.csv
"$MC_CLI" import s.csv -o size/rank-000002.mct
check "size disagreement exits 1" run 1 "$MC_CLI" verify size
check "size disagreement message" has err.txt "files disagree on the application size: rank-000000.mct says 3, rank-000002.mct says 4"

mkdir miss
cp camp/rank-000001.mct miss/
check "missing ranks exit 1" run 1 "$MC_CLI" verify miss
check "missing ranks message" has err.txt "2 of 3 ranks have no intact trace file: 0, 2"

# Import and export: no overwrite without --force, CSV errors with line and column.
check "import refuses to overwrite" run 1 "$MC_CLI" import r0.csv -o camp/rank-000000.mct
check "overwrite message" has err.txt "camp/rank-000000.mct: output exists (use --force to replace it)"
check "import --force replaces" run 0 "$MC_CLI" import r0.csv -o camp/rank-000000.mct --force --block-records 100
check "no temporary files are left" test "$(ls -A camp | grep -c tmp)" = 0
sed '11s/^MPI_Isend,send,\([0-9]*\),/MPI_Isend,send,\1,4k/' r0.csv > bad.csv
check "bad CSV exits 1" run 1 "$MC_CLI" import bad.csv -o bad.mct
check "CSV error names line and column" has err.txt "msgcensus: bad.csv: line 11, column 18: CSV parse error (expected unsigned integer in column bytes)"
check "failed import leaves no output" test ! -e bad.mct
check "import without rank is refused" run 1 sh -c "grep -v app_rank r0.csv | '$MC_CLI' import - -o norank.mct"
check "missing rank message" has err.txt "give --rank or a '# app_rank=' line"
check "--rank supplies it" run 0 sh -c "grep -v app_rank r0.csv | '$MC_CLI' import - --rank 0 -o norank.mct"

# Exact round trip: export, import, export again gives the same text and,
# with the same block size, the same trace bytes.
check "export to stdout" run 0 "$MC_CLI" export camp/rank-000001.mct
mv out.txt e1.csv
check "export equals the imported CSV after the comment block" cmp <(grep -v '^#' r1.csv) <(grep -v '^#' e1.csv)
check "import of the export" run 0 "$MC_CLI" import e1.csv -o rt.mct --block-records 100
check "same trace bytes after the round trip" cmp rt.mct camp/rank-000001.mct
check "export -o" run 0 "$MC_CLI" export rt.mct -o e2.csv
check "same CSV after the round trip" cmp e1.csv e2.csv
check "export refuses to overwrite" run 1 "$MC_CLI" export rt.mct -o e2.csv
check "export of a damaged trace fails with the block" run 1 "$MC_CLI" export flip/rank-000001.mct -o e3.csv
check "export error names block" has err.txt "block 3 at offset 14648"
check "failed export leaves no output" test ! -e e3.csv

echo "$fails failures"
[ "$fails" = 0 ]
