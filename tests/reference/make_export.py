#!/usr/bin/env python3
"""Reference fixture for the exported C filters (tests/it/export_c.rs), made with scipy.signal.

Writes export.json: the chain 0.5 Hz Butterworth high-pass (order 2) + 50 Hz notch (Q 30, iirnotch)
+ 40 Hz Butterworth low-pass (order 4) at 1000 Hz as scipy sos rows, a deterministic test input
scaled to fit Q15/Q31 full scale (DC offset, 1.2 Hz, 17 Hz, 50 Hz and LCG noise), and
scipy.signal.sosfilt's float64 output for it.

Run:  python3 tests/reference/make_export.py [OUT_DIR]     (versions: requirements.txt)
"""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

MASK = (1 << 64) - 1
FS = 1000.0
N = 5000


def test_input():
    state = 0x9E3779B97F4A7C15
    out = []
    for i in range(N):
        state = (state * 6364136223846793005 + 1442695040888963407) & MASK
        u = ((state >> 11) / float(1 << 53)) * 2.0 - 1.0
        t = i / FS
        out.append(
            0.3
            + 0.25 * np.sin(2 * np.pi * 1.2 * t)
            + 0.1 * np.sin(2 * np.pi * 17.0 * t)
            + 0.1 * np.sin(2 * np.pi * 50.0 * t)
            + 0.05 * u
        )
    return np.array(out)


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).parent
    hp = signal.butter(2, 0.5, "highpass", fs=FS, output="sos")
    b, a = signal.iirnotch(50.0, 30.0, fs=FS)
    lp = signal.butter(4, 40.0, "lowpass", fs=FS, output="sos")
    sos = np.vstack([hp, np.hstack([b, a])[None, :], lp])
    x = test_input()
    y = signal.sosfilt(sos, x)
    doc = {
        "source": f"scipy.signal {scipy.__version__} (butter, iirnotch, sosfilt), numpy {np.__version__}",
        "fs": FS,
        "sos": sos.tolist(),
        "x": [float(v) for v in x],
        "y": [float(v) for v in y],
    }
    (out_dir / "export.json").write_text(json.dumps(doc) + "\n")


if __name__ == "__main__":
    main()
