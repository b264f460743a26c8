#!/usr/bin/env bash
# INVENTED DATA for the fit demo: boundaries "measured" in 8 embryos per
# genotype, made by anlage itself from a ribbon with chosen "true" values
# (amber.production 1.2, head.decay_length_um 130, head->amber.threshold 0.12)
# plus Gaussian scatter of sd 1.5 % of the axis per embryo. Not an experiment.
# Run from the repository root: bash demo-data/fit/make.sh
set -euo pipefail
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
sed -e 's/^production = 1.0        # a.u.\/min/production = 1.2/' \
    -e 's/^decay_length_um = 150.0/decay_length_um = 130.0/' \
    -e '0,/^threshold = 0.1$/s//threshold = 0.12/' \
    -e '/^\[fit\]/,$d' patterns/ribbon_fit.toml > "$tmp/truth.toml"
cargo run --release --quiet -- screen "$tmp/truth.toml" -o "$tmp/screen" > /dev/null
python3 - "$tmp/screen/shifts.csv" demo-data/fit <<'PY'
import csv, random, statistics, sys
rows = list(csv.DictReader(open(sys.argv[1])))
rng = random.Random(2026)
def table(name, picks):
    with open(f"{sys.argv[2]}/{name}.csv", "w") as f:
        f.write("sample,time,gene,direction,position_pct,sd_pct,n\n")
        for gene, direction, x in picks:
            xs = [x + rng.gauss(0, 1.5) for _ in range(8)]
            f.write(f"mean,,{gene},{direction},{statistics.mean(xs):.3f},{statistics.stdev(xs):.3f},8\n")
wt = {(r["gene"], r["direction"]): float(r["wild_type_pct"]) for r in rows if r["wild_type_pct"]}
table("wild_type", [(g, d, x) for (g, d), x in sorted(wt.items())])
for mutant, name in [("head x2", "head_x2"), ("head half", "head_half"), ("amber in the tail", "amber_in_the_tail")]:
    picks = [(r["gene"], r["direction"], float(r["mutant_pct"])) for r in rows if r["mutant"] == mutant and r["mutant_pct"]]
    table(name, sorted(picks))
PY
echo "wrote demo-data/fit/*.csv (invented)"
