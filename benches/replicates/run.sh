#!/usr/bin/env bash
# Replicate embryos, side by side with a NumPy peer written independently
# (benches/replicates/peer_replicates.py): 200 embryos of the ribbon with
# intrinsic noise (100 molecules per unit) and a lognormal head gradient
# (cv 0.1), fixed steps of 0.05 min to 240 min. Best of 3 wall times of the
# whole command (anlage: simulation, statistics, tables and picture; peer:
# simulation only). Run from the repository root: bash benches/replicates/run.sh
set -euo pipefail
cargo build --release --quiet
bin=target/release/anlage
model=benches/replicates/ribbon_noise.toml
out=$(mktemp -d)
best=999
for _ in 1 2 3; do
  t0=$(date +%s.%N)
  "$bin" replicates "$model" -o "$out" > "$out/report.txt"
  t1=$(date +%s.%N)
  best=$(python3 -c "print(min($best, $t1 - $t0))")
done
mem=$( { /usr/bin/time -f "%M" "$bin" replicates "$model" -o "$out" > /dev/null; } 2>&1 | tail -1)
peer=$(python3 benches/replicates/peer_replicates.py 3)
peer_s=$(echo "$peer" | sed -E 's/.*best of runs ([0-9.]+) s/\1/')
echo "machine: $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | xargs), $(nproc) cores"
echo "anlage: $(sed -n 4p "$out/report.txt" | xargs); best of 3 ${best} s; peak ${mem} KiB"
echo "$peer"
python3 -c "print(f'peer/anlage: {$peer_s / $best:.1f}x')"
rm -rf "$out"
