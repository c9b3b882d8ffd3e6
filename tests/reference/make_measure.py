#!/usr/bin/env python3
"""Reference fixture for `leadline measure response`, made with scipy.signal.

White noise (the LCG below, re-implemented bit for bit in tests/it/measure.rs) through a known
front end (scipy.signal.butter high-pass 1 Hz order 2 and low-pass 40 Hz order 4, gain 100) at
1 kHz for 120 s; scipy.signal.csd / welch / coherence with nperseg 16384 and their defaults
(periodic Hann, 50 % overlap, detrend constant, one-sided density) give H1 = Pxy/Pxx and the
coherence; scipy.signal.sosfreqz gives the truth. Every 16th bin is stored.

Run:  python3 tests/reference/make_measure.py [OUT_DIR]   (versions: requirements.txt)
"""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

MASK = (1 << 64) - 1
FS, SECONDS, NPERSEG, GAIN = 1000.0, 120, 16384, 100.0


def noise(n):
    """Uniform in [-1, 1): the same LCG as tests/reference/make_filters.py."""
    state = 0x2545F4914F6CDD1D
    out = np.empty(n)
    for i in range(n):
        state = (state * 6364136223846793005 + 1442695040888963407) & MASK
        out[i] = ((state >> 11) / float(1 << 53)) * 2.0 - 1.0
    return out


sos = np.vstack([
    signal.butter(2, 1.0, "highpass", fs=FS, output="sos"),
    signal.butter(4, 40.0, "lowpass", fs=FS, output="sos"),
])
x = 1000.0 * noise(int(FS * SECONDS))
y = GAIN * signal.sosfilt(sos, x)
f, pxy = signal.csd(x, y, fs=FS, nperseg=NPERSEG)
_, pxx = signal.welch(x, fs=FS, nperseg=NPERSEG)
_, coh = signal.coherence(x, y, fs=FS, nperseg=NPERSEG)
h1 = pxy / pxx
_, truth = signal.sosfreqz(sos, worN=f, fs=FS)
truth = GAIN * truth
keep = slice(1, None, 16)
doc = {
    "source": f"scipy.signal {scipy.__version__}, numpy {np.__version__}; tests/reference/make_measure.py",
    "fs": FS, "seconds": SECONDS, "nperseg": NPERSEG, "gain": GAIN,
    "freq_hz": f[keep].tolist(),
    "h1_mag_db": (20 * np.log10(np.abs(h1[keep]))).tolist(),
    "h1_phase_deg": np.degrees(np.angle(h1[keep])).tolist(),
    "coherence": coh[keep].tolist(),
    "truth_mag_db": (20 * np.log10(np.abs(truth[keep]))).tolist(),
}
out = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).parent
(out / "measure.json").write_text(json.dumps(doc) + "\n")
