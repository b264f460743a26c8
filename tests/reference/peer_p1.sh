#!/usr/bin/env bash
# Stores the NumPy peer's P1 checksums (../shared/peer/peer_numpy.py, an
# independent NumPy/LAPACK implementation of the same problem) in peer_p1.csv.
# Run from the repository root: bash tests/reference/peer_p1.sh
set -euo pipefail
peer=../shared/peer/peer_numpy.py
out=tests/reference/peer_p1.csv
echo "nuclei,steps,checksum" > "$out"
for case in "100 1000" "1000 300" "7 50"; do
  set -- $case
  python3 "$peer" p1 --nuclei "$1" --steps "$2" --repeat 1 |
    python3 -c "import json,sys; d=json.load(sys.stdin); print(f\"{d['grid']},{d['steps']},{d['checksum']!r}\")" >> "$out"
done
cat "$out"
