#!/usr/bin/env python3
"""Reference fixtures for leadline's filter designs, made with scipy.signal (the reference library).

Writes filters.json: for a grid of Butterworth orders 1-8, corners 0.05 Hz .. 0.45 fs and sample
rates 125-4000 Hz, scipy.signal.butter(..., output='sos') sections, sosfreqz responses, and sosfilt /
sosfiltfilt outputs of a deterministic test signal; scipy.signal.iirnotch coefficients and responses.
The test signal is defined in test_signal() and re-implemented bit for bit in tests/it/dsp_reference.rs.

Run:  python3 tests/reference/make_filters.py [OUT_DIR]     (scipy and numpy versions: requirements.txt)
"""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

MASK = (1 << 64) - 1


def test_signal(n, fs):
    """1 mV-scale sine at 1.3 Hz, 300 at 50 Hz, 200 of LCG noise, and a 500 step at n/2."""
    state = 0x2545F4914F6CDD1D
    out = []
    for i in range(n):
        state = (state * 6364136223846793005 + 1442695040888963407) & MASK
        u = ((state >> 11) / float(1 << 53)) * 2.0 - 1.0
        t = i / fs
        v = 1000.0 * np.sin(2 * np.pi * 1.3 * t) + 300.0 * np.sin(2 * np.pi * 50.0 * t) + 200.0 * u
        if i >= n // 2:
            v += 500.0
        out.append(float(v))
    return np.array(out)


N_SIGNAL = 2000
STRIDE = 7  # every 7th output sample is stored; every sample depends on all earlier ones


def log_freqs(fs, n=48):
    return np.geomspace(0.01, 0.49 * fs, n)


def response(sos, freqs, fs):
    _, h = signal.sosfreqz(sos, worN=freqs, fs=fs)
    mag = 20 * np.log10(np.maximum(np.abs(h), 1e-300))
    return [float(v) for v in mag]


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).parent
    cases = []
    for fs in [125.0, 500.0, 1000.0, 4000.0]:
        corners = [0.05, 0.5, 5.0, 40.0, 0.45 * fs]
        x = test_signal(N_SIGNAL, fs)
        freqs = log_freqs(fs)
        for btype in ["lowpass", "highpass"]:
            for order in range(1, 9):
                for fc in corners:
                    sos = signal.butter(order, fc, btype=btype, fs=fs, output="sos")
                    case = {
                        "btype": btype,
                        "order": order,
                        "corner_hz": fc,
                        "fs": fs,
                        "sos": sos.tolist(),
                        "freqs_hz": freqs.tolist(),
                        "mag_db": response(sos, freqs, fs),
                    }
                    if order in (1, 2, 4, 8) and fc in (0.5, 40.0, 0.45 * fs):
                        case["sosfilt"] = signal.sosfilt(sos, x)[::STRIDE].tolist()
                        if order in (2, 4):
                            case["sosfiltfilt"] = signal.sosfiltfilt(sos, x)[::STRIDE].tolist()
                    cases.append(case)
    notches = []
    for fs in [125.0, 250.0, 500.0, 1000.0, 4000.0]:
        x = test_signal(N_SIGNAL, fs)
        for f0 in [50.0, 60.0]:
            for q in [5.0, 30.0, 100.0]:
                b, a = signal.iirnotch(f0, q, fs=fs)
                sos = np.concatenate([b, a])[None, :]
                freqs = np.array(sorted(set(log_freqs(fs).tolist() + [f0 - f0 / q / 2, f0 + f0 / q / 2])))
                notches.append({
                    "f0_hz": f0,
                    "q": q,
                    "fs": fs,
                    "b": b.tolist(),
                    "a": a.tolist(),
                    "freqs_hz": freqs.tolist(),
                    "mag_db": response(sos, freqs, fs),
                    "sosfilt": signal.sosfilt(sos, x)[::STRIDE].tolist(),
                })
    # The default chain of the monitor at 500 Hz: HP 2 @ 0.5, notch 50 Q 30, LP 4 @ 40.
    fs = 500.0
    sos = np.concatenate([
        signal.butter(2, 0.5, "highpass", fs=fs, output="sos"),
        np.concatenate(signal.iirnotch(50.0, 30.0, fs=fs))[None, :],
        signal.butter(4, 40.0, "lowpass", fs=fs, output="sos"),
    ])
    freqs = np.geomspace(0.05, 240.0, 60)
    _, h = signal.sosfreqz(sos, worN=freqs, fs=fs)
    # Group delay section by section (the delays add): the single transfer function of an
    # 8th-order chain with poles near z = 1 is too ill-conditioned for group_delay((b, a)).
    gd = sum(signal.group_delay((row[:3], row[3:]), w=freqs, fs=fs)[1] for row in sos)
    x = test_signal(N_SIGNAL, fs)
    chain = {
        "fs": fs,
        "freqs_hz": freqs.tolist(),
        "mag_db": (20 * np.log10(np.abs(h))).tolist(),
        "phase_deg": np.degrees(np.unwrap(np.angle(h))).tolist(),
        "group_delay_s": (gd / fs).tolist(),
        "sosfilt": signal.sosfilt(sos, x)[::STRIDE].tolist(),
        "sosfiltfilt": signal.sosfiltfilt(sos, x)[::STRIDE].tolist(),
    }
    doc = {
        "source": f"scipy.signal {scipy.__version__}, numpy {np.__version__}; tests/reference/make_filters.py",
        "n_signal": N_SIGNAL,
        "stride": STRIDE,
        "butter": cases,
        "iirnotch": notches,
        "default_chain": chain,
    }
    (out_dir / "filters.json").write_text(json.dumps(doc, separators=(",", ":")) + "\n")


if __name__ == "__main__":
    main()
