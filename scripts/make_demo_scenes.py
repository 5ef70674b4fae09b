#!/usr/bin/env python3
"""Writes the labelled demo's scene files, labelled-demo/scenes/run-*.toml, reproducibly
(python stdlib only, fixed seed). The fictional Harrowmere Point station and its visitors
(see labelled-demo/README.md) watch the perimeter with a family of radars: carriers 9-79
GHz, chirp rates 2-30 kHz, FMCW and range-profile waveforms, 64-512 samples a chirp. Every
run is over a real site's stationary background (scripts/site_clutter.py) unless it is one
of the clean-site runs, and says rotorsift:labels_complete (every target that moves or
hovers is annotated). The `hold-out` radars never train the built-in model: their runs
are the shipped recordings and the unseen-radar check.

Usage: scripts/make_demo_scenes.py [OUT_DIR]
"""
import math
import os
import random
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import site_clutter as site  # noqa: E402

C = 299_792_458.0
SITE = "Harrowmere Point coastal research station (fictional)"


def fmcw(carrier, n, t_s, cell_m):
    """An FMCW table: ramp 80 % of the chirp interval, fs = N / ramp, B = c / (2 cell)."""
    ramp = 0.8 * t_s
    return dict(waveform="fmcw-beat", carrier_hz=carrier, samples_per_chirp=n,
                chirp_interval_s=t_s, sample_rate_hz=round(n / ramp, 3),
                sweep_bandwidth_hz=round(C / (2 * cell_m), 1), sweep_duration_s=ramp)


def profile(carrier, n, t_s, cell_m, start_m):
    return dict(waveform="range-profile", carrier_hz=carrier, samples_per_chirp=n,
                chirp_interval_s=t_s, range_cell_m=cell_m, range_start_m=start_m)


# The radar family. `cover` is the range interval targets use; `snr` the integrated body
# SNR (dB, range FFT x 256-chirp CPI) of a -15 dBsm rotorcraft at 70 % of `cover`, which
# sets the transmit power. `role`: "train" radars make the built-in model, "hold-out"
# radars are kept out of it.
RADARS = {
    "k24": dict(title="24 GHz FMCW perimeter sensor", t=fmcw(24.0e9, 64, 50e-6, 1.5),
                gain=20.0, nf=8.0, cover=(12.0, 88.0), snr=34.0, role="train"),
    "k77": dict(title="77 GHz short-range FMCW sensor", t=fmcw(77.0e9, 128, 33e-6, 0.6),
                gain=22.0, nf=10.0, cover=(6.0, 70.0), snr=32.0, role="train"),
    "x94": dict(title="X-band range-profile surveillance radar",
                t=profile(9.4e9, 64, 100e-6, 3.0, 30.0),
                gain=28.0, nf=4.0, cover=(45.0, 210.0), snr=32.0, role="train"),
    "x10": dict(title="X-band FMCW long-dwell radar", t=fmcw(10.2e9, 512, 400e-6, 0.5),
                gain=24.0, nf=6.0, cover=(15.0, 240.0), snr=34.0, role="train"),
    "u16": dict(title="Ku-band FMCW tower radar", t=fmcw(16.2e9, 256, 100e-6, 0.75),
                gain=24.0, nf=6.0, cover=(12.0, 180.0), snr=33.0, role="train"),
    "a35": dict(title="Ka-band range-profile radar", t=profile(35.0e9, 128, 66.7e-6, 1.5, 15.0),
                gain=30.0, nf=7.0, cover=(25.0, 200.0), snr=32.0, role="train"),
    "w79": dict(title="79 GHz imaging FMCW sensor", t=fmcw(79.0e9, 256, 64e-6, 0.25),
                gain=24.0, nf=11.0, cover=(5.0, 60.0), snr=32.0, role="train"),
    "x90": dict(title="X-band low-PRF range-profile radar",
                t=profile(9.0e9, 256, 500e-6, 1.5, 20.0),
                gain=30.0, nf=4.0, cover=(30.0, 380.0), snr=34.0, role="train"),
    "k24b": dict(title="24 GHz FMCW low-rate sensor", t=fmcw(24.1e9, 128, 150e-6, 1.0),
                 gain=20.0, nf=8.0, cover=(10.0, 120.0), snr=33.0, role="train"),
    "a35f": dict(title="Ka-band FMCW sensor", t=fmcw(35.5e9, 128, 40e-6, 0.75),
                 gain=25.0, nf=8.0, cover=(8.0, 90.0), snr=32.0, role="train"),
    # kept out of the built-in model
    "h13": dict(title="visiting Ku-band FMCW radar", t=fmcw(13.5e9, 160, 125e-6, 0.9),
                gain=23.0, nf=6.0, cover=(12.0, 135.0), snr=33.0, role="hold-out"),
    "h15": dict(title="visiting 15 GHz range-profile radar",
                t=profile(15.0e9, 96, 80e-6, 2.5, 20.0),
                gain=27.0, nf=5.0, cover=(30.0, 250.0), snr=32.0, role="hold-out"),
}

