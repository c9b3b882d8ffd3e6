#!/usr/bin/env python3
"""Reference fixtures for leadline's analog stages: exact s-domain responses of RC, Sallen-Key
and twin-T circuits with given part values, computed with scipy.signal.freqs.

The transfer functions (coefficients highest power first):
  RC low-pass 1/(sRC+1); RC high-pass sRC/(sRC+1);
  Sallen-Key LP 1/(R1R2C1C2 s^2 + C2(R1+R2) s + 1); SK HP R1R2C1C2 s^2/(R1R2C1C2 s^2 + R1(C1+C2) s + 1);
  twin-T (s^2 + w0^2)/(s^2 + 4(1-k) w0 s + w0^2), w0 = 1/(RC).
Writes analog.json.  Run:  python3 tests/reference/make_analog.py [OUT_DIR]
"""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

CASES = [
    ("rc-lowpass", {"R": 33e3, "C": 100e-9}),
    ("rc-highpass", {"R": 3.3e6, "C": 1e-6}),
    ("sallen-key-lowpass", {"R1": 27e3, "R2": 30e3, "C1": 220e-9, "C2": 100e-9}),
    ("sallen-key-highpass", {"R1": 220e3, "R2": 470e3, "C1": 1e-6, "C2": 1e-6}),
    ("twin-t", {"R": 31.6e3, "C": 100e-9, "k": 0.9}),
]


def tf(kind, p):
    if kind == "rc-lowpass":
        return [1.0], [p["R"] * p["C"], 1.0]
    if kind == "rc-highpass":
        return [p["R"] * p["C"], 0.0], [p["R"] * p["C"], 1.0]
    if kind == "sallen-key-lowpass":
        return [1.0], [p["R1"] * p["R2"] * p["C1"] * p["C2"], p["C2"] * (p["R1"] + p["R2"]), 1.0]
    if kind == "sallen-key-highpass":
        a = p["R1"] * p["R2"] * p["C1"] * p["C2"]
        return [a, 0.0, 0.0], [a, p["R1"] * (p["C1"] + p["C2"]), 1.0]
    w = 1.0 / (p["R"] * p["C"])
    return [1.0, 0.0, w * w], [1.0, 4.0 * (1.0 - p["k"]) * w, w * w]


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).parent
    freqs = np.geomspace(0.01, 1000.0, 80)
    cases = []
    for kind, p in CASES:
        b, a = tf(kind, p)
        _, h = signal.freqs(b, a, worN=2 * np.pi * freqs)
        cases.append({"topology": kind, "parts": p, "freqs_hz": freqs.tolist(),
                      "mag_db": (20 * np.log10(np.abs(h))).tolist()})
    doc = {"source": f"scipy.signal.freqs {scipy.__version__}, numpy {np.__version__}; tests/reference/make_analog.py",
           "cases": cases}
    (out_dir / "analog.json").write_text(json.dumps(doc, separators=(",", ":")) + "\n")


if __name__ == "__main__":
    main()
