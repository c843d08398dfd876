#!/usr/bin/env bash
# Tear down the cluster started by scripts/slurm/up.sh (.ci/run calls it after the tests): cancel jobs, then stop slurmd, slurmctld,
# munged - each by the PID in its own pid file (no pkill/killall by name).
# Logs stay in $SLURM_CI_DIR/log for CI artifacts; PURGE=1 deletes the whole dir.
set -uo pipefail

D=${SLURM_CI_DIR:-/tmp/slurm-ci/state}
export SLURM_CONF="$D/etc/slurm.conf"
log() { printf '[down.sh %s] %s\n' "$(date +%T.%3N)" "$*" >&2; }
alive() { [ -n "${1:-}" ] && kill -0 "$1" 2>/dev/null; }
stop_pids() { # stop_pids <pid>...: SIGTERM all, wait up to 15 s, then SIGKILL stragglers
  local p left=() ; for p in "$@"; do alive "$p" && { kill -TERM "$p"; left+=("$p"); }; done
  for _ in $(seq 150); do
    local still=(); for p in "${left[@]}"; do alive "$p" && still+=("$p"); done
    left=("${still[@]}"); [ ${#left[@]} = 0 ] && return 0; sleep 0.1
  done
  log "SIGKILL to pids ignoring SIGTERM: ${left[*]}"; kill -KILL "${left[@]}" 2>/dev/null; sleep 0.2
}
pidof_file() { [ -f "$1" ] && cat "$1"; }

CTLD=$(pidof_file "$D/slurmctld.pid"); SLURMD=$(pidof_file "$D/slurmd.pid"); MUNGED=$(pidof_file "$D/munge/munged.pid")

if alive "$CTLD" && [ -f "$SLURM_CONF" ]; then
  # 1. cancel every job so no slurmstepd / user process outlives the cluster
  jobs=$(squeue -h -o %F 2>/dev/null | sort -u)
  if [ -n "$jobs" ]; then
    log "cancelling jobs: $(echo $jobs)"; scancel $jobs
    for _ in $(seq 75); do [ -z "$(squeue -h 2>/dev/null)" ] && break; sleep 0.2; done
  fi
  # 2. anything still running under a job step on this node? (slurm's own pid list)
  if alive "$SLURMD"; then
    left=$(scontrol listpids 2>/dev/null | awk 'NR>1 && $1 ~ /^[0-9]+$/ {print $1}')
    [ -n "$left" ] && { log "killing leftover job pids: $(echo $left)"; kill -KILL $left 2>/dev/null; }
  fi
fi

alive "$SLURMD" || alive "$CTLD" && { stop_pids $SLURMD $CTLD; log "slurmd (${SLURMD:--}) and slurmctld (${CTLD:--}) stopped"; }
alive "$MUNGED" && { stop_pids $MUNGED; log "munged ($MUNGED) stopped"; }

# undo LINK_ETC=1 only if the link points at our config
[ "$(readlink /etc/slurm/slurm.conf 2>/dev/null)" = "$SLURM_CONF" ] && rm -f /etc/slurm/slurm.conf

if [ "${PURGE:-0}" = 1 ]; then
  case "$D" in /?*/?*) rm -rf "$D" ;; esac
fi
log "down"
