#!/usr/bin/env bash
# Regenerates every labelled-demo recording, bit for bit, from labelled-demo/scenes/*.toml
# with the release build: `rotorsift simulate --scene F --out DIR` for each scene file.
# Usage: scripts/regenerate-demo.sh [OUT_DIR]   (default labelled-demo/recordings)
# If the binary has no `simulate` subcommand yet, the development runner
# `examples/sim.rs` (the same library call, simulate_scene_file) is used instead.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
out="${1:-$root/labelled-demo/recordings}"
target="${CARGO_TARGET_DIR:-$root/target}"
cd "$root"
cargo build --release --quiet
bin="$target/release/rotorsift"
if "$bin" simulate --help 2>/dev/null | grep -q -- "--scene"; then
  run() { "$bin" simulate --scene "$1" --out "$out"; }
else
  echo "regenerate-demo: 'rotorsift simulate' is not wired yet; using examples/sim.rs" >&2
  cargo build --release --quiet --example sim
  run() { "$target/release/examples/sim" "$1" "$out"; }
fi
mkdir -p "$out"
start=$(date +%s.%N)
n=0
for f in "$root"/labelled-demo/scenes/*.toml; do
  run "$f" >/dev/null
  n=$((n + 1))
done
end=$(date +%s.%N)
bytes=$(du -cb "$out"/*.sigmf-data | tail -1 | cut -f1)
echo "regenerate-demo: $n scene files -> $out ($bytes bytes of samples) in $(echo "$end - $start" | bc) s"
