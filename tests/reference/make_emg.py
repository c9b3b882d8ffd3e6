#!/usr/bin/env python3
"""Reference fixture for the EMG analysis (src/analysis/emg.rs), made with scipy.signal.

A deterministic test signal (sum of sines under a burst envelope plus a chirp-like component,
written out sample by sample so the Rust test reads the very same input) is
  1. band-passed 20-450 Hz zero-phase: sosfiltfilt of butter(2, 20, 'highpass') followed by
     butter(2, 450, 'lowpass') (the same sections as the product's band-pass),
  2. full-wave rectified and low-passed zero-phase with butter(2, 6 Hz) + sosfiltfilt: the
     linear envelope,
and the Welch PSD (scipy.signal.welch, nperseg=256, its defaults otherwise) of the band-passed
signal between two sample indices gives the mean frequency (sum f*P / sum P) and the median
frequency (half the power below, linear within the crossing bin).

Run:  python3 tests/reference/make_emg.py [OUT_DIR]   (versions: requirements.txt)
"""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

FS = 1000.0
N = 3000


def test_signal():
    t = np.arange(N) / FS
    env = np.where((t >= 1.0) & (t < 2.2), 1.0, 0.15)
    x = np.zeros(N)
    for f, a, ph in [(37.0, 40.0, 0.3), (83.0, 60.0, 1.1), (121.0, 45.0, 2.0),
                     (177.0, 25.0, 0.7), (263.0, 12.0, 2.9)]:
        x += a * np.sin(2 * np.pi * f * t + ph)
    x = env * x + 150.0 * np.sin(2 * np.pi * 0.7 * t) + 80.0
    return np.round(x, 6)


def mean_median(f, p):
    total = p.sum()
    mean = float((f * p).sum() / total)
    half = total / 2
    acc = 0.0
    for k in range(len(p)):
        if acc + p[k] >= half:
            f0 = f[k - 1] if k > 0 else f[0]
            frac = (half - acc) / p[k] if p[k] > 0 else 0.0
            return mean, float(f0 + frac * (f[k] - f0))
        acc += p[k]
    raise ValueError("no median")


def main():
    out = Path(sys.argv[1] if len(sys.argv) > 1 else Path(__file__).parent)
    x = test_signal()
    sos = np.vstack([signal.butter(2, 20.0, "highpass", fs=FS, output="sos"),
                     signal.butter(2, 450.0, "lowpass", fs=FS, output="sos")])
    bp = signal.sosfiltfilt(sos, x)
    env = signal.sosfiltfilt(signal.butter(2, 6.0, "lowpass", fs=FS, output="sos"), np.abs(bp))
    a, b = 1100, 2100
    f, p = signal.welch(bp[a:b], fs=FS, nperseg=256)
    mean, median = mean_median(f, p)
    doc = {
        "source": "scipy.signal " + scipy.__version__ + " (butter, sosfiltfilt, welch)",
        "fs_hz": FS,
        "input_uv": [float(v) for v in x],
        "bandpassed_uv": [float(v) for v in bp],
        "envelope_uv": [float(v) for v in env],
        "envelope_hz": 6.0,
        "segment": [a, b],
        "mean_hz": mean,
        "median_hz": median,
    }
    (out / "emg.json").write_text(json.dumps(doc, indent=None) + "\n")


if __name__ == "__main__":
    main()
