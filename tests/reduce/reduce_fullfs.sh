#!/bin/bash
# reduce_fullfs.sh - a full file system under every writer: a 64 KiB tmpfs (mounted here; the
# test is skipped, status 77, where mounting is not allowed). reduce with 1 and 2 ranks must exit
# 1 with one message naming the target and the system's reason, and leave nothing there; a
# checkpoint directory on it only costs warnings, and the summary is the same as without it;
# export and import leave no partial output; synth stops with the file and block named, and
# verify then reports the campaign as damaged (no campaign.txt is written).
set -u
SKIP=77
fail() { echo "FAIL: $*" >&2; exit 1; }
ok() { echo "ok - $*"; }
[ "$(id -u)" = 0 ] || { echo "SKIP: mounting a tmpfs needs root"; exit $SKIP; }
T=$(mktemp -d) || exit 1
F=$T/full
mkdir "$F"
mount -t tmpfs -o size=64k tmpfs "$F" 2>/dev/null || { rmdir "$F"; rm -rf "$T"; echo "SKIP: cannot mount a tmpfs here"; exit $SKIP; }
trap 'umount "$F" 2>/dev/null; rm -rf "$T"' EXIT
MPIRUN=${MC_MPIRUN:-mpirun --oversubscribe}
empty() { # nothing but the filler left on the file system
    local left
    left=$(ls -A "$F" | grep -vx filler)
    [ -z "$left" ] || fail "$1: left behind on the full file system: $(echo $left)"
}

# A campaign whose summary is several times the 64 KiB (per-communicator populations).
"$MC_CLI" synth -q -o "$T/camp" --ranks 8 --steps 50 --input deck-b || fail synth
"$MC_CLI" reduce -q "$T/camp" -o "$T/ref.h5" --per-comm || fail "reference reduce"
[ "$(stat -c %s "$T/ref.h5")" -gt 131072 ] || fail "the reference summary is too small to fill the file system"

for np in 0 2; do
    if [ $np = 0 ]; then "$MC_CLI" reduce "$T/camp" -o "$F/s.h5" --per-comm >"$T/out" 2>"$T/err"; st=$?
    else $MPIRUN -np $np "$MC_CLI" reduce "$T/camp" -o "$F/s.h5" --per-comm >"$T/out" 2>"$T/err"; st=$?; fi
    [ $st = 1 ] || fail "reduce (np $np) on a full file system exited $st, not 1: $(cat "$T/err")"
    grep -q "^msgcensus: $F/s.h5: I/O error (write failed after [0-9]* of [0-9]* bytes): No space left on device$" "$T/err" ||
        fail "reduce (np $np): no clear message: $(cat "$T/err")"
    ! grep -qi "signal\|segmentation" "$T/err" || fail "reduce (np $np) crashed: $(cat "$T/err")"
    empty "reduce (np $np)"
    ok "reduce with ${np/0/1 (no mpirun)} rank(s): exit 1, '$(grep -o 'write failed.*' "$T/err")', nothing left"
done

# From here on the file system is full: a filler takes every free block.
dd if=/dev/zero of="$F/filler" bs=4096 2>/dev/null
[ "$(df --output=avail "$F" | tail -1 | tr -d ' ')" = 0 ] || fail "could not fill the file system"

# Checkpoints that cannot be written are warnings: the run completes with the same summary.
$MPIRUN -np 2 "$MC_CLI" reduce "$T/camp" -o "$T/ck.h5" --per-comm --checkpoint "$F/ck" --checkpoint-unit 16KiB \
    >"$T/out" 2>"$T/err" || fail "reduce with its checkpoint on a full file system failed: $(cat "$T/err")"
grep -q "checkpoint not saved.*No space left on device" "$T/err" || fail "no warning about unsaved checkpoints: $(cat "$T/err")"
"$MC_PYTHON" "$MC_SRC/tests/sched/h5summary.py" same "$T/ref.h5" "$T/ck.h5" || fail "summary with failed checkpoints differs"
empty "reduce --checkpoint"
ok "checkpoints on a full file system: warnings, and the same datasets as without (h5py)"

# export and import: exit 1 with the reason, no partial output file.
"$MC_CLI" export "$T/camp/rank-000000.mct" -o "$F/r0.csv" 2>"$T/err"; st=$?
[ $st = 1 ] && grep -q "No space left on device" "$T/err" || fail "export: exit $st: $(cat "$T/err")"
empty export
"$MC_CLI" export "$T/camp/rank-000000.mct" -o "$T/r0.csv" || fail "export to a normal directory"
"$MC_CLI" import "$T/r0.csv" -o "$F/r0.mct" --block-records 1000 2>"$T/err"; st=$?
[ $st = 1 ] && grep -q "No space left on device" "$T/err" || fail "import: exit $st: $(cat "$T/err")"
empty import
ok "export and import: exit 1 with 'No space left on device', no partial file"

# synth: names the file and block it could not write; verify sees the campaign as damaged.
"$MC_CLI" synth -q -o "$F/c" --ranks 4 --steps 100 2>"$T/err"; st=$?
[ $st = 1 ] || fail "synth exited $st"
grep -Eq "^msgcensus: $F/c/rank-[0-9]+\.mct: (block [0-9]+ at )?offset [0-9]+: I/O error \(write failed\): No space left on device$" "$T/err" ||
    fail "synth: $(cat "$T/err")"
[ ! -e "$F/c/campaign.txt" ] || fail "synth wrote campaign.txt for an incomplete campaign"
"$MC_CLI" verify "$F/c" >/dev/null 2>&1 && fail "verify accepted the incomplete campaign"
ok "synth: exit 1 naming file and block; no campaign.txt; verify rejects what was written"
