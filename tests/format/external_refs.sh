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

"$here/gen_csv.sh" 5 8 3000 > in.csv
"$MC_CLI" import in.csv -o plain.mct --block-records 1000 || exit 1
"$MC_CLI" import in.csv -o packed.mct --block-records 1000 --zstd || exit 1

# File header: XXH32 (seed 0) of bytes 0..123 is stored at 124 (xxhsum -H32
# prints the canonical big-endian hex of the same value).
for f in plain.mct packed.mct; do
    want=$(slice $f 0 124 | xxhsum -H32 | cut -d' ' -f1)
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
    # Payload XXH64 against xxhsum -H64.
    want=$(xxhsum -H64 < raw$b.bin | cut -d' ' -f1)
    check "block $b payload XXH64 matches xxhsum -H64" test "$want" = "$(hex64 plain.mct $((off_p + 24)))"
    check "block $b zstd block stores the same XXH64" test "$want" = "$(hex64 packed.mct $((off_z + 24)))"
    # Block header XXH32 of bytes 0..31.
    want=$(slice plain.mct $off_p 32 | xxhsum -H32 | cut -d' ' -f1)
    check "block $b header XXH32 matches xxhsum -H32" test "$want" = "$(hex32 plain.mct $((off_p + 32)))"
    # The zstd frame decodes with the zstd command to the raw records.
    check "block $b frame decodes with zstd -d" sh -c "zstd -d -q -c < frame$b.zst > dec$b.bin"
    check "block $b decoded frame equals the raw payload" cmp dec$b.bin raw$b.bin
    off_p=$((off_p + 40 + len_p))
    off_z=$((off_z + 40 + len_z))
done

# Trailer: XXH32 of its first 12 bytes; footer XXH64 up to its checksum.
size=$(stat -c %s plain.mct)
want=$(slice plain.mct $((size - 16)) 12 | xxhsum -H32 | cut -d' ' -f1)
check "trailer XXH32 matches xxhsum -H32" test "$want" = "$(hex32 plain.mct $((size - 4)))"
foot=$(u32 plain.mct $((size - 16)))
check "footer starts after the last block" test "$foot" = "$off_p"
flen=$((size - 16 - foot))
want=$(slice plain.mct "$foot" $((flen - 8)) | xxhsum -H64 | cut -d' ' -f1)
check "footer XXH64 matches xxhsum -H64" test "$want" = "$(hex64 plain.mct $((size - 24)))"

echo "$fails failures"
[ "$fails" = 0 ]
