#!/usr/bin/env bash
# Starts a single-node SLURM cluster on this machine, for trying anlage's
# job-array path on a laptop and for the project's cluster test.
#
#   bash tests/cluster/start.sh DIR      # DIR: an empty or new folder
#   export SLURM_CONF=DIR/slurm.conf     # then sbatch, squeue, sacct... talk to it
#   bash tests/cluster/stop.sh DIR       # stops the three daemons by PID
#
# Needs Debian's packages slurm-wlm and munge (apt-get install slurm-wlm munge)
# and root: slurmd runs jobs as the submitting user. Everything the cluster
# keeps (key, sockets, state, spool, logs) lives in DIR; nothing under /etc is
# changed. The node has this machine's CPUs and memory, one partition
# `local`, and no accounting. Prints `export SLURM_CONF=...` when ready.
set -euo pipefail
dir=${1:?usage: start.sh DIR}
for exe in munged slurmctld slurmd sinfo; do
  command -v "$exe" >/dev/null || { echo "start.sh: $exe not found; install Debian's slurm-wlm and munge" >&2; exit 3; }
done
mkdir -p "$dir"
dir=$(cd "$dir" && pwd)
chmod 755 "$dir"
mkdir -p "$dir/munge" "$dir/state" "$dir/spool" "$dir/log"
chown munge:munge "$dir/munge"
chmod 700 "$dir/munge"
# A key of our own, so the cluster does not depend on /etc/munge.
head -c 128 /dev/urandom > "$dir/munge/munge.key"
chown munge:munge "$dir/munge/munge.key"
chmod 400 "$dir/munge/munge.key"
socket=$dir/munge/munge.socket
runuser -u munge -- munged --key-file="$dir/munge/munge.key" --socket="$socket" \
  --pid-file="$dir/munge/munged.pid" --log-file="$dir/munge/munged.log" \
  --seed-file="$dir/munge/munged.seed" --force
for _ in $(seq 50); do [ -s "$dir/munge/munged.pid" ] && [ -S "$socket" ] && break; sleep 0.1; done
cat "$dir/munge/munged.pid" > "$dir/munged.pid"

# Ports from the folder's inode so that two clusters on one machine differ.
base=$(( 20000 + ($(stat -c %i "$dir") % 2000) * 2 ))
cpus=$(nproc)
mem=$(( $(awk '/MemTotal/ {print $2}' /proc/meminfo) / 1024 - 512 ))
host=$(hostname -s)
cat > "$dir/slurm.conf" <<CONF
# Single-node cluster written by tests/cluster/start.sh
ClusterName=anlagetest
SlurmctldHost=$host(127.0.0.1)
SlurmctldPort=$base
SlurmdPort=$((base + 1))
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
AuthInfo=socket=$socket
CredType=cred/munge
StateSaveLocation=$dir/state
SlurmdSpoolDir=$dir/spool/%n
SlurmctldPidFile=$dir/slurmctld.pidfile
SlurmdPidFile=$dir/slurmd.pidfile
SlurmctldLogFile=$dir/log/slurmctld.log
SlurmdLogFile=$dir/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SchedulerType=sched/backfill
SchedulerParameters=bf_interval=1,sched_min_interval=0
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
MpiDefault=none
ReturnToService=2
SlurmctldTimeout=30
SlurmdTimeout=30
InactiveLimit=0
MinJobAge=300
KillWait=10
Waittime=0
NodeName=$host NodeAddr=127.0.0.1 CPUs=$cpus RealMemory=$mem State=UNKNOWN
PartitionName=local Nodes=ALL Default=YES MaxTime=INFINITE State=UP
CONF
export SLURM_CONF=$dir/slurm.conf
slurmctld -D -i -f "$SLURM_CONF" >"$dir/log/slurmctld.out" 2>&1 &
echo $! > "$dir/slurmctld.pid"
slurmd -D -f "$SLURM_CONF" -N "$host" >"$dir/log/slurmd.out" 2>&1 &
echo $! > "$dir/slurmd.pid"
# Ready when the node is idle.
for _ in $(seq 300); do
  if sinfo -h -N -o '%t' 2>/dev/null | grep -q idle; then
    echo "export SLURM_CONF=$SLURM_CONF"
    exit 0
  fi
  sleep 0.1
done
echo "start.sh: the node did not come up within 30 s; logs in $dir/log" >&2
sinfo -N >&2 || true
tail -n 20 "$dir"/log/*.log >&2 || true
exit 1
