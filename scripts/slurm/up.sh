#!/usr/bin/env bash
# Bring up a throw-away single-node Slurm cluster (munged + slurmctld + slurmd) for the
# sweep tests (test/sweep/slurm.test.ts), WITHOUT systemd, everything (config, state,
# logs, sockets, pid files) under $SLURM_CI_DIR. Must run as root (slurmd has to be able
# to setuid to the job user). .ci/run calls it with INSTALL=1 before the tests and
# scripts/slurm/down.sh after them. Adapted from shared/reference/slurm-single-node.
#
# Env knobs:
#   SLURM_CI_DIR   state directory          (default /tmp/slurm-ci/state)
#   INSTALL=1      apt-get update + install  slurmctld slurmd slurm-client munge if missing
#   CTLD_PORT / SLURMD_PORT  (default 6817 / 6818)
#   LINK_ETC=1     also symlink /etc/slurm/slurm.conf -> generated config, so that
#                  sbatch/squeue work without SLURM_CONF in the environment
#   UP_TIMEOUT     seconds to wait for each daemon (default 30)
#   FAKE_CPUS=N    advertise N CPUs instead of the real count (more tasks run at once)
#
# After success:  source "$SLURM_CI_DIR/env.sh"   (exports SLURM_CONF)
set -euo pipefail

D=${SLURM_CI_DIR:-/tmp/slurm-ci/state}
CTLD_PORT=${CTLD_PORT:-6817}
SLURMD_PORT=${SLURMD_PORT:-6818}
UP_TIMEOUT=${UP_TIMEOUT:-30}

log() { printf '[up.sh %s] %s\n' "$(date +%T.%3N)" "$*" >&2; }
die() { log "ERROR: $*"; for f in "$D"/log/*.log "$D"/munge/munged.log; do [ -f "$f" ] && { echo "--- $f" >&2; tail -n 30 "$f" >&2; }; done; exit 1; }
wait_for() { # wait_for <what> <cmd...>: retry every 0.2 s until cmd succeeds or UP_TIMEOUT
  local what=$1; shift; local end=$((SECONDS + UP_TIMEOUT))
  until "$@" >/dev/null 2>&1; do [ $SECONDS -lt $end ] || die "timeout waiting for $what"; sleep 0.2; done
}
alive() { [ -f "$1" ] && kill -0 "$(cat "$1")" 2>/dev/null; }

[ "$(id -u)" = 0 ] || { echo "up.sh must run as root" >&2; exit 1; }

# ---------------------------------------------------------------- 1. packages
if ! command -v slurmctld >/dev/null || ! command -v slurmd >/dev/null || ! command -v sbatch >/dev/null || ! command -v munged >/dev/null; then
  [ "${INSTALL:-0}" = 1 ] || { echo "slurm/munge not installed; rerun with INSTALL=1" >&2; exit 1; }
  log "installing packages"
  export DEBIAN_FRONTEND=noninteractive
  rm -f /var/lib/man-db/auto-update   # skip the man-db trigger: saves ~4 s of a ~10 s install
  apt-get update -qq
  # --no-install-recommends: 8 packages instead of ~43 (slurm-wlm pulls in X/doc stuff)
  apt-get install -y -qq --no-install-recommends slurmctld slurmd slurm-client munge >/dev/null
fi

# ---------------------------------------------------------------- 2. fresh state
for p in "$D/slurmd.pid" "$D/slurmctld.pid" "$D/munge/munged.pid"; do
  alive "$p" && { echo "daemon from $p still running (pid $(cat "$p")); run down.sh first" >&2; exit 1; }
done
case "$D" in /?*/?*) ;; *) echo "refusing SLURM_CI_DIR=$D (want an absolute path at least 2 levels deep)" >&2; exit 1;; esac
rm -rf "$D"
mkdir -p "$D"/{etc,ctld,spool,log,munge}
chmod 755 "$D" "$D/munge"          # munged: socket dir must be a+x, not group/other writable

NODE=$(hostname -s)
# Real hardware numbers as slurmd sees them (CPUs, sockets, cores, threads, RealMemory).
# RealMemory is lowered by 2% so a slightly smaller reading on restart can't drain the node.
HW=$(slurmd -C | sed -nE '1s/^NodeName=[^ ]+ //p')   # (sed, not head: no SIGPIPE under pipefail)
MEM=$(sed -nE 's/.*RealMemory=([0-9]+).*/\1/p' <<<"$HW")
HW=$(sed -E "s/RealMemory=[0-9]+/RealMemory=$((MEM * 98 / 100))/" <<<"$HW")
EXTRA_CONF=""
if [ -n "${FAKE_CPUS:-}" ]; then
  # pretend to have more CPUs than the machine has (more array tasks in parallel);
  # without config_overrides slurmctld would drain the node ("Low socket*core*thread count")
  HW="CPUs=$FAKE_CPUS RealMemory=$((MEM * 98 / 100))"
  EXTRA_CONF="SlurmdParameters=config_overrides"
fi

# ---------------------------------------------------------------- 3. munge
mungekey -c -k "$D/munge/munge.key"           # 0600 root; munged refuses group/other-readable keys
munged --key-file="$D/munge/munge.key" --socket="$D/munge/munge.socket" \
       --pid-file="$D/munge/munged.pid" --log-file="$D/munge/munged.log" \
       --seed-file="$D/munge/munged.seed"     # forks into background, writes pid file
wait_for munged sh -c "munge -n -S '$D/munge/munge.socket' | unmunge -S '$D/munge/munge.socket'"

# ---------------------------------------------------------------- 4. slurm.conf
cat >"$D/etc/slurm.conf" <<EOF
ClusterName=ci
SlurmctldHost=$NODE(127.0.0.1)
SlurmUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$D/munge/munge.socket
SlurmctldPort=$CTLD_PORT
SlurmdPort=$SLURMD_PORT
StateSaveLocation=$D/ctld
SlurmdSpoolDir=$D/spool
SlurmctldPidFile=$D/slurmctld.pid
SlurmdPidFile=$D/slurmd.pid
SlurmctldLogFile=$D/log/slurmctld.log
SlurmdLogFile=$D/log/slurmd.log
# no cgroups anywhere: works in containers / without systemd / cgroup v1 or v2
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/backfill
# start queued array tasks as soon as a CPU frees up (default batch_sched_delay=3 s)
SchedulerParameters=batch_sched_delay=0
ReturnToService=2
MailProg=/bin/true
MpiDefault=none
$EXTRA_CONF
NodeName=$NODE NodeAddr=127.0.0.1 $HW State=UNKNOWN
PartitionName=debug Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF
export SLURM_CONF="$D/etc/slurm.conf"
echo "export SLURM_CONF=$SLURM_CONF" >"$D/env.sh"
if [ "${LINK_ETC:-0}" = 1 ]; then mkdir -p /etc/slurm; ln -sfn "$SLURM_CONF" /etc/slurm/slurm.conf; fi

# ---------------------------------------------------------------- 5. daemons
slurmctld -i                                  # daemonizes; -i: ignore missing state files
wait_for "slurmctld (scontrol ping)" sh -c 'scontrol ping | grep -q UP'
slurmd -N "$NODE"                             # daemonizes; -N: don't rely on hostname lookups
wait_for "node $NODE idle" sh -c "sinfo -h -n '$NODE' -o %T | grep -qx idle"

log "up: munged=$(cat "$D/munge/munged.pid") slurmctld=$(cat "$D/slurmctld.pid") slurmd=$(cat "$D/slurmd.pid")"
log "use: source $D/env.sh"
sinfo
