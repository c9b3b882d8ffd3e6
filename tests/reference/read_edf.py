"""Reads an EDF/EDF+/BDF file with general-purpose readers and prints what they see as JSON.

Used by tests/it/record.rs to check leadline's files against outside readers:
- pyedflib (EDFlib by Teunis van Beelen, https://pypi.org/project/pyEDFlib/)
- edfio (https://pypi.org/project/edfio/)

usage: read_edf.py FILE
"""
import json
import sys

import edfio
import pyedflib

path = sys.argv[1]
out = {}
f = pyedflib.EdfReader(path)
try:
    n = f.signals_in_file
    out["pyedflib"] = {
        "records": int(f.datarecords_in_file),
        "record_duration_s": float(f.datarecord_duration),
        "signals": [
            {
                "header": f.getSignalHeader(i),
                "digital": f.readSignal(i, digital=True).astype(int).tolist(),
                "physical": f.readSignal(i).tolist(),
            }
            for i in range(n)
        ],
        "annotations": [
            [float(o), str(t)] for o, _d, t in zip(*f.readAnnotations())
        ],
        "startdate": f.getStartdatetime().isoformat(),
    }
finally:
    f.close()

reader = edfio.read_bdf if path.lower().endswith(".bdf") else edfio.read_edf
e = reader(path)
out["edfio"] = {
    "records": int(e.num_data_records),
    "signals": [
        {
            "label": s.label,
            "physical_dimension": s.physical_dimension,
            "physical_min": float(s.physical_min),
            "physical_max": float(s.physical_max),
            "digital_min": int(s.digital_min),
            "digital_max": int(s.digital_max),
            "sampling_frequency": float(s.sampling_frequency),
            "digital": s.digital.astype(int).tolist(),
        }
        for s in e.signals
    ],
    "annotations": [[float(a.onset), a.text] for a in e.annotations],
}
json.dump(out, sys.stdout)
