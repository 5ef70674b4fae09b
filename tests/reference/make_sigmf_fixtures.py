#!/usr/bin/env python3
"""Writes small SigMF recordings with the reference `sigmf` Python package (PyPI), following
docs/recording-format.md alone, plus expected.json with the figures rotorsift must derive.
Run: pip install sigmf numpy; python3 tests/reference/make_sigmf_fixtures.py
The Rust test tests/recording_sigmf.rs reads the committed output; cargo test needs no Python.
"""
import json
import os

import numpy as np
import sigmf
from sigmf import SigMFFile  # noqa: F401

C = 299792458.0
OUT = os.path.join(os.path.dirname(__file__), "..", "fixtures", "sigmf")


def beat(n_chirps, n, fs, slope, T, fc, r0, v, amp=0.5):
    """signal convention of docs/recording-format.md for one point scatterer:
    s[m, n] = A exp(+j 2 pi (2 S R / c) n / fs) exp(+j 4 pi R(t_m) / lambda)."""
    lam = C / fc
    m = np.arange(n_chirps)[:, None]
    k = np.arange(n)[None, :]
    r = r0 + v * m * T
    return amp * np.exp(1j * 2 * np.pi * (2 * slope * r0 / C) * k / fs) * np.exp(1j * 4 * np.pi * r / lam)


def profile(n_chirps, n, cell, start, T, fc, r0, v, amp=0.5):
    lam = C / fc
    x = np.zeros((n_chirps, n), dtype=complex)
    kk = int(round((r0 - start) / cell))
    r = r0 + v * np.arange(n_chirps) * T
    x[:, kk] = amp * np.exp(1j * 4 * np.pi * r / lam)
    return x


def encode(x, datatype):
    x = x.reshape(-1)
    if datatype == "cf32_le":
        return x.astype(np.complex64)
    if datatype == "cf64_le":
        return x.astype(np.complex128)
    scale = 32767 if datatype == "ci16_le" else 127
    dt = np.int16 if datatype == "ci16_le" else np.int8
    inter = np.empty(2 * x.size, dtype=dt)
    inter[0::2] = np.round(x.real * scale)
    inter[1::2] = np.round(x.imag * scale)
    return inter


def write(name, datatype, glob, fc, channels, annotations):
    """channels: list of (chirps x N) complex arrays, interleaved per SigMF."""
    stacked = np.stack([c.reshape(-1) for c in channels], axis=1).reshape(-1)
    raw = encode(stacked, datatype)
    data_path = os.path.join(OUT, name + ".sigmf-data")
    raw.tofile(data_path)
    g = {
        sigmf.DATATYPE_KEY: datatype,
        sigmf.VERSION_KEY: sigmf.__specification__,
        sigmf.NUM_CHANNELS_KEY: len(channels),
        sigmf.EXTENSIONS_KEY: [{"name": "rotorsift", "version": "1.0.0", "optional": False}],
        sigmf.DESCRIPTION_KEY: "reference fixture written by the sigmf package",
    }
    g.update(glob)
    meta = SigMFFile(data_file=data_path, global_info=g)
    meta.add_capture(0, metadata={sigmf.FREQUENCY_KEY: fc})
    for a in annotations:
        start, count, md = a
        meta.add_annotation(start, count, metadata=md)
    meta.tofile(os.path.join(OUT, name + ".sigmf-meta"), overwrite=True)
    return meta


