#!/usr/bin/env bash
# Makes checkpoint_v2_sbdf2.bin and checkpoint_v2_ark4.bin: checkpoints in
# format 2, written by anlage as of commit 2b101ec (before each scheme had a
# type of its own; later versions write format 3 and still read format 2).
# The model is the ribbon demo with error-controlled steps capped short
# (so that the run lasts long enough to be stopped), stopped by SIGINT
# partway. Run from the repository root with ANLAGE set to such a binary:
#   ANLAGE=/path/to/old/anlage bash tests/reference/checkpoint_v2.sh
# Only the first lines of the model differ between the two.
set -euo pipefail
bin=${ANLAGE:?set ANLAGE to an anlage binary that writes checkpoint format 2}
work=$(mktemp -d)
sed 's/^tolerance = 1e-6 .*/tolerance = 1e-8\nmax_step_min = 0.0005/; s/^snapshot_every_min = 4.0/snapshot_every_min = 80.0/' \
  patterns/ribbon.toml > "$work/sbdf2.toml"
sed 's/^tolerance = 1e-6 .*/tolerance = 1e-8\nmax_step_min = 0.004\nscheme = "ark4"/; s/^snapshot_every_min = 4.0/snapshot_every_min = 80.0/' \
  patterns/ribbon.toml > "$work/ark4.toml"
for spec in sbdf2:0.34 ark4:0.3; do
  name=${spec%%:*}
  "$bin" run "$work/$name.toml" -o "$work/cut_$name" --no-pictures -q --checkpoint-every 20ms &
  pid=$!
  sleep "${spec##*:}"
  kill -INT "$pid"
  wait "$pid" || true
  head -1 "$work/cut_$name/checkpoint.bin"
  cp "$work/cut_$name/checkpoint.bin" "tests/reference/checkpoint_v2_$name.bin"
done
rm -rf "$work"
