#!/usr/bin/env bash
# Devices' resting floors in the counts family: for each member (200 invented participants of
# per-minute counts, synth --family counts), the defaults' groups (cohortmix group --members),
# and how many of each group's devices rest at a floor of a few counts instead of 0 (a device
# whose minutes under 20 counts read exactly 0 less than half the time). Prints the adjusted Rand
# index against the planted groups (scikit-learn, Debian's python3-sklearn) and each group's size
# and floor devices. bash testdata/count_floors.sh "1 2 3 4 5 6 7 8"; about 30 s a member.
# The table in docs/benchmarks.md ("Devices' resting floors") is its output on seeds 1-8.
set -euo pipefail
cd "$(dirname "$0")/.."
source testdata/install.sh
ensure count_floors "/usr/bin/python3 -c 'import sklearn'" "scikit-learn is not installed and could not be installed here" python3-sklearn || exit 0
seeds=${1:-"1 2 3 4 5 6 7 8"}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/cohortmix" ./cmd/cohortmix
for s in $seeds; do
  d=$work/$s
  mkdir -p "$d"
  "$work/cohortmix" synth --out "$d/c.csv" --scenario "$s" --family counts --participants 200 --windows 2016 --features 24 --seed "$s" --truth "$d/t.csv" >/dev/null
  "$work/cohortmix" group "$d/c.csv" --quiet --out "$d/g.xlsx" --members "$d/m.csv" --seed 1 --valid-days 1 >/dev/null
  /usr/bin/python3 - "$d" "$s" <<'PY'
import collections, csv, sys
import numpy as np
from sklearn.metrics import adjusted_rand_score as ari
d, s = sys.argv[1:]
counts = collections.defaultdict(list)
with open(d + "/c.csv") as fh:
    r = csv.reader(fh)
    col = next(r).index("count")
    for row in r:
        counts[row[0]].append(float(row[col]))
planted = {r["participant"]: r["planted_group"] for r in csv.DictReader(open(d + "/t.csv"))}
found = {r["participant"]: r["group"] for r in csv.DictReader(open(d + "/m.csv"))}
ids = [i for i in found if i in planted and found[i]]
def floor(i):
    c = np.array(counts[i])
    low = c[c < 20]
    return int(len(low) > 0 and (low == 0).mean() < 0.5)
fl = np.array([floor(i) for i in ids])
got = [found[i] for i in ids]
groups = " ".join(f"{g}:{sum(x == g for x in got)}/{fl[[x == g for x in got]].sum()}" for g in sorted(set(got)))
print(f"counts {s}: floor devices {fl.sum()} of {len(ids)}; ARI {ari([planted[i] for i in ids], got):.2f}; groups (size/floor) {groups}")
PY
done
