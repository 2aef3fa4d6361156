#!/usr/bin/env bash
# Placing a later wave: for each family member, 200 invented participants grouped with the
# defaults (cohortmix group --model) and 100 more of the same scenario (synth --first-id 200)
# placed with that model (cohortmix assign); prints the adjusted Rand index of each wave against
# the planted groups (scikit-learn's adjusted_rand_score, Debian's python3-sklearn), with the
# placed participants marked atypical counted as a label of their own and then left out.
# bash testdata/placed_wave.sh "wrist calib" "101 102 103 104".
# About 30 s a member on two cores. The table in docs/benchmarks.md ("Placing a later wave")
# is this script's output over every family, seeds 101-104.
set -euo pipefail
cd "$(dirname "$0")/.."
source testdata/install.sh
ensure placed_wave "/usr/bin/python3 -c 'import sklearn'" "scikit-learn is not installed and could not be installed here" python3-sklearn || exit 0
families=${1:-"wrist calib param counts bouts small null"}
seeds=${2:-"101 102 103 104"}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/cohortmix" ./cmd/cohortmix
cm=$work/cohortmix
for f in $families; do
  for s in $seeds; do
    d=$work/$f-$s
    mkdir -p "$d"
    "$cm" synth --out "$d/w1.csv" --scenario "$s" --family "$f" --participants 200 --windows 2016 --features 24 --seed "$s" --truth "$d/t1.csv" >/dev/null
    "$cm" synth --out "$d/w2.csv" --scenario "$s" --family "$f" --participants 100 --first-id 200 --windows 2016 --features 24 --seed "$s" --truth "$d/t2.csv" >/dev/null
    # Recordings of 1 to 3 days in the count physics: each valid day counts.
    "$cm" group "$d/w1.csv" --quiet --out "$d/g.xlsx" --members "$d/m1.csv" --model "$d/m.json" --seed 1 --valid-days 1 >/dev/null
    "$cm" assign "$d/w2.csv" --quiet --model "$d/m.json" --out "$d/a.xlsx" --members "$d/m2.csv" >/dev/null
    /usr/bin/python3 - "$d" "$f" "$s" <<'PY'
import csv, sys
from sklearn.metrics import adjusted_rand_score as ari
d, f, s = sys.argv[1:]
def rows(p):
    with open(p) as fh:
        return list(csv.DictReader(fh))
def score(members, truth):
    planted = {r["participant"]: r["planted_group"] for r in rows(truth)}
    m = [r for r in rows(members) if r["participant"] in planted]
    want, got = [planted[r["participant"]] for r in m], [r["group"] for r in m]
    typical = [i for i, g in enumerate(got) if g]
    return (ari(want, got), len(set(g for g in got if g)), len(got) - len(typical),
            ari([want[i] for i in typical], [got[i] for i in typical]))
g1, g2 = score(d + "/m1.csv", d + "/t1.csv"), score(d + "/m2.csv", d + "/t2.csv")
print(f"{f} {s}: grouped wave {g1[0]:.3f} ({g1[1]} groups); placed wave {g2[0]:.3f} ({g2[1]} groups), "
      f"{g2[2]} atypical, {g2[3]:.3f} without them")
PY
  done
done
