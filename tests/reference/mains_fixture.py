"""Makes the mains-canceller fixture: a clean ECG and the same with a known interference.

The ECG is our own invented one (a sum of Gaussian waves per beat, RR 0.8 s with a little
variation), not a recording. The interference, as issue "adaptive mains canceller" sets it:
60 Hz drifting linearly from 59.7 to 60.3 Hz over 60 s, 200 uV peak, harmonics 2-5 at 10 % of
it, and every component three times larger from 30 s on. Sampled at 1 kHz for 60 s.

Writes, into the folder given (default tests/data/mains):
- mains60.f32: little-endian float32 frames (clean, noisy), uV, 2 channels at 1000 Hz;
- mains60.json: the rate, the R peaks (samples), and the interference's definition.

usage: mains_fixture.py [OUT_DIR]
"""
import json
import os
import sys

import numpy as np

FS = 1000.0
SECONDS = 60.0
F_START, F_END = 59.7, 60.3
PEAK_UV = 200.0
HARMONIC_SHARE = 0.10
STEP_AT_S, STEP_GAIN = 30.0, 3.0

out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "data", "mains")
os.makedirs(out, exist_ok=True)
n = int(SECONDS * FS)
t = np.arange(n) / FS

# The ECG: waves (centre s from R, width s, uV) of an invented beat.
WAVES = [(-0.20, 0.025, 120.0), (-0.035, 0.010, -150.0), (0.0, 0.012, 1200.0),
         (0.035, 0.012, -300.0), (0.28, 0.050, 300.0)]
rng = np.random.default_rng(20261204)
r_times = []
tr = 0.6
while tr < SECONDS - 0.5:
    r_times.append(tr)
    tr += 0.8 + 0.03 * rng.standard_normal()
clean = np.zeros(n)
for r in r_times:
    for (c, w, a) in WAVES:
        clean += a * np.exp(-((t - r - c) ** 2) / (2 * w * w))

# The interference: the phase is the integral of the drifting frequency.
f = F_START + (F_END - F_START) * t / SECONDS
phase = 2 * np.pi * np.cumsum(f) / FS
gain = np.where(t >= STEP_AT_S, STEP_GAIN, 1.0)
hum = np.sin(phase)
for h in range(2, 6):
    hum += HARMONIC_SHARE * np.sin(h * phase + 0.4 * h)
noisy = clean + PEAK_UV * gain * hum

frames = np.stack([clean, noisy], axis=1).astype("<f4")
frames.tofile(os.path.join(out, "mains60.f32"))
with open(os.path.join(out, "mains60.json"), "w") as fh:
    json.dump({
        "fs_hz": FS,
        "seconds": SECONDS,
        "r_peaks": [int(round(r * FS)) for r in r_times],
        "interference": {
            "fundamental_hz": [F_START, F_END],
            "peak_uv": PEAK_UV,
            "harmonics": [2, 3, 4, 5],
            "harmonic_share": HARMONIC_SHARE,
            "step_at_s": STEP_AT_S,
            "step_gain": STEP_GAIN,
            "phase": "2*pi*cumsum(f)/fs, harmonic h at h*phase + 0.4*h",
        },
    }, fh, indent=1)
    fh.write("\n")
