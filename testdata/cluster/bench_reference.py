#!/usr/bin/python3
"""Times the reference libraries on the points that cluster/bench_test.go uses.

Run testdata/cluster/bench_reference.sh, which first has the Go benchmarks write their points
(COHORTMIX_BENCH_DUMP) and then runs this script with OPENBLAS_CORETYPE and OPENBLAS_L2_SIZE
unset (the machine sets both for old OpenBLAS builds; they slow a current numpy).
"""
import os, sys, time
import numpy as np
from sklearn.cluster import KMeans
from sklearn.metrics import silhouette_score
from scipy.cluster.hierarchy import linkage

d = sys.argv[1]


def load(n, dim):
    return np.fromfile(os.path.join(d, f"bench-{n}-{dim}.f64"), dtype="<f8").reshape(n, dim)


def timed(name, f, reps=3):
    best = float("inf")
    for _ in range(reps):
        t = time.perf_counter()
        out = f()
        best = min(best, time.perf_counter() - t)
    print(f"{name}: best of {reps} {best:.3f} s  {out}")


x = load(1_000_000, 10)
timed("sklearn KMeans(8, n_init=10) n=1e6 d=10", lambda: "inertia %.1f iterations %d" % ((m := KMeans(8, n_init=10, random_state=1).fit(x)).inertia_, m.n_iter_))
x = load(10_000, 10)
timed("scipy linkage(ward) n=1e4 d=10", lambda: "top height %.6f" % linkage(x, "ward")[-1, 2])
x = load(20_000, 10)
lab = np.arange(20_000) % 8
timed("sklearn silhouette_score n=2e4 d=10", lambda: "%.6f" % silhouette_score(x, lab))
