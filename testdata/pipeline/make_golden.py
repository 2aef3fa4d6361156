#!/usr/bin/python3
"""Reference values for the main job's stages on the small synthetic cohort in this folder.

Run from the repository root:  /usr/bin/python3 testdata/pipeline/make_golden.py
Uses Debian's python3-sklearn 1.2.1, python3-scipy 1.10.1 and numpy 1.24.2 (written into the
output). Each stage is computed here from the same inputs as cohortmix gets, written out in numpy
where no library routine exists (ICC(1), the rest baseline), so the Go tests can compare stage by stage.
"""
import json, sys, math
import numpy as np, scipy, sklearn
from sklearn.preprocessing import StandardScaler
from sklearn.decomposition import PCA
from sklearn.cluster import KMeans
from scipy.cluster.hierarchy import linkage, fcluster
from scipy.stats import kruskal

rows = open("testdata/pipeline/small-cohort.csv").read().strip().split("\n")
header = rows[0].split(",")
feat = header[2:]
ids, X = [], []
for r in rows[1:]:
    f = r.split(",")
    ids.append(f[0])
    X.append([float(v) for v in f[2:]])
# cohortmix keeps every feature value to float32 precision from the moment it is read (see the
# reader's summarize), so the reference starts from the same rounded values.
X = np.array(X, dtype=np.float32).astype(np.float64)
units = list(dict.fromkeys(ids))
ids = np.array(ids)
blocks = [X[ids == u] for u in units]
d = X.shape[1]

# ICC(1), one-way random effects (Shrout & Fleiss 1979), n0 for unequal sizes (Donner 1986).
N, a = len(X), len(blocks)
grand = X.mean(0)
n_i = np.array([len(b) for b in blocks])
ssb = sum(len(b) * (b.mean(0) - grand) ** 2 for b in blocks)
ssw = sum(((b - b.mean(0)) ** 2).sum(0) for b in blocks)
msb, msw = ssb / (a - 1), ssw / (N - a)
n0 = (N - (n_i ** 2).sum() / N) / (a - 1)
icc = (msb - msw) / (msb + (n0 - 1) * msw)
touched = icc >= 0.3

# Rest baseline: per participant, the median of the touched features over its 10 % quietest
# windows, quietness being the sum of the untouched features scaled by the cohort median and MAD.
mid = np.median(X, 0)
mad = np.median(np.abs(X - mid), 0)
quiet = np.where(~touched)[0]
Y = []
for b in blocks:
    score = ((b[:, quiet] - mid[quiet]) / mad[quiet]).sum(1)
    m = max(1, math.ceil(0.1 * len(b)))
    rest = np.argsort(score, kind="stable")[:m]
    y = b.copy()
    y[:, touched] = b[:, touched] - np.median(b[rest][:, touched], 0)
    Y.append(y)
Y = np.vstack(Y)
Z = StandardScaler().fit_transform(Y)  # population s.d.
pca = PCA(n_components=0.99, svd_solver="full").fit(Z)
comp = pca.components_.copy()
for c in range(len(comp)):  # cohortmix's sign convention: the largest |loading| is positive
    if comp[c, np.argmax(np.abs(comp[c]))] < 0:
        comp[c] = -comp[c]
S = (Z - pca.mean_) @ comp.T

# States: k-means on all windows, then each participant's shares and mean bout lengths.
km = KMeans(5, n_init=10, random_state=0).fit(S)
lab = km.predict(S)
shares, bouts = [], []
off = 0
for b in blocks:
    l = lab[off:off + len(b)]
    off += len(b)
    sh = np.bincount(l, minlength=5) / len(l)
    runs = np.zeros(5)
    for i in range(len(l)):
        if i == 0 or l[i] != l[i - 1]:
            runs[l[i]] += 1
    cnt = np.bincount(l, minlength=5)
    bouts.append(np.where(runs > 0, cnt / np.maximum(runs, 1), 0))
    shares.append(sh)
shares, bouts = np.array(shares), np.array(bouts)

# Groups: Ward on the Hellinger transform of the shares, cut into 3.
z = linkage(np.sqrt(shares), "ward")
groups = fcluster(z, 3, criterion="maxclust") - 1

# Separating variables: Kruskal–Wallis across the groups.
variables = {}
for s in range(5):
    variables[f"share S{s+1}"] = shares[:, s]
    variables[f"bout S{s+1}"] = np.where(bouts[:, s] > 0, bouts[:, s], np.nan)  # never in the state: no bout
for j, name in enumerate(feat):
    variables["median " + name] = np.array([np.median(b[:, j]) for b in blocks])
kw = {}
for name, vals in variables.items():
    g = [vals[(groups == k) & ~np.isnan(vals)] for k in range(3)]
    g = [x for x in g if len(x) > 0]  # a group without values takes no part
    try:
        r = kruskal(*g)
        kw[name] = {"H": r.statistic, "p": r.pvalue}
    except ValueError:
        pass

out = {"versions": {"python": sys.version.split()[0], "numpy": np.__version__, "scipy": scipy.__version__, "sklearn": sklearn.__version__},
       "features": feat, "units": units, "icc": icc, "touched": touched, "center": Y.mean(0), "spread": Y.std(0),
       "pca_variance": pca.explained_variance_, "pca_components": comp, "scores_first_rows": S[:50],
       "state_centroids": km.cluster_centers_, "labels": lab, "shares": shares, "bouts": bouts,
       "ward_heights": z[:, 2], "groups": groups, "kruskal": kw}
json.dump(out, open("testdata/pipeline/golden.json", "w"), indent=1, default=lambda a: a.tolist())
print("wrote testdata/pipeline/golden.json; groups", np.bincount(groups))
