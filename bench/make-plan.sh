#!/usr/bin/env bash
# Writes DIR/plan.yaml with TESTS tests over copies of the sample recordings
# (DIR/rec/r1.csv ...), for bench/plan.sh and bench/compare.sh --plan.
# Usage: bench/make-plan.sh TESTS DIR   (run from the project folder)
set -euo pipefail
n=$1
dir=$2
mkdir -p "$dir/rec"
files=(sample-data/recordings/t0[1-9]-*.csv)
{
  echo "unit: { rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }"
  echo "rules: $PWD/rules/eu-rfg-ppm-type-d-example.yaml"
  echo "channels:"
  echo "  time: t"
  echo "  voltage: { a: va, b: vb, c: vc, unit: V }"
  echo "  current: { a: ia, b: ib, c: ic, unit: A }"
  echo "tests:"
} > "$dir/plan.yaml"
for i in $(seq 1 "$n"); do
  cp "${files[$(( i % ${#files[@]} ))]}" "$dir/rec/r$i.csv"
  echo "  - { id: R$i, file: rec/r$i.csv }" >> "$dir/plan.yaml"
done
