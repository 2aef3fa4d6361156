#!/usr/bin/env bash
# Every step of a split run in N shards of the cohort in INPUT, run one after another on this
# machine, with each merge's time and peak memory (GNU time) and the pieces' size; the census,
# sample and assignment steps are summed over the shards. BIN names the cohortmix to run (built
# from the repository when not given), DIR the folder for the pieces (a temporary one by default).
# With SPLIT=1 one split step reads the inputs once in place of the census, plan and sample steps.
#   bash testdata/bench_shards.sh 8 cohort.csv
#   SPLIT=1 bash testdata/bench_shards.sh 8 cohort.csv
set -euo pipefail
N=$1; IN=$2
D=${DIR:-$(mktemp -d)}/p$N; rm -rf "$D"; mkdir -p "$D"
B=${BIN:-$D/cohortmix}
[ -n "${BIN:-}" ] || go build -o "$B" ./cmd/cohortmix
T() { /usr/bin/time -f "%e %M" -o $D/t "$@" >/dev/null 2>$D/err || { cat $D/err; exit 1; }; cat $D/t; }
if [ -n "${SPLIT:-}" ]; then
  r=$(T $B shard split $IN --shards $N --piece $D/plan.piece --windows-dir $D --quiet); cs="split ${r% *}s ${r#* }KB"; plan="0 0"
else
  cs=0; for i in $(seq 1 $N); do r=$(T $B shard census $IN --shard $i/$N --piece $D/census-$i.piece --windows-file $D/windows-$i.piece --quiet); cs=$(awk -v a="$cs" -v b="${r% *}" 'BEGIN{print a+b}'); done
  plan=$(T $B shard plan $D/census-*.piece --piece $D/plan.piece --quiet)
fi
ss=0; [ -n "${SPLIT:-}" ] || for i in $(seq 1 $N); do r=$(T $B shard sample --plan $D/plan.piece --windows-file $D/windows-$i.piece --shard $i/$N --piece $D/sample-$i.piece --quiet); ss=$(awk -v a="$ss" -v b="${r% *}" 'BEGIN{print a+b}'); done
fit=$(T $B shard fit --plan $D/plan.piece $D/sample-*.piece --piece $D/fit.piece --quiet)
as=0; for i in $(seq 1 $N); do r=$(T $B shard assign --fit $D/fit.piece --windows-file $D/windows-$i.piece --shard $i/$N --piece $D/assign-$i.piece --quiet); as=$(awk -v a="$as" -v b="${r% *}" 'BEGIN{print a+b}'); done
fin=$(T $B shard finish --fit $D/fit.piece $D/assign-*.piece --out $D/r.xlsx --members $D/m.csv --quiet --force)
pieces=$(du -sm $D --exclude='windows-*' | cut -f1); win=$(du -cm $D/windows-* | tail -1 | cut -f1)
echo "$N shards: census total ${cs}s; plan ${plan% *}s ${plan#* }KB; sample total ${ss}s; fit ${fit% *}s ${fit#* }KB; assign total ${as}s; finish ${fin% *}s ${fin#* }KB; pieces ${pieces}MB windows files ${win}MB"
