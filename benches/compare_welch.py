#!/usr/bin/env python3
"""One spectrum update, leadline against scipy.signal.welch, measured in one run on this machine:
10 s at 1 kHz, nperseg 2048 (periodic Hann, 50 % overlap, detrend='constant', density).

Run:  cargo build --release && .venv/bin/python benches/compare_welch.py
"""
import json
import subprocess
import time
from pathlib import Path

import numpy as np
from scipy import signal

EXE = Path(__file__).resolve().parent.parent / "target" / "release" / "leadline"


def main():
    rng = np.random.default_rng(2024)
    t = np.arange(10_000) / 1000.0
    x = 1000 * np.sin(2 * np.pi * 1.2 * t) + 200 * np.sin(2 * np.pi * 60 * t) + 20 * rng.standard_normal(t.size)
    signal.welch(x, fs=1000.0, nperseg=2048)
    runs = 200
    t0 = time.perf_counter()
    for _ in range(runs):
        signal.welch(x, fs=1000.0, nperseg=2048)
    scipy_ms = (time.perf_counter() - t0) * 1e3 / runs
    ours = json.loads(subprocess.check_output([EXE, "bench", "spectrum"]).splitlines()[-1])
    print(f"scipy.signal.welch  {scipy_ms:.3f} ms an update")
    print(f"leadline Welch      {ours['update_ms']:.3f} ms an update")
    print(json.dumps({"scipy_ms": scipy_ms, "leadline_ms": ours["update_ms"], "speedup": scipy_ms / ours["update_ms"]}))


if __name__ == "__main__":
    main()
