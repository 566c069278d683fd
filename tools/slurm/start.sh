#!/bin/sh
# Starts a single-node Slurm cluster on 127.0.0.1: for the cluster end-to-end test and for trying
# `spindrift run --cluster` on a workstation. Not for production clusters (they have their own set-up).
#
#   tools/slurm/start.sh               install slurm-wlm + munge from Debian if needed, then start the daemons
#   tools/slurm/start.sh --no-install  only start what is installed (fails when Slurm is not installed)
#   tools/slurm/stop.sh                stop the daemons this script started
#
# Idempotent: when the cluster already answers with an idle node it does nothing. When it cannot bring the
# cluster up it says why on stderr and exits 1 (installing needs root and apt; the daemons need root).
# The configuration goes to /etc/slurm/slurm.conf (where sbatch, squeue and sinfo look for it) only when that
# file is absent or was written by this script; state, logs and pid files go to $STATE (below).
# The single node takes the machine's real CPU count and memory from `slurmd -C`.
set -u
STATE=${SPINDRIFT_SLURM_STATE:-/var/tmp/spindrift-slurm}
CONF=/etc/slurm/slurm.conf
MARK="# written by spindrift tools/slurm/start.sh"
INSTALL=1
[ "${1:-}" = "--no-install" ] && INSTALL=0

say() { echo "slurm: $*" >&2; }
fail() {
  say "cannot start a local Slurm cluster: $*"
  exit 1
}

# The node's state as sinfo reports it (idle, mixed, allocated, down, …), empty when the cluster does not answer.
node_state() {
  command -v sinfo >/dev/null 2>&1 || return 0
  timeout 10 sinfo -h -o %T 2>/dev/null | head -1 | tr -d '*~#$@+ '
}

cluster_up() {
  case "$(node_state)" in
    idle | mixed | allocated | completing) return 0 ;;
    *) return 1 ;;
  esac
}

if cluster_up; then
  say "cluster already up ($(sinfo -h -o '%N %c CPUs %T' 2>/dev/null | head -1))"
  exit 0
fi

mkdir -p "$STATE/ctld" "$STATE/d" "$STATE/log" 2>/dev/null || fail "cannot create $STATE (set SPINDRIFT_SLURM_STATE)"

# 1. Packages.
if ! command -v slurmctld >/dev/null 2>&1 || ! command -v slurmd >/dev/null 2>&1 ||
  ! command -v munged >/dev/null 2>&1 || ! command -v sbatch >/dev/null 2>&1; then
  [ "$INSTALL" = 1 ] || fail "Slurm is not installed (run tools/slurm/start.sh without --no-install)"
  [ "$(id -u)" = 0 ] || fail "installing slurm-wlm and munge needs root (apt-get); run this script as root"
  command -v apt-get >/dev/null 2>&1 || fail "apt-get is not available: install slurm-wlm and munge by hand"
  say "installing slurm-wlm and munge from Debian (about 20 s)..."
  export DEBIAN_FRONTEND=noninteractive
  if ! timeout 600 apt-get install -y -qq --no-install-recommends slurm-wlm munge >"$STATE/log/apt.log" 2>&1; then
    timeout 300 apt-get update -qq >>"$STATE/log/apt.log" 2>&1
    timeout 600 apt-get install -y -qq --no-install-recommends slurm-wlm munge >>"$STATE/log/apt.log" 2>&1 ||
      fail "apt-get install slurm-wlm munge failed (log: $STATE/log/apt.log)"
  fi
  command -v slurmctld >/dev/null 2>&1 || fail "slurm-wlm installed but slurmctld is not on PATH"
fi
[ "$(id -u)" = 0 ] || fail "the Slurm daemons of this single-node set-up run as root; run this script as root"

