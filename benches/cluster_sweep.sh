#!/usr/bin/env bash
# Benchmark (not a test): a POINTS x POINTS sweep of the ribbon demo (default
# 100 x 100) run whole on this machine, against the same sweep as TASKS shards
# (default 10) of a job array on a local one-node SLURM cluster
# (tests/cluster/start.sh), merged by a dependent job. Checks that the merged
# outputs are the bytes of the whole run, then prints wall time, CPU time and
# the overhead per task, and writes them to benches/last_cluster_sweep.txt.
#
#   bash benches/cluster_sweep.sh            # needs root, slurm-wlm, munge, /usr/bin/time
#   POINTS=30 TASKS=4 bash benches/cluster_sweep.sh
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
exe=${ANLAGE_EXE:-$root/target/release/anlage}
points=${POINTS:-100}
tasks=${TASKS:-10}
[ -x "$exe" ] || { echo "build first: cargo build --release" >&2; exit 2; }
[ -x /usr/bin/time ] || { echo "needs /usr/bin/time (Debian package time)" >&2; exit 2; }
work=$(mktemp -d /tmp/anlage-cluster-bench.XXXXXX)
chmod 755 "$work"
model=$root/patterns/ribbon.toml
axes=(--axis "amber.production=0.5:2:$points:log" --axis "cobalt.production=0.5:2:$points:log")
cores=$(nproc)

# 1. One machine: every core (rayon over points).
/usr/bin/time -f "%e %U %S" -o "$work/whole.time" "$exe" sweep "$model" "${axes[@]}" -o "$work/whole" --json >/dev/null

# 2. The cluster: start it, stop it whatever happens.
bash "$root/tests/cluster/start.sh" "$work/cluster" >/dev/null
trap 'bash "$root/tests/cluster/stop.sh" "$work/cluster" >/dev/null 2>&1 || true' EXIT
export SLURM_CONF=$work/cluster/slurm.conf
mkdir -p "$work/times"
# The job scripts run $ANLAGE: a wrapper that times each task and the merge.
cat >"$work/timed.sh" <<EOF
#!/bin/bash
t=\$(date +%s.%N)
/usr/bin/time -f "%e %U %S" -o "$work/times/\${SLURM_ARRAY_TASK_ID:-merge}.time" "$exe" "\$@"
status=\$?
echo "\$t \$(date +%s.%N)" > "$work/times/\${SLURM_ARRAY_TASK_ID:-merge}.span"
exit \$status
EOF
chmod 755 "$work/timed.sh"
(cd "$work" && "$exe" sweep "$model" "${axes[@]}" -o sharded --slurm "$tasks" --cpus-per-task 1 >/dev/null)
t0=$(date +%s.%N)
ANLAGE=$work/timed.sh bash "$work/sharded/slurm/submit.sh" >/dev/null
read -r array merge <"$work/sharded/slurm/jobs.txt"
while squeue -h -j "$array,$merge" 2>/dev/null | grep -q .; do sleep 0.1; done
t1=$(date +%s.%N)
for f in sweep.csv sweep_boundaries.csv sweep.png; do
  cmp -s "$work/whole/$f" "$work/sharded/$f" || { echo "$f differs between the whole sweep and the merged array" >&2; exit 1; }
done

# 3. The numbers.
{
  echo "machine: $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //'), $cores cores; ${points}x${points} ribbon sweep, $tasks array tasks of 1 CPU, merged outputs byte-identical to the whole run"
  cat "$work/times"/*.time | awk -v whole="$(cat "$work/whole.time")" -v wall="$(awk -v a="$t0" -v b="$t1" "BEGIN { print b - a }")" \
    -v tasks="$tasks" -v cores="$cores" -v points="$points" -v mergetime="$(cat "$work/times/merge.time")" '
    { n++; w += $1; c += $2 + $3 }
    END {
      split(whole, a, " "); split(mergetime, m, " ");
      tw = w - m[1]; tc = c - (m[2] + m[3]); wc = a[2] + a[3];
      printf "| run | wall s | CPU s |\n|---|---|---|\n";
      printf "| one machine, %d threads | %.2f | %.2f |\n", cores, a[1], wc;
      printf "| job array: submit to merged | %.2f | %.2f |\n", wall, c;
      printf "| of which the %d tasks (sum) | %.2f | %.2f |\n", tasks, tw, tc;
      printf "| of which the merge job | %.2f | %.2f |\n", m[1], m[2] + m[3];
      printf "CPU per point (one machine): %.3f ms\n", 1000 * wc / (points * points);
      printf "extra CPU per task (start-up, model, wild type): %.3f s\n", (tc - wc) / tasks;
      printf "scheduling and waiting, wall: %.2f s in all (array wall minus task walls spread over %d cores, minus the merge)\n", wall - tw / cores - m[1], cores;
    }'
} | tee "$root/benches/last_cluster_sweep.txt"
