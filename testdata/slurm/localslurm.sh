#!/usr/bin/env bash
# localslurm.sh — bring up (or take down) a one-node Slurm on this machine, for
# wellscan's Slurm tests and for trying cluster runs on a laptop.
#
#   bash testdata/slurm/localslurm.sh start    # install if needed, configure, start, wait for idle
#   bash testdata/slurm/localslurm.sh status   # what runs, and the node state
#   bash testdata/slurm/localslurm.sh stop     # cancel all jobs, stop the daemons by pid, wait
#
# Needs root and a Debian-like system with apt (tested on Debian 12, Slurm 22.05,
# no systemd). It never uses systemctl: every daemon is started directly and is
# tracked by its pid file.
#
# Environment:
#   SLURM_LOCAL_CPUS=N        CPUs the node advertises (default 4; more than the
#                             real cores is allowed and makes tests faster)
#   SLURM_LOCAL_MEM_MB=N      memory the node advertises (default 80% of MemTotal)
#   SLURM_LOCAL_KEEP_STATE=1  keep old jobs and node state across a restart
#                             (default: slurmctld -c, a clean controller)
#   SLURM_LOCAL_MIN_JOB_AGE=S seconds a finished job stays in squeue (default 300;
#                             a small value lets tests see jobs leave the queue)
#   SLURM_LOCAL_PROBE=1       after start, also wait for one tiny job to finish
#   SLURM_LOCAL_ACCOUNTING=1  also run slurmdbd with a local MariaDB, so that
#                             sacct works (installs slurmdbd and mariadb-server)
#
# Facts this script relies on (observed on the target machine):
#   - the Debian packages create users, the munge key and the spool/log
#     directories, but neither slurm.conf nor /run/munge;
#   - munged must run as the munge user (it refuses a root-owned log file check);
#   - PID 1 here reaps orphans late, so a dead daemon can linger as a zombie:
#     liveness is judged from the state letter in /proc/PID/stat, and the
#     command name in /proc/PID/comm must match before a pid file is trusted;
#   - daemons inherit stdout unless it is redirected, which hangs $(...) callers.
set -euo pipefail

CONF_DIR=/etc/slurm
CONF=$CONF_DIR/slurm.conf
LOG_DIR=/var/log/slurm
STATE_DIR=/var/lib/slurm/slurmctld
MUNGE_PID=/run/munge/munged.pid
CTLD_PID=/run/slurmctld.pid
SLURMD_PID=/run/slurmd.pid
DBD_PID=/run/slurmdbd.pid
DBD_CONF=$CONF_DIR/slurmdbd.conf
MYSQL_PID=/run/mysqld/mysqld.pid
MYSQL_SOCK=/run/mysqld/mysqld.sock
# Password of a database that listens on 127.0.0.1 only, on a test node.
DB_PASS=slurm-localhost-only
WAIT_SECS=${SLURM_LOCAL_WAIT:-30}

say() { printf 'localslurm: %s\n' "$*" >&2; }
die() { say "error: $*"; exit 1; }

need_root() { [ "$(id -u)" -eq 0 ] || die "must run as root (it installs packages and starts daemons)"; }

# pid_of PIDFILE prints the pid, or nothing; the file may vanish at any time
# because a daemon removes its own pid file when it exits.
pid_of() { { tr -dc '0-9' <"$1"; } 2>/dev/null || true; }

# proc_alive PID COMM: true when PID is a live (non-zombie) process named COMM.
proc_alive() {
  local pid=$1 comm=$2 state
  [ -n "$pid" ] || return 1
  [ "$(cat "/proc/$pid/comm" 2>/dev/null)" = "$comm" ] || return 1
  # Field 3 of /proc/PID/stat is the state letter; field 2 (comm) is in
  # parentheses and may contain spaces, so cut after the last ')'.
  state=$(sed 's/.*) //' "/proc/$pid/stat" 2>/dev/null | cut -d' ' -f1)
  [ -n "$state" ] && [ "$state" != "Z" ] && [ "$state" != "X" ]
}

# pid_alive PIDFILE COMM: true when the pid file names a live process COMM.
pid_alive() { proc_alive "$(pid_of "$1")" "$2"; }

