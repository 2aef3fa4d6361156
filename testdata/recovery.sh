#!/usr/bin/env bash
# The recovery benchmark: the whole job on members of the scenario family (cohortmix synth
# --scenario N: 200 participants × 2,016 one-minute windows × 24 features each), scored by the
# adjusted Rand index against the planted groups, for the defaults and every candidate method.
# Methods were chosen on seeds 1–20 ("tune"); seeds 21–40 ("report") were run once the
# defaults were fixed; seeds 41–60 ("fresh") were run once more, unseen, after PCA was made the
# default; after a search on seeds 1–40 ("tune40") seeds 61–80 ("fresh2") and, with the final
# defaults, 81–100 ("fresh3") were run unseen.
# "demo" runs the demo's own scenario (150 × 1,000; 12 and 24 features). Run from the
# repository root; the tables go to standard output (about 25 minutes a set on two cores). Pass
# a set as the first argument to run only it: tune, report, fresh, tune40, fresh2, fresh3, fresh4 (101–120), fresh5 (121–140), fresh6 (141–160), fresh7 (161–180), fresh8 (181–200), fresh9 (201–240), fresh10 (241–280), fresh11 (281–320), fresh12 (321–360), fresh13 (361–400), fresh14 (401–440), demo or a list of seeds such
# as 3,7; "-recovery.variants" in the go test line below picks variants by name.
set -euo pipefail
sets=${1:-"tune report fresh demo"}
for set in $sets; do
  go test ./cmd/cohortmix/ -run '^TestRecoveryBenchmark$' -recovery "$set" -v -count=1 -timeout 4h |
    grep -v -E '^(=== RUN|--- PASS|PASS|ok )' | grep -v ' done$'
done
