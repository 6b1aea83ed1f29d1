#!/bin/bash
# test_reducer_ranks.sh - reducer-ranks.sh's advice: min(slots, nodes x readers per node, one rank per share of bytes), read from Slurm or PBS variables.
. "$(dirname "$0")/sched-lib.sh"

RR=$JOBS/reducer-ranks.sh
camp=$WORK/c
mkdir -p "$camp"
# Five files of 3 MB (sizes are all the advice reads; the content does not matter).
for i in 0 1 2 3 4; do head -c 3000000 /dev/zero >"$camp/rank-00000$i.mct"; done
echo "not a trace" >"$camp/README"
unset SLURM_NTASKS SLURM_JOB_NUM_NODES PBS_NP PBS_NODEFILE MC_SLOTS MC_NODES MC_RANKS_PER_NODE MC_MIN_BYTES_PER_RANK

# expect WANT ARGS...: the advice equals WANT (worked out by hand beside each case).
expect() {
    local want=$1 got
    shift
    got=$("$RR" "$@" "$camp") || fail "reducer-ranks.sh $* failed"
    [ "$got" = "$want" ] || fail "reducer-ranks.sh $*: $got, want $want"
}
# 15 MB of traces. One rank per 1M: 15; per 4M: ceil(15/4) = 4; per 1GiB (default): 1.
expect 15 --slots 64 --ranks-per-node 64 --min-bytes-per-rank 1M
expect 4 --slots 64 --ranks-per-node 64 --min-bytes-per-rank 4M
expect 1 --slots 64 --ranks-per-node 64
# One node at the default 8 readers per node: 8 of the 15 shares.
expect 8 --slots 64 --min-bytes-per-rank 1M
# Slots bound: 2 slots, however much data.
expect 2 --slots 2 --min-bytes-per-rank 1
# File system bound: 3 nodes x 4 readers = 12 < 64 slots < 15 shares.
expect 12 --slots 64 --nodes 3 --ranks-per-node 4 --min-bytes-per-rank 1M
# No per-rank minimum: slots and file system only (more ranks than files is fine: the reducer
# splits files at block boundaries).
expect 8 --slots 16 --min-bytes-per-rank 0
# The same limits from the environment.
got=$(MC_SLOTS=64 MC_RANKS_PER_NODE=3 MC_MIN_BYTES_PER_RANK=1M "$RR" "$camp")
[ "$got" = 3 ] || fail "environment variables: $got, want 3"
ok "advice is min(slots, nodes x readers, shares of bytes)"

# The allocation from Slurm's variables, then from PBS's node file (one line per slot).
got=$(SLURM_NTASKS=6 SLURM_JOB_NUM_NODES=1 "$RR" --min-bytes-per-rank 1M "$camp")
[ "$got" = 6 ] || fail "SLURM_NTASKS=6: $got, want 6"
printf 'n1\nn1\nn1\nn2\nn2\nn2\n' >"$WORK/nodefile"
got=$(PBS_NODEFILE=$WORK/nodefile "$RR" --ranks-per-node 2 --min-bytes-per-rank 1M "$camp")
[ "$got" = 4 ] || fail "PBS_NODEFILE with 6 slots on 2 nodes, 2 per node: $got, want 4"
ok "allocation read from SLURM_NTASKS / SLURM_JOB_NUM_NODES and PBS_NODEFILE"

"$RR" --explain --slots 4 --min-bytes-per-rank 1M "$camp" 2>"$WORK/explain.txt" >/dev/null
grep -q 'campaign .*: 5 files, 15000000 bytes' "$WORK/explain.txt" || { show "$WORK/explain.txt"; fail "--explain does not count 5 files of 15000000 bytes (README is not a trace)"; }
grep -q 'advice: 4 rank(s), set by the allocation' "$WORK/explain.txt" || fail "--explain does not name the binding limit"
ok "--explain names the files, bytes and the binding limit"

rc=0; "$RR" --slots 0 "$camp" 2>/dev/null || rc=$?; [ "$rc" = 2 ] || fail "--slots 0: status $rc, want 2"
rc=0; "$RR" --min-bytes-per-rank 3X "$camp" 2>/dev/null || rc=$?; [ "$rc" = 2 ] || fail "bad size: status $rc, want 2"
rc=0; "$RR" "$WORK/nowhere" 2>/dev/null || rc=$?; [ "$rc" = 1 ] || fail "missing campaign: status $rc, want 1"
mkdir -p "$WORK/empty"
rc=0; "$RR" "$WORK/empty" 2>/dev/null || rc=$?; [ "$rc" = 1 ] || fail "campaign without traces: status $rc, want 1"
"$RR" --help | grep -q '^Usage: reducer-ranks.sh' || fail "--help prints no usage"
ok "bad arguments exit 2, unreadable campaigns exit 1"