# wait_for SECONDS DESCRIPTION COMMAND...: retry COMMAND every 0.1 s.
wait_for() {
  local secs=$1 what=$2 i
  shift 2
  for ((i = 0; i < secs * 10; i++)); do
    if "$@" >/dev/null 2>&1; then return 0; fi
    sleep 0.1
  done
  die "timed out after ${secs}s waiting for $what"
}

# stop_daemon PIDFILE COMM: SIGTERM, wait up to 20 s, then SIGKILL. The wait
# follows the pid itself, because the daemon removes its pid file before it
# has fully exited.
stop_daemon() {
  local file=$1 comm=$2 pid i
  pid=$(pid_of "$file")
  if ! proc_alive "$pid" "$comm"; then
    rm -f "$file"
    return 0
  fi
  kill -TERM "$pid" 2>/dev/null || true
  for ((i = 0; i < 200; i++)); do
    proc_alive "$pid" "$comm" || break
    sleep 0.1
  done
  if proc_alive "$pid" "$comm"; then
    say "$comm (pid $pid) ignored SIGTERM for 20 s; sending SIGKILL"
    kill -KILL "$pid" 2>/dev/null || true
    for ((i = 0; i < 50; i++)); do
      proc_alive "$pid" "$comm" || break
      sleep 0.1
    done
  fi
  rm -f "$file"
  say "stopped $comm (pid $pid)"
}

accounting_on() { [ "${SLURM_LOCAL_ACCOUNTING:-0}" = 1 ]; }

accounting_lines() {
  if accounting_on; then
    printf '%s\n' AccountingStorageType=accounting_storage/slurmdbd AccountingStorageHost=localhost \
      JobAcctGatherType=jobacct_gather/linux
  else
    printf '%s\n' AccountingStorageType=accounting_storage/none JobAcctGatherType=jobacct_gather/none
  fi
}

write_dbd_conf() {
  local tmp
  tmp=$(mktemp "$CONF_DIR/.slurmdbd.conf.XXXXXX")
  {
    echo "# Written by wellscan testdata/slurm/localslurm.sh (SLURM_LOCAL_ACCOUNTING=1)."
    echo "AuthType=auth/munge"
    echo "DbdHost=localhost"
    echo "DbdAddr=127.0.0.1"
    echo "SlurmUser=root"
    echo "PidFile=$DBD_PID"
    echo "LogFile=$LOG_DIR/slurmdbd.log"
    echo "DebugLevel=info"
    echo "StorageType=accounting_storage/mysql"
    echo "StorageHost=localhost"
    echo "StoragePort=3306"
    echo "StorageUser=slurm"
    echo "StoragePass=$DB_PASS"
    echo "StorageLoc=slurm_acct_db"
  } >"$tmp"
  # slurmdbd refuses a config file that others can read (it holds a password).
  chmod 0600 "$tmp"
  mv -f "$tmp" "$DBD_CONF"
}

mysql_ok() { mariadb-admin --socket="$MYSQL_SOCK" ping; }

start_mariadb() {
  if pid_alive "$MYSQL_PID" mariadbd && mysql_ok >/dev/null 2>&1; then return 0; fi
  rm -f "$MYSQL_PID"
  install -d -o mysql -g mysql -m 0755 /run/mysqld
  # mariadbd stays in the foreground: detach it with setsid and &.
  setsid /usr/sbin/mariadbd --user=mysql --pid-file="$MYSQL_PID" --socket="$MYSQL_SOCK" \
    --bind-address=127.0.0.1 --innodb-lock-wait-timeout=900 </dev/null >>"$LOG_DIR/mariadb.log" 2>&1 &
  wait_for "$WAIT_SECS" "mariadbd" mysql_ok
  say "mariadbd up"
}

