#!/bin/bash
# run_reduce.sh - throughput and memory of 'msgcensus reduce' against cat,
# zstd -dc and a NumPy reference, with the campaign in the page cache and
# the summaries on a memory file system (/dev/shm) where there is one.
# Figures for docs/performance.md; never run by ctest.
#
# usage: bench/run_reduce.sh [--build DIR] [--work DIR] [--size 1GiB]
#                            [--runs 5] [--big 8GiB] [--profile] [--keep]
#   --big SIZE   also reduce a SIZE campaign (peak RSS must stay the same);
#                run last, and deleted afterwards (the disk is shared)
#   --profile    perf profile of one single-rank run (top symbols)
#   --keep       keep the campaigns (default: delete them at the end)
set -euo pipefail

BUILD=$(cd "$(dirname "$0")/.." && pwd)/build
WORK=/tmp/mc-bench-reduce
SIZE=1GiB
RUNS=5
BIG=
PROFILE=0
KEEP=0
while [ $# -gt 0 ]; do
    case $1 in
    --build) BUILD=$2; shift ;;
    --work) WORK=$2; shift ;;
    --size) SIZE=$2; shift ;;
    --runs) RUNS=$2; shift ;;
    --big) BIG=$2; shift ;;
    --profile) PROFILE=1 ;;
    --keep) KEEP=1 ;;
    -h|--help) sed -n '2,12p' "$0"; exit 0 ;;
    *) echo "run_reduce.sh: unknown option $1" >&2; exit 2 ;;
    esac
    shift
done
CLI=$BUILD/msgcensus
PY=/usr/bin/python3
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
export OMPI_MCA_btl=self,vader OMPI_MCA_btl_vader_single_copy_mechanism=none
MPIRUN="mpirun --oversubscribe"
[ -x "$CLI" ] || { echo "run_reduce.sh: no $CLI (build first)" >&2; exit 1; }
[ -x /usr/bin/time ] || { echo "run_reduce.sh: needs GNU time (Debian package 'time')" >&2; exit 1; }
mkdir -p "$WORK"
cleanup() {
    [ "$SUMDIR" = "$WORK" ] || rm -rf "$SUMDIR"
    [ "$KEEP" = 1 ] || rm -rf "$WORK/unc" "$WORK/zst" "$WORK/big" "$WORK/all.zst" "$WORK"/*.h5 "$WORK/np_ref.py" "$WORK"/perf.data* "$WORK"/rss.* "$WORK"/read.*
}
trap cleanup EXIT

now() { date +%s.%N; }
median() { sort -g | awk '{ v[NR] = $1 } END { if (NR % 2) print v[(NR + 1) / 2]; else print (v[NR / 2] + v[NR / 2 + 1]) / 2 }'; }
# time_cmd CMD...: wall seconds of one run
time_cmd() { local t0 t1; t0=$(now); "$@" >/dev/null 2>&1; t1=$(now); echo "$t1 - $t0" | bc -l; }
# The summaries go to a memory file system when there is one: rank 0
# fsyncs the summary before the rename, and on this machine's shared disk
# that alone took 8 to 230 ms, which is the disk's latency, not the
# reducer's reading. The cost on the disk is measured on its own below.
SUMDIR=$WORK
if [ -d /dev/shm ] && [ -w /dev/shm ]; then SUMDIR=$(mktemp -d /dev/shm/mc-bench.XXXXXX); fi
# reduce_secs NP DIR [OUTDIR]: the reducer's own elapsed time (plan to
# rename, no MPI start-up), parsed from its result line; its read phase
# (plan done to every rank done reading, from -v) is appended to
# $WORK/read.NP, or $WORK/read.NP.out when OUTDIR is given. NP 0 = without
# mpirun.
reduce_secs() {
    local np=$1 dir=$2 out=${3:-$SUMDIR}/r.h5 lines
    rm -f "$out"
    if [ "$np" = 0 ]; then lines=$("$CLI" reduce -v "$dir" -o "$out" 2>&1 >/dev/null)
    else lines=$($MPIRUN -np "$np" "$CLI" reduce -v "$dir" -o "$out" 2>&1 >/dev/null); fi
    rm -f "$out"
    echo "$lines" | sed -n 's/^reduce: phases: .* read \([0-9.]*\) s.*/\1/p' | tail -1 >>"$WORK/read.$np${3:+.out}"
    echo "$lines" | grep '^reduce:.* in ' | tail -1 | sed -n 's/.* in \([0-9.]*\) s .*/\1/p'
}
rate() { echo "$1 / $2 / 1048576" | bc -l | xargs printf '%.0f'; } # MiB/s
runs() { local i; for i in $(seq "$RUNS"); do "$@"; done; }
# rounds FILE CMD...: RUNS rounds; in each, every CMD (one shell string each)
# runs once, in turn, and appends its time to FILE.k (k = its position).
# Interleaving keeps a change in the machine's load from landing on one
# of the figures a ratio is made of.
rounds() {
    local out=$1 i k c; shift
    for i in $(seq "$RUNS"); do
        k=0
        for c in "$@"; do
            eval "$c" >>"$out.$k"
            k=$((k + 1))
        done
    done
}

