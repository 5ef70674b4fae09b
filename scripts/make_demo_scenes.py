#!/usr/bin/env python3
"""Writes the labelled demo's scene files, labelled-demo/scenes/run-*.toml, reproducibly
(python stdlib only, fixed seed). Every scene is one run of the fictional Harrowmere Point
perimeter radar (see labelled-demo/README.md). Usage: scripts/make_demo_scenes.py [OUT_DIR]
"""
import math
import os
import random
import sys

C = 299_792_458.0
SITE = "Harrowmere Point coastal research station (fictional)"

# The three radar configurations. `cover` is the range interval the targets use.
RADARS = {
    "k24": dict(
        title="24 GHz FMCW perimeter sensor",
        table=dict(waveform="fmcw-beat", carrier_hz=24.0e9, samples_per_chirp=64,
                   chirp_interval_s=50e-6, sample_rate_hz=2.0e6, sweep_bandwidth_hz=100e6,
                   sweep_duration_s=32e-6, transmit_power_w=0.1, tx_gain_dbi=20.0,
                   rx_gain_dbi=20.0, noise_figure_db=8.0, losses_db=2.0, datatype="ci16_le",
                   phase_jitter_rad=0.002),
        duration=1.5, cover=(12.0, 88.0), runs=36, tip=(40.0, 62.0)),
    "k77": dict(
        title="77 GHz short-range FMCW sensor",
        table=dict(waveform="fmcw-beat", carrier_hz=77.0e9, samples_per_chirp=64,
                   chirp_interval_s=16e-6, sample_rate_hz=5.0e6, sweep_bandwidth_hz=250e6,
                   sweep_duration_s=12.8e-6, transmit_power_w=0.01, tx_gain_dbi=22.0,
                   rx_gain_dbi=22.0, noise_figure_db=10.0, losses_db=2.0, datatype="ci16_le"),
        duration=1.5, cover=(6.0, 35.0), runs=20, tip=(40.0, 62.0)),
    "x94": dict(
        title="X-band range-profile surveillance radar",
        table=dict(waveform="range-profile", carrier_hz=9.4e9, samples_per_chirp=64,
                   chirp_interval_s=100e-6, range_cell_m=3.0, range_start_m=30.0,
                   transmit_power_w=50.0, tx_gain_dbi=28.0, rx_gain_dbi=28.0,
                   noise_figure_db=4.0, losses_db=3.0, datatype="ci16_le"),
        duration=2.0, cover=(45.0, 210.0), runs=36, tip=(40.0, 78.0)),
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


def snr_db(radar, rcs_dbsm, r):
    """Per-sample SNR of the simulator's radar equation (Mahafza Eq. 1.56)."""
    t = radar["table"]
    lam = C / t["carrier_hz"]
    if t["waveform"] == "fmcw-beat":
        bn = t["sample_rate_hz"]
    else:
        bn = C / (2 * t["range_cell_m"])
    k = (t["transmit_power_w"] * 10 ** (t["tx_gain_dbi"] / 10) * 10 ** (t["rx_gain_dbi"] / 10)
         * lam ** 2 / ((4 * math.pi) ** 3 * 1.380649e-23 * 290.0
                       * 10 ** (t["noise_figure_db"] / 10) * 10 ** (t["losses_db"] / 10) * bn))
    return 10 * math.log10(k * 10 ** (rcs_dbsm / 10) / r ** 4)


def cell_m(radar):
    t = radar["table"]
    if t["waveform"] == "fmcw-beat":
        s = t["sweep_bandwidth_hz"] / t["sweep_duration_s"]
        return C * t["sample_rate_hz"] / (2 * s * t["samples_per_chirp"])
    return t["range_cell_m"]


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
        return repr(round(v, 6))
    return str(v)


def direction(rng, elev_max):
    az = rng.uniform(-math.pi / 3, math.pi / 3)
    el = rng.uniform(0.02, elev_max)
    return az, el


def point(r, az, el):
    return [r * math.cos(el) * math.cos(az), r * math.cos(el) * math.sin(az), r * math.sin(el)]


def motion(rng, kind, radar, r):
    """A motion of `kind` centred near range r, staying inside the coverage."""
    lo, hi = radar["cover"]
    dur = radar["duration"]
    az, el = direction(rng, 0.25)
    if kind == "hover":
        return dict(type="hover", position=point(r, az, el), sway_m=rng.uniform(0.03, 0.25),
                    sway_period_s=rng.uniform(2.0, 5.0),
                    drift_mps=[rng.uniform(-0.1, 0.1), rng.uniform(-0.1, 0.1), 0.0])
    speed = rng.uniform(2.0, 9.0)
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


def rotorcraft(rng, radar, oid, rotors, blades, mkind, r, faint):
    length = rng.uniform(0.06, 0.19) if rotors > 1 else rng.uniform(0.12, 0.19)
    tip = rng.uniform(*radar["tip"])
    rate = tip / (2 * math.pi * length)
    rate = min(max(rate, 45.0), 160.0)
    body = rng.uniform(-19.0, -8.0) - (20.0 if faint else 0.0)
    return dict(kind="rotorcraft", id=oid, rotors=rotors, blades=blades,
                arm_length_m=0.0 if rotors == 1 else round(rng.uniform(0.12, 0.45), 3),
                blade_length_m=round(length, 4), rotor_rate_hz=round(rate, 2),
                rotor_rate_spread=0.03, body_rcs_dbsm=round(body, 1),
                blade_rcs_dbsm=round(body - rng.uniform(3.0, 9.0), 1),
                yaw_deg=round(rng.uniform(0, 90), 1), motion=motion(rng, mkind, radar, r))


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
        want = rng.uniform(6.0, 14.0) if mass > 0.2 else rng.uniform(4.0, 9.0)
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
    """Vegetation, swaying masts and stationary returns; strengths kept below clipping
    (per-sample SNR <= 34 dB for patches and masts, <= 36 dB for fixed returns, so
    that a few of them together stay below ci16 full scale, 49.5 dB above the noise).
    Patches and masts keep clear of the targets' ranges (`busy`)."""
    lo, hi = radar["cover"]
    cell = cell_m(radar)
    margin = 3 * cell + 2.0
    out = []
    if run_kind == "clutter" or rng.random() < 0.6:
        r0 = draw_clear(rng, lo, hi, 6 * cell, busy, margin)
        rcs = rng.uniform(-25.0, 0.0)
        while snr_db(radar, rcs, r0) > 34.0:
            rcs -= 3.0
        out.append(dict(kind="vegetation", id="veg-%d" % n, range_min_m=round(r0, 2),
                        range_max_m=round(r0 + cell * rng.randint(3, 6), 2),
                        rcs_dbsm_per_cell=round(rcs, 1), wind_mph=round(rng.uniform(2.0, 35.0), 1)))
    if run_kind == "clutter" or rng.random() < 0.4:
        r = draw_clear(rng, lo, hi, 0.0, busy, margin)
        rcs = rng.uniform(-15.0, 5.0)
        while snr_db(radar, rcs, r) > 34.0:
            rcs -= 3.0
        az, el = direction(rng, 0.1)
        out.append(dict(kind="swaying", id="mast-%d" % n, position=point(r, az, el),
                        rcs_dbsm=round(rcs, 1), sway_m=round(rng.uniform(0.01, 0.08), 3),
                        period_s=round(rng.uniform(1.0, 4.0), 2)))
    for j in range(rng.randint(1, 2)):
        r = rng.uniform(lo, hi)
        rcs = rng.uniform(0.0, 20.0)
        while snr_db(radar, rcs, r) > 36.0:
            rcs -= 3.0
        az, el = direction(rng, 0.05)
        out.append(dict(kind="stationary", id="fixed-%d-%d" % (n, j), position=point(r, az, el),
                        rcs_dbsm=round(rcs, 1)))
    return out


def write_scene(path, name, radar_key, radar, desc, seed, objects, site=SITE,
                labels_complete=False):
    lines = ["# Generated by scripts/%s: do not edit by hand." % os.path.basename(sys.argv[0]),
             "# Format: labelled-demo/scenes/EXAMPLE.toml.", "",
             'name = "%s"' % name, "duration_s = %s" % fmt(radar["duration"]),
             "seed = %d" % seed, 'site = "%s"' % site,
             'description = "%s: %s"' % (radar["title"], desc)]
    if labels_complete:
        lines.append("labels_complete = true")
    lines += ["", "[radar]"]
    for k, v in radar["table"].items():
        lines.append("%s = %s" % (k, fmt(v)))
    for o in objects:
        lines += ["", "[[object]]"]
        for k, v in o.items():
            lines.append("%s = %s" % (k, fmt(v)))
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(
        os.path.dirname(os.path.abspath(__file__)), "..", "labelled-demo", "scenes")
    os.makedirs(out, exist_ok=True)
    for f in os.listdir(out):
        if f.startswith("run-") and f.endswith(".toml"):
            os.remove(os.path.join(out, f))
    rng = random.Random(20240611)
    count = 0
    for key, radar in RADARS.items():
        lo, hi = radar["cover"]
        plan = []
        for i in range(radar["runs"]):
            if i < radar["runs"] // 2:
                plan.append("rotorcraft")
            elif i < radar["runs"] // 2 + radar["runs"] // 4:
                plan.append("bird")
            elif i < radar["runs"] - 2:
                plan.append("mixed")
            else:
                plan.append("clutter")
        for i, kind in enumerate(plan):
            faint = i % 6 == 5
            mkind = MOTIONS[i % 4]
            objs, desc = [], []
            if kind in ("rotorcraft", "mixed"):
                rotors = ROTORS[(i + (i // 6)) % 6]
                blades = 3 if (i // 2) % 2 == 1 else 2
                r = rng.uniform(lo + 0.15 * (hi - lo), hi - 0.15 * (hi - lo))
                r_uav = r
                objs.append(rotorcraft(rng, radar, "uav-1", rotors, blades, mkind, r, faint))
                desc.append("%s %d-rotor %d-blade rotorcraft at %.0f m%s" % (
                    mkind, rotors, blades, r, " (faint)" if faint else ""))
            if kind in ("bird", "mixed"):
                spec = BIRDS[(i * 3 + count) % len(BIRDS)]
                r = rng.uniform(lo + 0.1 * (hi - lo), hi - 0.1 * (hi - lo))
                if kind == "mixed":
                    # Keep the bird well apart in range from the rotorcraft (the far end of
                    # the coverage), so each label's range window holds one target.
                    span = hi - lo
                    near = r_uav
                    r = (rng.uniform(hi - 0.2 * span, hi - 0.1 * span) if near < (lo + hi) / 2
                         else rng.uniform(lo + 0.1 * span, lo + 0.2 * span))
                bm = MOTIONS[(i + 1) % 4] if kind == "mixed" else mkind
                objs.append(bird(rng, radar, "bird-1", spec, bm, r, faint))
                desc.append("%s %s at %.0f m" % (bm, spec[0], r))
            busy = [range_span(o, radar["duration"]) for o in objs]
            objs += clutter(rng, radar, kind, i, busy)
            if kind == "clutter":
                desc.append("vegetation, mast and fixed clutter only")
            count += 1
            tag = {"rotorcraft": "uav", "bird": "bird", "mixed": "mixed", "clutter": "clutter"}[kind]
            name = "run-%s-%02d-%s" % (key, i, tag)
            write_scene(os.path.join(out, name + ".toml"), name, key, radar, "; ".join(desc),
                        1000 + count, objs)
    print("wrote %d scene files to %s" % (count, out))


if __name__ == "__main__":
    main()
