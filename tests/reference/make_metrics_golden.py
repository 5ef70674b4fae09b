#!/usr/bin/env python3
"""Writes tests/reference/metrics_golden.json: reference values for src/model/metrics.rs.

Reference implementations:
- scikit-learn `sklearn.metrics`: confusion_matrix, accuracy_score,
  precision_recall_fscore_support (average=None, 'macro', 'weighted'; zero_division=0),
  brier_score_loss (multiclass form: mean over samples of sum_k (p_k - y_k)^2, i.e.
  scale_by_half=False; and the binary form, which is half of it for two classes).
- numpy, written out below: the multiclass Brier score (as a second check) and the
  expected calibration error of Guo et al., "On Calibration of Modern Neural Networks",
  ICML 2017, Eq. 3, top-label confidence, M = 10 equal-width bins ((m-1)/M, m/M] with
  edges m / M (a confidence of 0 would join the first bin). scikit-learn has no ECE.

Run: pip install scikit-learn numpy; python3 tests/reference/make_metrics_golden.py
"""
import json
import os
import platform

import numpy as np
import sklearn
from sklearn.metrics import (accuracy_score, brier_score_loss, confusion_matrix,
                             precision_recall_fscore_support)


def ece_numpy(probs, y, bins=10):
    conf = probs.max(axis=1)
    pred = probs.argmax(axis=1)  # first of the largest, as in the Rust code
    correct = (pred == y).astype(float)
    edges = [m / bins for m in range(bins + 1)]
    total = 0.0
    for m in range(bins):
        lo, hi = edges[m], edges[m + 1]
        in_bin = (conf > lo) & (conf <= hi)
        if m == 0:
            in_bin |= conf <= 0.0
        if in_bin.any():
            prop = in_bin.mean()
            total += prop * abs(correct[in_bin].mean() - conf[in_bin].mean())
    return float(total)


def brier_numpy(probs, y):
    onehot = np.eye(probs.shape[1])[y]
    return float(((probs - onehot) ** 2).sum(axis=1).mean())


def case(name, rng, n, k, never_predicted, never_true=None, edge_rows=()):
    true_classes = [c for c in range(k) if c != never_true]
    y_true = rng.choice(true_classes, size=n)
    pred_classes = [c for c in range(k) if c != never_predicted]
    y_pred = rng.choice(pred_classes, size=n)
    # probabilities: Dirichlet rows, sharpened towards the true class for some rows so
    # several confidence bins are populated; a few rows exactly on bin edges
    probs = rng.dirichlet(np.ones(k) * 0.7, size=n)
    boost = rng.random(n) < 0.5
    probs[boost, y_true[boost]] += 1.5
    probs /= probs.sum(axis=1, keepdims=True)
    for i, row in enumerate(edge_rows):
        probs[i] = np.array(row, dtype=float)
    labels = list(range(k))
    out = {"name": name, "n_classes": k, "y_true": y_true.tolist(),
           "y_pred": y_pred.tolist(), "probs": probs.tolist()}
    out["confusion"] = confusion_matrix(y_true, y_pred, labels=labels).tolist()
    out["accuracy"] = float(accuracy_score(y_true, y_pred))
    p, r, f, s = precision_recall_fscore_support(y_true, y_pred, labels=labels,
                                                 average=None, zero_division=0)
    out.update(precision=p.tolist(), recall=r.tolist(), f1=f.tolist(),
               support=[int(v) for v in s])
    for avg in ("macro", "weighted"):
        p, r, f, _ = precision_recall_fscore_support(y_true, y_pred, labels=labels,
                                                     average=avg, zero_division=0)
        out[avg] = {"precision": float(p), "recall": float(r), "f1": float(f)}
    out["brier_sklearn"] = float(brier_score_loss(y_true, probs, labels=labels,
                                                  scale_by_half=False))
    out["brier_numpy"] = brier_numpy(probs, y_true)
    assert abs(out["brier_sklearn"] - out["brier_numpy"]) < 1e-12
    out["ece"] = ece_numpy(probs, y_true)
    return out


def binary_case(rng, n):
    y = rng.integers(0, 2, size=n)
    p1 = rng.random(n)
    probs = np.stack([1 - p1, p1], axis=1)
    return {"name": "binary", "y_true": y.tolist(), "probs": probs.tolist(),
            "brier_binary_sklearn": float(brier_score_loss(y, p1))}


def main():
    rng = np.random.default_rng(20240611)
    cases = [
        case("three_class_one_never_predicted", rng, 60, 3, never_predicted=2,
             edge_rows=[[0.5, 0.3, 0.2], [0.4, 0.3, 0.3], [0.6, 0.2, 0.2]]),
        case("four_class_never_predicted_and_never_true", rng, 80, 4, never_predicted=1,
             never_true=3, edge_rows=[[0.7, 0.1, 0.1, 0.1], [0.25, 0.25, 0.25, 0.25]]),
        case("four_class_all_present", rng, 200, 4, never_predicted=None),
    ]
    doc = {
        "generator": "tests/reference/make_metrics_golden.py",
        "versions": {"python": platform.python_version(), "numpy": np.__version__,
                     "scikit-learn": sklearn.__version__},
        "cases": cases,
        "binary": binary_case(rng, 50),
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "metrics_golden.json")
    with open(path, "w") as fh:
        json.dump(doc, fh, indent=1)
        fh.write("\n")
    print(f"wrote {path} (numpy {np.__version__}, scikit-learn {sklearn.__version__})")


if __name__ == "__main__":
    main()
