#!/usr/bin/env python3
"""Makes the hostile-input corpus from one small EDF+ file of our own (base.edf, 2 s of the
simulator's ECG written by `leadline filter`). Each case changes one header field the way the
hostile-input review found it broken, or flips bits with a fixed seed.

Run:  python3 tests/data/fuzz/make_corpus.py   (from the repository root)
"""
import random
from pathlib import Path

here = Path(__file__).parent
base = (here / "base.edf").read_bytes()
ns = int(base[252:256].decode().strip())


def field(b, off, width, text):
    t = text.encode("latin-1").ljust(width, b" ")[:width]
    return b[:off] + t + b[off + width:]


def per_signal(b, col_off, width, k, text):
    # Per-signal fields start at 256; col_off is the byte offset of the column for signal 0.
    return field(b, 256 + col_off * ns + k * width, width, text)


# Column offsets (in units of ns): label 16, transducer 80, dimension 8, pmin 8, pmax 8,
# dmin 8, dmax 8, prefilter 80, spr 8, reserved 32.
PMIN, PMAX, SPR = 16 + 80 + 8, 16 + 80 + 8 + 8, 16 + 80 + 8 * 5 + 80

cases = {
    "bdf-header-in-edf.edf": b"\xffBIOSEMI" + base[8:],
    "spr-1e308.edf": field(base, 256 + SPR * ns, 8, "1e308"),
    "pmin-nan.edf": field(base, 256 + PMIN * ns, 8, "NaN"),
    "pmax-inf.edf": field(base, 256 + PMAX * ns, 8, "inf"),
    "pmax-1e308.edf": field(base, 256 + PMAX * ns, 8, "1e308"),
    "records-nan.edf": field(base, 236, 8, "NaN"),
    "records-inf.edf": field(base, 236, 8, "inf"),
    "records-1e308.edf": field(base, 236, 8, "1e308"),
}
rng = random.Random(28)
flipped = bytearray(base)
for _ in range(40):
    i = rng.randrange(0, 256 * (ns + 1))
    flipped[i] ^= 1 << rng.randrange(8)
cases["bitflips.edf"] = bytes(flipped)
for name, data in cases.items():
    (here / name).write_bytes(data)
