#!/bin/bash
# local-slurm.sh - start and stop a private single-node Slurm on localhost for the batch-script tests.
#
# Usage:
#   local-slurm.sh install          install the Debian packages if a command is missing
#   local-slurm.sh start DIR [CPUS] start munged, slurmctld and slurmd with all their
#                                   state under DIR (default CPUS: 4)
#   local-slurm.sh stop DIR         stop the daemons started by 'start DIR', by process id
#   local-slurm.sh watch DIR PID    in the background: stop DIR's daemons once process PID
#                                   is gone (a test killed by a timeout cannot run its trap)
#
# 'start' writes DIR/env.sh; source it to point the Slurm clients at this cluster
# (it sets SLURM_CONF). Nothing outside DIR is written or read except the Debian
# packages themselves and one short-named directory /tmp/mc-slurm.XXXXXX: the munge key
# and logs, the Slurm configuration, state and logs live under DIR; the munge socket and
# slurmd's spool (which holds Unix sockets, whose paths may not exceed 108 bytes) live in
# the /tmp directory, removed by 'stop'. The ports are picked free on 127.0.0.1, so the
# cluster does not touch a system-wide munge or Slurm and two test runs do not collide.
# A 'start' over a DIR whose daemons still run (a killed earlier run) stops them first. The node is called "localhost" (slurmd -N localhost) whatever the machine's
# host name is; SlurmdParameters=config_overrides lets it claim more CPUs than the
# machine has cores, so a 2-core machine can run 4-rank jobs.
#
# Must run as root (slurmd launches jobs; munged runs as the munge user).
set -euo pipefail

PACKAGES=(slurmctld slurmd slurm-client munge slurm-wlm-torque)

die() { echo "local-slurm: $*" >&2; exit 1; }
say() { echo "local-slurm: $*" >&2; }

cmd_install() {
    local missing=0 c
    for c in slurmctld slurmd sbatch srun scontrol scancel munged mungekey qsub; do
        command -v "$c" >/dev/null 2>&1 || missing=1
    done
    [ "$missing" = 0 ] && return 0
    [ "$(id -u)" = 0 ] || die "Slurm commands are missing and only root can install ${PACKAGES[*]}"
    say "installing ${PACKAGES[*]} (Debian packages)"
    export DEBIAN_FRONTEND=noninteractive
    if ! apt-get install -y -q "${PACKAGES[@]}" >"${TMPDIR:-/tmp}/local-slurm-apt.log" 2>&1; then
        apt-get update -q >>"${TMPDIR:-/tmp}/local-slurm-apt.log" 2>&1 || true
        apt-get install -y -q "${PACKAGES[@]}" >>"${TMPDIR:-/tmp}/local-slurm-apt.log" 2>&1 ||
            die "apt-get install ${PACKAGES[*]} failed; see ${TMPDIR:-/tmp}/local-slurm-apt.log"
    fi
}

# A TCP port nobody listens on, on 127.0.0.1 (the kernel picks it).
free_port() {
    /usr/bin/python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])'
}

# wait_for SECONDS DESCRIPTION COMMAND...: retry COMMAND every 0.2 s.
wait_for() {
    local secs=$1; shift 2 # $2 names what is awaited, for the reader
    local tries=$((secs * 5))
    while ! "$@" >/dev/null 2>&1; do
        tries=$((tries - 1))
        [ "$tries" -gt 0 ] || return 1
        sleep 0.2
    done
    return 0
}

pid_alive() { [ -s "$1" ] && kill -0 "$(cat "$1")" 2>/dev/null; }