echo "# run_reduce.sh on $(hostname), $(nproc) cores, $(date -u +%FT%TZ)"
echo "# load average at start: $(cut -d' ' -f1-3 /proc/loadavg)"

# ---- campaigns ----------------------------------------------------------
rm -rf "$WORK/unc" "$WORK/zst"
"$CLI" synth -q -o "$WORK/unc" --ranks 8 --target-size "$SIZE"
"$CLI" synth -q -o "$WORK/zst" --ranks 8 --target-size "$SIZE" --zstd
BYTES=$(cat "$WORK"/unc/*.mct | wc -c)
ZBYTES=$(cat "$WORK"/zst/*.mct | wc -c)
RECORDS=$(sed -n 's/^records = //p' "$WORK/unc/campaign.txt")
echo "# campaign: 8 files, $RECORDS records, $BYTES bytes uncompressed, $ZBYTES with zstd"
cat "$WORK"/unc/*.mct "$WORK"/zst/*.mct >/dev/null # into the page cache

# ---- uncompressed: cat vs 1 and 2 reducer ranks -------------------------
rm -f "$WORK"/t.* "$WORK"/read.*
rounds "$WORK/t" "time_cmd sh -c 'cat $WORK/unc/*.mct > /dev/null'" \
    "reduce_secs 0 $WORK/unc" "reduce_secs 2 $WORK/unc" "reduce_secs 0 $WORK/unc $WORK"
T_CAT=$(median <"$WORK/t.0")
T_R1=$(median <"$WORK/t.1")
T_R2=$(median <"$WORK/t.2")
T_R1D=$(median <"$WORK/t.3")
RD_R1=$(median <"$WORK/read.0")
RD_R2=$(median <"$WORK/read.2")
W_R1=$(runs time_cmd sh -c "rm -f $SUMDIR/w.h5; $CLI reduce -q $WORK/unc -o $SUMDIR/w.h5" | median)
W_R2=$(runs time_cmd sh -c "rm -f $SUMDIR/w.h5; $MPIRUN -np 2 $CLI reduce -q $WORK/unc -o $SUMDIR/w.h5" | median)
rm -f "$SUMDIR/w.h5"
echo
WHERE="a memory file system"
[ "$SUMDIR" = "$WORK" ] && WHERE="disk"
echo "uncompressed ($RUNS rounds of cat, 1 rank, 2 ranks, 1 rank with the summary on disk,"
echo "in turn; medians; summaries on $WHERE unless said. 'reduce' is plan"
echo "to rename, 'read phase' its reading (reduce -v); neither includes MPI start-up, the"
echo "wall time does)"
printf '  %-32s %8.3f s %7s MiB/s\n' "cat > /dev/null" "$T_CAT" "$(rate "$BYTES" "$T_CAT")"
printf '  %-32s %8.3f s %7s MiB/s  (%.0f %% of cat)   wall %.3f s\n' "reduce, 1 rank" "$T_R1" \
    "$(rate "$BYTES" "$T_R1")" "$(echo "100 * $T_CAT / $T_R1" | bc -l)" "$W_R1"
printf '  %-32s %8.3f s %7s MiB/s  (%.0f %% of cat)\n' "  its read phase" "$RD_R1" \
    "$(rate "$BYTES" "$RD_R1")" "$(echo "100 * $T_CAT / $RD_R1" | bc -l)"
printf '  %-32s %8.3f s %7s MiB/s  (%.0f %% of cat)\n' "reduce, 1 rank, summary on disk" "$T_R1D" \
    "$(rate "$BYTES" "$T_R1D")" "$(echo "100 * $T_CAT / $T_R1D" | bc -l)"
printf '  %-32s %8.3f s %7s MiB/s  (%.2fx one rank)    wall %.3f s\n' "reduce, 2 ranks" "$T_R2" \
    "$(rate "$BYTES" "$T_R2")" "$(echo "$T_R1 / $T_R2" | bc -l)" "$W_R2"
printf '  %-32s %8.3f s %7s MiB/s  (%.2fx one rank)\n' "  its read phase" "$RD_R2" \
    "$(rate "$BYTES" "$RD_R2")" "$(echo "$RD_R1 / $RD_R2" | bc -l)"

# ---- zstd: reduce vs zstd -dc of the same records -----------------------
cat "$WORK"/unc/*.mct | zstd -q -3 -T1 -c >"$WORK/all.zst"
rm -f "$WORK"/z.*
rounds "$WORK/z" "time_cmd sh -c 'zstd -q -dc -T1 $WORK/all.zst > /dev/null'" \
    "reduce_secs 0 $WORK/zst" "reduce_secs 2 $WORK/zst"
T_ZCAT=$(median <"$WORK/z.0")
T_Z1=$(median <"$WORK/z.1")
T_Z2=$(median <"$WORK/z.2")
rm -f "$WORK"/t.* "$WORK"/z.*
echo
echo "zstd blocks (rates in uncompressed bytes/s; interleaved rounds as above)"
printf '  %-28s %8.3f s %7s MiB/s\n' "zstd -dc (one stream, -3)" "$T_ZCAT" "$(rate "$BYTES" "$T_ZCAT")"
printf '  %-28s %8.3f s %7s MiB/s  (%.0f %% of zstd -dc)\n' "reduce, 1 rank" "$T_Z1" \
    "$(rate "$BYTES" "$T_Z1")" "$(echo "100 * $T_ZCAT / $T_Z1" | bc -l)"
printf '  %-28s %8.3f s %7s MiB/s  (%.2fx one rank)\n' "reduce, 2 ranks" "$T_Z2" \
    "$(rate "$BYTES" "$T_Z2")" "$(echo "$T_Z1 / $T_Z2" | bc -l)"

# ---- histogram update: batched vs per record ------------------------------
if [ -x "$BUILD/bench/bench_reduce_hist" ]; then
    echo
    echo "histogram update ($(ls "$WORK"/unc/*.mct | head -1 | xargs basename))"
    echo "  $("$BUILD/bench/bench_reduce_hist" "$(ls "$WORK"/unc/*.mct | head -1)")"
fi

# ---- peak RSS per rank ----------------------------------------------------
rss_ranks() { # NP DIR: max RSS (KiB) of each rank, one GNU time file per rank
    rm -f "$SUMDIR/m.h5" "$WORK"/rss.*
    $MPIRUN -np "$1" sh -c 'exec /usr/bin/time -f %M -o "$0.$OMPI_COMM_WORLD_RANK" "$@"' \
        "$WORK/rss" "$CLI" reduce -q "$2" -o "$SUMDIR/m.h5" >/dev/null 2>&1 || true
    cat "$WORK"/rss.* | tr '\n' ' '
    rm -f "$WORK"/rss.*
}
echo
echo "peak RSS per rank (GNU time, KiB)"
echo "  $SIZE campaign, 1 rank:  $(rss_ranks 1 "$WORK/unc")"
echo "  $SIZE campaign, 2 ranks: $(rss_ranks 2 "$WORK/unc")"

# ---- NumPy reference --------------------------------------------------------
cat >"$WORK/np_ref.py" <<'EOF'
import glob, sys, time
import numpy as np  # Debian python3-numpy
REC = np.dtype([("bytes", "<u8"), ("t0", "<u8"), ("t1", "<u8"), ("comm", "<u4"),
                ("csize", "<u4"), ("peer", "<i4"), ("tag", "<i4"), ("op", "<u2"),
                ("dir", "u1"), ("flags", "u1"), ("res", "<u4")])
t = time.time()
parts = []
for path in sorted(glob.glob(sys.argv[1] + "/*.mct")):
    raw = np.fromfile(path, dtype=np.uint8)
    off = int(raw[16:20].view("<u4")[0])
    while off + 40 <= raw.size and raw[off:off + 4].tobytes() == b"MCBK":
        n = int(raw[off + 8:off + 12].view("<u4")[0])
        stored = int(raw[off + 16:off + 20].view("<u4")[0])
        parts.append(raw[off + 40:off + 40 + 48 * n].view(REC))
        off += 40 + stored
recs = np.concatenate(parts)
keys = recs["op"].astype(np.uint32) * 3 + recs["dir"]
for k in np.unique(keys):
    s, c = np.unique(recs["bytes"][keys == k], return_counts=True)
    x = s.astype(np.float64)
    mean = np.average(x, weights=c)
    med = np.median(np.repeat(x, c)) if c.sum() < 5e7 else np.nan
print("%d records in %.2f s" % (recs.size, time.time() - t))
EOF
echo
NP_OUT=$(/usr/bin/time -f 'RSS %M' $PY "$WORK/np_ref.py" "$WORK/unc" 2>&1)
echo "NumPy reference (np.fromfile + structured dtype + np.unique per op):"
echo "  $(echo "$NP_OUT" | grep records), peak RSS $(echo "$NP_OUT" | sed -n 's/^RSS //p') KiB"

# ---- profile ------------------------------------------------------------------
if [ "$PROFILE" = 1 ] && command -v perf >/dev/null; then
    rm -f "$SUMDIR/p.h5"
    perf record -q -o "$WORK/perf.data" "$CLI" reduce -q "$WORK/unc" -o "$SUMDIR/p.h5" >/dev/null 2>&1
    echo
    echo "perf profile, 1 rank, uncompressed (top symbols):"
    perf report -i "$WORK/perf.data" --no-children --stdio 2>/dev/null |
        grep -E '^ +[0-9]' | grep msgcensus | head -8 | sed 's/^/  /' || true
    rm -f "$WORK/perf.data"
fi

# ---- the big campaign, last ---------------------------------------------------
if [ -n "$BIG" ]; then
    rm -rf "$WORK/unc" "$WORK/zst" "$WORK/all.zst" # make room first
    "$CLI" synth -q -o "$WORK/big" --ranks 8 --target-size "$BIG"
    cat "$WORK"/big/*.mct >/dev/null
    echo
    echo "  $BIG campaign, 1 rank:  $(rss_ranks 1 "$WORK/big") KiB; $(reduce_secs 0 "$WORK/big") s"
    echo "  $BIG campaign, 2 ranks: $(rss_ranks 2 "$WORK/big") KiB; $(reduce_secs 2 "$WORK/big") s"
    rm -rf "$WORK/big"
fi
echo
echo "# load average at end: $(cut -d' ' -f1-3 /proc/loadavg)"
