#!/bin/bash
# install.sh - 'cmake --install' into a scratch prefix: the command, the tap,
# the batch templates where reduce.pbs looks for them, and the docs.
set -u
fail() { echo "FAIL: $*" >&2; exit 1; }
T=$(mktemp -d) || exit 1
trap 'rm -rf "$T"' EXIT
P=$T/prefix
cmake --install "$MC_BUILD" --prefix "$P" >"$T/install.log" 2>&1 || fail "cmake --install: $(cat "$T/install.log")"
[ -x "$P/bin/msgcensus" ] || fail "no bin/msgcensus"
[ "$("$P/bin/msgcensus" --version)" = "$("$MC_CLI" --version)" ] || fail "installed --version differs"
for s in campaign.slurm reduce.slurm reduce.pbs reduce-steps.sh reducer-ranks.sh release-raw-traces.sh; do
    [ -x "$P/share/msgcensus/jobscripts/$s" ] || fail "jobscripts/$s not installed as a program"
    cmp -s "$P/share/msgcensus/jobscripts/$s" "$MC_SRC/jobscripts/$s" || fail "jobscripts/$s differs from the source"
done
for d in trace-format.md summary-format.md statistics.md batch.md README.md; do
    [ -s "$P/share/doc/msgcensus/$d" ] || fail "doc $d not installed"
done
if [ -f "$MC_BUILD/libmsgcensus-tap.so" ]; then
    tap=$(find "$P" -name libmsgcensus-tap.so)
    [ -n "$tap" ] || fail "the tap library is not installed"
    nm -D --defined-only "$tap" | grep -qw MPI_Init || fail "installed tap exports no MPI_Init"
fi
# reduce.pbs finds reduce-steps.sh next to the installed command when
# nothing else says where it is (its last lookup path).
mkdir "$T/submit"
got=$(cd "$T/submit" && env -u MC_JOBSCRIPTS -u SLURM_JOB_ID MC_BIN="$P/bin/msgcensus" submit_dir="$T/submit" \
    bash -c 'eval "$(sed -n "/^find_steps() {/,/^}/p" "$1")"; find_steps' _ "$P/share/msgcensus/jobscripts/reduce.pbs") ||
    fail "reduce.pbs did not find reduce-steps.sh under the prefix"
[ "$(readlink -f "$got")" = "$(readlink -f "$P/share/msgcensus/jobscripts/reduce-steps.sh")" ] || fail "reduce.pbs found $got"
echo "ok: install tree under a prefix, reduce.pbs finds its helper there"
