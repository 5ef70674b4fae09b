#!/usr/bin/env python3
"""Writes the detection benchmark's scenes (python stdlib only, fixed seed): for each of
three radars that the demo and the built-in model do not use (an X-band FMCW, a K-band
FMCW and an X-band range-profile radar), background-only runs (a real site's stationary
clutter, no target) and mixed runs (rotorcraft, birds, vegetation over the same kind of
site, some hovering rotorcraft within a cell of a strong building). Every run has the site
background of scripts/site_clutter.py. Scores: scripts/detection_bench.sh.

Usage: scripts/make_bench_scenes.py OUT_DIR [--background-s S] [--runs K]
"""
import argparse
import math
import os
import random
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import make_demo_scenes as demo  # noqa: E402
import site_clutter as site  # noqa: E402

SITE = "Fenwold test range (fictional)"

RADARS = {
    # X-band FMCW: 256 samples a chirp at 4 kHz (1.02 M complex samples/s), 1 m cells
    "bxf": dict(title="X-band FMCW perimeter radar",
                table=dict(waveform="fmcw-beat", carrier_hz=9.6e9, samples_per_chirp=256,
                           chirp_interval_s=250e-6, sample_rate_hz=1.28e6,
                           sweep_bandwidth_hz=150e6, sweep_duration_s=200e-6,
                           transmit_power_w=0.5, tx_gain_dbi=24.0, rx_gain_dbi=24.0,
                           noise_figure_db=6.0, losses_db=2.0, datatype="ci16_le"),
                cover=(15.0, 200.0), tip=(40.0, 75.0)),
    # K-band FMCW: 128 samples at 10 kHz, 0.75 m cells
    "bkf": dict(title="K-band FMCW sensor",
                table=dict(waveform="fmcw-beat", carrier_hz=24.15e9, samples_per_chirp=128,
                           chirp_interval_s=100e-6, sample_rate_hz=2.0e6,
                           sweep_bandwidth_hz=200e6, sweep_duration_s=64e-6,
                           transmit_power_w=0.1, tx_gain_dbi=22.0, rx_gain_dbi=22.0,
                           noise_figure_db=9.0, losses_db=2.0, datatype="ci16_le"),
                cover=(8.0, 85.0), tip=(40.0, 70.0)),
    # X-band range profiles: 128 cells of 2 m from 20 m at 5 kHz
    "bxr": dict(title="X-band range-profile radar",
                table=dict(waveform="range-profile", carrier_hz=9.2e9, samples_per_chirp=128,
                           chirp_interval_s=200e-6, range_cell_m=2.0, range_start_m=20.0,
                           transmit_power_w=20.0, tx_gain_dbi=26.0, rx_gain_dbi=26.0,
                           noise_figure_db=5.0, losses_db=3.0, datatype="ci16_le"),
                cover=(35.0, 260.0), tip=(40.0, 75.0)),
}


def finish_radar(rng, radar, objs):
    t = dict(radar["table"])
    t.update(site.radar_imperfections(rng, t))
    extra = [t[k] for k in ("leakage_snr_db", "dc_offset_snr_db") if k in t]
    t["noise_rms_lsb"] = site.noise_lsb_for(t, objs, extra)
    return dict(radar, table=t)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("out")
    ap.add_argument("--background-s", type=float, default=10.0)
    ap.add_argument("--runs", type=int, default=12, help="mixed runs per radar")
    ap.add_argument("--background-runs", type=int, default=4)
    ap.add_argument("--seed", type=int, default=8080)
    a = ap.parse_args()
    os.makedirs(a.out, exist_ok=True)
    rng = random.Random(a.seed)
    count = 0
    for key, radar in RADARS.items():
        for i in range(a.background_runs):
            objs = site.site_clutter(rng, radar["table"], i)
            r = finish_radar(rng, dict(radar, duration=a.background_s), objs)
            name = "bench-%s-%02d-background" % (key, i)
            demo.write_scene(os.path.join(a.out, name + ".toml"), name, key, r,
                             "site background only", 5000 + count, objs, site=SITE,
                             labels_complete=True)
            count += 1
        lo, hi = radar["cover"]
        for i in range(a.runs):
            dur = 3.0
            rr = dict(radar, duration=dur)
            objs, busy = [], []
            mkind = demo.MOTIONS[i % 4]
            rotors = demo.ROTORS[(i * 5) % 6]
            blades = 3 if i % 3 == 2 else 2
            r = rng.uniform(lo + 0.1 * (hi - lo), hi - 0.1 * (hi - lo))
            faint = i % 4 == 3
            uav = demo.rotorcraft(rng, rr, "uav-1", rotors, blades, mkind, r, faint)
            objs.append(uav)
            busy.append(demo.range_span(uav, dur))
            b = demo.BIRDS[(i * 3) % len(demo.BIRDS)]
            far = hi - 0.15 * (hi - lo) if r < (lo + hi) / 2 else lo + 0.15 * (hi - lo)
            bd = demo.bird(rng, rr, "bird-1", b, demo.MOTIONS[(i + 1) % 4], far, faint)
            objs.append(bd)
            busy.append(demo.range_span(bd, dur))
            objs += demo.clutter(rng, rr, "mixed", i, busy)
            background = site.site_clutter(rng, radar["table"], i, busy, keep_clear_m=4.0)
            if mkind == "hover" and i % 2 == 0:
                # a strong building right behind the hovering rotorcraft (within one cell)
                p = uav["motion"]["position"]
                rh = math.sqrt(sum(x * x for x in p))
                rb = rh + rng.uniform(-1.0, 1.0) * site.cell_m(radar["table"])
                u = [x / rh for x in p]
                background.append(dict(kind="stationary", id="building-%d" % i,
                                       position=[u[0] * rb, u[1] * rb, 0.0],
                                       rcs_dbsm=10.0, amplitude_scintillation=0.02,
                                       phase_scintillation_rad=0.01, scintillation_hz=2.0))
            objs += background
            rr = finish_radar(rng, rr, objs)
            name = "bench-%s-%02d-mixed" % (key, i)
            demo.write_scene(os.path.join(a.out, name + ".toml"), name, key, rr,
                             "%s %d-rotor rotorcraft and a %s over the site" % (mkind, rotors, b[0]),
                             6000 + count, objs, site=SITE, labels_complete=True)
            count += 1
    print("wrote %d scene files to %s" % (count, a.out))


if __name__ == "__main__":
    main()
