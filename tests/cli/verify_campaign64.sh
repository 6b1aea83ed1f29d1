#!/usr/bin/env bash
# verify_campaign64.sh - synth writes a 64-rank campaign, verify accepts it,
# and rejects a copy with one flipped payload byte, naming file and block.
set -euo pipefail
work=$(mktemp -d "${TMPDIR:-/tmp}/mc-verify64.XXXXXX")
trap 'rm -rf "$work"' EXIT
cd "$work"
"$MC_CLI" synth -o camp --ranks 64 --steps 100 --seed 5 --input deck-b \
    --block-records 2048 --quiet
"$MC_CLI" verify camp > out.txt
grep -q "^verify: 64 files ok, 0 damaged;" out.txt || { cat out.txt; exit 1; }

# Block 1 of rank 17 begins after the 128-byte file header and block 0
# (a 40-byte header and its payload: the stored length at byte 16 of the
# block header, docs/trace-format.md); flip one byte in block 1's payload.
cp -r camp damaged
f=damaged/rank-000017.mct
len0=$(od -An -t u4 -j $((128 + 16)) -N 4 "$f" | tr -d ' ')
b1=$((128 + 40 + len0))
printf '\xff' | dd of="$f" bs=1 seek=$((b1 + 40 + 100)) conv=notrunc status=none
if "$MC_CLI" verify damaged > out2.txt 2> err2.txt; then
    echo "verify accepted a damaged campaign"; exit 1
fi
want="msgcensus: damaged/rank-000017.mct: block 1 at offset $b1: block checksum mismatch"
grep -qF "$want" err2.txt || { echo "expected: $want"; cat err2.txt; exit 1; }
grep -q "63 files ok, 1 damaged" out2.txt || { cat out2.txt; exit 1; }
echo "ok: 64-rank campaign verified; damaged copy rejected at block 1, offset $b1"
