#!/usr/bin/env bash
# Runs the Snakemake workflow (cmd/cohortmix/workflow/Snakefile) through a real Slurm scheduler
# with the slurm-v7 profile (Snakemake 7's sbatch submission; Debian's snakemake is 7): it brings
# up a single-node Slurm on this machine from Debian's packages (slurm-wlm, munge; slurmctld and
# slurmd with a minimal slurm.conf written here, on ports of its own), runs the demo's synthetic
# cohort in 3 shards, checks that its members CSV and model file are those of one `cohortmix group`
# run byte for byte (the model's date and the checksum that covers it aside), and takes the
# scheduler down. It needs root (to install the packages and start the daemons); where it cannot
# run it says why and skips.
set -euo pipefail
cd "$(dirname "$0")/.."
repo=$(pwd)

if [ "$(id -u)" != 0 ]; then
  echo "slurm_workflow: SKIPPED: not root, so Slurm's daemons cannot be started here"
  exit 0
fi
source testdata/install.sh
ensure slurm_workflow "command -v slurmctld && command -v slurmd && command -v sbatch && command -v munged && command -v snakemake" \
  "slurm-wlm, munge or snakemake is not installed and could not be installed here" slurm-wlm munge snakemake || exit 0

work=$(mktemp -d)
host=$(hostname)
export SLURM_CONF="$work/slurm.conf"
started_munge=""
down() {
  scontrol shutdown >/dev/null 2>&1 || true
  for _ in 1 2 3 4 5; do pgrep -f "$SLURM_CONF" >/dev/null || break; sleep 1; done
  pkill -f "$SLURM_CONF" 2>/dev/null || true
  if [ -n "$started_munge" ]; then pkill -x munged 2>/dev/null || true; fi
  rm -rf "$work"
}
trap down EXIT

# munge: the key Debian's package made, and the daemon, unless one runs already.
if ! munge -n </dev/null >/dev/null 2>&1; then
  [ -s /etc/munge/munge.key ] || mungekey --create >/dev/null 2>&1 || true
  mkdir -p /run/munge /var/log/munge /var/lib/munge
  chown -R munge:munge /run/munge /var/log/munge /var/lib/munge /etc/munge 2>/dev/null || true
  su -s /bin/sh munge -c /usr/sbin/munged 2>/dev/null || /usr/sbin/munged --force
  started_munge=yes
  sleep 1
fi
munge -n </dev/null | unmunge >/dev/null || { echo "slurm_workflow: FAIL: munge does not work here"; exit 1; }

mem=$(awk '/MemTotal/ {print int($2 / 1024 * 0.8)}' /proc/meminfo)
mkdir -p "$work/slurmd" "$work/state"
cat >"$SLURM_CONF" <<CONF
ClusterName=cohortmix-test
SlurmctldHost=$host
SlurmctldPort=6917
SlurmdPort=6918
AuthType=auth/munge
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
ReturnToService=2
MpiDefault=none
SlurmUser=root
SlurmdUser=root
SlurmctldPidFile=$work/slurmctld.pid
SlurmdPidFile=$work/slurmd.pid
SlurmdSpoolDir=$work/slurmd
StateSaveLocation=$work/state
SlurmctldLogFile=$work/slurmctld.log
SlurmdLogFile=$work/slurmd.log
NodeName=$host CPUs=$(nproc) RealMemory=$mem State=UNKNOWN
PartitionName=test Nodes=ALL Default=YES MaxTime=INFINITE State=UP
CONF
slurmctld -f "$SLURM_CONF"
slurmd -f "$SLURM_CONF"
for _ in $(seq 1 30); do
  sinfo -h -o %t 2>/dev/null | grep -q idle && break
  sleep 1
done
sinfo -h -o %t | grep -q idle || { echo "slurm_workflow: FAIL: the node did not come up"; tail -5 "$work/slurmctld.log" "$work/slurmd.log"; exit 1; }

go build -o "$work/cohortmix" ./cmd/cohortmix
"$work/cohortmix" synth --out "$work/demo.csv" --participants 150 --windows 1000 --seed 1 >/dev/null
opts="--window-length 1m --seed 1"
"$work/cohortmix" group "$work/demo.csv" $opts --out "$work/one.xlsx" --members "$work/one.csv" --model "$work/one.json" --quiet >/dev/null
# Each job asks for the cores and memory this one node has (threads, mem_mb).
(cd "$work" && snakemake --snakefile "$repo/cmd/cohortmix/workflow/Snakefile" --profile "$repo/cmd/cohortmix/workflow/profiles/slurm-v7" --directory "$work" \
  --config inputs="$work/demo.csv" shards=3 cohortmix="$work/cohortmix" options="$opts" threads="$(nproc)" mem_mb=1000 \
  out="$work/split.xlsx" members="$work/split.csv" model="$work/split.json") >"$work/log" 2>&1 ||
  { echo "slurm_workflow: FAIL: snakemake stopped:"; tail -40 "$work/log"; exit 1; }
submitted=$(grep -c "Submitted batch job" "$work/log" || true)
if [ "$submitted" -lt 12 ]; then
  echo "slurm_workflow: FAIL: only $submitted jobs went through sbatch (12 expected: 3 census, plan, 3 sample, fit, 3 assign, finish)"; exit 1
fi
if ! cmp -s "$work/one.csv" "$work/split.csv"; then
  echo "slurm_workflow: FAIL: the members CSV of the workflow through Slurm differs from the one-machine run"; diff "$work/one.csv" "$work/split.csv" | head; exit 1
fi
if ! cmp -s <(grep -v -e '"created"' -e '"checksum"' "$work/one.json") <(grep -v -e '"created"' -e '"checksum"' "$work/split.json"); then
  echo "slurm_workflow: FAIL: the model file of the workflow through Slurm differs from the one-machine run"; exit 1
fi
echo "slurm_workflow: ok: Slurm $(sinfo -V | cut -d' ' -f2) ran the workflow's $submitted jobs (snakemake $(snakemake --version), profile slurm-v7, 3 shards); members and model are the one-machine run's, byte for byte"
