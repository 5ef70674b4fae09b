#!/usr/bin/env bash
# Grouped K-fold cross-validation of the whole tool, as a site would run it: the labelled
# recordings are dealt round-robin (sorted by name) into K folds; for each fold
# `rotorsift train` learns from the other folds and `rotorsift classify` labels the fold;
# scripts/classification_report.py then scores the pooled held-out labels per target,
# clear and faint apart. With GROUP_RE set, folds are the distinct matches of that regex
# in the file names instead (e.g. GROUP_RE='run-[a-z0-9]+' holds out one radar at a time).
# Usage: scripts/cross_validate.sh [RECORDINGS_DIR] [K]   (defaults: labelled-demo/recordings, 5)
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
rec="${1:-$root/labelled-demo/recordings}"
k="${2:-5}"
target="${CARGO_TARGET_DIR:-$root/target}"
bin="$target/release/rotorsift"
cd "$root"
cargo build --release --quiet
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
mapfile -t metas < <(find "$rec" -name '*.sigmf-meta' | sort)
group_of() {
  local name; name="$(basename "$1")"
  if [ -n "${GROUP_RE:-}" ]; then
    [[ "$name" =~ $GROUP_RE ]] && echo "${BASH_REMATCH[0]}" || echo "other"
  else
    echo "fold$(( $2 % k ))"
  fi
}
i=0
for m in "${metas[@]}"; do
  g="$(group_of "$m" "$i")"; i=$((i + 1))
  echo "$g $m" >> "$work/groups"
done
for g in $(cut -d' ' -f1 "$work/groups" | sort -u); do
  mkdir -p "$work/$g/train" "$work/$g/test"
  while read -r gg m; do
    base="${m%.sigmf-meta}"
    side=train; [ "$gg" = "$g" ] && side=test
    ln -s "$base.sigmf-meta" "$work/$g/$side/"
    ln -s "$base.sigmf-data" "$work/$g/$side/"
  done < "$work/groups"
  "$bin" train "$work/$g/train" --model "$work/$g/model.json" --folds 0 >/dev/null
  "$bin" classify "$work/$g/test" --model "$work/$g/model.json" --format json > "$work/$g/labels.json"
  echo "cross_validate: $g held out ($(ls "$work/$g/test" | grep -c meta) recordings)" >&2
done
python3 "$root/scripts/classification_report.py" "$work"/*/labels.json
