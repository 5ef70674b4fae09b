#!/usr/bin/env python3
"""False alarms and detection per radar, from `rotorsift classify --format json` over the
detection benchmark (scripts/make_bench_scenes.py) or any labelled recordings.

Usage: rotorsift classify DIR --format json > labels.json
       python3 scripts/detection_bench.py labels.json [--json]

Groups recordings by radar: the second '-' field of the name (bench-RADAR-NN-kind), or the
whole name. Per radar:
- background runs (name ends in -background): tracks per minute, tracks labelled
  rotorcraft per minute;
- other runs: tracks matching no annotation per minute, false rotorcraft per minute
  (tracks labelled rotorcraft that match no rotorcraft annotation), and the share of clear
  targets and of clear hovering rotorcraft that some track matches (the match rule and
  "clear" of scripts/detection_report.py).
Standard library only.
"""
import json
import sys
from collections import defaultdict

sys.path.insert(0, __file__.rsplit("/", 1)[0])
from detection_report import cell_of, clear  # noqa: E402


def radar_of(name):
    parts = name.split("-")
    return parts[1] if len(parts) > 2 else name


def matches(tr, a, n, t, cell):
    a0 = a["core:sample_start"] // n * t
    a1 = a0 + a["core:sample_count"] // n * t
    dur = tr["end_s"] - tr["start_s"]
    ov = max(0.0, min(tr["end_s"], a1) - max(tr["start_s"], a0))
    r = tr["range_m"]
    return (ov >= 0.5 * dur
            and a["rotorsift:range_min_m"] - cell <= r <= a["rotorsift:range_max_m"] + cell)


def main(paths, as_json):
    z = lambda: dict(bg_min=0.0, bg_tracks=0, bg_rotor=0, mx_min=0.0, mx_unmatched=0,
                     mx_false_rotor=0, clear=0, clear_hit=0, hover=0, hover_hit=0, missed=[],
                     false=[])
    per = defaultdict(z)
    for path in paths:
        doc = json.load(open(path))
        for rec in doc["recordings"]:
            name = rec["path"].split("/")[-1].replace(".sigmf-meta", "")
            s = per[radar_of(name)]
            meta = json.load(open(rec["path"]))
            g = meta["global"]
            n, t = g["rotorsift:samples_per_chirp"], g["rotorsift:chirp_interval_s"]
            cell = cell_of(meta)
            anns = meta.get("annotations", [])
            minutes = rec["duration_s"] / 60.0
            if name.endswith("-background"):
                s["bg_min"] += minutes
                s["bg_tracks"] += len(rec["tracks"])
                s["bg_rotor"] += sum(1 for tr in rec["tracks"] if tr.get("label") == "rotorcraft")
                for tr in rec["tracks"]:
                    s["false"].append("%s:%d %.1f m %s %.2f" % (name, tr["id"], tr["range_m"],
                                                               tr.get("label"), tr.get("confidence", 0)))
                continue
            s["mx_min"] += minutes
            for tr in rec["tracks"]:
                m = [a for a in anns if matches(tr, a, n, t, cell)]
                if not m:
                    s["mx_unmatched"] += 1
                if tr.get("label") == "rotorcraft" and not any(
                        a["core:label"] == "rotorcraft" for a in m):
                    s["mx_false_rotor"] += 1
                    s["false"].append("%s:%d %.1f m" % (name, tr["id"], tr["range_m"]))
            for a in anns:
                truth = a.get("rotorsift:truth", {})
                c = clear(a["core:label"], truth)
                if not c:
                    continue
                hit = any(matches(tr, a, n, t, cell) for tr in rec["tracks"])
                s["clear"] += 1
                s["clear_hit"] += hit
                if a["core:label"] == "rotorcraft" and truth.get("hovering"):
                    s["hover"] += 1
                    s["hover_hit"] += hit
                if not hit:
                    s["missed"].append("%s %s" % (name, a.get("rotorsift:target_id")))
    out = {}
    for radar, s in sorted(per.items()):
        div = lambda a, b: a / b if b else float("nan")
        out[radar] = dict(
            background_min=round(s["bg_min"], 2),
            background_tracks_per_min=round(div(s["bg_tracks"], s["bg_min"]), 2),
            background_rotorcraft_per_min=round(div(s["bg_rotor"], s["bg_min"]), 2),
            mixed_min=round(s["mx_min"], 2),
            mixed_unmatched_per_min=round(div(s["mx_unmatched"], s["mx_min"]), 2),
            mixed_false_rotorcraft_per_min=round(div(s["mx_false_rotor"], s["mx_min"]), 2),
            clear_detected=round(div(s["clear_hit"], s["clear"]), 3), clear=s["clear"],
            clear_hover_detected=round(div(s["hover_hit"], s["hover"]), 3), clear_hover=s["hover"],
            missed=s["missed"], false_examples=s["false"][:8])
    if as_json:
        print(json.dumps(out, indent=1))
        return
    print("%-8s %7s %8s %9s %7s %9s %10s %8s %8s" % (
        "radar", "bg_min", "bg_trk/m", "bg_rot/m", "mx_min", "unmatch/m", "falserot/m",
        "clear", "hover"))
    for radar, o in out.items():
        print("%-8s %7.2f %8.2f %9.2f %7.2f %9.2f %10.2f %4.3f/%-3d %4.3f/%-3d" % (
            radar, o["background_min"], o["background_tracks_per_min"],
            o["background_rotorcraft_per_min"], o["mixed_min"], o["mixed_unmatched_per_min"],
            o["mixed_false_rotorcraft_per_min"], o["clear_detected"], o["clear"],
            o["clear_hover_detected"], o["clear_hover"]))
    for radar, o in out.items():
        for m in o["missed"]:
            print("missed clear %s: %s" % (radar, m))
        for f in o["false_examples"]:
            print("false %s: %s" % (radar, f))


if __name__ == "__main__":
    args = [a for a in sys.argv[1:] if a != "--json"]
    main(args, "--json" in sys.argv)
