#!/usr/bin/python3
"""The numpy reference for the speed of the features step (BenchmarkRunCSV in cohort/raw).

Reads a raw recording (time,x,y,z; one participant) with numpy.loadtxt and computes the same 20
features per 60-second window as cohort/raw (ENMO, MAD, arm angle, axis means, s.d.s and
correlations, vector magnitude mean, s.d. and peak, dominant frequency and share, band powers,
spectral entropy), without calibration or non-wear, vectorized over windows; prints the time of
the read and of the features and the samples per second of both. Debian's python3-numpy:

    /usr/bin/python3 testdata/raw/bench_numpy.py recording.csv 100
"""
import sys
import time

import numpy as np

path, rate = sys.argv[1], float(sys.argv[2])
t0 = time.perf_counter()
xyz = np.loadtxt(path, delimiter=",", skiprows=1, usecols=(1, 2, 3))
t1 = time.perf_counter()
per = int(60 * rate)
w = len(xyz) // per
x, y, z = (xyz[: w * per, i].reshape(w, per) for i in range(3))
vm = np.sqrt(x * x + y * y + z * z)
m = vm.mean(axis=1, keepdims=True)
feats = [1000 * np.maximum(vm - 1, 0).mean(axis=1), 1000 * np.abs(vm - m).mean(axis=1),
         np.degrees(np.arctan2(z, np.hypot(x, y))).mean(axis=1)]
for a in (x, y, z):
    feats += [a.mean(axis=1), a.std(axis=1)]
for a, b in ((x, y), (x, z), (y, z)):
    da, db = a - a.mean(axis=1, keepdims=True), b - b.mean(axis=1, keepdims=True)
    feats.append((da * db).sum(axis=1) / np.sqrt((da * da).sum(axis=1) * (db * db).sum(axis=1)))
feats += [m[:, 0], vm.std(axis=1), vm.max(axis=1)]
c = np.fft.rfft(vm - m, axis=1)
p = (c * np.conj(c)).real[:, 1:]
f = np.arange(1, c.shape[1]) * rate / per
total = p.sum(axis=1)
k = np.argmax(np.where(f >= 0.3, p, -1), axis=1)
q = p / total[:, None]
with np.errstate(divide="ignore", invalid="ignore"):
    ent = -np.nansum(np.where(q > 0, q * np.log(q), 0), axis=1) / np.log(p.shape[1])
feats += [f[k], p[np.arange(w), k] / total, p[:, (f >= 0.3) & (f < 3)].sum(axis=1) / total,
          p[:, (f >= 3) & (f < 10)].sum(axis=1) / total, ent]
t2 = time.perf_counter()
n = w * per
print("%d samples: read %.2f s (%.2f M samples/s), features %.2f s (%.2f M samples/s), both %.2f M samples/s"
      % (n, t1 - t0, n / (t1 - t0) / 1e6, t2 - t1, n / (t2 - t1) / 1e6, n / (t2 - t0) / 1e6))
