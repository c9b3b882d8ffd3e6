"""Writes a BDF+ file whose signals have different rates (1000, 800, 500, 975 and 999 Hz, and
units µV, mV and %) with pyedflib, and what pyedflib reads back from it, for tests/it/cli.rs.

Reference library: pyedflib (EDFlib by Teunis van Beelen, https://pypi.org/project/pyEDFlib/).
The signals are invented (sines and ramps), not a recording.

usage: make_mixed_bdf.py OUT_DIR   → OUT_DIR/mixed.bdf, OUT_DIR/mixed_bdf.json
"""
import datetime
import json
import sys
from pathlib import Path

import numpy as np
import pyedflib

out_dir = Path(sys.argv[1])
bdf = out_dir / "mixed.bdf"
seconds = 2
signals = [
    # label, rate, unit, physical range, signal(t)
    ("ECG lead II", 1000, "uV", 3000.0, lambda t: 1200.0 * np.sin(2 * np.pi * 1.2 * t)),
    ("EMG forearm", 800, "uV", 2000.0, lambda t: 300.0 * np.sin(2 * np.pi * 90.0 * t)),
    ("Resp belt", 500, "mV", 10.0, lambda t: 2.5 * np.sin(2 * np.pi * 0.25 * t)),
    ("SpO2", 975, "%", 100.0, lambda t: 95.0 + 0.5 * np.cos(2 * np.pi * 0.1 * t)),
    ("Pleth", 999, "uV", 5000.0, lambda t: 40.0 * t - 20.0),
]
w = pyedflib.EdfWriter(str(bdf), len(signals), file_type=pyedflib.FILETYPE_BDFPLUS)
try:
    w.setStartdatetime(datetime.datetime(2026, 1, 5, 9, 30, 0))
    w.setPatientCode("X")
    w.setEquipment("invented_test_signals")
    headers = []
    data = []
    for label, fs, unit, rng, f in signals:
        headers.append(
            {
                "label": label,
                "dimension": unit,
                "sample_frequency": fs,
                "physical_min": -rng,
                "physical_max": rng,
                "digital_min": -8388608,
                "digital_max": 8388607,
                "transducer": "",
                "prefilter": "",
            }
        )
        t = np.arange(fs * seconds) / fs
        data.append(f(t))
    w.setSignalHeaders(headers)
    w.writeSamples(data)
finally:
    w.close()

r = pyedflib.EdfReader(str(bdf))
try:
    doc = {
        "source": f"pyedflib {pyedflib.__version__}; tests/reference/make_mixed_bdf.py",
        "signals": [
            {
                "label": r.getLabel(i),
                "fs_hz": float(r.getSampleFrequency(i)),
                "unit": r.getPhysicalDimension(i),
                "physical": [round(float(v), 9) for v in r.readSignal(i)],
            }
            for i in range(r.signals_in_file)
        ],
    }
finally:
    r.close()
(out_dir / "mixed_bdf.json").write_text(json.dumps(doc) + "\n")
