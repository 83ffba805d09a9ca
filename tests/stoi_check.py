"""STOI of the project (lab::stoi) against the pystoi package on the same signals.

Usage: python3 tests/stoi_check.py DIR, after
`cargo run --release --example stoi_vectors -- DIR`. Reads DIR/clean.wav, every other
DIR/*.wav and DIR/stoi_amrx.json; fails if any case differs from pystoi.stoi by 0.01 or more
(Taal et al., 2011; pystoi is an independent implementation of the same method).
"""
import json
import pathlib
import sys

import numpy as np
from scipy.io import wavfile
from pystoi import stoi

TOLERANCE = 0.01


def main(directory):
    d = pathlib.Path(directory)
    rate, clean = wavfile.read(d / "clean.wav")
    ours = json.loads((d / "stoi_amrx.json").read_text())
    worst = 0.0
    for name, value in sorted(ours.items()):
        r, y = wavfile.read(d / f"{name}.wav")
        assert r == rate == 10000, (r, rate)
        reference = stoi(clean.astype(np.float64), y.astype(np.float64), rate, extended=False)
        diff = abs(reference - value)
        worst = max(worst, diff)
        print(f"{name:20s} amrx {value:.5f}  pystoi {reference:.5f}  diff {diff:.2e}")
        if not diff < TOLERANCE:
            sys.exit(f"{name}: amrx {value} against pystoi {reference}")
    print(f"STOI: {len(ours)} cases within {TOLERANCE} of pystoi (worst {worst:.2e})")


if __name__ == "__main__":
    main(sys.argv[1])
