#!/usr/bin/env bash
# Runs anlage and the NumPy peer (../shared/peer/peer_numpy.py) side by side
# on the peer's problems and prints one table: problem, size, solve times,
# ratio, checksums and peak memory. Needs python3 with numpy and scipy
# (pip install numpy scipy) and GNU time (/usr/bin/time).
#
#   bash benches/compare_peer.sh          # P1 at 100 and 10^5 nuclei, P2 at 512^2 (1000 steps each)
#   bash benches/compare_peer.sh quick    # fewer repeats, P2 at 100 steps
#
# Solve time has the same meaning on both sides: loading/building the problem,
# all steps and the checksum, without interpreter or process start-up; the
# best of several repeats in one process (the peer's --repeat, anlage's
# run --timing --repeat). Peak memory is the whole process (GNU time's
# "Maximum resident set size"), interpreter and libraries included. The
# binary is taken from $CARGO_TARGET_DIR when that is set (as cargo builds it).
set -euo pipefail
cd "$(dirname "$0")/.."
peer=${PEER:-../shared/peer/peer_numpy.py}
quick=${1:-}
p2_steps=1000
repeats=5
if [ "$quick" = quick ]; then p2_steps=100; repeats=2; fi
work=benches/peer
cargo build --release --quiet
cargo run --release --quiet --example peer_models -- "$work" p1:100:1000 p1:100000:1000 "p2:512:$p2_steps" >/dev/null
exe=${CARGO_TARGET_DIR:-target}/release/anlage
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT

# measure NAME PEER_ARGS... -- MODEL [ANLAGE_ARGS...] : appends one JSON line per side to $out/rows
measure() {
  local name=$1; shift
  local args=()
  while [ "$1" != -- ]; do args+=("$1"); shift; done
  local model=$2
  shift 2
  local extra=("$@")
  /usr/bin/time -v -o "$out/peer.time" python3 "$peer" "${args[@]}" --repeat "$repeats" > "$out/peer.json"
  /usr/bin/time -v -o "$out/anlage.time" "$exe" run "$model" --no-pictures --timing --repeat "$repeats" -o "$out/run" "${extra[@]}" > "$out/anlage.json"
  python3 - "$name" "$out" "$repeats" >> "$out/rows" <<'PY'
import json, re, sys
name, out, repeats = sys.argv[1], sys.argv[2], int(sys.argv[3])
def rss(path):
    m = re.search(r"Maximum resident set size \(kbytes\): (\d+)", open(path).read())
    return int(m.group(1)) / 1024
peer = json.load(open(f"{out}/peer.json"))
run = json.load(open(f"{out}/anlage.json"))
print(json.dumps(dict(problem=name, size=peer["grid"], steps=peer["steps"], anlage_s=run["solve_seconds"],
    peer_s=peer["seconds"], anlage_sum=run["checksum"], peer_sum=peer["checksum"],
    anlage_mib=rss(f"{out}/anlage.time"), peer_mib=rss(f"{out}/peer.time"))))
PY
}

measure P1 p1 --nuclei 100 --steps 1000 -- "$work/p1_100_1000.toml"
measure P1 p1 --nuclei 100000 --steps 1000 -- "$work/p1_100000_1000.toml"
measure "P1 (anlage 1 thread)" p1 --nuclei 100000 --steps 1000 -- "$work/p1_100000_1000.toml" --threads 1
measure P2 p2 --n 512 --steps "$p2_steps" -- "$work/p2_512_$p2_steps.toml"
measure "P2 (peer 2 workers)" p2 --n 512 --steps "$p2_steps" --workers 2 -- "$work/p2_512_$p2_steps.toml"

python3 - "$out/rows" <<'PY'
import json, sys, platform, os
rows = [json.loads(l) for l in open(sys.argv[1])]
cpu = next((l.split(":", 1)[1].strip() for l in open("/proc/cpuinfo") if l.startswith("model name")), platform.machine())
print(f"machine: {cpu}, {os.cpu_count()} cores; best of repeats, solve time only")
print("| problem | size | steps | anlage s | peer s | peer/anlage | anlage checksum | peer checksum | rel. diff | anlage MiB | peer MiB |")
print("|---|---|---|---|---|---|---|---|---|---|---|")
for r in rows:
    diff = abs(r["anlage_sum"] - r["peer_sum"]) / abs(r["peer_sum"])
    print(f"| {r['problem']} | {r['size']} | {r['steps']} | {r['anlage_s']:.4f} | {r['peer_s']:.4f} | "
          f"{r['peer_s'] / r['anlage_s']:.1f}x | {r['anlage_sum']:.12g} | {r['peer_sum']:.12g} | {diff:.1e} | "
          f"{r['anlage_mib']:.0f} | {r['peer_mib']:.0f} |")
PY
