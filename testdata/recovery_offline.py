#!/usr/bin/python3
"""Rules studied away from the recovery benchmark, on what its runs chose.

First dump the runs (a developer's aid; about 10 minutes for seeds 1-100 on two cores; the
defaults alone are enough for the rules for the number of groups):
  for s in tune40 fresh fresh2 fresh3; do COHORTMIX_RECOVERY_DUMP=DIR go test ./cmd/cohortmix/ \
    -run '^TestRecoveryBenchmark$' -recovery $s -recovery.variants "defaults,states 12" -count=1; done
then:  /usr/bin/python3 testdata/recovery_offline.py DIR
Each dump holds a scenario's planted groups, the participants' signatures, the state centres and
the grouping criteria over 2-8 groups. Ward linkage on the square roots of the shares (scipy, as
cohortmix's ward-hellinger) is cut at each number of groups and scored by the adjusted Rand index
(sklearn). Printed: each rule for the number of groups; the true number and the best number for
each scenario (bounds no rule can pass with these states); a fine codebook of 12 states grouped on
the maximum mean discrepancy between signatures (Gretton et al. 2012; Gaussian kernel on the state
centres, bandwidth the median centre distance times f); and picking, per scenario, between the
merged states and the 12-state codebook by the grouping's bootstrap stability (Lange et al. 2004).
Uses Debian's python3-numpy, python3-scipy and python3-sklearn.
"""
import glob, json, sys
import numpy as np
from scipy.cluster.hierarchy import linkage, fcluster
from sklearn.metrics import adjusted_rand_score as ari

DIR = sys.argv[1] if len(sys.argv) > 1 else "dump"


def load(variant):
    out = {}
    for fn in sorted(glob.glob(f"{DIR}/seed-*-{variant}.json")):
        d = json.load(open(fn))
        out[d["seed"]] = d
    return out


def cuts(X, want):
    Z = linkage(X, "ward")
    return {k: ari(want, fcluster(Z, k, "maxclust")) for k in range(2, 9)}


def gap_rule(sc):
    ks = sorted(sc)
    for i, k in enumerate(ks[:-1]):
        n = ks[i + 1]
        if sc[k]["Gap"] >= sc[n]["Gap"] - sc[n]["GapSE"]:
            return k
    return ks[-1]


def mmd_embedding(d, f):
    P = np.maximum(0, np.array(d["shares"]))
    K = P.shape[1]
    C = np.array(d["centroids"]).reshape(K, d["dim"])
    D = np.sqrt(((C[:, None] - C[None]) ** 2).sum(-1))
    G = np.exp(-D ** 2 / (2 * (np.median(D[np.triu_indices(K, 1)]) * f) ** 2))
    w, V = np.linalg.eigh(G)
    return P @ (V @ np.diag(np.sqrt(np.maximum(w, 0))) @ V.T)


def line(name, vals):
    if not vals:
        return  # not dumped
    v = np.array(vals)
    print(f"{name:58s} n={len(v):3d}  mean {v.mean():.3f}  worst {v.min():.3f}  below 0.60: {int((v < 0.6).sum())}")


merged, fine = load("defaults"), load("states_12")
def gap_stable(sc, step=0.1):
    """The gap statistic's number, then one fewer while that groups more stably by more than step."""
    k = gap_rule(sc)
    while k - 1 in sc and sc[k - 1]["Stability"] > sc[k]["Stability"] + step:
        k -= 1
    return k


def gap_steady(sc, stable=0.8):
    """gap_stable's number, or when its grouping is tentative (stability below stable) the largest
    smaller number whose grouping is not."""
    k = gap_stable(sc)
    if sc[k]["Stability"] < stable:
        k = max([j for j in sc if j < k and sc[j]["Stability"] >= stable], default=k)
    return k


rules = {
    "gap-stable-firm (the default)": lambda d, a, sc: gap_steady(sc),
    "gap statistic, then fewer while more stable by > 0.1 (gap-stable)": lambda d, a, sc: gap_stable(sc),
    "gap statistic": lambda d, a, sc: gap_rule(sc),
    "largest mean silhouette": lambda d, a, sc: max(sc, key=lambda k: sc[k]["Silhouette"]),
    "largest gap": lambda d, a, sc: max(sc, key=lambda k: sc[k]["Gap"]),
    "largest bootstrap stability": lambda d, a, sc: max(sc, key=lambda k: sc[k]["Stability"]),
    "the true number (a bound)": lambda d, a, sc: d["true_groups"],
    "the best number for each scenario (a bound)": lambda d, a, sc: max(a, key=a.get),
}
for name, rule in rules.items():
    vals = []
    for d in merged.values():
        a = cuts(np.sqrt(np.maximum(0, np.array(d["shares"]))), d["want"])
        vals.append(a[rule(d, a, {s["K"]: s for s in d["scores"]})])
    line("states as the run kept them, groups by " + name, vals)
if not fine:
    sys.exit(0)  # the runs with 12 states were not dumped
for f in (0.3, 0.5, 1.0):
    line(f"12 states, MMD f={f}, true number of groups (a bound)",
         [cuts(mmd_embedding(d, f), d["want"])[d["true_groups"]] for d in fine.values()])
vals = []
for seed, d in merged.items():
    e = fine[seed]
    pick = e if {s["K"]: s for s in e["scores"]}[e["groups"]]["Stability"] > {s["K"]: s for s in d["scores"]}[d["groups"]]["Stability"] else d
    vals.append(ari(pick["want"], pick["labels"]))
line("merged or 12 states, whichever groups more stably", vals)

# The two levels of states side by side, when the runs were dumped with the variants
# "states level merged,states 12" (the states as fitted are the 12 the default run would keep).
# A proxy: the run compares the levels on the sampled participants, these are the whole cohorts'
# groupings; it chose the margin of the second reason (cohort/job LevelGapMargin), then checked
# in full runs.
levels_m, levels_f = load("states_level_merged"), load("states_12")
both = sorted(set(levels_m) & set(levels_f))
if both:
    def scored(d):
        return {s["K"]: s for s in d["scores"]}, cuts(np.sqrt(np.maximum(0, np.array(d["shares"]))), d["want"])
    pairs = {s: (scored(levels_m[s]), scored(levels_f[s])) for s in both}

    def pick(m, f, margin):
        (ms, _), (fs, _) = m, f
        km, kf = gap_stable(ms), gap_stable(fs)
        if fs[kf]["Stability"] > ms[km]["Stability"] + ms[km]["StabilitySE"]:
            return f
        if margin is not None and kf > km and fs[kf]["Stability"] > ms[kf]["Stability"] + ms[kf]["StabilitySE"] \
                and fs[kf]["Gap"] > ms[km]["Gap"] + margin:
            return f
        return m

    for margin in (None, 0.0, 0.05, 0.1, 0.15, 0.2):
        vals = []
        for s in both:
            sc, a = pick(*pairs[s], margin)
            vals.append(a[gap_steady(sc)])
        line("levels: more stable" + ("" if margin is None else f", or more groups with a gap larger by > {margin}"), vals)
