#!/bin/sh
# Stops the single-node Slurm cluster started by tools/slurm/start.sh: slurmd and slurmctld by their pid
# files, and munged only when start.sh started it. Nothing else is touched. Idempotent.
set -u
STATE=${SPINDRIFT_SLURM_STATE:-/var/tmp/spindrift-slurm}

stop_pid_file() {
  [ -s "$1" ] || return 0
  pid=$(cat "$1")
  if kill -0 "$pid" 2>/dev/null; then
    kill "$pid" 2>/dev/null
    i=0
    while kill -0 "$pid" 2>/dev/null && [ "$i" -lt 50 ]; do
      sleep 0.1
      i=$((i + 1))
    done
    echo "slurm: stopped $2 (pid $pid)" >&2
  fi
  rm -f "$1"
}

stop_pid_file "$STATE/slurmd.pid" slurmd
stop_pid_file "$STATE/slurmctld.pid" slurmctld
if [ -f "$STATE/munged-started-here" ]; then
  stop_pid_file /run/munge/munged.pid munged
  rm -f "$STATE/munged-started-here"
fi
