"""A real site's stationary background for scene generators (python stdlib only): discrete
strong scatterers that scintillate slowly, distributed ground clutter, and the radar's own
imperfections (common gain/phase drift, per-chirp phase jitter, FMCW leakage and DC
offset). Every figure is drawn from a wide range, so no detector can be tuned to one value.

Ranges (common practice, from memory unless noted):
- discrete scatterers (buildings, poles, fences, parked vehicles): 0.1-30 m^2, 3-8 a scene,
  amplitude scintillation 0.5-3 % rms, phase 2-20 mrad rms, band-limited to 0.5-5 Hz;
- ground: sigma0 -35 to -25 dB at low grazing (Billingsley 2002, ch. 2-3, from memory);
- radar: gain drift 0.2-1 % rms at 0.3-3 Hz, phase drift 0-10 mrad, phase jitter 0-3 mrad
  per chirp; FMCW leakage at 0.1-0.6 m, 10-30 dB over the noise per sample; DC offset
  0-20 dB per sample.
"""
import math

C = 299_792_458.0


def budget_k(t):
    """Range-independent radar-equation factor K (SNR per sample = K sigma / R^4), from the
    radar table (Mahafza Eq. 1.56)."""
    lam = C / t["carrier_hz"]
    if t["waveform"] == "fmcw-beat":
        bn = t["sample_rate_hz"]
    else:
        bn = C / (2 * t["range_cell_m"])
    return (t["transmit_power_w"] * 10 ** (t["tx_gain_dbi"] / 10) * 10 ** (t["rx_gain_dbi"] / 10)
            * lam ** 2 / ((4 * math.pi) ** 3 * 1.380649e-23 * 290.0
                          * 10 ** (t["noise_figure_db"] / 10) * 10 ** (t.get("losses_db", 0.0) / 10)
                          * bn))


def snr_db(t, rcs_dbsm, r):
    """Per-sample SNR of RCS rcs_dbsm at range r, dB."""
    return 10 * math.log10(budget_k(t) * 10 ** (rcs_dbsm / 10) / r ** 4)


def cell_m(t):
    if t["waveform"] == "fmcw-beat":
        s = t["sweep_bandwidth_hz"] / t["sweep_duration_s"]
        return C * t["sample_rate_hz"] / (2 * s * t["samples_per_chirp"])
    return t["range_cell_m"]


def coverage(t):
    """(first, last) range of the radar's cells, m."""
    if t["waveform"] == "fmcw-beat":
        return (0.0, cell_m(t) * (t["samples_per_chirp"] - 1))
    r0 = t.get("range_start_m", 0.0)
    return (r0, r0 + t["range_cell_m"] * (t["samples_per_chirp"] - 1))


def radar_imperfections(rng, t):
    """Keys to add to a radar table: drift, jitter, and on FMCW leakage and DC offset."""
    keys = dict(gain_drift=round(rng.uniform(0.002, 0.01), 4),
                phase_drift_rad=round(rng.uniform(0.0, 0.01), 4),
                drift_hz=round(math.exp(rng.uniform(math.log(0.3), math.log(3.0))), 3),
                drift_order=rng.randint(2, 4),
                phase_jitter_rad=round(rng.uniform(0.0, 0.003), 5))
    if t["waveform"] == "fmcw-beat":
        keys["leakage_snr_db"] = round(rng.uniform(10.0, 30.0), 1)
        keys["leakage_range_m"] = round(rng.uniform(0.1, 0.6), 3)
        keys["dc_offset_snr_db"] = round(rng.uniform(0.0, 20.0), 1)
    return keys


