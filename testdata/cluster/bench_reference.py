#!/usr/bin/python3
"""Times the reference libraries on data of the same shapes as cluster/bench_test.go.

Run: env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE /usr/bin/python3 testdata/cluster/bench_reference.py
(the machine sets both variables for old OpenBLAS builds; they slow a current numpy).
"""
import time
import numpy as np
from sklearn.cluster import KMeans
from sklearn.metrics import silhouette_score
from scipy.cluster.hierarchy import linkage


def data(n, d, k, seed=1):
    rng = np.random.default_rng(seed)
    c = rng.normal(0, 4, (k, d))
    return c[rng.integers(0, k, n)] + rng.normal(0, 1, (n, d))


def timed(name, f, reps=3):
    best = float("inf")
    for _ in range(reps):
        t = time.perf_counter()
        out = f()
        best = min(best, time.perf_counter() - t)
    print(f"{name}: best of {reps} {best:.3f} s {out}")


x = data(1_000_000, 10, 8)
timed("KMeans n=1e6 d=10 k=8 n_init=10", lambda: "inertia %.6g iter %d" % ((m := KMeans(8, n_init=10, random_state=1).fit(x)).inertia_, m.n_iter_))
x = data(10_000, 10, 8)
timed("ward linkage n=1e4 d=10", lambda: linkage(x, "ward").shape)
x = data(20_000, 10, 8)
lab = np.arange(20_000) % 8
timed("silhouette_score n=2e4 d=10", lambda: "%.4f" % silhouette_score(x, lab))