cmd_start() {
    local dir=${1:?usage: local-slurm.sh start DIR [CPUS]} cpus=${2:-4}
    [ "$(id -u)" = 0 ] || die "must run as root (slurmd launches the jobs)"
    cmd_install
    mkdir -p "$dir"
    dir=$(cd "$dir" && pwd)
    if [ -e "$dir/pids" ] || [ -e "$dir/rtdir" ]; then
        say "$dir holds daemons of an earlier run; stopping them"
        cmd_stop "$dir"
    fi
    rm -rf "${dir:?}/munge" "${dir:?}/state" "${dir:?}/log" "${dir:?}/etc" "${dir:?}/run"
    mkdir -p "$dir/munge" "$dir/state" "$dir/log" "$dir/etc" "$dir/run"
    local rt
    rt=$(mktemp -d /tmp/mc-slurm.XXXXXX)
    chmod 0755 "$rt" # the munge user must reach its socket directory inside
    echo "$rt" >"$dir/rtdir"
    # A start that fails half way stops what it started.
    start_ok=0
    trap '[ "$start_ok" = 1 ] || cmd_stop "$dir"' EXIT
    mkdir -p "$rt/spool" "$rt/munge"
    : >"$dir/pids"

    # munge: a private key and socket, owned by the munge user as munged insists.
    chown munge:munge "$dir/munge" "$rt/munge"
    chmod 0700 "$dir/munge" "$rt/munge"
    mungekey --create --keyfile="$dir/munge/munge.key" >/dev/null 2>&1 ||
        dd if=/dev/urandom of="$dir/munge/munge.key" bs=1024 count=1 status=none
    chown munge:munge "$dir/munge/munge.key"
    chmod 0400 "$dir/munge/munge.key"
    local sock="$rt/munge/munge.socket"
    # --force: the build tree's parent directories belong to root and may be
    # group-writable; munged would otherwise refuse them.
    runuser -u munge -- /usr/sbin/munged --force --socket="$sock" \
        --key-file="$dir/munge/munge.key" --pid-file="$dir/munge/munged.pid" \
        --log-file="$dir/munge/munged.log" --seed-file="$dir/munge/munged.seed" ||
        die "munged did not start; see $dir/munge/munged.log"
    wait_for 10 munged test -S "$sock" || die "munged made no socket; see $dir/munge/munged.log"
    wait_for 10 munged pid_alive "$dir/munge/munged.pid" || die "munged wrote no pid file"
    echo "munged $(cat "$dir/munge/munged.pid")" >>"$dir/pids"

    local ctld_port slurmd_port host
    ctld_port=$(free_port)
    slurmd_port=$(free_port)
    while [ "$slurmd_port" = "$ctld_port" ]; do slurmd_port=$(free_port); done
    host=$(hostname -s)
    cat >"$dir/etc/slurm.conf" <<EOF
# Private single-node cluster for the msgcensus batch-script tests (written by local-slurm.sh).
ClusterName=mctest
SlurmctldHost=$host(127.0.0.1)
SlurmctldPort=$ctld_port
SlurmdPort=$slurmd_port
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$sock
StateSaveLocation=$dir/state
SlurmdSpoolDir=$rt/spool
SlurmctldPidFile=$dir/run/slurmctld.pid
SlurmdPidFile=$dir/run/slurmd-%n.pid
SlurmctldLogFile=$dir/log/slurmctld.log
SlurmdLogFile=$dir/log/slurmd-%n.log
SlurmctldDebug=info
SlurmdDebug=info
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
MailProg=/bin/true
MpiDefault=pmix
SlurmdParameters=config_overrides
ReturnToService=2
# Short waits so the tests run fast: SIGTERM then SIGKILL 2 s later, as at a
# wall-clock limit; finished jobs leave the controller quickly.
KillWait=2
MinJobAge=300
InactiveLimit=0
SchedulerType=sched/backfill
SchedulerParameters=sched_interval=1
NodeName=localhost NodeAddr=127.0.0.1 CPUs=$cpus State=UNKNOWN
PartitionName=debug Nodes=localhost Default=YES MaxTime=INFINITE State=UP
EOF
    # plugstack.conf is read from the directory of slurm.conf; an empty one
    # keeps the system's SPANK plugins out.
    : >"$dir/etc/plugstack.conf"
    cat >"$dir/env.sh" <<EOF
# Source this to use the private cluster in $dir.
export SLURM_CONF=$dir/etc/slurm.conf
EOF
    export SLURM_CONF="$dir/etc/slurm.conf"

    /usr/sbin/slurmctld -f "$SLURM_CONF" || die "slurmctld did not start; see $dir/log/slurmctld.log"
    wait_for 15 slurmctld pid_alive "$dir/run/slurmctld.pid" ||
        die "slurmctld is not running; see $dir/log/slurmctld.log"
    echo "slurmctld $(cat "$dir/run/slurmctld.pid")" >>"$dir/pids"
    /usr/sbin/slurmd -f "$SLURM_CONF" -N localhost || die "slurmd did not start; see $dir/log/slurmd-localhost.log"
    wait_for 15 slurmd pid_alive "$dir/run/slurmd-localhost.pid" ||
        die "slurmd is not running; see $dir/log/slurmd-localhost.log"
    echo "slurmd $(cat "$dir/run/slurmd-localhost.pid")" >>"$dir/pids"

    node_idle() { sinfo -h -N -n localhost -o %t | grep -qx 'idle'; }
    wait_for 30 "node idle" node_idle || {
        sinfo -N >&2 || true
        tail -20 "$dir/log/slurmctld.log" >&2 || true
        die "node localhost did not become idle"
    }
    start_ok=1
    say "cluster up in $dir (SLURM_CONF=$SLURM_CONF, $cpus CPUs on node localhost)"
}

