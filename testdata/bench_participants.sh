#!/usr/bin/env bash
# Peak memory of 'cohortmix group' against the number of participants (short recordings of 200
# one-minute windows, 12 features) and against the windows per participant (500 participants),
# beside the budget of the scale issue: 300 MB plus 5 KB a participant. Synthetic cohorts from
# 'cohortmix synth'; wall time and peak resident memory from GNU time. Run from the repository
# root: bash testdata/bench_participants.sh [sizes...]; it needs about 4 GB of free disk in
# $BENCH_DIR (default: a temporary folder) and, at the default sizes, about 5 minutes here.
set -euo pipefail
dir=${BENCH_DIR:-$(mktemp -d)}
mkdir -p "$dir"
go build -o "$dir/cohortmix" ./cmd/cohortmix
sizes=${*:-"500x200 5000x200 20000x200 50000x200 500x2000 500x20000"}
printf '%-22s %8s %10s %10s %s\n' cohort time peak budget within
for size in $sizes; do
  n=${size%x*} w=${size#*x}
  f="$dir/c-$n-$w.csv"
  [ -s "$f" ] || "$dir/cohortmix" synth --participants "$n" --windows "$w" --seed 3 --out "$f" --force >/dev/null
  /usr/bin/time -f "%e %M" -o "$dir/time" "$dir/cohortmix" group "$f" --window-length 1m --out "$dir/r.xlsx" --members "$dir/m.csv" --quiet --force >/dev/null
  read -r wall kb <"$dir/time"
  mb=$((kb * 1024 / 1000000)) budget=$((300 + 5 * n / 1000))
  within=yes
  [ "$mb" -le "$budget" ] || within=NO
  printf '%-22s %7ss %7s MB %7s MB %s\n' "$n x $w windows" "$wall" "$mb" "$budget" "$within"
done
