#!/usr/bin/env bash
# Time and memory of the main job at two sizes, on cohorts written by 'cohortmix synth':
# 100 and 1,000 participants × 10,080 one-minute windows (a week) × 24 features, about 0.18 and
# 1.9 GB of CSV. For each: the read alone ('cohortmix check') and the whole 'cohortmix group',
# with wall time and peak resident memory from GNU time. Run from the repository root; it
# needs about 4 GB of free disk in $BENCH_DIR (default: a temporary folder).
set -euo pipefail
dir=${BENCH_DIR:-$(mktemp -d)}
mkdir -p "$dir"
go build -o "$dir/cohortmix" ./cmd/cohortmix
for n in 100 1000; do
  csv="$dir/cohort-$n.csv"
  [ -s "$csv" ] || "$dir/cohortmix" synth --out "$csv" --participants "$n" --windows 10080 --features 24 --seed 5 --force >/dev/null
  size=$(stat -L -c %s "$csv")
  for step in check group; do
    args=("$step" "$csv" --quiet)
    [ "$step" = group ] && args+=(--out "$dir/r-$n.xlsx" --force --states 2-10 --groups 2-8)
    /usr/bin/time -v "$dir/cohortmix" "${args[@]}" >"$dir/$step-$n.out" 2>"$dir/$step-$n.time"
    wall=$(grep 'Elapsed (wall clock)' "$dir/$step-$n.time" | awk '{print $NF}')
    rss=$(grep 'Maximum resident' "$dir/$step-$n.time" | awk '{print $NF}')
    echo "$n participants ($((size / 1000000)) MB): $step wall $wall, peak RSS $((rss / 1024)) MiB"
  done
  grep 'read in' "$dir/check-$n.out"
done
