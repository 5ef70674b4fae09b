#!/usr/bin/env bash
# Fills fuzz/corpus/TARGET with seeds from the demo and the test fixtures (run from anywhere).
set -euo pipefail
cd "$(dirname "$0")/.."
c=fuzz/corpus
mkdir -p "$c/meta" "$c/samples" "$c/scene" "$c/model"
for f in labelled-demo/recordings/*.sigmf-meta tests/fixtures/sigmf/*.sigmf-meta; do
  [ -e "$f" ] && cp "$f" "$c/meta/"
done
for f in labelled-demo/scenes/*.toml; do cp "$f" "$c/scene/"; done
cp models/default.json "$c/model/"
# the sample reader's input: a selector byte (datatype, channels, block size), then data
i=0
for f in labelled-demo/recordings/*.sigmf-data tests/fixtures/sigmf/*.sigmf-data; do
  [ -e "$f" ] || continue
  for sel in 0 1 2 3 6 7; do
    { printf "\\$(printf %03o $sel)"; head -c 4096 "$f"; } >"$c/samples/seed-$i-$sel"
  done
  i=$((i + 1))
done
