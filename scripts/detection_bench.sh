#!/usr/bin/env bash
# The detection benchmark: writes the scenes of scripts/make_bench_scenes.py, simulates them
# and scores `classify` on them per radar (scripts/detection_bench.py).
# Usage: scripts/detection_bench.sh [OUT_DIR] [MODEL]   (default target/detection-bench,
# the built-in model)
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
target="${CARGO_TARGET_DIR:-$root/target}"
out="${1:-$target/detection-bench}"
cd "$root"
cargo build --release --quiet
bin="$target/release/rotorsift"
python3 scripts/make_bench_scenes.py "$out/scenes" >/dev/null
mkdir -p "$out/rec"
for f in "$out"/scenes/*.toml; do
  "$bin" simulate --scene "$f" --out "$out/rec" >/dev/null
done
model=()
if [ $# -ge 2 ]; then model=(--model "$2"); fi
(cd "$out/rec" && "$bin" classify ./*.sigmf-meta --format json "${model[@]}" >"$out/labels.json")
cd "$out/rec" && python3 "$root/scripts/detection_bench.py" "$out/labels.json"
