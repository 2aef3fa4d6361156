#!/usr/bin/python3
"""Reference rotations for cluster.Rotation3, from scipy.spatial.transform.Rotation.align_vectors.

Run from the repository root:  /usr/bin/python3 testdata/cluster/make_rotation.py
Uses Debian's python3-scipy (and numpy); the versions are written into the file. Each case has
source vectors, target vectors, their cross-product matrix M = sum(target_i source_i^T), and the
proper rotation that scipy finds to turn the sources onto the targets (least squares, no
reflection). Invented data: random vectors from a fixed seed.
"""
import json, sys
import numpy as np, scipy
from scipy.spatial.transform import Rotation

rng = np.random.default_rng(20261202)
cases = []
def case(name, src, tgt):
    r, _ = Rotation.align_vectors(tgt, src)  # finds R with tgt ≈ R·src
    m = tgt.T @ src
    cases.append({"name": name, "m": m.ravel().tolist(), "rotation": r.as_matrix().ravel().tolist()})

src = rng.normal(size=(40, 3))
turn = Rotation.from_rotvec([0.3, -0.5, 0.2])
case("40 vectors, a turn of 35 degrees, noise 0.05", src, turn.apply(src) + rng.normal(scale=0.05, size=src.shape))
src = rng.normal(size=(12, 3)) + [0, 0, -1]
case("12 gravity-like vectors, a turn of 120 degrees", src, Rotation.from_rotvec([0, 2.0, 0.6]).apply(src))
src = rng.normal(size=(30, 3))
mirror = src * [1, 1, -1]
case("mirrored targets: the best proper rotation, not the reflection", src, mirror)
src = rng.normal(size=(25, 3))
case("identity", src, src.copy())

json.dump({"versions": {"python": sys.version.split()[0], "numpy": np.__version__, "scipy": scipy.__version__}, "cases": cases},
          open("testdata/cluster/rotation.json", "w"), indent=1)
open("testdata/cluster/rotation.json", "a").write("\n")
