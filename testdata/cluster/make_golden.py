#!/usr/bin/python3
"""Writes the reference values that cluster/ and cluster/groupstat are checked against.

Run from the repository root:  /usr/bin/python3 testdata/cluster/make_golden.py
Needs Debian's python3-sklearn (with python3-scipy, python3-numpy) and, for PAM, r-base-core with
r-cran-cluster. The versions used are written into every file. The iris measurements (Fisher 1936)
are the copy that python3-sklearn ships, committed as testdata/iris.csv.
"""
import json, subprocess, sys, os
import numpy as np, scipy, sklearn
from scipy.cluster.hierarchy import linkage, fcluster, leaves_list
from scipy.spatial.distance import pdist, jensenshannon
from scipy.optimize import linear_sum_assignment
from scipy.stats import kruskal, entropy
from sklearn.cluster import KMeans
from sklearn import metrics

OUT = "testdata/cluster"
versions = {"python": sys.version.split()[0], "numpy": np.__version__, "scipy": scipy.__version__, "sklearn": sklearn.__version__}


def dump(name, obj):
    obj["versions"] = versions
    with open(os.path.join(OUT, name), "w") as f:
        json.dump(obj, f, indent=1, default=lambda a: a.tolist())
        f.write("\n")


def iris():
    rows = open("testdata/iris.csv").read().strip().split("\n")[1:]
    x = np.array([[float(v) for v in r.split(",")[:4]] for r in rows])
    y = np.array([int(r.split(",")[4]) for r in rows])
    return x, y


X, Y = iris()
rng = np.random.default_rng(20261202)
# A small generated set with ties (rounded to a coarse grid) and two far outliers.
T = np.round(np.vstack([rng.normal(0, 1, (20, 3)), rng.normal(4, 1, (20, 3)), [[25, 25, 25], [-30, 10, 0]]]) * 2) / 2
sets = {"iris": X, "ties": T}

# k-means: best inertia of many restarts, and plain Lloyd from given starting centres.
km = {}
for name, x in sets.items():
    for k in (2, 3, 4, 5):
        m = KMeans(n_clusters=k, n_init=100, random_state=0, algorithm="lloyd", tol=1e-12, max_iter=1000).fit(x)
        init = x[rng.choice(len(x), k, replace=False)]
        p = KMeans(n_clusters=k, n_init=1, init=init, algorithm="lloyd", tol=0, max_iter=1000).fit(x)
        km[f"{name}/k={k}"] = {"best_inertia": m.inertia_, "init": init, "lloyd_inertia": p.inertia_,
                               "lloyd_centers": p.cluster_centers_, "lloyd_labels": p.labels_}
dump("kmeans.json", {"source": "sklearn.cluster.KMeans(algorithm='lloyd')", "cases": km})

# Hierarchical: the whole linkage matrix of all four methods, on Euclidean distances.
hc = {}
for name, x in sets.items():
    for method in ("ward", "average", "complete", "single"):
        z = linkage(x, method=method)
        hc[f"{name}/{method}"] = {"heights": z[:, 2], "sizes": z[:, 3].astype(int),
                                 "cut3": fcluster(z, 3, criterion="maxclust"), "cut5": fcluster(z, 5, criterion="maxclust")}
dump("linkage.json", {"source": "scipy.cluster.hierarchy.linkage, fcluster(maxclust)", "cases": hc})

# Validity indices on iris with the species and with a k-means labeling; ARI and NMI on random labelings.
val = {}
for lname, lab in {"species": Y, "kmeans4": KMeans(4, n_init=10, random_state=1).fit(X).labels_}.items():
    val[lname] = {"labels": lab, "silhouette_samples": metrics.silhouette_samples(X, lab),
                  "silhouette": metrics.silhouette_score(X, lab),
                  "calinski_harabasz": metrics.calinski_harabasz_score(X, lab),
                  "davies_bouldin": metrics.davies_bouldin_score(X, lab)}
