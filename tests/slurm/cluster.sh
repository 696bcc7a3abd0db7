#!/usr/bin/env bash
# Starts a one-node Slurm cluster (munge + slurmctld + slurmd, all in a
# temporary folder, as root), runs a 40-test plan as a 4-task job array of
# `holdfast check --shard auto` plus a merge job that depends on it, and
# compares the merged pack with a single run: results.json byte-equal apart
# from the run's time and command line, every figure byte-equal.
# Usage: tests/slurm/cluster.sh HOLDFAST_BINARY
# Exit status 0 equal, 1 different, 3 no Slurm here (not root, or the
# daemons are missing or would not start).
set -uo pipefail
bin=$(realpath "$1")
root=$(cd "$(dirname "$0")/../.." && pwd)
for c in slurmctld slurmd sbatch squeue sinfo munged; do
  command -v "$c" >/dev/null || { echo "no $c"; exit 3; }
done
[ "$(id -u)" = 0 ] || { echo "not root: the one-node cluster needs root"; exit 3; }
work=$(mktemp -d)
host=$(hostname -s)
cpus=$(nproc)
mkdir -p "$work"/{state,spool,log,munge,run}
chmod 700 "$work/munge"
cleanup() {
  [ -f "$work/run/slurmd.pid" ] && kill "$(cat "$work/run/slurmd.pid")" 2>/dev/null
  [ -f "$work/run/slurmctld.pid" ] && kill "$(cat "$work/run/slurmctld.pid")" 2>/dev/null
  [ -f "$work/munge/munged.pid" ] && kill "$(cat "$work/munge/munged.pid")" 2>/dev/null
  sleep 1
  [ -n "${HOLDFAST_SLURM_KEEP:-}" ] || rm -rf "$work"
}
trap cleanup EXIT
# munge: its own key, socket and pid in the work folder.
dd if=/dev/urandom of="$work/munge/munge.key" bs=1 count=1024 2>/dev/null
chmod 400 "$work/munge/munge.key"
munged --force --key-file="$work/munge/munge.key" --socket="$work/munge/socket" \
  --pid-file="$work/munge/munged.pid" --log-file="$work/munge/log" --seed-file="$work/munge/seed" \
  || { echo "munged would not start"; exit 3; }
cat > "$work/slurm.conf" <<CONF
ClusterName=holdfast-test
SlurmctldHost=$host
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
AuthInfo=socket=$work/munge/socket
CredType=cred/munge
StateSaveLocation=$work/state
SlurmdSpoolDir=$work/spool
SlurmctldPidFile=$work/run/slurmctld.pid
SlurmdPidFile=$work/run/slurmd.pid
SlurmctldLogFile=$work/log/slurmctld.log
SlurmdLogFile=$work/log/slurmd.log
SlurmctldPort=16817
SlurmdPort=16818
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SchedulerType=sched/builtin
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
ReturnToService=2
MpiDefault=none
JobCompType=jobcomp/none
AccountingStorageType=accounting_storage/none
NodeName=$host CPUs=$cpus State=UNKNOWN
PartitionName=test Nodes=$host Default=YES MaxTime=INFINITE State=UP
CONF
export SLURM_CONF="$work/slurm.conf"
slurmctld -f "$SLURM_CONF" || { echo "slurmctld would not start"; tail -5 "$work/log/slurmctld.log"; exit 3; }
slurmd -f "$SLURM_CONF" || { echo "slurmd would not start"; tail -5 "$work/log/slurmd.log"; exit 3; }
for _ in $(seq 1 30); do
  sinfo -h -o %t 2>/dev/null | grep -qE '^(idle|mix)' && break
  sleep 1
done
sinfo -h -o %t 2>/dev/null | grep -qE '^(idle|mix)' || { echo "the node did not come up"; sinfo 2>&1; tail -5 "$work/log/slurmd.log"; exit 3; }
# A plan of 40 tests: copies of the sample recordings.
mkdir -p "$work/plan/rec"
files=("$root"/sample-data/recordings/t0[1-9]-*.csv)
{
  echo "unit: { rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }"
  echo "rules: $root/rules/eu-rfg-ppm-type-d-example.yaml"
  echo "channels: { time: t, voltage: { a: va, b: vb, c: vc, unit: V }, current: { a: ia, b: ib, c: ic, unit: A } }"
  echo "tests:"
} > "$work/plan/plan.yaml"
for i in $(seq 1 40); do
  cp "${files[$(( i % ${#files[@]} ))]}" "$work/plan/rec/r$i.csv"
  echo "  - { id: R$i, file: rec/r$i.csv }" >> "$work/plan/plan.yaml"
done
cd "$work/plan"
cat > shard.sbatch <<JOB
#!/bin/bash
#SBATCH --output=$work/log/shard-%a.out
#SBATCH --cpus-per-task=1
exec "$bin" check plan.yaml --shard auto --exit-zero-when-evaluated -q --jobs 1 --out "shards/shard-\$SLURM_ARRAY_TASK_ID"
JOB
array=$(sbatch --parsable --array=1-4 --chdir="$work/plan" shard.sbatch) || { echo "sbatch failed"; exit 3; }
sbatch --wait --kill-on-invalid-dep=yes --dependency=afterok:"$array" --chdir="$work/plan" --output="$work/log/merge.out" \
  --wrap "\"$bin\" merge shards/shard-1 shards/shard-2 shards/shard-3 shards/shard-4 --out merged -q; test \$? -le 1"
status=$?
if [ $status -ne 0 ] || [ ! -f merged/results.json ]; then
  echo "the merge job did not finish (status $status)"; cat "$work"/log/*.out 2>/dev/null | tail -20; exit 1
fi
"$bin" check plan.yaml --out single -q
strip() { grep -v -E '^  "(generated_utc|command_line)"' "$1"; }
if ! diff <(strip single/results.json) <(strip merged/results.json) > /dev/null; then
  echo "merged results.json differs from the single run"; exit 1
fi
if ! diff -r single/plots merged/plots > /dev/null; then
  echo "merged figures differ from the single run"; exit 1
fi
echo "40 tests as a 4-task Slurm array, merged: results.json and figures equal to a single run"
exit 0