ROTORS = [1, 2, 3, 4, 6, 8]
MOTIONS = ["hover", "crossing", "approaching", "receding"]
BIRDS = [  # name, mass kg, span m, body RCS dBsm, glide fraction, give wingbeat?
    ("finch", 0.025, 0.24, -34.0, 0.0, False),
    ("thrush", 0.08, 0.36, -30.0, 0.0, True),
    ("pigeon", 0.35, 0.65, -25.0, 0.1, False),
    ("crow", 0.5, 0.9, -23.0, 0.2, True),
    ("gull", 0.9, 1.3, -21.0, 0.5, False),
    ("heron", 1.6, 1.75, -18.0, 0.4, True),
    ("tern", 0.12, 0.8, -28.0, 0.3, False),
]


def table_of(key, radar):
    """The radar table with the transmit power set by the radar's SNR goal."""
    t = dict(radar["t"])
    t.update(tx_gain_dbi=radar["gain"], rx_gain_dbi=radar["gain"],
             noise_figure_db=radar["nf"], losses_db=2.0, datatype="ci16_le")
    lo, hi = radar["cover"]
    r = lo + 0.7 * (hi - lo)
    gain = 10 * math.log10(256 * (t["samples_per_chirp"] if t["waveform"] == "fmcw-beat" else 1))
    t["transmit_power_w"] = 1.0
    need = radar["snr"] - (site.snr_db(t, -15.0, r) + gain)
    p = 10 ** (need / 10)
    t["transmit_power_w"] = float("%.2g" % min(max(p, 1e-3), 200.0))
    return t


def cell_m(radar):
    return site.cell_m(radar["table"])


def snr_db(radar, rcs_dbsm, r):
    return site.snr_db(radar["table"], rcs_dbsm, r)


