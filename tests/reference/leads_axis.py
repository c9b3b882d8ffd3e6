"""Writes a CSV of two limb leads whose frontal QRS axis is known, made with numpy alone.

A beat train (Gaussian R, S and T waves, RR 0.9 s, 500 Hz, 12 s) is placed on a dipole at AXIS
degrees in the frontal plane; lead I sees cos(axis), aVF sees (sqrt(3)/2) sin(axis) of it, and
II = aVF + I/2 (Einthoven and Goldberger). Used by tests/it/leads.rs.

usage: leads_axis.py AXIS_DEG OUT.csv
"""
import sys

import numpy as np

axis = np.radians(float(sys.argv[1]))
fs = 500
t = np.arange(0, 12, 1 / fs)
v = np.zeros_like(t)
for r in np.arange(0.5, 12, 0.9):
    v += np.exp(-((t - r) ** 2) / (2 * 0.012 ** 2))
    v -= 0.2 * np.exp(-((t - r - 0.03) ** 2) / (2 * 0.01 ** 2))
    v += 0.25 * np.exp(-((t - r - 0.3) ** 2) / (2 * 0.05 ** 2))
lead_i = np.cos(axis) * v
avf = np.sqrt(3) / 2 * np.sin(axis) * v
lead_ii = avf + lead_i / 2
with open(sys.argv[2], "w") as f:
    f.write("time_s,I,II\n")
    for k in range(len(t)):
        f.write(f"{t[k]:.4f},{lead_i[k]:.6f},{lead_ii[k]:.6f}\n")
