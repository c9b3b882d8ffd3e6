#!/usr/bin/env python3
"""leadline's chain against scipy.signal.sosfilt, measured in one run on this machine.

Same chain as `leadline bench dsp` (HP 2nd order 0.5 Hz + notch 60 Hz Q 30 + LP 4th order 40 Hz at
1 kHz, sections from leadline's own `sos` command) over the same number of samples; scipy is timed
in one pass and in carried-state blocks of 64 samples. Prints both figures and the ratios.

Run:  cargo build --release && .venv/bin/python benches/compare_scipy.py [N_SAMPLES]
"""
import json
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
from scipy import signal

ROOT = Path(__file__).resolve().parent.parent
EXE = ROOT / "target" / "release" / "leadline"


def best_of(runs, f):
    best = float("inf")
    for _ in range(runs):
        t = time.perf_counter()
        f()
        best = min(best, time.perf_counter() - t)
    return best


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 10_000_000
    sos = np.array(json.loads(subprocess.check_output(
        [EXE, "sos", "--highpass", "0.5", "--notch", "60", "--lowpass", "40", "--fs", "1000"])))
    rng = np.random.default_rng(2024)
    t = np.arange(n) / 1000.0
    x = 1000 * np.sin(2 * np.pi * 1.2 * t) + 200 * np.sin(2 * np.pi * 60 * t) + 20 * rng.standard_normal(n)

    one = best_of(3, lambda: signal.sosfilt(sos, x))
    m = min(n, 1_000_000)  # blocks of 64 are slow in Python: time a million samples

    def blocks():
        zi = np.zeros((sos.shape[0], 2))
        for i in range(0, m, 64):
            _, zi = signal.sosfilt(sos, x[i:i + 64], zi=zi)

    blk = best_of(1, blocks)
    ours = json.loads(subprocess.check_output([EXE, "bench", "dsp", "--samples", str(n)]).splitlines()[-1])
    sp_one, sp_blk = n / one, m / blk
    print(f"scipy.signal.sosfilt one pass      {sp_one / 1e6:8.1f} M samples/s")
    print(f"scipy.signal.sosfilt blocks of 64  {sp_blk / 1e6:8.2f} M samples/s")
    print(f"leadline one pass                  {ours['samples_per_s'] / 1e6:8.1f} M samples/s")
    print(f"leadline blocks of 64              {ours['block64_samples_per_s'] / 1e6:8.1f} M samples/s")
    print(f"leadline hand-written loop         {ours['direct_loop_samples_per_s'] / 1e6:8.1f} M samples/s")
    out = {
        "scipy_samples_per_s": sp_one,
        "scipy_block64_samples_per_s": sp_blk,
        "leadline_samples_per_s": ours["samples_per_s"],
        "leadline_block64_samples_per_s": ours["block64_samples_per_s"],
        "ratio_one_pass": ours["samples_per_s"] / sp_one,
        "ratio_block64": ours["block64_samples_per_s"] / sp_blk,
        "chain_vs_direct": ours["chain_vs_direct"],
    }
    print(json.dumps(out))


if __name__ == "__main__":
    main()
