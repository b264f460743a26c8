#!/usr/bin/env bash
# Stops the cluster that tests/cluster/start.sh DIR started, by the PIDs it
# wrote, and waits until the daemons are gone.
set -uo pipefail
dir=${1:?usage: stop.sh DIR}
for name in slurmd slurmctld munged; do
  pidfile=$dir/$name.pid
  [ -s "$pidfile" ] || continue
  pid=$(cat "$pidfile")
  kill "$pid" 2>/dev/null || continue
  for _ in $(seq 100); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
  kill -9 "$pid" 2>/dev/null || true
  rm -f "$pidfile"
done
