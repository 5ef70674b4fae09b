#!/usr/bin/env bash
# Runs the fuzz targets for SECONDS each (default 60), one after the other on one core:
#   fuzz/run-all.sh [SECONDS] [TARGET...]      (targets: meta samples scene model)
# Crashes are kept in fuzz/artifacts/TARGET (emptied first) and fuzzing goes on; prints
# the time each target ran and what it found, and exits 1 if anything was found. Needs a
# nightly toolchain and cargo-fuzz; builds the targets first unless FUZZ_NO_BUILD is set.
set -euo pipefail
cd "$(dirname "$0")/.."
secs="${1:-60}"
shift || true
if [ "$#" -gt 0 ]; then targets=("$@"); else targets=(meta samples scene model); fi
fuzz/seed.sh
[ -n "${FUZZ_NO_BUILD:-}" ] || cargo +nightly fuzz build -O >/dev/null
bin=fuzz/target/x86_64-unknown-linux-gnu/release
total=0
for t in "${targets[@]}"; do
  rm -rf "fuzz/artifacts/$t"
  mkdir -p "fuzz/artifacts/$t"
  start=$(date +%s)
  set +e
  "$bin/$t" -fork=1 -ignore_crashes=1 -ignore_ooms=1 -ignore_timeouts=1 -rss_limit_mb=2048 \
    -timeout=20 -max_total_time="$secs" \
    -artifact_prefix="fuzz/artifacts/$t/" "fuzz/corpus/$t" >"fuzz/artifacts/$t.log" 2>&1
  rc=$?
  set -e
  end=$(date +%s)
  rm -rf "${TMPDIR:-/tmp}"/rotorsift-fuzz-[0-9]*  # the sample target's scratch folders
  found=$(find "fuzz/artifacts/$t" -type f | wc -l)
  total=$((total + found))
  echo "fuzz $t: $((end - start)) s, exit $rc, $found finding(s) in fuzz/artifacts/$t"
done
[ "$total" -eq 0 ]
