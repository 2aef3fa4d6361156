#!/usr/bin/env bash
# Runs the Snakemake workflow (cmd/cohortmix/workflow/Snakefile) on this machine on the demo's
# synthetic cohort in 3 shards, and checks that its members CSV and model file are those of the
# one-machine `cohortmix group` run, byte for byte (the model's date and the checksum that covers it aside). It installs
# Debian's snakemake where it can (as root with apt-get); where it cannot, it says so and skips.
set -euo pipefail
cd "$(dirname "$0")/.."

source testdata/install.sh
ensure shard_workflow "command -v snakemake" "snakemake is not installed and could not be installed here (apt-get install snakemake, or pip install snakemake)" snakemake || exit 0

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/cohortmix" ./cmd/cohortmix
# The demo's cohort (synthetic) and the demo's settings.
"$work/cohortmix" synth --out "$work/demo.csv" --participants 150 --windows 1000 --seed 1 >/dev/null
opts="--window-length 1m --seed 1"
"$work/cohortmix" group "$work/demo.csv" $opts --out "$work/one.xlsx" --members "$work/one.csv" --model "$work/one.json" --quiet >/dev/null
snakemake --snakefile cmd/cohortmix/workflow/Snakefile --directory "$work" --cores 2 --quiet \
  --config inputs="$work/demo.csv" shards=3 cohortmix="$work/cohortmix" options="$opts" \
  out="$work/split.xlsx" members="$work/split.csv" model="$work/split.json" >"$work/log" 2>&1 ||
  { echo "shard_workflow: FAIL: snakemake stopped:"; cat "$work/log"; exit 1; }
if ! cmp -s "$work/one.csv" "$work/split.csv"; then
  echo "shard_workflow: FAIL: the members CSV of the 3-shard workflow differs from the one-machine run"; diff "$work/one.csv" "$work/split.csv" | head; exit 1
fi
if ! cmp -s <(grep -v -e '"created"' -e '"checksum"' "$work/one.json") <(grep -v -e '"created"' -e '"checksum"' "$work/split.json"); then
  echo "shard_workflow: FAIL: the model file of the 3-shard workflow differs from the one-machine run"; exit 1
fi
# Read once (split=true): one split job writes the plan and every shard's windows.
snakemake --snakefile cmd/cohortmix/workflow/Snakefile --directory "$work" --cores 2 --quiet \
  --config inputs="$work/demo.csv" shards=3 split=true cohortmix="$work/cohortmix" options="$opts" pieces="$work/once" \
  out="$work/once.xlsx" members="$work/once.csv" model="$work/once.json" >"$work/log" 2>&1 ||
  { echo "shard_workflow: FAIL: snakemake stopped (split=true):"; cat "$work/log"; exit 1; }
if ! cmp -s "$work/one.csv" "$work/once.csv" || ! cmp -s <(grep -v -e '"created"' -e '"checksum"' "$work/one.json") <(grep -v -e '"created"' -e '"checksum"' "$work/once.json"); then
  echo "shard_workflow: FAIL: the members or model of the workflow with split=true differ from the one-machine run"; exit 1
fi
if [ -e "$work/once/census-1.piece" ]; then
  echo "shard_workflow: FAIL: split=true ran the census jobs"; exit 1
fi
# Pseudonymized: the census replaces every id as it reads it, so no piece holds a study id, and
# the members are those of the one-machine pseudonymized run.
sed 's/^P/SUBJECT-/' "$work/demo.csv" >"$work/ids.csv"
printf 'a study key of enough length to pseudonymize with\n' >"$work/study.key"
"$work/cohortmix" group "$work/ids.csv" $opts --pseudonymize "$work/study.key" --out "$work/pone.xlsx" --members "$work/pone.csv" --quiet >/dev/null
snakemake --snakefile cmd/cohortmix/workflow/Snakefile --directory "$work" --cores 2 --quiet \
  --config inputs="$work/ids.csv" shards=3 cohortmix="$work/cohortmix" options="$opts" pseudonymize="$work/study.key" pieces="$work/ppieces" \
  out="$work/psplit.xlsx" members="$work/psplit.csv" model="$work/psplit.json" >"$work/log" 2>&1 ||
  { echo "shard_workflow: FAIL: snakemake stopped (pseudonymized):"; cat "$work/log"; exit 1; }
if ! cmp -s "$work/pone.csv" "$work/psplit.csv"; then
  echo "shard_workflow: FAIL: the pseudonymized members of the workflow differ from the one-machine run"; exit 1
fi
if grep -rl SUBJECT- "$work/ppieces" "$work/psplit.csv" "$work/psplit.json"; then
  echo "shard_workflow: FAIL: a study id in the pseudonymized run's pieces or outputs (above)"; exit 1
fi
echo "shard_workflow: ok: snakemake $(snakemake --version) ran 3 shards; members and model are the one-machine run's, byte for byte, plain, read once (split=true) and pseudonymized (no study id in any piece)"
