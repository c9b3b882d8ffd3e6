#!/usr/bin/env python3
"""Reference fixture for `leadline conform`, made with scipy.signal (the reference library).

For three chains designed with scipy.signal.butter / iirnotch, the impulse test of the ECG
standards (a 3 mV x 100 ms pulse from rest; Maji & Burke, IEEE TIM 69(3), 2020) run with
scipy.signal.sosfilt (or sosfiltfilt), judged with the same definitions as src/conform/chain.rs
(largest |departure| and largest |first difference| x fs from 150 ms to 5 s after the pulse's
end), and the gain at 0.67 Hz from scipy.signal.sosfreqz.

Run:  python3 tests/reference/make_conform.py [OUT_DIR]   (versions: requirements.txt)
"""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

PULSE_UV, PULSE_S, START_S, FROM_S, TO_S = 3000.0, 0.1, 1.0, 0.15, 5.0


def pulse(fs):
    n0 = round(START_S * fs)
    n1 = n0 + round(PULSE_S * fs)
    n = n1 + round((TO_S + 0.5) * fs)
    x = np.zeros(n)
    x[n0:n1] = PULSE_UV
    return x, n1


def judge(y, end, fs):
    a = end + round(FROM_S * fs)
    b = min(end + round(TO_S * fs), len(y))
    part = y[a:b]
    return float(np.max(np.abs(part))), float(np.max(np.abs(np.diff(part))) * fs)


def chain_sos(c, fs):
    parts = []
    if c.get("highpass"):
        f, n = c["highpass"]
        parts.append(signal.butter(n, f, "highpass", fs=fs, output="sos"))
    if c.get("notch"):
        f, q = c["notch"]
        b, a = signal.iirnotch(f, q, fs=fs)
        parts.append(signal.tf2sos(b, a))
    if c.get("lowpass"):
        f, n = c["lowpass"]
        parts.append(signal.butter(n, f, "lowpass", fs=fs, output="sos"))
    return np.vstack(parts)


CASES = [
    {"name": "analog-like 0.05 Hz", "fs": 1000.0, "highpass": [0.05, 1], "zero_phase": False},
    {"name": "monitoring default", "fs": 500.0, "highpass": [0.5, 2], "notch": [50.0, 30.0],
     "lowpass": [40.0, 4], "zero_phase": False},
    {"name": "0.67 Hz zero phase", "fs": 1000.0, "highpass": [0.67, 1], "lowpass": [150.0, 2],
     "zero_phase": True},
]

out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).parent
results = []
for c in CASES:
    fs = c["fs"]
    sos = chain_sos(c, fs)
    x, end = pulse(fs)
    y = signal.sosfiltfilt(sos, x) if c["zero_phase"] else signal.sosfilt(sos, x)
    undershoot, slope = judge(y, end, fs)
    _, h = signal.sosfreqz(sos, worN=[0.67], fs=fs)
    mag = abs(h[0]) ** (2 if c["zero_phase"] else 1)
    results.append({**c, "impulse_undershoot_uv": undershoot, "impulse_slope_uv_per_s": slope,
                    "gain_db_at_0_67_hz": float(20 * np.log10(mag))})
doc = {"source": f"scipy.signal {scipy.__version__}, numpy {np.__version__}; tests/reference/make_conform.py",
       "cases": results}
(out_dir / "conform.json").write_text(json.dumps(doc, indent=1) + "\n")
