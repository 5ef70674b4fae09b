#!/usr/bin/env python3
"""Target-level classification figures of `rotorsift classify --format json` against the
recordings' labels, split into clear and faint targets.

Usage: rotorsift classify DIR --model M.json --format json > labels.json
       python3 scripts/classification_report.py labels.json [more.json ...]

A target is an annotation; its tracks are those matching it (docs/recording-format.md: at
least half the track's duration inside the interval, median range within the window +-
one cell); its predicted class is the duration-weighted mean of its tracks' probabilities
(as `rotorsift evaluate` scores). "Clear" targets follow the project's definition (see
scripts/detection_report.py) from each annotation's rotorsift:truth. Several JSON files
(one per held-out fold, say) are pooled. Standard library only.
"""
import json
import sys
from collections import Counter, defaultdict

sys.path.insert(0, __file__.rsplit("/", 1)[0])
from detection_bench import matches  # noqa: E402
from detection_report import cell_of, clear  # noqa: E402


def targets(doc):
    """Every annotation of the recordings of `doc` as a target: its label, the predicted
    class of its matching tracks (None when no track matches), whether it is clear, and
    what the bench scripts read off it (rotor rate of the longest track with one, the
    truth's rate and SNR)."""
    for rec in doc["recordings"]:
        meta = json.load(open(rec["path"]))
        g = meta["global"]
        n, t = g["rotorsift:samples_per_chirp"], g["rotorsift:chirp_interval_s"]
        cell = cell_of(meta)
        for a in meta.get("annotations", []):
            tracks = [tr for tr in rec["tracks"] if matches(tr, a, n, t, cell)]
            probs, weight = defaultdict(float), 0.0
            for tr in tracks:
                dur = tr["end_s"] - tr["start_s"]
                for k, p in tr.get("probabilities", {}).items():
                    probs[k] += p * dur
                weight += dur
            truth = a.get("rotorsift:truth", {})
            label = a["core:label"]
            pred = max(probs, key=probs.get) if weight > 0 else None
            with_rate = [tr for tr in tracks if tr.get("blade_flash_hz")]
            rate = (max(with_rate, key=lambda tr: tr["end_s"] - tr["start_s"])["blade_flash_hz"]
                    if with_rate else None)
            yield dict(rec=rec["path"].split("/")[-1], id=a.get("rotorsift:target_id"), label=label,
                       pred=pred, detected=bool(tracks), clear=clear(label, truth),
                       hovering=bool(truth.get("hovering")), rate=rate,
                       true_rate=truth.get("blade_flash_hz"),
                       snr=truth.get("blade_snr_db" if truth.get("hovering") else "body_snr_db"))


def main(paths):
    rows = [t for p in paths for t in targets(json.load(open(p)))]
    for name, sel in [("clear", lambda r: r["clear"] is not False), ("all", lambda r: True)]:
        rs = [r for r in rows if sel(r)]
        det = [r for r in rs if r["pred"] is not None]
        conf = Counter((r["label"], r["pred"]) for r in det)
        classes = sorted({r["label"] for r in rs} | {r["pred"] for r in det})
        print("%s targets (clutter counted as clear): %d, detected %d" % (name, len(rs), len(det)))
        print("  %-12s" % "true\\pred" + "".join("%11s" % c for c in classes) + "%11s" % "missed")
        for c in classes:
            miss = sum(1 for r in rs if r["label"] == c and r["pred"] is None)
            print("  %-12s" % c + "".join("%11d" % conf[(c, p)] for p in classes) + "%11d" % miss)
        acc = sum(1 for r in det if r["label"] == r["pred"]) / max(len(det), 1)
        rot = [r for r in det if r["label"] == "rotorcraft"]
        hov = [r for r in rot if r["hovering"]]
        birds = [r for r in det if r["label"] == "bird"]
        frac = lambda xs, f: (sum(1 for x in xs if f(x)) / len(xs)) if xs else float("nan")
        print("  accuracy %.3f; rotorcraft recall %.3f (%d); hovering rotorcraft recall %.3f (%d); birds labelled rotorcraft %.3f (%d)" % (
            acc, frac(rot, lambda r: r["pred"] == "rotorcraft"), len(rot),
            frac(hov, lambda r: r["pred"] == "rotorcraft"), len(hov),
            frac(birds, lambda r: r["pred"] == "rotorcraft"), len(birds)))
    for r in rows:
        if r["clear"] is not False and r["pred"] not in (None, r["label"]):
            print("wrong (clear):", r["rec"], r["id"], r["label"], "->", r["pred"])


if __name__ == "__main__":
    main(sys.argv[1:])
