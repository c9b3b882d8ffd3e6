"""Least-squares sine fits (numpy.linalg.lstsq) of the mains interference left in a signal.

Reads the fixture's definition (mains60.json) and a signal (float32, one channel, 1 kHz, the same
length as the fixture), and for each 1 s window fits a*cos(h*phase) + b*sin(h*phase) + c for
h = 1..5 at the fixture's known phase. Prints JSON: {"windows": [[t0, [amp_1 .. amp_5]], ...]}
with amp_h = sqrt(a^2 + b^2), uV peak. Used by tests/it/mains.rs on the canceller's residual.

usage: mains_lsfit.py FIXTURE_JSON SIGNAL_F32
"""
import json
import sys

import numpy as np

spec = json.load(open(sys.argv[1]))
x = np.fromfile(sys.argv[2], dtype="<f4").astype(float)
fs = spec["fs_hz"]
n = len(x)
t = np.arange(n) / fs
f0, f1 = spec["interference"]["fundamental_hz"]
f = f0 + (f1 - f0) * t / spec["seconds"]
phase = 2 * np.pi * np.cumsum(f) / fs
windows = []
for start in range(0, n - int(fs) + 1, int(fs)):
    sl = slice(start, start + int(fs))
    cols = [np.ones(int(fs))]
    for h in range(1, 6):
        cols += [np.cos(h * phase[sl]), np.sin(h * phase[sl])]
    a = np.stack(cols, axis=1)
    coef, *_ = np.linalg.lstsq(a, x[sl], rcond=None)
    amps = [float(np.hypot(coef[1 + 2 * k], coef[2 + 2 * k])) for k in range(5)]
    windows.append([start / fs, amps])
print(json.dumps({"windows": windows}))
