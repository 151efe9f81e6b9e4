#!/usr/bin/env bash
# A throw-away single-node Slurm cluster (munged + slurmctld + slurmd) living entirely in one
# directory, for tests that submit real batch jobs. Needs root and Debian's slurm-wlm and munge.
#
#   scripts/slurm/local-cluster.sh start DIR   # writes DIR/slurm.conf etc., starts the daemons,
#                                              # waits for the node to be idle, prints
#                                              # "export SLURM_CONF=DIR/slurm.conf"
#   scripts/slurm/local-cluster.sh stop DIR    # cancels this cluster's jobs, stops the daemons
#
# Nothing outside DIR is read or written on purpose: no /etc/slurm, no /etc/munge, no system
# munge socket. The munge socket, key, pid, log and seed files, Slurm's state and spool
# directories, its pid and log files all sit in DIR, so several clusters (or a system-wide one)
# can coexist as long as their ports differ; the ports are picked free at start.
set -euo pipefail
# The daemons live in /usr/sbin, which a non-login shell's PATH may lack.
export PATH="$PATH:/usr/sbin:/sbin"

usage() {
  echo "usage: $0 start DIR | stop DIR" >&2
  exit 2
}
[ $# -eq 2 ] || usage
cmd=$1
dir=$2
case "$cmd" in start | stop) ;; *) usage ;; esac

log() { echo "local-cluster: $*" >&2; }
die() {
  log "$*"
  exit 1
}

# pid from a pid file, printed only if that process is alive and is ours: its command line names
# DIR (every daemon here is started with a path in DIR), so a stale pid file whose number was
# reused by an unrelated process does not get that process killed.
live_pid() {
  local f=$1 pid
  [ -s "$f" ] || return 1
  pid=$(tr -dc '0-9' <"$f")
  [ -n "$pid" ] && kill -0 "$pid" 2>/dev/null || return 1
  if [ -r "/proc/$pid/cmdline" ]; then
    [[ "$(tr '\0' ' ' <"/proc/$pid/cmdline")" == *"$dir/"* ]] || return 1
  fi
  echo "$pid"
}

