#!/bin/bash
# test_damaged_campaign.sh - a reduce job over a campaign with one flipped byte fails, naming the file, block and offset in its output.
. "$(dirname "$0")/sched-lib.sh"

start_slurm 2
camp=$WORK/halo-damaged
make_campaign "$camp" 3 20 5
victim=$camp/$(cd "$camp" && ls ./*.mct | sed -n 2p | xargs basename)
size=$(stat -c %s "$victim")
# Flip every bit of one byte in the middle of the file: inside a block's payload, away from
# the file header at the start and the footer index at the end.
pos=$((size / 2))
"$MC_PYTHON" - "$victim" "$pos" <<'PY'
import sys
path, pos = sys.argv[1], int(sys.argv[2])
with open(path, "r+b") as f:
    f.seek(pos)
    b = f.read(1)
    f.seek(pos)
    f.write(bytes([b[0] ^ 0xFF]))
PY
name=$(basename "$victim")

# check_message OUT WHO: OUT holds "msgcensus: .../NAME: block B at offset O: ..." with the
# damaged block starting at or before the flipped byte.
check_message() {
    local out=$1 who=$2 line off
    line=$(grep -m1 -E "^msgcensus: .*$name: block [0-9]+ at offset [0-9]+: " "$out") ||
        { show "$out"; fail "$who: no 'FILE: block N at offset M:' message for $name in the job output"; }
    off=$(sed -E 's/.* block [0-9]+ at offset ([0-9]+):.*/\1/' <<<"$line")
    [ "$off" -le "$pos" ] || fail "$who: damaged block at offset $off starts after the flipped byte at $pos"
    note "$who said: $line"
}

# 1. The default job: verify finds the damage and the job stops before reducing.
rc=0
MC_CAMPAIGN=$camp MC_SUMMARY=$WORK/out/v.h5 submit_wait "$WORK/verify.out" --ntasks=2 "$JOBS/reduce.slurm" || rc=$?
[ "$rc" != 0 ] || { show "$WORK/verify.out"; fail "the job over a damaged campaign succeeded"; }
check_message "$WORK/verify.out" verify
grep -q 'not reducing' "$WORK/verify.out" || fail "the job did not say it stopped before reducing"
[ ! -e "$WORK/out/v.h5" ] || fail "a summary was written for a damaged campaign"
ok "job with verify: exit status $rc, verify's message names file, block and offset"

# 2. Without verify (MC_VERIFY=0) the reducer itself meets the damage and stops the job.
rc=0
MC_CAMPAIGN=$camp MC_SUMMARY=$WORK/out/r.h5 MC_VERIFY=0 MC_RANKS=2 \
    submit_wait "$WORK/reduce.out" --ntasks=2 "$JOBS/reduce.slurm" || rc=$?
[ "$rc" != 0 ] || { show "$WORK/reduce.out"; fail "the reduce over a damaged campaign succeeded"; }
check_message "$WORK/reduce.out" reduce
grep -q 'msgcensus reduce failed' "$WORK/reduce.out" || fail "the job did not report the reduce's failure"
[ ! -e "$WORK/out/r.h5" ] || fail "the failed reduce left a summary"
ok "job without verify: exit status $rc, the reducer's message names file, block and offset"
