#!/usr/bin/env python3
"""Peer comparison for the forest: scikit-learn's RandomForestClassifier on the same
features and the same recording-grouped split.

Usage: python3 tests/reference/forest_peer.py FEATURES.csv

FEATURES.csv (as written by `rotorsift features`): one row per track, with columns
  recording  - the group (recording id); whole recordings are held out
  label      - the class; rows with an empty label are left out
  every other column whose values all parse as numbers is a feature; columns with any
  non-numeric value (identifiers such as a path) are ignored, and so are the identifier
  columns `rotorsift features` writes with the prefix `id_` (track id, times, range).

The split is sklearn GroupShuffleSplit(n_splits=1, test_size=0.3, random_state=7) over
the recordings. Prints JSON: library versions, the features used, the test recordings
(so the Rust side can repeat the split with `Dataset::split_by_groups`), the held-out
accuracy of RandomForestClassifier(n_estimators=200, class_weight='balanced',
random_state=0), and its impurity-based feature importances.
"""
import json
import platform
import sys

import csv

import numpy as np
import sklearn
from sklearn.ensemble import RandomForestClassifier
from sklearn.metrics import accuracy_score
from sklearn.model_selection import GroupShuffleSplit


def main(argv):
    if len(argv) != 2:
        print(__doc__, file=sys.stderr)
        return 2
    with open(argv[1], newline="") as fh:
        reader = csv.DictReader(fh)
        columns = reader.fieldnames or []
        rows = list(reader)
    for col in ("recording", "label"):
        if col not in columns:
            print(f"forest_peer: {argv[1]} has no '{col}' column", file=sys.stderr)
            return 1
    rows = [r for r in rows if r["label"] != ""]

    def number(v):
        try:
            return float(v)
        except ValueError:
            return None

    features = [c for c in columns if c not in ("recording", "label") and not c.startswith("id_")
                and all(number(r[c]) is not None for r in rows)]
    x = np.array([[float(r[c]) for c in features] for r in rows], dtype=float)
    y = np.array([r["label"] for r in rows])
    groups = np.array([r["recording"] for r in rows])
    split = GroupShuffleSplit(n_splits=1, test_size=0.3, random_state=7)
    train, test = next(split.split(x, y, groups))
    clf = RandomForestClassifier(n_estimators=200, class_weight="balanced", random_state=0)
    clf.fit(x[train], y[train])
    out = {
        "versions": {"python": platform.python_version(), "numpy": np.__version__,
                     "scikit-learn": sklearn.__version__},
        "split": "GroupShuffleSplit(n_splits=1, test_size=0.3, random_state=7)",
        "model": "RandomForestClassifier(n_estimators=200, class_weight='balanced', random_state=0)",
        "features": features,
        "rows_train": int(len(train)),
        "rows_test": int(len(test)),
        "test_recordings": sorted(set(groups[test].tolist())),
        "held_out_accuracy": float(accuracy_score(y[test], clf.predict(x[test]))),
        "feature_importances": dict(zip(features, clf.feature_importances_.tolist())),
    }
    # The same forest over five random states (one forest's accuracy on ~100 rows moves by
    # a row or two with the seed), and with rotorsift's leaf size (min_samples_leaf=3).
    for key, extra in (("held_out_accuracy_mean5", {}),
                       ("held_out_accuracy_mean5_leaf3", {"min_samples_leaf": 3})):
        accs = []
        for rs in range(5):
            m = RandomForestClassifier(n_estimators=200, class_weight="balanced",
                                       random_state=rs, **extra).fit(x[train], y[train])
            accs.append(float(accuracy_score(y[test], m.predict(x[test]))))
        out[key] = float(np.mean(accs))
    print(json.dumps(out, indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
