#!/usr/bin/env bash
# Stores the NumPy peer's P2 checksums (../shared/peer/peer_numpy.py, an
# independent NumPy/SciPy DCT implementation of the same problem) in peer_p2.csv.
# Run from the repository root: bash tests/reference/peer_p2.sh
set -euo pipefail
peer=../shared/peer/peer_numpy.py
out=tests/reference/peer_p2.csv
echo "n,steps,checksum" > "$out"
for case in "32 200" "33 60"; do
  set -- $case
  python3 "$peer" p2 --n "$1" --steps "$2" --repeat 1 |
    python3 -c "import json,sys; d=json.load(sys.stdin); print(f\"{d['grid'].split('x')[0]},{d['steps']},{d['checksum']!r}\")" >> "$out"
done
cat "$out"