pairs = []
for n, ka, kb in ((30, 3, 3), (100, 2, 5), (57, 6, 4), (200, 8, 8)):
    a, b = rng.integers(0, ka, n), rng.integers(0, kb, n)
    b[: n // 2] = a[: n // 2] % kb  # partly agreeing
    # The variation of information (Meila 2007): H(a) + H(b) - 2 I(a; b), in nats.
    vi = entropy(np.bincount(a)) + entropy(np.bincount(b)) - 2 * metrics.mutual_info_score(a, b)
    pairs.append({"a": a, "b": b, "ari": metrics.adjusted_rand_score(a, b),
                  "nmi": metrics.normalized_mutual_info_score(a, b), "vi": vi})
dump("validity.json", {"source": "sklearn.metrics silhouette_samples, silhouette_score, calinski_harabasz_score, davies_bouldin_score, adjusted_rand_score, normalized_mutual_info_score; variation of information from mutual_info_score and scipy.stats.entropy",
                       "iris": val, "pairs": pairs})

# PCA on iris, with the sign convention of cluster.FitPCA (largest |loading| positive) applied here.
xc = X - X.mean(0)
u, s, vt = np.linalg.svd(xc, full_matrices=False)
for c in range(vt.shape[0]):
    if vt[c, np.argmax(np.abs(vt[c]))] < 0:
        vt[c] = -vt[c]
var = s ** 2 / (len(X) - 1)
dump("pca.json", {"source": "numpy.linalg.svd of the centred iris data (as sklearn.decomposition.PCA)",
                  "variance": var, "ratio": var / var.sum(), "components": vt, "scores": xc @ vt.T})

# Assignment problems, square and rectangular.
lsa = []
for r, c in ((5, 5), (4, 7), (7, 4), (12, 12)):
    cost = np.round(rng.uniform(0, 10, (r, c)), 1)
    ri, ci = linear_sum_assignment(cost)
    lsa.append({"cost": cost, "rows": ri, "cols": ci, "total": cost[ri, ci].sum()})
dump("assignment.json", {"source": "scipy.optimize.linear_sum_assignment", "cases": lsa})

# Kruskal–Wallis on each iris feature by species, and on tied integer data.
kw = []
for j in range(4):
    g = [X[Y == s, j] for s in range(3)]
    r = kruskal(*g)
    kw.append({"groups": g, "H": r.statistic, "p": r.pvalue})
tied = [rng.integers(0, 5, n).astype(float) for n in (8, 12, 5, 9)]
r = kruskal(*tied)
kw.append({"groups": tied, "H": r.statistic, "p": r.pvalue})
# Cliff's delta from the Mann–Whitney U of scipy: delta = 2U/(m·n) − 1 (U counts ties as one half).
from scipy.stats import mannwhitneyu
cliff = []
for m, n in ((10, 14), (7, 30), (25, 25)):
    a, b = rng.integers(0, 8, m).astype(float), rng.integers(1, 9, n).astype(float)
    u = mannwhitneyu(a, b, alternative="two-sided").statistic
    cliff.append({"x": a, "y": b, "U": u, "delta": 2 * u / (m * n) - 1})
dump("kruskal.json", {"source": "scipy.stats.kruskal; scipy.stats.mannwhitneyu for Cliff's delta", "cases": kw, "cliff": cliff})

# Distances between compositions: Jensen–Shannon from scipy; Hellinger and Aitchison written out in numpy.
comp = rng.dirichlet(np.ones(6) * 0.7, 12)
comp[3, 2] = 0
comp[3] /= comp[3].sum()
comp[7, [0, 5]] = 0
comp[7] /= comp[7].sum()
delta = 1e-4


def clr(p):
    z = p == 0
    r = np.where(z, delta, p * (1 - z.sum() * delta))
    l = np.log(r)
    return l - l.mean()


dist = {"comp": comp, "delta": delta,
        "jensenshannon": pdist(comp, jensenshannon),
        "hellinger": pdist(np.sqrt(comp)) / np.sqrt(2),
        "aitchison": pdist(np.array([clr(p) for p in comp])),
        "euclidean": pdist(comp), "sqeuclidean": pdist(comp, "sqeuclidean")}
dump("distance.json", {"source": "scipy.spatial.distance.pdist and jensenshannon; Hellinger and CLR in numpy", **dist})

# PAM by R's cluster::pam on the Euclidean distances of iris and of the tied set.
pam = {}
for name, x in sets.items():
    np.savetxt("/tmp/pam_in.csv", x, delimiter=",")
    for k in (2, 3, 4):
        out = subprocess.run(["Rscript", "-e",
                              f'library(cluster); x <- as.matrix(read.csv("/tmp/pam_in.csv", header=FALSE)); '
                              f'p <- pam(dist(x), {k}, diss=TRUE); cat(p$id.med, "\\n"); cat(sprintf("%.17g", p$objective), "\\n"); '
                              f'cat(p$clustering, "\\n"); cat(R.version.string, as.character(packageVersion("cluster")), "\\n")'],
                             capture_output=True, text=True, check=True).stdout.strip().split("\n")
        pam[f"{name}/k={k}"] = {"medoids": [int(v) - 1 for v in out[0].split()],
                                "objective_build": float(out[1].split()[0]), "objective_swap": float(out[1].split()[1]),
                                "clustering": [int(v) for v in out[2].split()]}
        rv = out[3]
dump("pam.json", {"source": "R cluster::pam(diss=TRUE), " + rv, "cases": pam, "ties_data": T})
print("wrote", OUT)