def fmt(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return '"%s"' % v
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(fmt(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join("%s = %s" % (k, fmt(x)) for k, x in v.items()) + " }"
    if isinstance(v, float):
        return repr(float("%.10g" % v)) if abs(v) < 1e-3 else repr(round(v, 6))
    return str(v)


def direction(rng, elev_max):
    az = rng.uniform(-math.pi / 3, math.pi / 3)
    el = rng.uniform(0.02, elev_max)
    return az, el


def point(r, az, el):
    return [r * math.cos(el) * math.cos(az), r * math.cos(el) * math.sin(az), r * math.sin(el)]


def motion(rng, kind, radar, r, speed=None):
    """A motion of `kind` centred near range r, staying inside the coverage."""
    lo, hi = radar["cover"]
    dur = radar["duration"]
    az, el = direction(rng, 0.25)
    if kind == "hover":
        return dict(type="hover", position=point(r, az, el), sway_m=rng.uniform(0.03, 0.25),
                    sway_period_s=rng.uniform(2.0, 5.0),
                    drift_mps=[rng.uniform(-0.1, 0.1), rng.uniform(-0.1, 0.1), 0.0])
    speed = speed if speed is not None else rng.uniform(2.0, 9.0)
    if kind == "crossing":
        p = point(r, az, el)
        d = [-math.sin(az), math.cos(az), 0.0]
        s = speed * rng.choice([-1, 1])
        start = [p[i] - d[i] * s * dur / 2 for i in range(3)]
        return dict(type="linear", start=start, velocity=[d[i] * s for i in range(3)])
    u = [math.cos(el) * math.cos(az), math.cos(el) * math.sin(az), math.sin(el)]
    speed = min(speed, 0.8 * (hi - lo) / dur)
    if kind == "approaching":
        r0 = min(r + speed * dur / 2, hi)
        return dict(type="linear", start=[u[i] * r0 for i in range(3)],
                    velocity=[-u[i] * speed for i in range(3)])
    r0 = max(r - speed * dur / 2, lo)
    return dict(type="linear", start=[u[i] * r0 for i in range(3)],
                velocity=[u[i] * speed for i in range(3)])


def rotorcraft(rng, radar, oid, rotors, blades, mkind, r, faint, speed=None):
    length = rng.uniform(0.06, 0.19) if rotors > 1 else rng.uniform(0.12, 0.30)
    tip = rng.uniform(*radar.get("tip", (40.0, 110.0)))
    rate = tip / (2 * math.pi * length)
    rate = min(max(rate, 40.0), 170.0)
    body = rng.uniform(-19.0, -8.0) - (20.0 if faint else 0.0)
    return dict(kind="rotorcraft", id=oid, rotors=rotors, blades=blades,
                arm_length_m=0.0 if rotors == 1 else round(rng.uniform(0.12, 0.45), 3),
                blade_length_m=round(length, 4), rotor_rate_hz=round(rate, 2),
                rotor_rate_spread=0.03, body_rcs_dbsm=round(body, 1),
                blade_rcs_dbsm=round(body - rng.uniform(3.0, 9.0), 1),
                yaw_deg=round(rng.uniform(0, 90), 1),
                motion=motion(rng, mkind, radar, r, speed))


def bird(rng, radar, oid, spec, mkind, r, faint):
    name, mass, span, rcs, glide, give_wb = spec
    o = dict(kind="bird", id=oid, wingspan_m=span, mass_kg=mass,
             body_rcs_dbsm=rcs + rng.uniform(-2, 2) - (15.0 if faint else 0.0),
             glide_fraction=glide, glide_length_s=rng.uniform(0.4, 1.2))
    if give_wb:
        # Pennycuick (1996) with S = b^2/6.5, then a +/-10% individual variation
        s = span * span / 6.5
        f = mass ** 0.375 * 9.80665 ** 0.5 * span ** (-23 / 24) * s ** (-1 / 3) * 1.225 ** -0.375
        o["wingbeat_hz"] = round(f * rng.uniform(0.9, 1.1), 2)
    o["motion"] = motion(rng, "hover" if mkind == "hover" and mass < 0.3 else
                         ("crossing" if mkind == "hover" else mkind), radar, r)
    m = o["motion"]
    if m["type"] == "linear":
        # birds fly at their own speed; keep the path's midpoint where motion() put it
        dur = radar["duration"]
        v = m["velocity"]
        sp = math.sqrt(sum(x * x for x in v))
        want = rng.uniform(6.0, 16.0) if mass > 0.2 else rng.uniform(4.0, 10.0)
        mid = [m["start"][i] + v[i] * dur / 2 for i in range(3)]
        m["velocity"] = [x * want / sp for x in v]
        m["start"] = [mid[i] - m["velocity"][i] * dur / 2 for i in range(3)]
        # keep the whole path inside the coverage: slow down (the midpoint stays)
        lo, hi = radar["cover"]
        norm = lambda p: math.sqrt(sum(x * x for x in p))
        for _ in range(40):
            end = [m["start"][i] + m["velocity"][i] * dur for i in range(3)]
            if lo <= min(norm(m["start"]), norm(end)) and max(norm(m["start"]), norm(end)) <= hi:
                break
            m["velocity"] = [x * 0.8 for x in m["velocity"]]
            m["start"] = [mid[i] - m["velocity"][i] * dur / 2 for i in range(3)]
    return o


def range_span(obj, dur):
    """The range interval a target's motion covers during the run, m."""
    m = obj["motion"]
    norm = lambda p: math.sqrt(sum(x * x for x in p))
    if m["type"] == "hover":
        r = norm(m["position"])
        return (r - 1.0, r + 1.0)
    rs = [norm([m["start"][i] + m["velocity"][i] * t for i in range(3)])
          for t in (0.0, dur / 4, dur / 2, 3 * dur / 4, dur)]
    return (min(rs), max(rs))


def clear_of(r0, r1, busy, margin):
    """True when [r0, r1] keeps `margin` metres from every busy interval."""
    return all(r1 < a - margin or r0 > b + margin for a, b in busy)


def draw_clear(rng, lo, hi, width, busy, margin):
    """A start range in [lo, hi - width] whose interval is clear of the busy ones (so each
    label's range window holds one thing); falls back to any range after 200 tries."""
    for _ in range(200):
        r0 = rng.uniform(lo, hi - width)
        if clear_of(r0, r0 + width, busy, margin):
            return r0
    return rng.uniform(lo, hi - width)


def clutter(rng, radar, run_kind, n, busy=()):
    """Annotated clutter that moves: a vegetation patch (Billingsley's wind model) and a
    swaying mast, kept clear of the targets' ranges (`busy`)."""
    lo, hi = radar["cover"]
    cell = cell_m(radar)
    margin = 3 * cell + 2.0
    out = []
    if run_kind == "clutter" or rng.random() < 0.6:
        r0 = draw_clear(rng, lo, hi, 6 * cell, busy, margin)
        rcs = rng.uniform(-25.0, 0.0)
        while snr_db(radar, rcs, r0) > 45.0:
            rcs -= 3.0
        out.append(dict(kind="vegetation", id="veg-%d" % n, range_min_m=round(r0, 2),
                        range_max_m=round(r0 + cell * rng.randint(3, 6), 2),
                        rcs_dbsm_per_cell=round(rcs, 1), wind_mph=round(rng.uniform(2.0, 40.0), 1)))
    if run_kind == "clutter" or rng.random() < 0.4:
        r = draw_clear(rng, lo, hi, 0.0, busy, margin)
        rcs = rng.uniform(-15.0, 5.0)
        while snr_db(radar, rcs, r) > 45.0:
            rcs -= 3.0
        az, el = direction(rng, 0.1)
        out.append(dict(kind="swaying", id="mast-%d" % n, position=point(r, az, el),
                        rcs_dbsm=round(rcs, 1), sway_m=round(rng.uniform(0.01, 0.08), 3),
                        period_s=round(rng.uniform(1.0, 4.0), 2)))
    return out


def finish_table(rng, radar, objs, clean):
    """The run's radar table: the radar's own, its imperfections (none on a clean site
    but a little jitter), and the ci16 scale that keeps every return under full scale."""
    t = dict(radar["table"])
    if clean:
        t["phase_jitter_rad"] = round(rng.uniform(0.0, 0.002), 5)
    else:
        t.update(site.radar_imperfections(rng, t))
    extra = [t[k] for k in ("leakage_snr_db", "dc_offset_snr_db") if k in t]
    t["noise_rms_lsb"] = site.noise_lsb_for(t, objs, extra)
    return t


def write_scene(path, name, radar_key, radar, desc, seed, objects, site=SITE,
                labels_complete=True, table=None):
    lines = ["# Generated by scripts/%s: do not edit by hand." % os.path.basename(sys.argv[0]),
             "# Format: labelled-demo/scenes/EXAMPLE.toml.", "",
             'name = "%s"' % name, "duration_s = %s" % fmt(radar["duration"]),
             "seed = %d" % seed, 'site = "%s"' % site,
             'description = "%s: %s"' % (radar["title"], desc)]
    if labels_complete:
        lines.append("labels_complete = true")
    lines += ["", "[radar]"]
    for k, v in (table or radar["table"]).items():
        lines.append("%s = %s" % (k, fmt(v)))
    for o in objects:
        lines += ["", "[[object]]"]
        for k, v in o.items():
            lines.append("%s = %s" % (k, fmt(v)))
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")


# What each radar's runs hold, in order; `faint` every fifth run.
PLAN = ["rotorcraft", "rotorcraft", "rotorcraft", "rotorcraft", "rotorcraft", "rotorcraft",
        "bird", "bird", "bird", "mixed", "mixed", "clutter", "background", "background"]
HOLD_OUT_PLAN = ["mixed", "rotorcraft", "mixed", "background", "bird", "rotorcraft"]
# A second batch of training runs per training radar (numbered on from PLAN, drawn from its
# own seed so the first batch and the hold-out runs stay as they were): every motion of
# birds alone and beside a rotorcraft (crossing birds, whose radial velocity stays near
# zero, were rare in the first batch), more rotorcraft motions, clutter and background,
# each run at its own sensitivity.
MORE_PLAN = ["bird", "bird", "bird", "bird", "mixed", "mixed", "mixed", "mixed",
             "rotorcraft", "rotorcraft", "rotorcraft", "rotorcraft", "clutter", "background"]


def make_run(rng, key, radar, i, kind, count):
    """One run's objects and description."""
    lo, hi = radar["cover"]
    faint = i % 5 == 4
    mkind = MOTIONS[i % 4]
    objs, desc, busy = [], [], []
    near_building = False
    if kind in ("rotorcraft", "mixed"):
        rotors = ROTORS[(i + count) % 6]
        blades = 3 if (i // 2) % 2 == 1 else 2
        r = rng.uniform(lo + 0.15 * (hi - lo), hi - 0.15 * (hi - lo))
        fast = mkind != "hover" and i % 3 == 2
        speed = rng.uniform(12.0, 22.0) if fast else None
        uav = rotorcraft(rng, radar, "uav-1", rotors, blades, mkind, r, faint, speed)
        objs.append(uav)
        busy.append(range_span(uav, radar["duration"]))
        near_building = mkind == "hover" and rng.random() < 0.5
        desc.append("%s%s %d-rotor %d-blade rotorcraft at %.0f m%s%s" % (
            "fast " if fast else "", mkind, rotors, blades, r, " (faint)" if faint else "",
            " before a building" if near_building else ""))
    if kind in ("bird", "mixed"):
        spec = BIRDS[(i * 3 + count) % len(BIRDS)]
        r = rng.uniform(lo + 0.1 * (hi - lo), hi - 0.1 * (hi - lo))
        if kind == "mixed":
            span = hi - lo
            near = busy[0][0]
            r = (rng.uniform(hi - 0.2 * span, hi - 0.1 * span) if near < (lo + hi) / 2
                 else rng.uniform(lo + 0.1 * span, lo + 0.2 * span))
        bm = MOTIONS[(i + 1) % 4] if kind == "mixed" else mkind
        b = bird(rng, radar, "bird-1", spec, bm, r, faint)
        objs.append(b)
        busy.append(range_span(b, radar["duration"]))
        desc.append("%s %s at %.0f m" % (bm, spec[0], r))
    if kind != "background":
        objs += clutter(rng, radar, kind, i, busy)
    clean = kind != "background" and rng.random() < 0.15
    if not clean:
        objs += site.site_clutter(rng, radar["table"], i, busy, keep_clear_m=3.0)
    else:
        desc.append("clean site")
    if near_building:
        # a strong building right behind the hovering rotorcraft (within one cell)
        p = objs[0]["motion"]["position"]
        rh = math.sqrt(sum(x * x for x in p))
        rb = rh + rng.uniform(-1.0, 1.0) * cell_m(radar)
        u = [x / rh for x in p]
        objs.append(dict(kind="stationary", id="building-%d" % i,
                         position=[u[0] * rb, u[1] * rb, 0.0],
                         rcs_dbsm=round(rng.uniform(5.0, 14.0), 1),
                         amplitude_scintillation=round(rng.uniform(0.005, 0.03), 4),
                         phase_scintillation_rad=round(rng.uniform(0.002, 0.02), 4),
                         scintillation_hz=round(rng.uniform(0.5, 5.0), 2),
                         scintillation_order=rng.randint(2, 4)))
    if kind == "clutter":
        desc.append("vegetation, mast and the site's clutter only")
    if kind == "background":
        desc.append("the site's stationary background only")
    return objs, desc, clean


TAGS = {"rotorcraft": "uav", "bird": "bird", "mixed": "mixed", "clutter": "clutter",
        "background": "background"}


def emit_run(out, rng, key, radar, i, kind, count, prefix, short):
    """Draws run i of `kind` on `radar` (`short` s long, background runs twice that) and
    writes its scene file."""
    radar["duration"] = 2 * short if kind == "background" else short
    objs, desc, clean = make_run(rng, key, radar, i, kind, count)
    table = finish_table(rng, radar, objs, clean)
    name = "%s-%s-%02d-%s" % (prefix, key, i, TAGS[kind])
    write_scene(os.path.join(out, name + ".toml"), name, key, radar, "; ".join(desc),
                1000 + count + 1, objs, table=table)


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(
        os.path.dirname(os.path.abspath(__file__)), "..", "labelled-demo", "scenes")
    os.makedirs(out, exist_ok=True)
    for f in os.listdir(out):
        if (f.startswith("run-") or f.startswith("holdout-")) and f.endswith(".toml"):
            os.remove(os.path.join(out, f))
    rng = random.Random(20261202)
    count = 0
    for key, radar in RADARS.items():
        radar = dict(radar)
        radar["table"] = table_of(key, radar)
        train = radar["role"] == "train"
        for i, kind in enumerate(PLAN if train else HOLD_OUT_PLAN):
            # hold-out runs are 1.5 s: they are the shipped recordings (under 8 MiB)
            emit_run(out, rng, key, radar, i, kind, count, "run" if train else "holdout",
                     2.0 if train else 1.5)
            count += 1
    rng = random.Random(20261204)
    for key, radar in RADARS.items():
        if radar["role"] != "train":
            continue
        radar = dict(radar)
        base_snr = radar["snr"]
        for j, kind in enumerate(MORE_PLAN):
            # the sensitivity varies run by run, -4 to +26 dB about the radar's own: real
            # radars and ranges span far more than one family's design point, and a near
            # bird on a sensitive radar is 30-40 dB stronger than any bird of the first batch
            radar["snr"] = base_snr + rng.uniform(-4.0, 26.0)
            radar["table"] = table_of(key, radar)
            emit_run(out, rng, key, radar, len(PLAN) + j, kind, count, "run", 2.0)
            count += 1
    print("wrote %d scene files to %s" % (count, out))


if __name__ == "__main__":
    main()