def main():
    os.makedirs(OUT, exist_ok=True)
    expected = {"sigmf_version": sigmf.__version__, "numpy_version": np.__version__, "recordings": {}}

    # 1. 24 GHz FMCW, cf32_le, one channel.
    fc, n, fs, B, Tc, T, M = 24.125e9, 32, 2.0e6, 200e6, 16e-6, 20e-6, 16
    S = B / Tc
    x = beat(M, n, fs, S, T, fc, r0=10.0, v=-3.0)
    write("fmcw24_cf32", "cf32_le", {
        sigmf.SAMPLE_RATE_KEY: fs, "rotorsift:waveform": "fmcw-beat",
        "rotorsift:samples_per_chirp": n, "rotorsift:chirp_interval_s": T,
        "rotorsift:sweep_bandwidth_hz": B, "rotorsift:sweep_duration_s": Tc,
        "rotorsift:site": "fixture bench",
    }, fc, [x], [
        (0, 8 * n, {sigmf.LABEL_KEY: "rotorcraft", "rotorsift:range_min_m": 9.0,
                    "rotorsift:range_max_m": 11.0, "rotorsift:target_id": "t1",
                    "rotorsift:truth": {"hovering": False, "radial_velocity_mps": -3.0}}),
        (8 * n, 8 * n, {sigmf.LABEL_KEY: "bird", "rotorsift:range_min_m": 20.0,
                        "rotorsift:range_max_m": 22.0}),
    ])
    lam = C / fc
    expected["recordings"]["fmcw24_cf32"] = dict(
        waveform="fmcw-beat", datatype="cf32_le", chirps=M, samples_per_chirp=n,
        wavelength_m=lam, range_cell_m=C * fs / (2 * S * n), max_range_m=n * C * fs / (2 * S * n),
        unambiguous_velocity_mps=lam / (4 * T), duration_s=M * T, labels={"bird": 1, "rotorcraft": 1},
        channel=0, first_samples=[[float(v.real), float(v.imag)] for v in x.reshape(-1)[:40].astype(np.complex64)],
        last_sample=[float(x.reshape(-1)[-1].real), float(x.reshape(-1)[-1].imag)])

    # 2. 77 GHz FMCW, ci16_le, two channels; channel 1 holds the target.
    fc, n, fs, B, Tc, T, M = 77e9, 16, 10.0e6, 500e6, 1.6e-6, 10e-6, 16
    S = B / Tc
    x1 = beat(M, n, fs, S, T, fc, r0=4.0, v=1.5)
    x0 = np.zeros_like(x1) + 0.25
    write("fmcw77_ci16_2ch", "ci16_le", {
        sigmf.SAMPLE_RATE_KEY: fs, "rotorsift:waveform": "fmcw-beat",
        "rotorsift:samples_per_chirp": n, "rotorsift:chirp_interval_s": T,
        "rotorsift:sweep_bandwidth_hz": B, "rotorsift:sweep_duration_s": Tc,
    }, fc, [x0, x1], [
        (4 * n, 4 * n, {sigmf.LABEL_KEY: "clutter", "rotorsift:range_min_m": 3.0,
                        "rotorsift:range_max_m": 5.0}),
    ])
    lam = C / fc
    q = np.round(x1.reshape(-1) * 32767) / 32767
    expected["recordings"]["fmcw77_ci16_2ch"] = dict(
        waveform="fmcw-beat", datatype="ci16_le", chirps=M, samples_per_chirp=n,
        wavelength_m=lam, range_cell_m=C * fs / (2 * S * n), max_range_m=C * fs / (2 * S),
        unambiguous_velocity_mps=lam / (4 * T), duration_s=M * T, labels={"clutter": 1},
        channel=1, first_samples=[[float(v.real), float(v.imag)] for v in q[:40]],
        last_sample=[float(q[-1].real), float(q[-1].imag)])

    # 3. X-band range profile, ci8, cells of 3 m from 30 m.
    fc, n, cell, start, T, M = 9.4e9, 16, 3.0, 30.0, 1e-4, 16
    x = profile(M, n, cell, start, T, fc, r0=45.0, v=2.0)
    write("xband_profile_ci8", "ci8", {
        "rotorsift:waveform": "range-profile", "rotorsift:samples_per_chirp": n,
        "rotorsift:chirp_interval_s": T, "rotorsift:range_cell_m": cell,
        "rotorsift:range_start_m": start,
    }, fc, [x], [
        (0, M * n, {sigmf.LABEL_KEY: "bird", "rotorsift:range_min_m": 44.0,
                    "rotorsift:range_max_m": 46.0, "rotorsift:target_id": "gull-7"}),
    ])
    lam = C / fc
    q = np.round(x.reshape(-1) * 127) / 127
    expected["recordings"]["xband_profile_ci8"] = dict(
        waveform="range-profile", datatype="ci8", chirps=M, samples_per_chirp=n,
        wavelength_m=lam, range_cell_m=cell, max_range_m=start + n * cell,
        unambiguous_velocity_mps=lam / (4 * T), duration_s=M * T, labels={"bird": 1},
        channel=0, first_samples=[[float(v.real), float(v.imag)] for v in q[:40]],
        last_sample=[float(q[-1].real), float(q[-1].imag)])

    # 4. The same FMCW target as cf64_le.
    fc, n, fs, B, Tc, T, M = 24.125e9, 32, 2.0e6, 200e6, 16e-6, 20e-6, 8
    S = B / Tc
    x = beat(M, n, fs, S, T, fc, r0=30.0, v=0.0)
    write("fmcw24_cf64", "cf64_le", {
        sigmf.SAMPLE_RATE_KEY: fs, "rotorsift:waveform": "fmcw-beat",
        "rotorsift:samples_per_chirp": n, "rotorsift:chirp_interval_s": T,
        "rotorsift:sweep_bandwidth_hz": B, "rotorsift:sweep_duration_s": Tc,
    }, fc, [x], [])
    lam = C / fc
    expected["recordings"]["fmcw24_cf64"] = dict(
        waveform="fmcw-beat", datatype="cf64_le", chirps=M, samples_per_chirp=n,
        wavelength_m=lam, range_cell_m=C * fs / (2 * S * n), max_range_m=C * fs / (2 * S),
        unambiguous_velocity_mps=lam / (4 * T), duration_s=M * T, labels={},
        channel=0, first_samples=[[float(v.real), float(v.imag)] for v in x.reshape(-1)[:40]],
        last_sample=[float(x.reshape(-1)[-1].real), float(x.reshape(-1)[-1].imag)])

    with open(os.path.join(OUT, "expected.json"), "w") as f:
        json.dump(expected, f, indent=1)
    print("sigmf", sigmf.__version__, "numpy", np.__version__)


if __name__ == "__main__":
    main()
