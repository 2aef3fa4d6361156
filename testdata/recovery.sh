#!/usr/bin/env bash
# The recovery benchmark: the whole job on members of the scenario family (cohortmix synth
# --scenario N: 200 participants × 2,016 one-minute windows × 24 features each), scored by the
# adjusted Rand index against the planted groups, for the defaults and every candidate method.
# Run from the repository root; the tables go to standard output (about 25 minutes a set of 20
# for every variant; "-recovery.variants" in the go test line below picks variants by name).
# Pass a set as the first argument to run only it: a named set of seeds (recoverySets in
# cmd/cohortmix/recovery_test.go; `go test ./cmd/cohortmix/ -run XXX -args -help` lists them,
# from tune, seeds 1–20, to fresh27, 921–960), demo (the demo's own scenario, 150 × 1,000 with
# 12 and 24 features) or a list of seeds such as 3,7. Which sets each default was chosen on,
# and which were run unseen, is in testdata/recovery-history.md.
set -euo pipefail
sets=${1:-"tune report fresh demo"}
for set in $sets; do
  go test ./cmd/cohortmix/ -run '^TestRecoveryBenchmark$' -recovery "$set" -v -count=1 -timeout 4h |
    grep -v -E '^(=== RUN|--- PASS|PASS|ok )' | grep -v ' done$'
done