def peak_amplitude(t, objects, extra_db=()):
    """A bound on the largest sample magnitude the returns of `objects` reach, in noise
    units: the sum of the point returns' amplitudes (their tones can line up), three
    standard deviations of the ground cells' sum, and the amplitudes of `extra_db`
    (leakage, DC offset, per-sample SNRs in dB)."""
    total = sum(10 ** (db / 20) for db in extra_db)
    ground_power = 0.0
    for o in objects:
        if o["kind"] in ("stationary", "swaying"):
            r = math.sqrt(sum(x * x for x in o["position"]))
            total += 10 ** (snr_db(t, o["rcs_dbsm"], r) / 20)
        elif o["kind"] == "ground":
            cell = cell_m(t)
            lo, hi = coverage(t)
            r = max(o["range_min_m"], lo, cell)
            while r <= min(o["range_max_m"], hi):
                sigma = 10 ** (o["sigma0_db"] / 10) * r * math.radians(
                    o.get("azimuth_beamwidth_deg", 10.0)) * cell
                ground_power += budget_k(t) * sigma / r ** 4
                r += cell
        elif o["kind"] == "vegetation":
            total += 3 * 10 ** (snr_db(t, o["rcs_dbsm_per_cell"], max(o["range_min_m"], 1.0)) / 20)
    return total + 3.0 * math.sqrt(ground_power) + 4.0


def noise_lsb_for(t, objects, extra_db=()):
    """ci16 noise rms per part, LSB, so that the returns' peak stays under half of full
    scale (at most 77.2, the default; at least 1.0: below that, quantisation would
    colour the noise)."""
    a = 2.0 * peak_amplitude(t, objects, extra_db)
    lsb = 32767.0 / (math.sqrt(2) * a)
    return round(max(1.0, min(77.2, lsb)), 2)


def site_clutter(rng, t, n, busy=(), keep_clear_m=None, scatterers=(3, 8),
                 ground=True, tag="site"):
    """Objects for a site's stationary background: `scatterers` discrete scintillating
    returns and a ground patch over most of the coverage. `busy` range intervals are kept
    `keep_clear_m` clear of scatterers (None: anywhere)."""
    lo, hi = coverage(t)
    lo = max(lo, 3.0 * cell_m(t), 2.0)
    out = []
    count = rng.randint(*scatterers)
    for j in range(count):
        for _ in range(200):
            r = rng.uniform(max(lo, 15.0), min(hi, 160.0)) if hi > 30 else rng.uniform(lo, hi)
            if keep_clear_m is None or all(r < a - keep_clear_m or r > b + keep_clear_m
                                           for a, b in busy):
                break
        rcs = rng.uniform(-10.0, 14.8)
        az = rng.uniform(-math.pi / 3, math.pi / 3)
        el = rng.uniform(0.0, 0.05)
        out.append(dict(kind="stationary", id="%s-%d-%d" % (tag, n, j),
                        position=[r * math.cos(el) * math.cos(az),
                                  r * math.cos(el) * math.sin(az), r * math.sin(el)],
                        rcs_dbsm=round(rcs, 1),
                        amplitude_scintillation=round(rng.uniform(0.005, 0.03), 4),
                        phase_scintillation_rad=round(rng.uniform(0.002, 0.02), 4),
                        scintillation_hz=round(math.exp(rng.uniform(math.log(0.5),
                                                                    math.log(5.0))), 3),
                        scintillation_order=rng.randint(2, 4)))
    if ground:
        g0 = lo + rng.uniform(0.0, 0.1) * (hi - lo)
        g1 = hi - rng.uniform(0.0, 0.2) * (hi - lo)
        out.append(dict(kind="ground", id="%s-ground-%d" % (tag, n),
                        range_min_m=round(g0, 2), range_max_m=round(g1, 2),
                        sigma0_db=round(rng.uniform(-35.0, -25.0), 1),
                        azimuth_beamwidth_deg=round(rng.uniform(4.0, 20.0), 1),
                        amplitude_scintillation=round(rng.uniform(0.005, 0.03), 4),
                        phase_scintillation_rad=round(rng.uniform(0.002, 0.02), 4),
                        scintillation_hz=round(math.exp(rng.uniform(math.log(0.5),
                                                                    math.log(5.0))), 3),
                        scintillation_order=rng.randint(2, 4)))
    return out
