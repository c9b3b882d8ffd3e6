#!/usr/bin/env python3
"""Reference fixtures for leadline's Welch PSD, made with scipy.signal.welch (defaults: periodic
Hann, 50 % overlap, detrend='constant', scaling='density', one-sided).

Writes spectrum.json: the PSD of a deterministic test signal (the LCG noise and sines of
test_signal(), re-implemented in tests/it/spectrum.rs) for segment lengths 256, 1024, 4096 and 16384.

Run:  python3 tests/reference/make_spectrum.py [OUT_DIR]
"""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

MASK = (1 << 64) - 1


def test_signal(n, fs):
    state = 0x2545F4914F6CDD1D
    out = np.empty(n)
    for i in range(n):
        state = (state * 6364136223846793005 + 1442695040888963407) & MASK
        u = ((state >> 11) / float(1 << 53)) * 2.0 - 1.0
        t = i / fs
        out[i] = 300.0 * u + 80.0 * np.sin(2 * np.pi * 50.3 * t) + 500.0 * np.sin(2 * np.pi * 1.1 * t) + 20.0
    return out


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).parent
    fs = 1000.0
    n = 40000
    x = test_signal(n, fs)
    cases = []
    for nperseg in [256, 1024, 4096, 16384]:
        f, p = signal.welch(x, fs=fs, nperseg=nperseg)
        cases.append({"nperseg": nperseg, "freqs_hz": f.tolist(), "psd": p.tolist()})
    doc = {
        "source": f"scipy.signal.welch {scipy.__version__}, numpy {np.__version__}; tests/reference/make_spectrum.py",
        "fs": fs,
        "n_signal": n,
        "welch": cases,
    }
    (out_dir / "spectrum.json").write_text(json.dumps(doc, separators=(",", ":")) + "\n")


if __name__ == "__main__":
    main()
