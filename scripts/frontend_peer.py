#!/usr/bin/env python3
"""A numpy/scipy peer of rotorsift's front end, for the end-to-end bench.

Written as a practitioner would, vectorised: reads a rotorsift SigMF recording (ci16_le
or cf32_le, one channel) block by block, and for every CPI of M chirps (hop M/2, as
rotorsift's default) does what rotorsift's first pass does at its core:

  * range FFT of each chirp (Hann window; FMCW beat samples) or the range profile as is,
  * a three-pulse canceller x[m] - 2 x[m-1] + x[m-2] along slow time,
  * a range-Doppler power map (Hann window along slow time, FFT, fftshift),
  * CA-CFAR with rotorsift's default window (guard 1 x 2, training 4 x 8, Pfa 1e-6,
    alpha = N (Pfa^(-1/N) - 1): Richards, Fundamentals of Radar Signal Processing, 2nd
    ed., 2014, Sec. 6.5.3), training sums from scipy.ndimage.uniform_filter (Doppler
    wrapped, range edges cut by 'constant' padding and counted).

No noise floors, no clutter map, no tracks, features or model: a lower bound on the work
of rotorsift's first pass. Prints one line `PEER seconds=S cpis=C hits=H`.

Usage: frontend_peer.py RECORDING.sigmf-meta
"""

import json
import os
import sys
import time

import numpy as np
from scipy import ndimage


def main(meta_path):
    with open(meta_path) as f:
        meta = json.load(f)
    g = meta["global"]
    n = int(g["rotorsift:samples_per_chirp"])
    waveform = g["rotorsift:waveform"]
    t = float(g["rotorsift:chirp_interval_s"])
    dtype = g["core:datatype"]
    data = os.path.splitext(meta_path)[0] + ".sigmf-data"
    itemsize = {"ci16_le": 4, "cf32_le": 8}[dtype]
    chirps = os.path.getsize(data) // (itemsize * n)
    # rotorsift's default CPI: the power of two nearest 25.6 ms of chirps, 256..4096
    m = int(min(max(2 ** round(np.log2(max(0.0256 / t, 1.0))), 256), 4096))
    hop = m // 2

    t0 = time.perf_counter()
    range_window = np.hanning(n + 1)[:n].astype(np.float32)  # periodic Hann
    doppler_window = np.hanning(m + 1)[:m].astype(np.float32)
    hr, hd, gr, gd = 5, 10, 1, 2
    outer = (2 * hr + 1) * (2 * hd + 1)
    inner = (2 * gr + 1) * (2 * gd + 1)
    count = outer - inner
    pfa = 1e-6
    alpha = count * (pfa ** (-1.0 / count) - 1.0)

    ring = None
    cpis = 0
    hits = 0
    block = 4096
    with open(data, "rb") as f:
        pending = np.zeros((0, n), np.complex64)
        for start in range(0, chirps, block):
            count_now = min(block, chirps - start)
            if dtype == "ci16_le":
                raw = np.fromfile(f, dtype="<i2", count=2 * n * count_now)
                x = (raw[0::2] + 1j * raw[1::2]).astype(np.complex64)
            else:
                x = np.fromfile(f, dtype="<c8", count=n * count_now)
            x = x.reshape(count_now, n)
            if waveform == "fmcw-beat":
                prof = np.fft.fft(x * range_window, axis=1)
            else:
                prof = x
            prof = np.concatenate([pending, prof])
            # keep whole CPIs' worth plus the canceller's two chirps of history
            canc = prof[2:] - 2 * prof[1:-1] + prof[:-2]
            ring = canc if ring is None else np.concatenate([ring, canc])
            pending = prof[-2:]
            while ring.shape[0] >= m:
                cpi = ring[:m]
                spec = np.fft.fftshift(
                    np.fft.fft(cpi * doppler_window[:, None], axis=0), axes=0
                )
                power = (spec.real**2 + spec.imag**2).T  # range x Doppler
                wrapped = np.pad(power, ((0, 0), (hd, hd)), mode="wrap")
                o = ndimage.uniform_filter(
                    wrapped, size=(2 * hr + 1, 2 * hd + 1), mode="constant"
                )[:, hd:-hd] * outer
                i = ndimage.uniform_filter(
                    wrapped, size=(2 * gr + 1, 2 * gd + 1), mode="constant"
                )[:, hd:-hd] * inner
                noise = (o - i) / count
                hits += int(np.count_nonzero(power > alpha * noise))
                cpis += 1
                ring = ring[hop:]
    seconds = time.perf_counter() - t0
    print(f"PEER seconds={seconds} cpis={cpis} hits={hits}")


if __name__ == "__main__":
    if len(sys.argv) != 2:
        sys.exit(__doc__.strip().splitlines()[-1])
    main(sys.argv[1])
