#!/usr/bin/env bash
# Regenerates every file under tests/reference/ that rotorsift itself writes, and the peer
# figures computed from them:
#   tests/reference/demo_features.csv   `rotorsift features` over all 292 demo recordings
#                                       (simulated bit for bit by regenerate-demo.sh; the
#                                       recording column holds the bare file names)
#   tests/reference/forest_peer_demo.json  tests/reference/forest_peer.py on that CSV
#                                       (needs python3 with numpy and scikit-learn; skipped
#                                       with a note when they are missing)
# The other golden files (frontend_golden.json, metrics_golden.json, the SigMF fixtures)
# are written by their own Python scripts in tests/reference/ from outside libraries, not
# by rotorsift.
# Usage: scripts/regenerate-references.sh [DEMO_DIR] [PYTHON]
#   DEMO_DIR  where the demo recordings are simulated, default target/demo-recordings
#   PYTHON    interpreter for forest_peer.py, default python3
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
target="${CARGO_TARGET_DIR:-$root/target}"
demo="${1:-$target/demo-recordings}"
python="${2:-python3}"
ref="$root/tests/reference"
"$root/scripts/regenerate-demo.sh" "$demo"
bin="$target/release/rotorsift"
# bare file names in the recording column: the CSV does not depend on where DEMO_DIR is
(cd "$demo" && "$bin" features ./*.sigmf-meta --out "$ref/demo_features.csv.new")
sed -i 's#^\./##' "$ref/demo_features.csv.new"
mv "$ref/demo_features.csv.new" "$ref/demo_features.csv"
echo "regenerate-references: $ref/demo_features.csv"
if "$python" -c 'import numpy, sklearn' 2>/dev/null; then
  "$python" "$ref/forest_peer.py" "$ref/demo_features.csv" > "$ref/forest_peer_demo.json.new"
  mv "$ref/forest_peer_demo.json.new" "$ref/forest_peer_demo.json"
  echo "regenerate-references: $ref/forest_peer_demo.json"
  echo "regenerate-references: re-measure the figures quoted in tests/model_peer.rs"
else
  echo "regenerate-references: $python lacks numpy/scikit-learn; forest_peer_demo.json not refreshed" >&2
  echo "  (python3 -m venv /tmp/v && /tmp/v/bin/pip install numpy scikit-learn; pass /tmp/v/bin/python)" >&2
fi
