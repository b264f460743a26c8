#!/usr/bin/env bash
# Loading and checking large model files (issue 20): time and peak memory of
# `anlage check` on a rate expression of N summed terms and on a model with N
# declared mutants, for growing N. Run from the repository root:
#   bash benches/loading.sh
# Needs GNU time (/usr/bin/time). Not a test: it prints, it asserts nothing.
set -euo pipefail
cargo build --release --quiet
bin=target/release/anlage
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
header='[tissue]
nuclei = [2]
spacing_um = 1.0
[clock]
until_min = 1.0
snapshot_every_min = 1.0
step_min = 1.0'
printf '%-28s %10s %12s\n' "input" "seconds" "peak MiB"
for n in 10000 100000; do
  {
    echo "$header"
    printf '[[gene]]\nname = "a"\nrate = "'
    awk -v n="$n" 'BEGIN { for (i = 0; i < n; i++) printf "0.001*a + "; }'
    printf -- '- a"\n[circuit]\nkinetics = "rates"\n'
  } > "$dir/terms.toml"
  out=$(/usr/bin/time -f '%e %M' "$bin" check "$dir/terms.toml" 2>&1 >/dev/null | tail -1)
  printf '%-28s %10s %12.1f\n' "$n-term expression" "${out% *}" "$(echo "${out#* } / 1024" | bc -l)"
done
for n in 10000 100000; do
  {
    echo "$header"
    printf '[[gene]]\nname = "a"\nproduction = 1.0\ndecay = 1.0\n[circuit]\nkinetics = "hill"\n'
    awk -v n="$n" 'BEGIN { for (i = 0; i < n; i++) printf "[[mutant]]\nname = \"m%d\"\nscale = { \"a.production\" = 0.5 }\n", i; }'
  } > "$dir/mutants.toml"
  out=$(/usr/bin/time -f '%e %M' "$bin" check "$dir/mutants.toml" 2>&1 >/dev/null | tail -1)
  printf '%-28s %10s %12.1f\n' "$n mutants" "${out% *}" "$(echo "${out#* } / 1024" | bc -l)"
done
