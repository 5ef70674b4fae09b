#!/usr/bin/env python3
"""Per-radar classification figures of `rotorsift classify --format json` against the
recordings' labels: the project's classification benchmark table.

Usage: python3 scripts/classification_bench.py NAME=labels.json[,more.json] [NAME=...] [--json]

Each NAME (say "site" or "builtin") is one way of labelling the same held-out recordings,
from one or more `classify` outputs (comma-separated, pooled).
Recordings are grouped by radar: the second '-' field of the name (bench-RADAR-NN-kind).
Targets, their tracks and their predicted class as scripts/classification_report.py
(duration-weighted mean of the matching tracks' probabilities); "clear" as
scripts/detection_report.py. Per radar and NAME:
- clear rotorcraft recall, clear hovering rotorcraft recall: share of the clear
  rotorcraft labelled rotorcraft (a target no track matches counts as missed);
- clear birds labelled rotorcraft: share of the clear birds;
- clear accuracy: of the clear birds and rotorcraft and the clutter targets that some
  track matches, the share given their own class (as `rotorsift evaluate` scores: a
  clutter target no track matches raised no alarm, which is right, and a missed clear
  bird or rotorcraft already counts against the recalls);
- blade-flash rate within 10 %: of the clear rotorcraft whose tracks report a rate, the
  share whose longest track's rate is within 10 % of the truth's blade_flash_hz;
- all rotorcraft recall: every rotorcraft annotation, any SNR;
- detection against SNR: the share of rotorcraft detected per 3 dB bin of the truth's
  blade SNR (hovering) or body SNR (moving), and the lowest bin edge from which every
  bin reaches 0.9 ("snr90_db").
Standard library only.
"""
import json
import sys
from collections import defaultdict

sys.path.insert(0, __file__.rsplit("/", 1)[0])
import classification_report  # noqa: E402
from detection_bench import radar_of  # noqa: E402


def targets(doc):
    for r in classification_report.targets(doc):
        name = r["rec"].replace(".sigmf-meta", "")
        yield dict(r, radar=radar_of(name), key=(name, r["id"]))


def share(xs, f):
    return round(sum(1 for x in xs if f(x)) / len(xs), 3) if xs else None


def figures(rows):
    rot = [r for r in rows if r["label"] == "rotorcraft"]
    crot = [r for r in rot if r["clear"]]
    chov = [r for r in crot if r["hovering"]]
    cbird = [r for r in rows if r["label"] == "bird" and r["clear"]]
    cl = [r for r in rows if r["clear"] is not False and r["detected"]]
    rated = [r for r in crot if r["rate"] and r["true_rate"]]
    bins = defaultdict(list)
    for r in rot:
        if r["snr"] is not None:
            bins[int(r["snr"] // 3) * 3].append(r["detected"])
    curve = {b: round(sum(v) / len(v), 3) for b, v in sorted(bins.items())}
    snr90 = None
    for b in sorted(curve, reverse=True):
        if curve[b] >= 0.9:
            snr90 = b
        else:
            break
    return dict(
        clear_rotorcraft_recall=share(crot, lambda r: r["pred"] == "rotorcraft"),
        clear_rotorcraft=len(crot),
        clear_hover_recall=share(chov, lambda r: r["pred"] == "rotorcraft"),
        clear_hover=len(chov),
        clear_birds_as_rotorcraft=share(cbird, lambda r: r["pred"] == "rotorcraft"),
        clear_birds=len(cbird),
        clear_accuracy=share(cl, lambda r: r["pred"] == r["label"]),
        clear_targets=len(cl),
        rate_within_10pct=share(rated, lambda r: abs(r["rate"] - r["true_rate"]) <= 0.1 * r["true_rate"]),
        rated=len(rated),
        all_rotorcraft_recall=share(rot, lambda r: r["pred"] == "rotorcraft"),
        rotorcraft=len(rot),
        snr90_db=snr90,
        detection_by_snr=curve,
        wrong_clear=["%s %s %s->%s" % (r["key"][0], r["key"][1], r["label"], r["pred"])
                     for r in cl if r["pred"] != r["label"]],
    )


ROWS = [("clear rotorcraft recall", "clear_rotorcraft_recall", "clear_rotorcraft"),
        ("clear hovering rotorcraft recall", "clear_hover_recall", "clear_hover"),
        ("clear birds labelled rotorcraft", "clear_birds_as_rotorcraft", "clear_birds"),
        ("clear accuracy", "clear_accuracy", "clear_targets"),
        ("blade-flash rate within 10 %", "rate_within_10pct", "rated"),
        ("all rotorcraft recall (any SNR)", "all_rotorcraft_recall", "rotorcraft"),
        ("rotorcraft detected >= 0.9 from (dB)", "snr90_db", None)]


def main(args, as_json):
    out = defaultdict(dict)
    for arg in args:
        name, paths = arg.split("=", 1)
        rows = [r for p in paths.split(",") for r in targets(json.load(open(p)))]
        for radar in sorted({r["radar"] for r in rows}):
            out[radar][name] = figures([r for r in rows if r["radar"] == radar])
        out["all"][name] = figures(rows)
    if as_json:
        print(json.dumps(out, indent=1))
        return
    names = [a.split("=", 1)[0] for a in args]
    for radar, per in out.items():
        print("## radar %s" % radar)
        print("| | " + " | ".join(names) + " |")
        print("| --- |" + " --- |" * len(names))
        for title, k, n in ROWS:
            cells = []
            for nm in names:
                f = per[nm]
                v = f[k]
                cells.append("-" if v is None else ("%s (%d)" % (v, f[n]) if n else str(v)))
            print("| %s | %s |" % (title, " | ".join(cells)))
        print()
    for radar, per in out.items():
        if radar == "all":
            continue
        for nm in names:
            for w in per[nm]["wrong_clear"]:
                print("wrong clear %s %s: %s" % (radar, nm, w))


if __name__ == "__main__":
    rest = [a for a in sys.argv[1:] if a != "--json"]
    main(rest, "--json" in sys.argv)
