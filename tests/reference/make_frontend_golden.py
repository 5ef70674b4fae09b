#!/usr/bin/env python3
"""Writes tests/reference/frontend_golden.json: reference vectors for the rotorsift front
end, from numpy.fft.fft, scipy.signal.get_window, scipy.signal.stft and
scipy.signal.spectrogram. Run: pip install numpy scipy; python3 make_frontend_golden.py.
The library versions used are stored in the JSON ("versions")."""
import json
import os
import platform

import numpy as np
import scipy
import scipy.signal as sig

rng = np.random.default_rng(20240611)


def cvec(n):
    return ((rng.standard_normal(n) + 1j * rng.standard_normal(n)) / np.sqrt(2)).astype(np.complex64)


def c2j(a):
    a = np.asarray(a, dtype=np.complex128)
    return {"re": [float(f"{v:.9g}") for v in a.real.ravel()],
            "im": [float(f"{v:.9g}") for v in a.imag.ravel()]}


def r2j(a):
    return [float(f"{v:.9g}") for v in np.asarray(a, dtype=np.float64).ravel()]


out = {"versions": {"numpy": np.__version__, "scipy": scipy.__version__,
                    "python": platform.python_version()}}

# Range FFT: numpy.fft.fft of a seeded complex chirp, raw and Hann-windowed (periodic).
n = 128
x = cvec(n)
hann = sig.get_window("hann", n)
out["range_fft"] = {"n": n, "input": c2j(x),
                    "fft_rect": c2j(np.fft.fft(x.astype(np.complex128))),
                    "fft_hann": c2j(np.fft.fft(x.astype(np.complex128) * hann))}

# Windows: scipy.signal.get_window, periodic (fftbins=True) and symmetric (fftbins=False).
names = {"rectangular": "boxcar", "hann": "hann", "hamming": "hamming", "blackman": "blackman"}
out["windows"] = []
for ours, theirs in names.items():
    for length in (8, 9, 64):
        for periodic in (True, False):
            out["windows"].append({"window": ours, "len": length, "periodic": periodic,
                                   "values": r2j(sig.get_window(theirs, length, fftbins=periodic))})

# STFT and spectrogram, two-sided, on a seeded complex slow-time signal.
xs = cvec(256)
combos = [
    {"window": "hann", "nperseg": 64, "noverlap": 48, "nfft": 64, "scaling": "psd", "fs": 1000.0},
    {"window": "hamming", "nperseg": 50, "noverlap": 25, "nfft": 128, "scaling": "spectrum", "fs": 2.0},
    {"window": "blackman", "nperseg": 32, "noverlap": 0, "nfft": 48, "scaling": "psd", "fs": 1.0},
]
out["stft_input"] = c2j(xs)
out["stft"] = []
for c in combos:
    w = names[c["window"]]
    f, t, z = sig.stft(xs.astype(np.complex128), fs=c["fs"], window=w, nperseg=c["nperseg"],
                       noverlap=c["noverlap"], nfft=c["nfft"], return_onesided=False,
                       boundary=None, padded=False, detrend=False, scaling=c["scaling"])
    f2, t2, s = sig.spectrogram(xs.astype(np.complex128), fs=c["fs"], window=w,
                                nperseg=c["nperseg"], noverlap=c["noverlap"], nfft=c["nfft"],
                                detrend=False, return_onesided=False,
                                scaling="density" if c["scaling"] == "psd" else "spectrum",
                                mode="psd")
    assert z.shape == s.shape
    # scipy returns freqs x times; we store frames x nfft (row-major), natural order.
    out["stft"].append(dict(c, frames=int(z.shape[1]), times=r2j(t), freqs=r2j(f),
                            stft=c2j(z.T), spectrogram=r2j(s.T)))

path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "frontend_golden.json")
with open(path, "w") as fh:
    json.dump(out, fh, separators=(",", ":"))
print(f"wrote {path} ({os.path.getsize(path)} bytes) with numpy {np.__version__}, scipy {scipy.__version__}")
