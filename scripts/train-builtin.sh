#!/usr/bin/env bash
# Trains the built-in model models/default.json on the demo's training runs (run-*: ten
# radars, 28 runs each). The hold-out runs (holdout-*: two radars the model never sees, four of them
# shipped in labelled-demo/recordings) are left out, so `classify`/`evaluate` on the shipped
# demo show a held-out result. Regenerates the training recordings (bit for bit, from
# labelled-demo/scenes) when missing. Rebuild afterwards: the model is embedded in the binary.
# Usage: scripts/train-builtin.sh [RECORDINGS_DIR]   (default target/demo-recordings)
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
target="${CARGO_TARGET_DIR:-$root/target}"
rec="${1:-$target/demo-recordings}"
cd "$root"
want=$(ls labelled-demo/scenes/run-*.toml | wc -l)
have=$(ls "$rec"/run-*.sigmf-meta 2>/dev/null | wc -l || true)
if [ "$have" -lt "$want" ]; then
  scripts/regenerate-demo.sh "$rec" 'run-*'
fi
cargo build --release --quiet
# from inside the recordings' folder, so the model file names them without a folder
cd "$rec"
"$target/release/rotorsift" train run-*.sigmf-meta --model "$root/models/default.json" \
  --seed 7 --holdout-fraction 0.3