# prepare_db makes the accounting database and its user. Without KEEP_STATE
# the database is recreated, so a fresh controller starts with no old jobs.
prepare_db() {
  local drop=""
  [ "${SLURM_LOCAL_KEEP_STATE:-0}" = 1 ] || drop="DROP DATABASE IF EXISTS slurm_acct_db;"
  mariadb --socket="$MYSQL_SOCK" -e "$drop CREATE DATABASE IF NOT EXISTS slurm_acct_db;
    CREATE USER IF NOT EXISTS 'slurm'@'localhost' IDENTIFIED BY '$DB_PASS';
    GRANT ALL ON slurm_acct_db.* TO 'slurm'@'localhost'; FLUSH PRIVILEGES;" ||
    die "could not prepare the accounting database; see $LOG_DIR/mariadb.log"
}

dbd_ok() { sacctmgr -n -P list cluster format=cluster; }

start_slurmdbd() {
  if pid_alive "$DBD_PID" slurmdbd && dbd_ok >/dev/null 2>&1; then return 0; fi
  stop_daemon "$DBD_PID" slurmdbd
  prepare_db
  /usr/sbin/slurmdbd </dev/null >"$LOG_DIR/slurmdbd.stdout" 2>&1 ||
    die "slurmdbd failed to start; see $LOG_DIR/slurmdbd.log"
  # sacctmgr answers only once slurm.conf names slurmdbd (written before this).
  wait_for "$WAIT_SECS" "slurmdbd" dbd_ok
  say "slurmdbd up"
}

# start_accounting runs before slurmctld, which registers the cluster itself.
start_accounting() {
  write_dbd_conf
  start_mariadb
  # A fresh controller (slurmctld -c) goes with a fresh database: restart
  # slurmdbd so that prepare_db recreates it.
  if ! pid_alive "$CTLD_PID" slurmctld && [ "${SLURM_LOCAL_KEEP_STATE:-0}" != 1 ]; then
    stop_daemon "$DBD_PID" slurmdbd
  fi
  start_slurmdbd
}

stop_accounting() {
  stop_daemon "$DBD_PID" slurmdbd
  stop_daemon "$MYSQL_PID" mariadbd
}

install_packages() {
  local missing=0 p pkgs=(munge slurm-client slurmctld slurmd) progs=(munged slurmctld slurmd sbatch)
  if accounting_on; then
    pkgs+=(slurmdbd mariadb-server)
    progs+=(slurmdbd mariadbd)
  fi
  for p in "${progs[@]}"; do
    command -v "$p" >/dev/null 2>&1 || [ -x "/usr/sbin/$p" ] || missing=1
  done
  [ "$missing" -eq 1 ] || return 0
  command -v apt-get >/dev/null 2>&1 || die "slurm is not installed and apt-get is missing; install munge, slurmctld, slurmd and slurm-client by hand"
  say "installing ${pkgs[*]} (Debian packages, no recommends)"
  local added_policy=0
  if [ ! -e /usr/sbin/policy-rc.d ]; then
    # Keep the package scripts from starting daemons; we start them ourselves.
    printf '#!/bin/sh\nexit 101\n' >/usr/sbin/policy-rc.d
    chmod 0755 /usr/sbin/policy-rc.d
    added_policy=1
  fi
  local rc=0
  {
    apt-get update -qq &&
      DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "${pkgs[@]}"
  } >/dev/null || rc=$?
  [ "$added_policy" -eq 0 ] || rm -f /usr/sbin/policy-rc.d
  [ "$rc" -eq 0 ] || die "apt-get failed (exit $rc)"
}

node_cpus() { echo "${SLURM_LOCAL_CPUS:-4}"; }

node_mem_mb() {
  if [ -n "${SLURM_LOCAL_MEM_MB:-}" ]; then
    echo "$SLURM_LOCAL_MEM_MB"
    return
  fi
  # 80% of physical memory, in MiB, leaves room for the OS.
  awk '/^MemTotal:/ { printf "%d\n", $2 / 1024 * 0.8 }' /proc/meminfo
}

