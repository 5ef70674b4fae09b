#!/usr/bin/env bash
# The classification benchmark: for each radar of scripts/make_bench_scenes.py (three
# radars outside the demo and the built-in model), a training set and a held-out set of
# runs with different seeds; scores on the held-out runs (scripts/classification_bench.py)
#  - "site":    a model trained (`rotorsift train`) on that radar's training runs only;
#  - "builtin": the built-in model (or MODEL), which never saw these radars.
# Usage: scripts/classification_bench.sh [OUT_DIR] [RUNS] [MODEL]
#   (defaults: target/classification-bench, 40 mixed runs per radar and set)
#   ROTORSIFT_BIN=path runs that binary instead of building the release one.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
target="${CARGO_TARGET_DIR:-$root/target}"
out="${1:-$target/classification-bench}"
runs="${2:-40}"
cd "$root"
if [ -z "${ROTORSIFT_BIN:-}" ]; then cargo build --release --quiet; fi
bin="${ROTORSIFT_BIN:-$target/release/rotorsift}"
for set in train:4242 test:9191; do
  name="${set%%:*}"; seed="${set##*:}"
  if [ ! -f "$out/$name/.done-$runs" ]; then
    rm -rf "$out/$name"
    python3 scripts/make_bench_scenes.py "$out/$name/scenes" --runs "$runs" \
      --background-runs 2 --seed "$seed" >/dev/null
    mkdir -p "$out/$name/rec"
    for f in "$out/$name"/scenes/*.toml; do
      "$bin" simulate --scene "$f" --out "$out/$name/rec" --quiet >/dev/null
    done
    touch "$out/$name/.done-$runs"
  fi
done
model=()
if [ $# -ge 3 ]; then model=(--model "$3"); fi
"$bin" classify "$out/test/rec" --format json --quiet "${model[@]}" >"$out/builtin.json"
radars=$(ls "$out/test/rec" | sed -n 's/^bench-\([a-z0-9]*\)-.*\.sigmf-meta$/\1/p' | sort -u)
parts=()
for r in $radars; do
  "$bin" train "$out/train/rec"/bench-"$r"-*.sigmf-meta --model "$out/site-$r.json" \
    --quiet --seed 7 >"$out/train-$r.txt"
  "$bin" classify "$out/test/rec"/bench-"$r"-*.sigmf-meta --model "$out/site-$r.json" \
    --format json --quiet >"$out/site-$r.json.labels"
  parts+=("$out/site-$r.json.labels")
done
site=$(IFS=,; echo "${parts[*]}")
python3 scripts/classification_bench.py site="$site" builtin="$out/builtin.json" \
  | tee "$out/table.md"
