#!/usr/bin/env bash
# A real, single-node Slurm on this machine, for branchline's cluster tests (test/slurm) and for
# trying `--slurm` by hand: Debian's slurm-wlm and munge, configured for localhost and started
# as root without systemd.
#
#   bash tools/slurm/local-slurm.sh start    install the packages if missing, write the
#                                            configuration, start munged, slurmctld and slurmd,
#                                            wait until the node takes jobs
#   bash tools/slurm/local-slurm.sh status   whether it runs (exit 0) or not (exit 1)
#   bash tools/slurm/local-slurm.sh stop     stop the three daemons this script started
#
# Settings that work on a single Debian bookworm machine (Slurm 22.05): NodeName is the short host
# name with NodeAddr 127.0.0.1 (the name need not resolve), RealMemory a little below what
# `slurmd -C` measures (so `--mem` requests are accepted and the node is not drained),
# proctrack/linuxproc and task/none (no cgroups needed), select/cons_tres with CR_Core_Memory
# (tasks share the node by cores and memory), no accounting daemon (sacct then only says that
# accounting is disabled; branchline reads final task states from `scontrol show job`).
#
# The configuration goes to /etc/slurm/slurm.conf, marked as ours; a slurm.conf that this
# script did not write (a real cluster's) is never replaced: start then fails with a message.
# Needs root (package installation and the daemons).
set -euo pipefail

marker='# written by branchline tools/slurm/local-slurm.sh'
conf=/etc/slurm/slurm.conf
partition=local
statedir=/var/spool/slurmctld
spooldir=/var/spool/slurmd
logdir=/var/log/slurm
rundir=/run/slurm

say() { echo "local-slurm: $*" >&2; }
die() { say "$*"; exit 1; }

running() {
  # the controller answers and the node takes jobs
  scontrol ping 2>/dev/null | grep -q 'is UP' || return 1
  local state
  state="$(sinfo -h -p "$partition" -o '%t' 2>/dev/null | head -n1)"
  case "$state" in idle | mix | alloc | comp | idle~) return 0 ;; *) return 1 ;; esac
}

install_packages() {
  if command -v slurmctld >/dev/null && command -v slurmd >/dev/null && command -v sbatch >/dev/null && command -v munged >/dev/null; then
    return 0
  fi
  say "installing Debian's slurm-wlm and munge"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq --no-install-recommends slurm-wlm munge >/dev/null
}

write_config() {
  if [ -e "$conf" ] && ! grep -qF "$marker" "$conf"; then
    die "$conf exists and was not written by this script (a real cluster's configuration?); not replacing it"
  fi
  local host measured cpus memory
  host="$(hostname -s)"
  measured="$(slurmd -C | head -n1)"
  cpus="$(sed -n 's/.*CPUs=\([0-9]*\).*/\1/p' <<<"$measured")"
  memory="$(sed -n 's/.*RealMemory=\([0-9]*\).*/\1/p' <<<"$measured")"
  [ -n "$cpus" ] && [ -n "$memory" ] || die "cannot read this machine's CPUs and memory from 'slurmd -C' ($measured)"
  # a little below the measured memory: a node reporting less than its RealMemory is drained
  memory=$((memory * 9 / 10))
  mkdir -p /etc/slurm "$statedir" "$spooldir" "$logdir" "$rundir"
  cat >"$conf" <<EOF
$marker
# A single-node cluster on localhost for tests; not for production use.
ClusterName=branchline-local
SlurmctldHost=$host(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
MpiDefault=none
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
SchedulerType=sched/backfill
ReturnToService=2
StateSaveLocation=$statedir
SlurmdSpoolDir=$spooldir
SlurmctldPidFile=$rundir/slurmctld.pid
SlurmdPidFile=$rundir/slurmd.pid
SlurmctldLogFile=$logdir/slurmctld.log
SlurmdLogFile=$logdir/slurmd.log
AccountingStorageType=accounting_storage/none
JobAcctGatherType=jobacct_gather/none
JobCompType=jobcomp/none
MinJobAge=600
KillWait=30
NodeName=$host NodeAddr=127.0.0.1 CPUs=$cpus RealMemory=$memory State=UNKNOWN
PartitionName=$partition Nodes=$host Default=YES MaxTime=INFINITE State=UP DefMemPerCPU=512
EOF
}

start_munge() {
  if munge -n 2>/dev/null | unmunge >/dev/null 2>&1; then return 0; fi
  if [ ! -s /etc/munge/munge.key ]; then
    say 'creating /etc/munge/munge.key'
    dd if=/dev/urandom of=/etc/munge/munge.key bs=1 count=1024 status=none
  fi
  chown munge:munge /etc/munge/munge.key
  chmod 0400 /etc/munge/munge.key
  mkdir -p /run/munge /var/lib/munge /var/log/munge
  chown munge:munge /run/munge /var/lib/munge /var/log/munge
  chmod 0755 /run/munge
  runuser -u munge -- /usr/sbin/munged
  for _ in $(seq 50); do
    if munge -n 2>/dev/null | unmunge >/dev/null 2>&1; then return 0; fi
    sleep 0.2
  done
  die 'munged did not start (see /var/log/munge/munged.log)'
}

alive() { [ -s "$1" ] && kill -0 "$(cat "$1")" 2>/dev/null; }

start() {
  [ "$(id -u)" -eq 0 ] || die 'needs root (it installs packages and starts daemons)'
  if command -v scontrol >/dev/null && running; then
    say "already running: $(sinfo -h -p "$partition" -o '%P %t %N' 2>/dev/null)"
    return 0
  fi
  install_packages
  write_config
  start_munge
  alive "$rundir/slurmctld.pid" || slurmctld
  alive "$rundir/slurmd.pid" || slurmd
  for _ in $(seq 60); do
    if running; then
      say "running: partition $partition on $(hostname -s) ($(sinfo -h -p "$partition" -o '%c CPUs, %m MiB, state %t'))"
      return 0
    fi
    # a node left down or drained by an earlier configuration
    if sinfo -h -p "$partition" -o '%t' 2>/dev/null | grep -Eq '^(down|drain|drng)'; then
      scontrol update NodeName="$(hostname -s)" State=RESUME 2>/dev/null || true
    fi
    sleep 0.5
  done
  say 'the node did not become ready; the last lines of the logs:'
  tail -n 5 "$logdir/slurmctld.log" "$logdir/slurmd.log" >&2 || true
  exit 1
}

stop() {
  for pidfile in "$rundir/slurmd.pid" "$rundir/slurmctld.pid"; do
    if alive "$pidfile"; then kill "$(cat "$pidfile")"; fi
  done
  say 'slurmctld and slurmd stopped (munged keeps running)'
}

case "${1:-}" in
  start) start ;;
  stop) stop ;;
  status)
    if command -v scontrol >/dev/null && running; then
      sinfo -p "$partition"
    else
      say 'not running'
      exit 1
    fi
    ;;
  *)
    echo "usage: $0 start|status|stop" >&2
    exit 2
    ;;
esac