cmd_stop() {
    local dir=${1:?usage: local-slurm.sh stop DIR}
    [ -e "$dir/pids" ] || [ -e "$dir/rtdir" ] || return 0
    touch "$dir/pids"
    local name pid
    # Cancel what still runs, so no slurmstepd outlives its slurmd.
    if [ -f "$dir/etc/slurm.conf" ] && grep -q '^slurmctld ' "$dir/pids"; then
        export SLURM_CONF="$dir/etc/slurm.conf"
        local jobs
        jobs=$(squeue -h -o %i 2>/dev/null || true)
        if [ -n "$jobs" ]; then
            # shellcheck disable=SC2086 # one job id per word
            scancel $jobs 2>/dev/null || true
            no_jobs() { [ -z "$(squeue -h -o %i 2>/dev/null)" ]; }
            wait_for 15 "jobs gone" no_jobs ||
                say "jobs still listed after scancel: $(squeue -h -o %i 2>/dev/null | tr '\n' ' ')"
        fi
    fi
    # SIGTERM to all at once (each takes a second or two to shut down), then
    # wait for each, SIGKILL after 10 s.
    # The daemons are known by the ids this script recorded and by their own pid files (the
    # latter cover a start that was interrupted before it recorded one); a process counts only
    # while its command line names this cluster's configuration, key or socket directory.
    local pids=() seen=" " f
    {
        cat "$dir/pids"
        for f in "$dir/munge/munged.pid" "$dir"/run/*.pid; do
            [ -s "$f" ] && echo "$(basename "$f" .pid) $(cat "$f")"
        done
    } >"$dir/pids.all" 2>/dev/null || true
    while read -r name pid; do
        [[ $pid =~ ^[0-9]+$ ]] || continue
        case $seen in *" $pid "*) continue ;; esac
        seen="$seen$pid "
        tr '\0' ' ' <"/proc/$pid/cmdline" 2>/dev/null | grep -qF -- "$dir/" || continue
        kill -TERM "$pid" 2>/dev/null && pids+=("$name:$pid")
    done <"$dir/pids.all"
    rm -f "$dir/pids.all"
    local entry
    for entry in ${pids[@]+"${pids[@]}"}; do
        name=${entry%%:*} pid=${entry#*:}
        for _ in $(seq 100); do
            kill -0 "$pid" 2>/dev/null || break
            sleep 0.1
        done
        if kill -0 "$pid" 2>/dev/null; then
            say "$name ($pid) ignored SIGTERM for 10 s; sending SIGKILL"
            kill -KILL "$pid" 2>/dev/null || true
        fi
    done
    rm -f "$dir/pids"
    if [ -s "$dir/rtdir" ]; then
        local rt
        rt=$(cat "$dir/rtdir")
        case $rt in /tmp/mc-slurm.*) rm -rf "$rt" ;; esac
        rm -f "$dir/rtdir"
    fi
}

# Stop DIR's daemons when process PID ends, unless 'stop DIR' ran already. Started with
# setsid so that a timeout killing the test's process group leaves the watcher alive.
# The watcher acts only on the cluster it was started for (DIR/rtdir names it): a later
# cluster started in the same DIR after a clean stop is not its business.
cmd_watch() {
    local dir=${1:?usage: local-slurm.sh watch DIR PID} pid=${2:?usage: local-slurm.sh watch DIR PID}
    local self token
    self=$(readlink -f "$0")
    token=$(cat "$dir/rtdir" 2>/dev/null) || die "$dir: no cluster to watch"
    setsid bash -c '
        mine() { [ -e "$1/pids" ] && [ "$(cat "$1/rtdir" 2>/dev/null)" = "$3" ]; }
        while kill -0 "$2" 2>/dev/null && mine "$@"; do sleep 1; done
        if mine "$@"; then exec "$0" stop "$1"; fi
        exit 0' "$self" "$dir" "$pid" "$token" </dev/null >>"$dir/log/watch.log" 2>&1 &
}

case ${1:-} in
install) cmd_install ;;
start) shift; cmd_start "$@" ;;
stop) shift; cmd_stop "$@" ;;
watch) shift; cmd_watch "$@" ;;
*) echo "usage: local-slurm.sh install | start DIR [CPUS] | stop DIR | watch DIR PID" >&2; exit 2 ;;
esac
