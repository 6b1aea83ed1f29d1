#!/bin/bash
# external_refs.sh - checksums and zstd frames of written traces checked with outside tools: xxhsum (Debian package xxhash) and zstd -d.
set -u
here=$(cd "$(dirname "$0")" && pwd)
work=$(mktemp -d /tmp/mc-extref-XXXXXX)
trap 'rm -rf "$work"' EXIT
cd "$work"
command -v xxhsum >/dev/null || { echo "xxhsum missing (apt-get install xxhash)"; exit 1; }
command -v zstd >/dev/null || { echo "zstd missing (apt-get install zstd)"; exit 1; }
fails=0
check() {
    local name=$1; shift
    if "$@"; then echo "ok - $name"; else echo "FAIL - $name"; fails=$((fails + 1)); fi
}
u32() { od -An -tu4 -j "$2" -N4 "$1" | tr -d ' '; }         # LE u32 at offset
hex32() { od -An -tx4 -j "$2" -N4 "$1" | tr -d ' '; }       # LE u32 as hex
hex64() { printf '%08x%08x' "0x$(hex32 "$1" $(($2 + 4)))" "0x$(hex32 "$1" "$2")"; }
slice() { tail -c +$(($2 + 1)) "$1" | head -c "$3"; }       # FILE OFFSET LEN
# xxhsum prints "HASH  stdin" for -H32/-H64 and "XXH3 (stdin) = HASH" for -H3.
xxh() { xxhsum "-H$1" | sed 's/.*= //; s/ .*//'; }
u16() { od -An -tu2 -j "$2" -N2 "$1" | tr -d ' '; }

"$here/gen_csv.sh" 5 8 3000 > in.csv
"$MC_CLI" import in.csv -o plain.mct --block-records 1000 || exit 1
"$MC_CLI" import in.csv -o packed.mct --block-records 1000 --zstd || exit 1
"$MC_CLI" import in.csv -o old.mct --block-records 1000 --trace-format 1 || exit 1
check "default trace format is 2.0" test "$(u16 plain.mct 8).$(u16 plain.mct 10)" = 2.0
check "--trace-format 1 writes 1.0" test "$(u16 old.mct 8).$(u16 old.mct 10)" = 1.0

# File header: XXH32 (seed 0) of bytes 0..123 is stored at 124 (xxhsum -H32
# prints the canonical big-endian hex of the same value).
for f in plain.mct packed.mct old.mct; do
    want=$(slice $f 0 124 | xxh 32)
    check "$f header XXH32 matches xxhsum -H32" test "$want" = "$(hex32 $f 124)"
done

# Walk the blocks of both files side by side.
off_p=128 off_z=128
for b in 0 1 2; do
    n=$(u32 plain.mct $((off_p + 8)))
    check "block $b holds 1000 records" test "$n" = 1000
    len_p=$(u32 plain.mct $((off_p + 16)))
    len_z=$(u32 packed.mct $((off_z + 16)))
    check "block $b codec fields" test "$(od -An -tu1 -j $((off_p + 20)) -N1 plain.mct | tr -d ' ')$(od -An -tu1 -j $((off_z + 20)) -N1 packed.mct | tr -d ' ')" = 01
    slice plain.mct $((off_p + 40)) "$len_p" > raw$b.bin
    slice packed.mct $((off_z + 40)) "$len_z" > frame$b.zst
    # Payload checksum: XXH3_64bits in 2.x (xxhsum -H3), XXH64 in 1.x
    # (xxhsum -H64); old.mct has the same blocks at the same offsets.
    want=$(xxh 3 < raw$b.bin)
    check "block $b payload XXH3 matches xxhsum -H3" test "$want" = "$(hex64 plain.mct $((off_p + 24)))"
    check "block $b zstd block stores the same XXH3" test "$want" = "$(hex64 packed.mct $((off_z + 24)))"
    check "block $b of the 1.0 file holds the same records" cmp raw$b.bin <(slice old.mct $((off_p + 40)) "$len_p")
    want=$(xxh 64 < raw$b.bin)
    check "block $b 1.0 payload XXH64 matches xxhsum -H64" test "$want" = "$(hex64 old.mct $((off_p + 24)))"
    # Block header XXH32 of bytes 0..31.
    for f in plain.mct old.mct; do
        want=$(slice $f $off_p 32 | xxh 32)
        check "block $b $f header XXH32 matches xxhsum -H32" test "$want" = "$(hex32 $f $((off_p + 32)))"
    done
    # The zstd frame decodes with the zstd command to the raw records.
    check "block $b frame decodes with zstd -d" sh -c "zstd -d -q -c < frame$b.zst > dec$b.bin"
    check "block $b decoded frame equals the raw payload" cmp dec$b.bin raw$b.bin
    off_p=$((off_p + 40 + len_p))
    off_z=$((off_z + 40 + len_z))
done

# Trailer: XXH32 of its first 12 bytes; footer XXH64 up to its checksum
# (both majors).
size=$(stat -c %s plain.mct)
want=$(slice plain.mct $((size - 16)) 12 | xxh 32)
check "trailer XXH32 matches xxhsum -H32" test "$want" = "$(hex32 plain.mct $((size - 4)))"
foot=$(u32 plain.mct $((size - 16)))
check "footer starts after the last block" test "$foot" = "$off_p"
flen=$((size - 16 - foot))
want=$(slice plain.mct "$foot" $((flen - 8)) | xxh 64)
check "footer XXH64 matches xxhsum -H64" test "$want" = "$(hex64 plain.mct $((size - 24)))"

# Both files read back to the same records.
"$MC_CLI" export plain.mct > a.csv && "$MC_CLI" export old.mct > b.csv
check "2.0 and 1.0 files export the same records" cmp <(grep -v '^#' a.csv) <(grep -v '^#' b.csv)

echo "$fails failures"
[ "$fails" = 0 ]
