#!/usr/bin/env python3
"""leadline's chain against scipy.signal.sosfilt, measured in one run on this machine.

Same chain as `leadline bench dsp` (HP 2nd order 0.5 Hz + notch 60 Hz Q 30 + LP 4th order 40 Hz at
1 kHz, sections from leadline's own `sos` command) over the same number of samples.

- In process: `leadline bench dsp` times the functions `leadline filter` calls (filter_settled,
  zero_phase) and the DSP thread's call; scipy.signal.sosfilt / sosfiltfilt on the same chain.
- Whole process: `leadline filter` on a raw little-endian float64 file of N samples (read, filter,
  write) against a Python process that reads the same file, runs sosfilt and writes the result;
  the two outputs are compared.

Run:  cargo build --release && .venv/bin/python benches/compare_scipy.py [N_SAMPLES]
"""
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from scipy import signal

ROOT = Path(__file__).resolve().parent.parent
EXE = ROOT / "target" / "release" / "leadline"
CHAIN = ["--highpass", "0.5", "--notch", "60", "--lowpass", "40"]


def best_of(runs, f):
    best = float("inf")
    for _ in range(runs):
        t = time.perf_counter()
        f()
        best = min(best, time.perf_counter() - t)
    return best


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 10_000_000
    sos = np.array(json.loads(subprocess.check_output([EXE, "sos", *CHAIN, "--fs", "1000"])))
    rng = np.random.default_rng(2024)
    t = np.arange(n) / 1000.0
    x = 1000 * np.sin(2 * np.pi * 1.2 * t) + 200 * np.sin(2 * np.pi * 60 * t) + 20 * rng.standard_normal(n)

    one = best_of(3, lambda: signal.sosfilt(sos, x))
    zp = best_of(3, lambda: signal.sosfiltfilt(sos, x))
    ours = json.loads(subprocess.check_output([EXE, "bench", "dsp", "--samples", str(n)]).splitlines()[-1])

    with tempfile.TemporaryDirectory() as d:
        src, out_ll, out_py = Path(d, "x.f64"), Path(d, "ll.f64"), Path(d, "py.f64")
        x.astype("<f8").tofile(src)
        ll_cmd = [EXE, "filter", "--input", src, "--fs", "1000", "--units", "uV", *CHAIN, "--out", out_ll]
        py_cmd = [sys.executable, "-c",
                  "import sys, numpy as np; from scipy import signal; "
                  "sos = np.array(eval(sys.argv[3])); x = np.fromfile(sys.argv[1], '<f8'); "
                  "zi = signal.sosfilt_zi(sos) * x[0]; "
                  "signal.sosfilt(sos, x, zi=zi)[0].astype('<f8').tofile(sys.argv[2])",
                  src, out_py, json.dumps(sos.tolist())]
        ll_whole = best_of(3, lambda: subprocess.run(ll_cmd, check=True, capture_output=True))
        py_whole = best_of(3, lambda: subprocess.run(py_cmd, check=True, capture_output=True))
        a, b = np.fromfile(out_ll, "<f8"), np.fromfile(out_py, "<f8")
        worst = float(np.max(np.abs(a - b)) / np.max(np.abs(b)))

    rows = [
        ("in process, causal one pass", ours["filter_samples_per_s"], n / one),
        ("in process, zero phase", ours["zero_phase_samples_per_s"], n / zp),
        ("whole process, read + causal + write", n / ll_whole, n / py_whole),
    ]
    print(f"{'':40} {'leadline':>10} {'scipy':>10} {'ratio':>7}   (M samples/s, {n} samples)")
    for what, ll, sp in rows:
        print(f"{what:40} {ll / 1e6:10.1f} {sp / 1e6:10.1f} {ll / sp:7.2f}")
    print(f"DSP thread: 1 ch × 1 kHz in 10-frame blocks {ours['live_1ch_samples_per_s'] / 1e6:.1f}, "
          f"8 ch × 2 kHz in 20-frame blocks {ours['live_8ch_samples_per_s'] / 1e6:.1f} M samples/s")
    print(f"largest difference of the whole-process outputs: {worst:.1e} of the peak")
    print(json.dumps({
        "samples": n,
        "causal": {"leadline": ours["filter_samples_per_s"], "scipy": n / one},
        "zero_phase": {"leadline": ours["zero_phase_samples_per_s"], "scipy": n / zp},
        "whole_process": {"leadline": n / ll_whole, "scipy": n / py_whole},
        "whole_process_max_rel_diff": worst,
        "live_1ch": ours["live_1ch_samples_per_s"],
        "live_8ch": ours["live_8ch_samples_per_s"],
    }))


if __name__ == "__main__":
    main()
