#!/usr/bin/env bash
# Regenerates labelled-demo recordings, bit for bit, from labelled-demo/scenes/*.toml with
# the release build: `rotorsift simulate --scene F --out DIR` for each scene file.
# Usage: scripts/regenerate-demo.sh [OUT_DIR] [GLOB]
#   OUT_DIR  default target/demo-recordings (all 292 runs take 4.9 GB)
#   GLOB     scene names to regenerate, default '*' (e.g. 'holdout-*', 'run-*')
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
target="${CARGO_TARGET_DIR:-$root/target}"
out="${1:-$target/demo-recordings}"
glob="${2:-*}"
cd "$root"
cargo build --release --quiet
bin="$target/release/rotorsift"
mkdir -p "$out"
start=$(date +%s)
n=0
for f in "$root"/labelled-demo/scenes/$glob.toml; do
  case "$(basename "$f")" in EXAMPLE.toml) continue ;; esac
  "$bin" simulate --scene "$f" --out "$out" >/dev/null
  n=$((n + 1))
done
end=$(date +%s)
echo "regenerate-demo: $n scene files -> $out in $((end - start)) s"
