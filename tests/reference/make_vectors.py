#!/usr/bin/env python3
"""Writes the reference fixtures for tests/dsp_reference.rs using numpy and scipy.

Deterministic: seeded generator, fixed JSON layout, floats written with repr (shortest
round-trip), so rerunning reproduces the files bit for bit.

Run from anywhere:  python3 tests/reference/make_vectors.py
"""
import json
import os

import numpy as np
from scipy import signal

HERE = os.path.dirname(os.path.abspath(__file__))
SEED = 20260101


def write(name, obj):
    path = os.path.join(HERE, name)
    with open(path, "w", encoding="ascii") as f:
        json.dump(obj, f, indent=None, separators=(",", ":"), sort_keys=True)
        f.write("\n")


def floats(a):
    return [float(v) for v in np.asarray(a, dtype=np.float64).ravel()]


def kaiser_design(fs, fp, fst, atten):
    """scipy's Kaiser recipe. kaiserord takes the width as a fraction of Nyquist."""
    numtaps, beta = signal.kaiserord(atten, (fst - fp) / (fs / 2))
    odd = numtaps | 1  # amrx designs type I (odd length) filters
    taps = signal.firwin(odd, (fp + fst) / 2, window=("kaiser", beta), fs=fs, scale=True)
    return numtaps, odd, beta, taps


def kaiser_fixture():
    specs = [
        (48_000.0, 5_000.0, 6_000.0, 60.0),
        (2_400_000.0, 10_000.0, 230_000.0, 70.0),
        (250_000.0, 8_000.0, 25_000.0, 80.0),
        (8_000.0, 1_000.0, 1_500.0, 40.0),
        (48_000.0, 3_000.0, 4_000.0, 30.0),
    ]
    cases = []
    for fs, fp, fst, atten in specs:
        numtaps, odd, beta, taps = kaiser_design(fs, fp, fst, atten)
        cases.append({
            "sample_rate": fs, "passband_hz": fp, "stopband_hz": fst,
            "attenuation_db": atten, "kaiserord_numtaps": int(numtaps),
            "beta": float(beta), "taps": floats(taps),
        })
    write("kaiser_taps.json", {"cases": cases})


def as_f32(a):
    """Round to f32 and back, so scipy sees exactly the values the Rust test feeds in."""
    return np.asarray(a, dtype=np.float32).astype(np.float64)


def decimation_fixture(rng):
    n = 2000
    x_re = as_f32(rng.standard_normal(n))
    x_im = as_f32(rng.standard_normal(n))
    x = x_re + 1j * x_im
    _, _, _, h = kaiser_design(2_400_000.0, 10_000.0, 230_000.0, 70.0)
    h = as_f32(h)
    factor = 5
    # upfirdn: y[m] = sum_k h[k] x[m*factor - k], output 0 is h[0]*x[0].
    y = signal.upfirdn(h, x, 1, factor)
    keep = -(-n // factor)  # outputs whose newest input exists: ceil(n / factor)
    write("decimate_by_5.json", {
        "factor": factor, "taps": floats(h), "input_re": floats(x_re),
        "input_im": floats(x_im), "output_re": floats(y.real[:keep]),
        "output_im": floats(y.imag[:keep]),
    })


def resample_fixture(rng):
    n = 2000
    up, down = 3, 4
    x = as_f32(rng.standard_normal(n))
    # Length with half = (N-1)/2 a multiple of `down`, so resample_poly's centred output is an
    # integer shift of the causal one.
    half = 48
    h = as_f32(signal.firwin(2 * half + 1, 1.0 / max(up, down), window=("kaiser", 7.0)))
    causal = signal.upfirdn(h * up, x, up, down)
    keep = -(-n * up // down)
    centred = signal.resample_poly(x, up, down, window=h)
    shift = half // down
    # Check the alignment claim here as well, against scipy itself.
    assert np.allclose(centred[: keep - shift], causal[shift:keep], rtol=0, atol=1e-12)
    write("resample_3_4.json", {
        "up": up, "down": down, "taps": floats(h), "input": floats(x),
        "upfirdn_output": floats(causal[:keep]), "resample_poly_output": floats(centred),
        "resample_poly_shift": shift,
    })


def dc_blocker_fixture():
    cases = []
    for fc, fs in [(10.0, 48_000.0), (100.0, 48_000.0), (5.0, 8_000.0), (2_000.0, 48_000.0)]:
        # First-order Butterworth high-pass by the bilinear transform with pre-warping.
        b, a = signal.butter(1, fc, btype="highpass", fs=fs)
        w, resp = signal.freqz(b, a, worN=[fc, fs / 2], fs=fs)
        cases.append({
            "cutoff_hz": fc, "sample_rate": fs, "b": floats(b), "a": floats(a),
            "gain_db_at_cutoff": float(20 * np.log10(abs(resp[0]) / abs(resp[1]))),
        })
    write("dc_blocker.json", {"cases": cases})


def main():
    rng = np.random.default_rng(SEED)
    kaiser_fixture()
    decimation_fixture(rng)
    resample_fixture(rng)
    dc_blocker_fixture()


if __name__ == "__main__":
    main()
