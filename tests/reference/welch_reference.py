#!/usr/bin/env python3
"""Reference for tests/measure_spectrum_welch.rs: scipy.signal.welch on a seeded complex signal.

Prints JSON (stored as welch_fixture.json). The signal is rounded to float32 first, since the
Rust side reads Complex32; the reference is computed in float64 on those rounded values.
scipy settings: Hann window (periodic, scipy's default sym=False), nperseg=N, noverlap=N/2,
detrend=False (amrx does not detrend), two-sided (return_onesided=False), scaling='density',
average='mean'. Trailing samples that do not fill a segment are dropped by both.
Run: python3 welch_reference.py > welch_fixture.json
"""
import json

import numpy as np
from scipy import signal

N = 256
FS = 48000.0
FRAMES = 9
LENGTH = N // 2 * (FRAMES + 1) + 77  # 77 trailing samples that never complete a frame

rng = np.random.default_rng(20261201)
n = np.arange(LENGTH)
x = (
    0.8 * np.exp(2j * np.pi * 3141.7 * n / FS)
    + 0.05 * np.exp(-2j * np.pi * 11200.3 * n / FS)
    + (0.1 + 0.05j)  # DC offset: checks that no detrending is applied
    + 0.02 * (rng.standard_normal(LENGTH) + 1j * rng.standard_normal(LENGTH))
)
x = x.astype(np.complex64)

f, p = signal.welch(
    x.astype(np.complex128),
    fs=FS,
    window="hann",
    nperseg=N,
    noverlap=N // 2,
    detrend=False,
    return_onesided=False,
    scaling="density",
    average="mean",
)

print(
    json.dumps(
        {
            "fft_len": N,
            "sample_rate": FS,
            "frames": FRAMES,
            "re": [float(v) for v in x.real],
            "im": [float(v) for v in x.imag],
            "density": [float(v) for v in p],
            "frequency": [float(v) for v in f],
        }
    )
)