# render_conf prints the slurm.conf for this machine. No host name appears:
# NodeName=localhost and SlurmctldHost=localhost let slurmd find its node
# without name resolution.
render_conf() {
  local cpus mem
  cpus=$(node_cpus)
  mem=$(node_mem_mb)
  local age=${SLURM_LOCAL_MIN_JOB_AGE:-300}
  [[ "$age" =~ ^[1-9][0-9]*$ ]] || die "SLURM_LOCAL_MIN_JOB_AGE must be a positive number of seconds, got '$age'"
  [[ "$cpus" =~ ^[1-9][0-9]*$ ]] || die "SLURM_LOCAL_CPUS must be a positive integer, got '$cpus'"
  [[ "$mem" =~ ^[1-9][0-9]*$ ]] || die "node memory must be a positive integer of MiB, got '$mem'"
  cat <<EOF
# Written by wellscan testdata/slurm/localslurm.sh; rewritten on every start.
ClusterName=localcluster
SlurmctldHost=localhost
SlurmUser=root
AuthType=auth/munge
CredType=cred/munge
MpiDefault=none
MailProg=/bin/true
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
# Without a per-CPU default, CR_Core_Memory gives each job the whole node's memory.
DefMemPerCPU=256
SchedulerType=sched/backfill
SchedulerParameters=batch_sched_delay=0
# Do not drain the node when the advertised CPUs/memory differ from the hardware.
SlurmdParameters=config_overrides
ReturnToService=2
KillWait=5
MinJobAge=$age
SlurmctldPidFile=$CTLD_PID
SlurmdPidFile=$SLURMD_PID
StateSaveLocation=$STATE_DIR
SlurmdSpoolDir=/var/lib/slurm/slurmd
SlurmctldLogFile=$LOG_DIR/slurmctld.log
SlurmdLogFile=$LOG_DIR/slurmd.log
SlurmctldDebug=info
SlurmdDebug=info
JobCompType=jobcomp/filetxt
JobCompLoc=$LOG_DIR/jobcomp.log
$(accounting_lines)
NodeName=localhost CPUs=$cpus RealMemory=$mem State=UNKNOWN
PartitionName=debug Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF
}

# write_conf writes slurm.conf; it prints "changed" when the content differs
# from what was there before.
write_conf() {
  install -d -m 0755 "$CONF_DIR"
  local tmp
  tmp=$(mktemp "$CONF_DIR/.slurm.conf.XXXXXX")
  render_conf >"$tmp"
  chmod 0644 "$tmp"
  if [ -f "$CONF" ] && cmp -s "$tmp" "$CONF"; then
    rm -f "$tmp"
    echo same
  else
    mv -f "$tmp" "$CONF"
    echo changed
  fi
}

munge_ok() { munge -n | unmunge >/dev/null 2>&1; }

start_munge() {
  if pid_alive "$MUNGE_PID" munged && munge_ok; then return 0; fi
  rm -f "$MUNGE_PID"
  install -d -o munge -g munge -m 0755 /run/munge
  [ -s /etc/munge/munge.key ] || die "/etc/munge/munge.key is missing (reinstall the munge package)"
  runuser -u munge -- /usr/sbin/munged </dev/null >>"$LOG_DIR/munged.stdout" 2>&1 ||
    die "munged failed to start; see /var/log/munge/munged.log"
  wait_for "$WAIT_SECS" "munged" munge_ok
  say "munged up"
}

ctld_up() { scontrol ping 2>/dev/null | grep -q 'is UP'; }

start_slurmctld() {
  if pid_alive "$CTLD_PID" slurmctld && ctld_up; then return 0; fi
  rm -f "$CTLD_PID"
  local flags=()
  if [ "${SLURM_LOCAL_KEEP_STATE:-0}" != 1 ]; then
    # -c: no jobs or node states from an earlier (possibly killed) run.
    flags=(-c)
    [ ! -f "$LOG_DIR/jobcomp.log" ] || mv -f "$LOG_DIR/jobcomp.log" "$LOG_DIR/jobcomp.log.1"
  fi
  /usr/sbin/slurmctld "${flags[@]}" </dev/null >"$LOG_DIR/slurmctld.stdout" 2>&1 ||
    die "slurmctld failed to start; see $LOG_DIR/slurmctld.log"
  wait_for "$WAIT_SECS" "slurmctld to answer ping" ctld_up
  say "slurmctld up"
}

node_state() { sinfo -h -N -n localhost -o %T 2>/dev/null | head -n1; }
node_idle() { case "$(node_state)" in idle | mixed | allocated) return 0 ;; esac; return 1; }

