#!/usr/bin/env python3
"""Detection figures of `rotorsift detect --format json` against the recordings' labels.

Usage: rotorsift detect DIR --format json > tracks.json
       python3 scripts/detection_report.py tracks.json

A target (annotation) is detected when a track matches it (docs/recording-format.md: at least
half the track's duration inside the interval, median range within the window +- one cell).
"Clear" targets follow the project's definition: moving rotorcraft with body SNR >= 15 dB
and blades >= 10 dB, hovering rotorcraft with blades >= 12 dB, birds with body SNR >= 15 dB
(SNRs from rotorsift:truth, coherent over a 256-chirp CPI and the range FFT). Tracks that
match no annotation are counted per minute of recording. Standard library only.
"""
import json
import sys
from collections import defaultdict

C = 299792458.0


def cell_of(meta):
    g = meta["global"]
    if g["rotorsift:waveform"] == "range-profile":
        return g["rotorsift:range_cell_m"]
    n = g["rotorsift:samples_per_chirp"]
    s = g["rotorsift:sweep_bandwidth_hz"] / g["rotorsift:sweep_duration_s"]
    return C * g["core:sample_rate"] / (2 * s * n)


def clear(label, truth):
    if label == "rotorcraft":
        blades = truth.get("blade_snr_db", -99)
        if truth.get("hovering"):
            return blades >= 12
        return truth.get("body_snr_db", -99) >= 15 and blades >= 10
    if label == "bird":
        return truth.get("body_snr_db", -99) >= 15
    return None


def main(path):
    doc = json.load(open(path))
    stats = defaultdict(lambda: [0, 0])
    false_tracks, minutes = 0, 0.0
    missed = []
    for rec in doc["recordings"]:
        meta = json.load(open(rec["path"]))
        g = meta["global"]
        n, t = g["rotorsift:samples_per_chirp"], g["rotorsift:chirp_interval_s"]
        cell = cell_of(meta)
        minutes += rec["duration_s"] / 60
        anns = meta.get("annotations", [])
        matched_tracks = set()
        for a in anns:
            a0 = a["core:sample_start"] // n * t
            a1 = a0 + a["core:sample_count"] // n * t
            hit = False
            for tr in rec["tracks"]:
                dur = tr["end_s"] - tr["start_s"]
                ov = max(0.0, min(tr["end_s"], a1) - max(tr["start_s"], a0))
                r = tr["range_m"]
                if ov >= 0.5 * dur and a["rotorsift:range_min_m"] - cell <= r <= a["rotorsift:range_max_m"] + cell:
                    hit = True
                    matched_tracks.add(tr["id"])
            truth = a.get("rotorsift:truth", {})
            label = a["core:label"]
            kind = label
            if label == "rotorcraft" and truth.get("hovering"):
                kind = "rotorcraft (hovering)"
            if label == "clutter":
                kind = "clutter (%s)" % truth.get("clutter_kind", truth.get("kind", "?"))
            c = clear(label, truth)
            key = (kind, {True: "clear", False: "faint", None: "-"}[c])
            stats[key][0] += 1
            stats[key][1] += hit
            if c and not hit:
                missed.append("%s %s %s" % (rec["path"].split("/")[-1], a.get("rotorsift:target_id"), truth))
        false_tracks += sum(1 for tr in rec["tracks"] if tr["id"] not in matched_tracks)
    print("%-28s %-6s %8s %8s %7s" % ("target", "kind", "targets", "tracked", "recall"))
    for (kind, c), (n_all, n_hit) in sorted(stats.items()):
        print("%-28s %-6s %8d %8d %7.3f" % (kind, c, n_all, n_hit, n_hit / n_all))
    print("tracks matching no annotation: %d in %.2f min = %.2f per minute" % (false_tracks, minutes, false_tracks / max(minutes, 1e-9)))
    for m in missed:
        print("missed clear:", m)


if __name__ == "__main__":
    main(sys.argv[1])
