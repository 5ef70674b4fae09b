#!/usr/bin/env bash
# Trains the built-in model models/default.json on the whole labelled demo: regenerates the
# demo recordings (bit for bit, from labelled-demo/scenes) if they are missing, then runs
# `rotorsift train` with the default settings and seed. Rebuild afterwards: the model is
# embedded in the binary.
# Usage: scripts/train-builtin.sh [RECORDINGS_DIR]   (default labelled-demo/recordings)
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
rec="${1:-$root/labelled-demo/recordings}"
cd "$root"
if ! ls "$rec"/run-*.sigmf-meta >/dev/null 2>&1 || [ "$(ls "$rec"/*.sigmf-meta | wc -l)" -lt 90 ]; then
  scripts/regenerate-demo.sh "$rec"
fi
cargo build --release --quiet
target="${CARGO_TARGET_DIR:-$root/target}"
"$target/release/rotorsift" train "$rec" --model models/default.json --seed 7 --holdout-fraction 0.3