start_slurmd() {
  if ! pid_alive "$SLURMD_PID" slurmd; then
    rm -f "$SLURMD_PID"
    /usr/sbin/slurmd </dev/null >"$LOG_DIR/slurmd.stdout" 2>&1 ||
      die "slurmd failed to start; see $LOG_DIR/slurmd.log"
  fi
  local i state
  for ((i = 0; i < WAIT_SECS * 10; i++)); do
    node_idle && break
    state=$(node_state)
    case "$state" in
      drain* | drained* | down*)
        # A drain from an earlier run survives restarts under KEEP_STATE.
        scontrol update nodename=localhost state=resume >/dev/null 2>&1 || true ;;
    esac
    sleep 0.1
  done
  node_idle || die "node did not become idle within ${WAIT_SECS}s (state: $(node_state)); see $LOG_DIR/slurmd.log"
  say "slurmd up, node $(node_state)"
}

probe_job() {
  local id
  id=$(sbatch --parsable -o /dev/null -e /dev/null -J localslurm-probe --wrap true) || die "probe sbatch failed"
  id=${id%%;*}
  wait_for "$WAIT_SECS" "probe job $id" sh -c "squeue -h -t all -j '$id' -o %T | grep -qx COMPLETED"
  say "probe job $id completed"
}

cmd_start() {
  need_root
  install_packages
  install -d -m 0755 "$LOG_DIR" "$STATE_DIR" /var/lib/slurm/slurmd
  local conf
  conf=$(write_conf)
  if [ "$conf" = changed ] && { pid_alive "$CTLD_PID" slurmctld || pid_alive "$SLURMD_PID" slurmd; }; then
    say "slurm.conf changed; restarting slurmd and slurmctld"
    stop_daemon "$SLURMD_PID" slurmd
    stop_daemon "$CTLD_PID" slurmctld
  fi
  start_munge
  if accounting_on; then
    start_accounting
  else
    stop_accounting
  fi
  start_slurmctld
  start_slurmd
  [ "${SLURM_LOCAL_PROBE:-0}" != 1 ] || probe_job
  local acct=off
  accounting_on && acct=on
  say "slurm ready ($(node_cpus) CPUs advertised, partition debug, accounting $acct)"
}

cancel_all_jobs() {
  ctld_up || return 0
  local users u i
  users=$(squeue -h -o %u 2>/dev/null | sort -u)
  for u in $users; do scancel -u "$u" >/dev/null 2>&1 || true; done
  # Jobs still running or completing keep slurmstepd processes alive.
  for ((i = 0; i < 300; i++)); do
    [ -z "$(squeue -h -t R,CG,S -o %i 2>/dev/null)" ] && return 0
    sleep 0.1
  done
  say "warning: jobs still running or completing after 30 s"
}

cmd_stop() {
  need_root
  cancel_all_jobs
  stop_daemon "$SLURMD_PID" slurmd
  stop_daemon "$CTLD_PID" slurmctld
  stop_accounting
  stop_daemon "$MUNGE_PID" munged
}

cmd_status() {
  local rc=0 d daemons=("$MUNGE_PID munged" "$CTLD_PID slurmctld" "$SLURMD_PID slurmd")
  if pid_alive "$DBD_PID" slurmdbd || pid_alive "$MYSQL_PID" mariadbd; then
    daemons+=("$MYSQL_PID mariadbd" "$DBD_PID slurmdbd")
  fi
  for d in "${daemons[@]}"; do
    set -- $d
    if pid_alive "$1" "$2"; then
      printf '%-10s running (pid %s)\n' "$2" "$(pid_of "$1")"
    else
      printf '%-10s stopped\n' "$2"
      rc=1
    fi
  done
  if [ "$rc" -eq 0 ]; then
    printf 'node       %s\n' "$(node_state)"
  fi
  return "$rc"
}

case "${1:-}" in
  start) cmd_start ;;
  stop) cmd_stop ;;
  status) cmd_status ;;
  *)
    echo "usage: $0 start|stop|status" >&2
    exit 2
    ;;
esac
