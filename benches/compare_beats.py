#!/usr/bin/env python3
"""Offline beat detection of a 30-minute 360 Hz record (MIT-BIH 100, first signal), leadline
against reference Python detectors measured in the same run: neurokit2's default method
(nk.ecg_peaks) and wfdb's XQRS (wfdb.processing.xqrs_detect).

Data: MIT-BIH Arrhythmia Database, PhysioNet (Moody & Mark 2001; Goldberger et al. 2000), ODC-By 1.0.
Run:  cargo build --release && .venv/bin/pip install neurokit2 wfdb && .venv/bin/python benches/compare_beats.py
"""
import json
import subprocess
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
EXE = ROOT / "target" / "release" / "leadline"
RECORD = ROOT / "tests" / "data" / "mitdb" / "100"


def main():
    import neurokit2 as nk
    import wfdb
    from wfdb import processing

    sig, fields = wfdb.rdsamp(str(RECORD), channels=[0])
    x = sig[:, 0]
    fs = fields["fs"]
    t = time.perf_counter()
    nk.ecg_peaks(x, sampling_rate=fs)
    nk_ms = (time.perf_counter() - t) * 1e3
    t = time.perf_counter()
    processing.xqrs_detect(sig=x, fs=fs, verbose=False)
    xqrs_ms = (time.perf_counter() - t) * 1e3
    ours = json.loads(subprocess.check_output([EXE, "bench", "beats", "--record", str(RECORD) + ".hea"]).splitlines()[-1])
    print(f"neurokit2 ecg_peaks  {nk_ms:9.1f} ms")
    print(f"wfdb xqrs_detect     {xqrs_ms:9.1f} ms")
    print(f"leadline             {ours['detect_ms']:9.1f} ms")
    print(json.dumps({
        "samples": int(np.size(x)),
        "neurokit2_ms": nk_ms,
        "xqrs_ms": xqrs_ms,
        "leadline_ms": ours["detect_ms"],
        "speedup_vs_neurokit2": nk_ms / ours["detect_ms"],
        "speedup_vs_xqrs": xqrs_ms / ours["detect_ms"],
    }))


if __name__ == "__main__":
    main()
