#!/usr/bin/env python3
"""Reference fixture for leadline's one percentile helper (src/numeric.rs), made with numpy.

Draw sets of several sizes (1, 2, 7, 2000 values; one with ties) are drawn with numpy's seeded
generator and written with numpy.percentile (default method "linear") at the percentiles the
product prints. The Rust test feeds the same draws to `numeric::percentile` and compares.

Run:  python3 tests/reference/make_percentile.py [OUT_DIR]   (versions: requirements.txt)
"""
import json
import sys
from pathlib import Path

import numpy as np

PS = [0.0, 1.0, 5.0, 25.0, 50.0, 75.0, 95.0, 99.0, 100.0]


def main():
    out = Path(sys.argv[1] if len(sys.argv) > 1 else Path(__file__).parent)
    rng = np.random.default_rng(20261204)
    sets = [
        rng.normal(50.0, 0.4, 1),
        rng.normal(50.0, 0.4, 2),
        rng.uniform(-3.0, 3.0, 7),
        # A twin-T-like centre: 50 Hz scaled by parts drawn uniformly within ±1 % and ±5 %.
        50.0 / np.sqrt(rng.uniform(0.99, 1.01, 2000) * rng.uniform(0.95, 1.05, 2000)),
        np.round(rng.uniform(0.0, 4.0, 50)),
    ]
    cases = []
    for s in sets:
        cases.append({
            "values": [float(v) for v in s],
            "percentiles": PS,
            "expected": [float(np.percentile(s, p)) for p in PS],
        })
    doc = {"numpy": np.__version__, "method": "linear", "cases": cases}
    (out / "percentile.json").write_text(json.dumps(doc, indent=1) + "\n")


if __name__ == "__main__":
    main()
