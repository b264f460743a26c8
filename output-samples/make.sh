#!/usr/bin/env bash
# Regenerates output-samples/ from patterns/: pictures and the small tables.
# Run from the repository root: bash output-samples/make.sh
# (The large per-snapshot files — profiles.csv, states.npy, attractors.csv and
# basins.csv — are left out to
# keep the folder small; `anlage run` writes them.)
set -euo pipefail
cargo build --release --quiet
bin=target/release/anlage
for model in patterns/*.toml; do
  name=$(basename "$model" .toml)
  out=output-samples/$name
  rm -rf "$out"
  "$bin" run "$model" -q -o "$out" --width 560
  if [ "$name" = ribbon ]; then
    # Invented demo data: synthetic stained embryos drawn from this run, measured
    # back and scored against it (see README, "Compare with stained embryos").
    rm -rf demo-data/stained
    "$bin" synthesize "$out" -o demo-data/stained --count 3 > /dev/null
    "$bin" measure demo-data/stained --channel 0=amber --channel 1=cobalt --head-high amber --time 240 > /dev/null
    "$bin" compare "$out" demo-data/stained/measured.csv -o "$out" > /dev/null
    "$bin" basins "$out" --width 560 > /dev/null
    "$bin" screen "$model" --knockouts --dosage --width 560 -o "$out/screen" > /dev/null
    "$bin" sensitivity "$model" --width 560 -o "$out/screen" > /dev/null
    "$bin" sweep "$model" --axis amber.production=0.2:5:31:log --axis cobalt.production=0.2:5:31:log --width 560 -o "$out/sweep" > /dev/null
    "$bin" portrait "$out" --nucleus 40 --genes amber,cobalt --time 8 --width 560 > /dev/null
    "$bin" figure "$out" --svg --width 1200 > /dev/null
    # Where along the axis the isolated nucleus is bistable, as amber's production changes.
    "$bin" bifurcation "$model" --parameter amber.production --from 0.2 --to 3 --width 560 -o "$out/bifurcation" > /dev/null
    "$bin" bifurcation "$model" --parameter amber.production --from 0.2 --to 3 --second position \
      --second-from 0 --second-to 100 --width 560 -o "$out/bifurcation" > /dev/null
    # The ribbon on white, as for a printed figure.
    "$bin" render "$out" --kind kymograph --light --width 560 -o output-samples/ribbon-light > /dev/null
  fi
  if [ "$name" = cycles ]; then
    # The growing row's nucleus at 46 % of its length at the end, in the gradient's peak.
    "$bin" bifurcation "$model" --parameter lumen.peak --from 0 --to 8 --at 46 --gene crest --width 560 -o "$out/bifurcation" > /dev/null
    rm -f "$out/growth_profiles.csv"
  fi
  if [ "$name" = spots ]; then
    # Where the sheet makes spots, and at what wavelength, as the inhibitor's spread and a change.
    "$bin" sweep "$model" --axis smoke.diffusion=30:240:13:log --axis a=0.02:0.25:12 --width 560 -o "$out/sweep" > /dev/null
  fi
  if [ "$name" = ring_waves ]; then
    "$bin" render "$out" --kind kymograph --genes cyan --heatmap --width 560 -o "$out/cyan" > /dev/null
  fi
  if [ "$name" = precision ]; then
    # Replicate embryos: the wild type (toggle) and the read-out alone.
    "$bin" replicates "$model" --width 560 --attribute --check-step -o "$out" > /dev/null
    "$bin" screen "$model" --replicates 200 --width 560 -o "$out/screen" > /dev/null
    "$bin" replicates "$model" --width 560 --mutant "read-out alone" -o "$out/read-out-alone" > /dev/null
    rm -f "$out/embryo_boundaries.csv" "$out/read-out-alone/embryo_boundaries.csv"
  fi
  if [ "$name" = band ]; then
    # One gene as a heat map.
    "$bin" render "$out" --kind kymograph --genes teal --heatmap --width 560 -o output-samples/band-teal-heatmap > /dev/null
  fi
  rm -f "$out/states.npy" "$out/profiles.csv" "$out/profiles_long.csv" "$out/final_sheet.csv" "$out/attractors.csv" "$out/basins.csv" "$out/manifest.json"
  # One animation and one report page are enough for the samples (every
  # run writes both): the ribbon keeps them.
  [ "$name" = ribbon ] || rm -f "$out/pattern.gif" "$out/report.html"

done
# The fit demo (invented data in demo-data/fit).
"$bin" fit patterns/ribbon_fit.toml -q -o output-samples/ribbon_fit
du -sh output-samples
# One report page is enough for the samples: the ribbon's.
find output-samples -name report.html ! -path output-samples/ribbon/report.html -delete
