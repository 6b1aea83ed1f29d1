#!/bin/bash
# reducer-ranks.sh - advise how many MPI ranks `msgcensus reduce` should use for a campaign and an allocation.
#
# Usage: reducer-ranks.sh [OPTIONS] CAMPAIGN_DIR
#
# Prints one number on stdout: the reducer ranks to launch. With --explain it also says on
# stderr how the number was reached.
#
# The reducer is I/O-bound: it streams the traces once and does little arithmetic per byte
# (see docs/batch.md, "Choosing reducer ranks"). More ranks help only while the file system
# delivers more bandwidth to more readers, so the advice is
#
#   ranks = min( slots in the allocation,
#                nodes x ranks-per-node,          the file system's sweet spot per node
#                ceil(campaign bytes / min-bytes-per-rank) )   no rank for a crumb
#
# (bytes as stored: a zstd-compressed campaign costs more CPU per stored byte; give it a
# smaller --min-bytes-per-rank, see docs/batch.md.)
# and at least 1. The reducer splits large files at block boundaries, so more ranks than
# files is fine.
#
# Options (each also read from the environment variable named after it):
#   --slots N                 MC_SLOTS: ranks the allocation allows (default: SLURM_NTASKS,
#                             else PBS_NP, else the lines of PBS_NODEFILE, else nproc)
#   --nodes N                 MC_NODES: nodes of the allocation (default: SLURM_JOB_NUM_NODES,
#                             else the distinct lines of PBS_NODEFILE, else 1)
#   --ranks-per-node N        MC_RANKS_PER_NODE: concurrent readers per node that the file
#                             system rewards (default 8; measure yours, see docs/batch.md)
#   --min-bytes-per-rank B    MC_MIN_BYTES_PER_RANK: smallest share worth a rank, with unit
#                             suffix K, M, G, KiB, MiB, GiB (default 1GiB; 0 = no minimum)
#   --explain                 say on stderr how the number was chosen
#   -h, --help                this text
#
# Exit status: 0, 1 when the campaign cannot be read, 2 on a bad command line.
set -euo pipefail

usage() { sed -n '2,/^set -euo/{/^set -euo/d;s/^# \{0,1\}//;p}' "$0"; }
die() { echo "reducer-ranks: $*" >&2; exit 1; }
usage_error() { echo "reducer-ranks: $*" >&2; echo "Try 'reducer-ranks.sh --help'." >&2; exit 2; }

# to_bytes "256MiB" -> 268435456 (K/M/G/T powers of 1000, KiB/MiB/GiB/TiB of 1024).
to_bytes() {
    local s=$1 num unit mult
    [[ $s =~ ^([0-9]+)([KkMGT]?|[KMGT]iB)$ ]] || return 1
    num=${BASH_REMATCH[1]} unit=${BASH_REMATCH[2]}
    case $unit in
    "") mult=1 ;; K | k) mult=1000 ;; M) mult=1000000 ;; G) mult=1000000000 ;;
    T) mult=1000000000000 ;; KiB) mult=1024 ;; MiB) mult=1048576 ;;
    GiB) mult=1073741824 ;; TiB) mult=1099511627776 ;;
    esac
    echo $((num * mult))
}

positive() { [[ $1 =~ ^[1-9][0-9]*$ ]]; }

slots=${MC_SLOTS:-}
nodes=${MC_NODES:-}
per_node=${MC_RANKS_PER_NODE:-8}
min_bytes=${MC_MIN_BYTES_PER_RANK:-1GiB}
explain=0
campaign=

while [ $# -gt 0 ]; do
    case $1 in
    --slots) slots=${2:?--slots needs a number}; shift 2 ;;
    --nodes) nodes=${2:?--nodes needs a number}; shift 2 ;;
    --ranks-per-node) per_node=${2:?--ranks-per-node needs a number}; shift 2 ;;
    --min-bytes-per-rank) min_bytes=${2:?--min-bytes-per-rank needs a size}; shift 2 ;;
    --explain) explain=1; shift ;;
    -h | --help) usage; exit 0 ;;
    -*) usage_error "unknown option '$1'" ;;
    *) [ -z "$campaign" ] || usage_error "one campaign directory only"; campaign=$1; shift ;;
    esac
done
[ -n "$campaign" ] || usage_error "no campaign directory given"
[ -d "$campaign" ] || die "$campaign: not a directory"

if [ -z "$slots" ]; then
    if [ -n "${SLURM_NTASKS:-}" ]; then slots=$SLURM_NTASKS
    elif [ -n "${PBS_NP:-}" ]; then slots=$PBS_NP
    elif [ -n "${PBS_NODEFILE:-}" ] && [ -r "$PBS_NODEFILE" ]; then slots=$(wc -l <"$PBS_NODEFILE")
    else slots=$(nproc)
    fi
fi
if [ -z "$nodes" ]; then
    if [ -n "${SLURM_JOB_NUM_NODES:-}" ]; then nodes=$SLURM_JOB_NUM_NODES
    elif [ -n "${PBS_NODEFILE:-}" ] && [ -r "$PBS_NODEFILE" ]; then nodes=$(sort -u "$PBS_NODEFILE" | wc -l)
    else nodes=1
    fi
fi
positive "$slots" || usage_error "slots must be a positive number, not '$slots'"
positive "$nodes" || usage_error "nodes must be a positive number, not '$nodes'"
positive "$per_node" || usage_error "ranks per node must be a positive number, not '$per_node'"
min_b=$(to_bytes "$min_bytes") || usage_error "bad size '$min_bytes' (e.g. 256MiB)"

# The campaign: its trace files and their bytes (GNU find; no file is opened).
read -r nfiles bytes < <(find "$campaign" -maxdepth 1 -type f -name '*.mct' -printf '%s\n' |
    awk '{n++; b+=$1} END {printf "%d %.0f\n", n, b}')
[ "$nfiles" -gt 0 ] || die "$campaign: no *.mct trace files"

by_fs=$((nodes * per_node))
if [ "$min_b" -gt 0 ]; then
    by_size=$(((bytes + min_b - 1) / min_b))
else
    by_size=$slots
fi
[ "$by_size" -ge 1 ] || by_size=1

ranks=$slots reason="the allocation's slots"
if [ "$by_fs" -lt "$ranks" ]; then ranks=$by_fs reason="$nodes node(s) x $per_node readers per node"; fi
if [ "$min_b" -gt 0 ] && [ "$by_size" -lt "$ranks" ]; then ranks=$by_size reason="one rank per $min_bytes of traces"; fi

if [ "$explain" = 1 ]; then
    {
        echo "reducer-ranks: campaign $campaign: $nfiles files, $bytes bytes"
        echo "reducer-ranks: allocation: $slots slots on $nodes node(s)"
        if [ "$min_b" -gt 0 ]; then size_note="size $by_size (one rank per $min_bytes)"; else size_note="size: no minimum share"; fi
        echo "reducer-ranks: limits: slots $slots, file system $by_fs ($nodes x $per_node), $size_note"
        echo "reducer-ranks: advice: $ranks rank(s), set by $reason"
    } >&2
fi
echo "$ranks"
