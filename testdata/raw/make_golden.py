#!/usr/bin/python3
"""Golden features of the raw step (cohort/raw), computed with numpy (Debian's python3-numpy).

Writes small.csv, an invented recording (synthetic: two minutes at 25 Hz of a resting wrist, a
walk at 1.9 Hz and a brisk movement at 2.6 Hz, with noise), and golden.csv, the features of its
10-second windows by the definitions in cohort/raw/features.go, computed here independently:

    /usr/bin/python3 testdata/raw/make_golden.py

Rerun only when the definitions change, and say why in the commit.
"""
import os
from datetime import datetime, timedelta, timezone

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
RATE, SECONDS, WINDOW = 25, 120, 10

rng = np.random.default_rng(7)
n = RATE * SECONDS
t = np.arange(n) / RATE
posture = np.array([0.3, -0.5, 0.81])
posture /= np.linalg.norm(posture)
amp = np.where(t < 40, 0.0, np.where(t < 80, 0.25, 0.6))
freq = np.where(t < 40, 0.0, np.where(t < 80, 1.9, 2.6))
wave = amp * np.sin(2 * np.pi * freq * t)
xyz = posture[None, :] * (1 + wave)[:, None] + 0.004 * rng.standard_normal((n, 3))
xyz = np.round(xyz, 4)

start = datetime(2026, 3, 2, 8, 0, 0, tzinfo=timezone(timedelta(hours=1)))
with open(os.path.join(HERE, "small.csv"), "w") as f:
    f.write("time,x,y,z\n")
    for i in range(n):
        at = start + timedelta(microseconds=round(i * 1e6 / RATE))
        f.write("%s.%03d+01:00,%.4f,%.4f,%.4f\n" % (at.strftime("%Y-%m-%dT%H:%M:%S"), at.microsecond // 1000, *xyz[i]))

names = ["enmo_mg", "mad_mg", "anglez_deg", "mean_x", "mean_y", "mean_z", "sd_x", "sd_y", "sd_z",
         "corr_xy", "corr_xz", "corr_yz", "vm_mean", "vm_sd", "vm_peak", "dom_freq_hz", "dom_power_share",
         "power_0_3_to_3hz", "power_3_to_10hz", "spectral_entropy"]
rows = []
per = RATE * WINDOW
for w in range(SECONDS // WINDOW):
    x, y, z = xyz[w * per:(w + 1) * per].T
    vm = np.sqrt(x * x + y * y + z * z)
    c = np.fft.rfft(vm - vm.mean())
    p = (c * np.conj(c)).real[1:]
    f = np.arange(1, len(c)) * RATE / per
    total = p.sum()
    moving = f >= 0.3
    k = np.argmax(np.where(moving, p, -1))
    q = p / total
    q = q[q > 0]
    row = [1000 * np.maximum(vm - 1, 0).mean(), 1000 * np.abs(vm - vm.mean()).mean(),
           np.degrees(np.arctan2(z, np.hypot(x, y))).mean(), x.mean(), y.mean(), z.mean(), x.std(), y.std(), z.std(),
           np.corrcoef(x, y)[0, 1], np.corrcoef(x, z)[0, 1], np.corrcoef(y, z)[0, 1], vm.mean(), vm.std(), vm.max(),
           f[k], p[k] / total, p[(f >= 0.3) & (f < 3)].sum() / total, p[(f >= 3) & (f < 10)].sum() / total,
           -(q * np.log(q)).sum() / np.log(len(p))]
    at = (start + timedelta(seconds=w * WINDOW)).astimezone(timezone.utc)
    rows.append([at.strftime("%Y-%m-%dT%H:%M:%SZ")] + ["%.17g" % v for v in row])
with open(os.path.join(HERE, "golden.csv"), "w") as f:
    f.write("window," + ",".join(names) + "\n")
    for r in rows:
        f.write(",".join(r) + "\n")