# Stops the daemons of the given pid files together (each takes a second or two to wind down):
# TERM, up to 15 s for all to exit, then KILL for those left.
stop_daemons() {
  local f pid i alive
  local -a pids=() files=()
  for f in "$@"; do
    if pid=$(live_pid "$f"); then
      kill -TERM "$pid" 2>/dev/null || true
      pids+=("$pid")
      files+=("$f")
    else
      rm -f "$f"
    fi
  done
  [ ${#pids[@]} -gt 0 ] || return 0
  for ((i = 0; i < 150; i++)); do
    alive=0
    for pid in "${pids[@]}"; do kill -0 "$pid" 2>/dev/null && alive=1; done
    [ $alive -eq 1 ] || break
    sleep 0.1
  done
  for i in "${!pids[@]}"; do
    pid=${pids[$i]}
    if kill -0 "$pid" 2>/dev/null; then
      log "$(basename "${files[$i]}" .pid) (pid $pid) ignored TERM for 15 s: sending KILL"
      kill -KILL "$pid" 2>/dev/null || true
    fi
    rm -f "${files[$i]}"
    log "stopped $(basename "${files[$i]}" .pid) (pid $pid)"
  done
}

do_stop() {
  [ -d "$dir" ] || die "no such directory: $dir"
  dir=$(cd "$dir" && pwd -P)
  local conf=$dir/slurm.conf
  # Jobs still running would outlive slurmd (their slurmstepd are separate processes): cancel
  # this cluster's jobs first and give the steps a moment to end.
  if [ -f "$conf" ] && live_pid "$dir/slurmctld.pid" >/dev/null; then
    local ids i
    ids=$(SLURM_CONF=$conf timeout 10 squeue -h -o %A 2>/dev/null || true)
    if [ -n "$ids" ]; then
      # shellcheck disable=SC2086
      SLURM_CONF=$conf timeout 10 scancel $ids 2>/dev/null || true
      for ((i = 0; i < 100; i++)); do
        [ -z "$(SLURM_CONF=$conf timeout 10 squeue -h -o %A 2>/dev/null || true)" ] && break
        sleep 0.1
      done
    fi
  fi
  stop_daemons "$dir/slurmd.pid" "$dir/slurmctld.pid" "$dir/munged.pid"
}

# A TCP port nobody listens on (ss if present, else a connect attempt through bash's /dev/tcp).
port_free() {
  local p=$1
  if command -v ss >/dev/null 2>&1; then
    [ -z "$(ss -Htln "sport = :$p" 2>/dev/null)" ]
  else
    if (exec 3<>"/dev/tcp/127.0.0.1/$p") 2>/dev/null; then return 1; fi
  fi
}

# EXIT trap while starting: stops whatever did start when start fails.
start_failed() {
  local rc=$?
  if [ $rc -ne 0 ]; then
    log "start failed: stopping what was started (logs in $dir)"
    do_stop || true
  fi
}

do_start() {
  local b
  for b in munged slurmctld slurmd sinfo sbatch squeue scancel; do
    command -v "$b" >/dev/null 2>&1 || die "$b is not installed (Debian: apt-get install slurm-wlm munge)"
  done
  [ "$(id -u)" -eq 0 ] || die "must run as root (slurmd starts jobs as their submitter)"
  mkdir -p "$dir"
  dir=$(cd "$dir" && pwd -P)
  for b in munged slurmctld slurmd; do
    if pid=$(live_pid "$dir/$b.pid"); then die "$b is already running in $dir (pid $pid): stop it first"; fi
  done
  # munged refuses directories others can write to; Slurm wants its state dirs private too.
  chmod 0755 "$dir"
  mkdir -p "$dir/state" "$dir/spool"
  chmod 0700 "$dir/state" "$dir/spool"

  local host cpus mem_mb port conf socket
  host=$(hostname -s)
  cpus=$(nproc)
  # RealMemory a little under MemTotal: a node reporting less memory than configured is drained.
  mem_mb=$(awk '/^MemTotal:/ { printf "%d", $2 / 1024 * 0.9 }' /proc/meminfo)
  [ "${mem_mb:-0}" -ge 1 ] || mem_mb=1
  # Two free consecutive ports in 16817-17816 (the defaults are 6817/6818: a system-wide Slurm
  # keeps its own). The search starts at a place drawn from DIR's name, so that clusters started
  # at the same moment, which both see the same ports free, seldom pick the same pair.
  local first tries
  first=$((16817 + 2 * ($(printf '%s' "$dir" | cksum | cut -d' ' -f1) % 500)))
  port=$first
  for ((tries = 0; ; tries++)); do
    port_free "$port" && port_free $((port + 1)) && break
    [ "$tries" -lt 500 ] || die "no two free ports between 16817 and 17816"
    port=$((port + 2))
    [ "$port" -lt 17817 ] || port=16817
  done
  conf=$dir/slurm.conf
  socket=$dir/munge.socket

  # The key: 1024 random bytes, readable by the user munged runs as (root here) and nobody else.
  if [ ! -s "$dir/munge.key" ]; then
    rm -f "$dir/munge.key"
    if command -v mungekey >/dev/null 2>&1; then
      mungekey --create --keyfile="$dir/munge.key" >/dev/null
    else
      dd if=/dev/urandom of="$dir/munge.key" bs=1024 count=1 status=none
    fi
  fi
  chown "$(id -u):$(id -g)" "$dir/munge.key"
  chmod 0400 "$dir/munge.key"

  : >"$dir/plugstack.conf" # an empty one, so the system's /etc/slurm/plugstack.conf is not read
  cat >"$conf" <<EOF
# Written by scripts/slurm/local-cluster.sh: a single-node test cluster confined to $dir.
ClusterName=siftpack-local
SlurmctldHost=$host(127.0.0.1)
SlurmctldPort=$port
SlurmdPort=$((port + 1))
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$socket
StateSaveLocation=$dir/state
SlurmdSpoolDir=$dir/spool
SlurmctldPidFile=$dir/slurmctld.pid
SlurmdPidFile=$dir/slurmd.pid
SlurmctldLogFile=$dir/slurmctld.log
SlurmdLogFile=$dir/slurmd.log
SlurmctldDebug=info
SlurmdDebug=info
PlugStackConfig=$dir/plugstack.conf
# No cgroups: plain process tracking and no task binding work in containers and on any kernel.
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
# One line per finished job (JobState=COMPLETED, FAILED, ...): tests read it instead of sacct.
JobCompType=jobcomp/filetxt
JobCompLoc=$dir/jobcomp.log
MpiDefault=none
MailProg=/bin/true
SchedulerType=sched/backfill
# Start jobs as soon as they are eligible (the default batch delay of 3 s made a three-phase chain
# take 8 s instead of 3), and cancel a job whose afterok dependency failed instead of leaving it
# pending forever, so a test sees the queue drain either way.
SchedulerParameters=batch_sched_delay=0
DependencyParameters=kill_invalid_depend
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
ReturnToService=2
# Finished jobs stay visible to scontrol for 5 minutes.
MinJobAge=300
KillWait=5
InactiveLimit=0
NodeName=$host NodeAddr=127.0.0.1 CPUs=$cpus RealMemory=$mem_mb State=UNKNOWN
PartitionName=debug Default=YES Nodes=ALL MaxTime=INFINITE State=UP
EOF

  # Anything that fails from here on leaves no daemon behind.
  trap start_failed EXIT

  # --force: munged declines to run as root without it.
  munged --force --socket="$socket" --key-file="$dir/munge.key" --pid-file="$dir/munged.pid" \
    --log-file="$dir/munged.log" --seed-file="$dir/munged.seed"
  local i ok=0
  for ((i = 0; i < 100; i++)); do
    if [ -S "$socket" ] && munge -n -S "$socket" 2>/dev/null | unmunge -S "$socket" >/dev/null 2>&1; then
      ok=1
      break
    fi
    sleep 0.1
  done
  [ $ok -eq 1 ] || die "munged did not answer on $socket within 10 s (see $dir/munged.log)"

  export SLURM_CONF=$conf
  slurmctld -f "$conf"
  slurmd -f "$conf" -N "$host"

  # Up when sinfo reports the node idle; 30 s at most.
  local state=""
  for ((i = 0; i < 300; i++)); do
    state=$(timeout 5 sinfo -h -n "$host" -o %T 2>/dev/null | head -n1 || true)
    [ "$state" = idle ] && break
    sleep 0.1
  done
  [ "$state" = idle ] || die "node $host not idle within 30 s (state: ${state:-none}; see $dir/slurmctld.log, $dir/slurmd.log)"
  trap - EXIT
  log "up: node $host ($cpus CPUs), ports $port/$((port + 1)), in $dir"
  echo "export SLURM_CONF=$conf"
}

"do_$cmd"