# 2. munge: a key, its run folder owned by the munge user, the daemon running as that user.
if ! (munge -n 2>/dev/null | unmunge >/dev/null 2>&1); then
  id munge >/dev/null 2>&1 || fail "the munge package did not create the user 'munge'"
  mkdir -p /etc/munge /run/munge /var/lib/munge /var/log/munge
  if [ ! -s /etc/munge/munge.key ]; then
    if command -v mungekey >/dev/null 2>&1; then
      mungekey --create --keyfile=/etc/munge/munge.key >/dev/null 2>&1
    fi
    [ -s /etc/munge/munge.key ] || dd if=/dev/urandom of=/etc/munge/munge.key bs=1024 count=1 2>/dev/null
  fi
  chown -R munge:munge /etc/munge /run/munge /var/lib/munge /var/log/munge
  chmod 700 /etc/munge /var/lib/munge /var/log/munge
  chmod 755 /run/munge
  chmod 400 /etc/munge/munge.key
  runuser -u munge -- munged >>"$STATE/log/munged-start.log" 2>&1 ||
    fail "munged did not start (see $STATE/log/munged-start.log and /var/log/munge/munged.log)"
  touch "$STATE/munged-started-here"
  i=0
  until (munge -n 2>/dev/null | unmunge >/dev/null 2>&1); do
    i=$((i + 1))
    [ "$i" -gt 20 ] && fail "munged runs but munge -n | unmunge fails (see /var/log/munge/munged.log)"
    sleep 0.5
  done
fi

# 3. slurm.conf for one node on 127.0.0.1 (only if there is none, or it is ours).
HOST=$(hostname -s)
if [ -f "$CONF" ] && ! grep -qF "$MARK" "$CONF"; then
  fail "$CONF exists and was not written by this script; not touching it (is this a real cluster node?)"
fi
NODE=$(slurmd -C 2>/dev/null | grep '^NodeName=' | head -1)
[ -n "$NODE" ] || fail "slurmd -C did not describe this machine"
NODE=$(echo "$NODE" | sed -e "s/^NodeName=[^ ]*/NodeName=$HOST/")
mkdir -p /etc/slurm
cat >"$CONF.new" <<EOF
$MARK
ClusterName=local
SlurmctldHost=$HOST(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
MpiDefault=none
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/backfill
ReturnToService=2
StateSaveLocation=$STATE/ctld
SlurmdSpoolDir=$STATE/d
SlurmctldPidFile=$STATE/slurmctld.pid
SlurmdPidFile=$STATE/slurmd.pid
SlurmctldLogFile=$STATE/log/slurmctld.log
SlurmdLogFile=$STATE/log/slurmd.log
MaxArraySize=10001
$NODE NodeAddr=127.0.0.1 State=UNKNOWN
PartitionName=debug Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF
mv "$CONF.new" "$CONF"

# 4. The daemons (each only when its pid file does not name a live process).
alive() {
  [ -s "$1" ] && kill -0 "$(cat "$1")" 2>/dev/null
}
if ! alive "$STATE/slurmctld.pid"; then
  slurmctld >>"$STATE/log/start.log" 2>&1 || fail "slurmctld did not start (see $STATE/log/slurmctld.log)"
fi
if ! alive "$STATE/slurmd.pid"; then
  slurmd -N "$HOST" >>"$STATE/log/start.log" 2>&1 || fail "slurmd did not start (see $STATE/log/slurmd.log)"
fi

# 5. Wait for an idle node (a node left down by an earlier run is resumed).
i=0
while ! cluster_up; do
  i=$((i + 1))
  case "$(node_state)" in
    down | drained | draining | drain) scontrol update NodeName="$HOST" State=RESUME >/dev/null 2>&1 ;;
  esac
  if [ "$i" -gt 60 ]; then
    fail "the daemons run but the node is not idle after 30 s (state '$(node_state)'; see $STATE/log/)"
  fi
  sleep 0.5
done
say "cluster up on 127.0.0.1 ($(sinfo -h -o '%N %c CPUs %T' | head -1)); stop it with tools/slurm/stop.sh"
