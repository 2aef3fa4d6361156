#!/usr/bin/python3
"""How exclusively the participants use pairs of states, on the recovery benchmark's dumped runs.

A posture held twice by the state fit, once per device slant, shows as two states that the
participants use one or the other of and rarely both. For states s and t, with p_is participant
i's share of windows in s, the overlap sum_i min(p_is, p_it) / min(sum_i p_is, sum_i p_it) is 0
when no participant uses both (states with less than 2 % of the participants' time are left
out). Printed: each scenario's least overlap over its kept states, the 40 least first, with its
adjusted Rand index (sklearn) against the planted groups, then the rank of every loss (below
0.60). It chose the fold of twin states' threshold (profile/align.go, twinOverlap).

Dump the runs first (see testdata/recovery_offline.py), then:
  /usr/bin/python3 testdata/recovery_overlap.py DIR [DIR ...]
Uses Debian's python3-numpy and python3-sklearn.
"""
import json, os, sys
import numpy as np
from sklearn.metrics import adjusted_rand_score

rows = []
for d in sys.argv[1:]:
    for f in sorted(os.listdir(d)):
        if not f.endswith("-defaults.json"):
            continue
        j = json.load(open(os.path.join(d, f)))
        shares = np.array(j["shares"])
        total = shares.sum(0)
        least = 9.0
        for s in range(shares.shape[1]):
            for t in range(s + 1, shares.shape[1]):
                lesser = min(total[s], total[t])
                if lesser < 0.02 * len(shares):
                    continue
                least = min(least, np.minimum(shares[:, s], shares[:, t]).sum() / lesser)
        ari = adjusted_rand_score(j["want"], j["labels"])
        rows.append((j["seed"], ari, least, shares.shape[1], j["groups"], j["true_groups"]))
rows.sort(key=lambda r: r[2])
fmt = "%4d  ARI %.2f  least overlap %.3f  %d states  %d groups for %d"
for r in rows[:40]:
    print(fmt % r)
print("losses (ARI below 0.60):")
for i, r in enumerate(rows):
    if r[1] < 0.6:
        print(fmt % r, " rank", i)
