#!/usr/bin/env bash
# Time and memory of the main job at two sizes (three with BENCH_WIDE=1), on cohorts written by 'cohortmix synth':
# 100 and 1,000 participants × 10,080 one-minute windows (a week) × 24 features, about 0.18 and
# 1.9 GB of CSV, and the same cohorts as Parquet. For each: the read alone ('cohortmix check')
# of the CSV and of the Parquet file, and the whole 'cohortmix group' on the CSV, with wall time
# and peak resident memory from GNU time. Run from the repository root; it needs about 6 GB of
# free disk in $BENCH_DIR (default: a temporary folder). Go benchmarks of the same paths:
# BenchmarkRead (cohort/) and BenchmarkGroup (cmd/cohortmix/). Each input is read once with cat
# before it is timed, so that the times are of warm reads (from the page cache); a cold read is
# bound by the disk instead.
set -euo pipefail
dir=${BENCH_DIR:-$(mktemp -d)}
mkdir -p "$dir"
go build -o "$dir/cohortmix" ./cmd/cohortmix
# BENCH_WIDE=1 adds a third cohort: 100,000 participants × 100 windows (CSV only, about 1.8 GB).
sizes="100 1000"
[ "${BENCH_WIDE:-0}" = 1 ] && sizes="$sizes 100000"
for n in $sizes; do
  windows=10080 runs="check.csv check.parquet group.csv"
  if [ "$n" = 100000 ]; then windows=100 runs="check.csv group.csv"; fi
  for ext in csv parquet; do
    f="$dir/cohort-$n.$ext"
    case "$runs" in *".$ext"*) ;; *) continue ;; esac
    [ -s "$f" ] || "$dir/cohortmix" synth --out "$f" --participants "$n" --windows "$windows" --features 24 --seed 5 --force >/dev/null
  done
  for run in $runs; do
    step=${run%%.*} ext=${run#*.}
    f="$dir/cohort-$n.$ext"
    cat "$f" >/dev/null
    args=("$step" "$f" --quiet)
    [ "$step" = group ] && args+=(--out "$dir/r-$n.xlsx" --force --states 2-10 --groups 2-8)
    /usr/bin/time -v "$dir/cohortmix" "${args[@]}" >"$dir/$run-$n.out" 2>"$dir/$run-$n.time"
    wall=$(grep 'Elapsed (wall clock)' "$dir/$run-$n.time" | awk '{print $NF}')
    rss=$(grep 'Maximum resident' "$dir/$run-$n.time" | awk '{print $NF}')
    size=$(stat -L -c %s "$f")
    echo "$n participants, $ext ($((size / 1000000)) MB): $step wall $wall, peak RSS $((rss / 1024)) MiB"
    [ "$step" = check ] && grep 'read in' "$dir/$run-$n.out"
  done
done
