#!/usr/bin/env bash
# Side by side: `holdfast inspect` against a vectorised pandas + numpy script
# of the same job (bench/dataframe_inspect.py) on the same waveform CSV.
# The script runs in a venv this script creates (target/bench-venv, pandas
# and numpy from PyPI). Prints each one's best of three wall times and the
# ratio.
#
# Usage: bench/compare.sh [SECONDS_AT_100kHz]   (default 10: about 73 MB)
#        bench/compare.sh --plan [TESTS]          (default 200)
# With --plan: `holdfast check` of a plan of TESTS copies of the sample
# recordings (rules, figures, the whole evidence pack) against the script's
# plan mode (the same per-recording job on all cores, no figures).
set -euo pipefail
cd "$(dirname "$0")/.."
plan=""
if [ "${1:-}" = "--plan" ]; then plan=${2:-200}; fi
d=${1:-10}
cargo build --release --quiet
bin=target/release/holdfast
venv=target/bench-venv
if [ ! -x "$venv/bin/python" ]; then
  python3 -m venv "$venv"
  "$venv/bin/pip" install --quiet pandas numpy
fi
dir=${BENCH_DIR:-$(mktemp -d)}
best() {
  local b=""
  for _ in 1 2 3; do
    local s e
    s=$(date +%s.%N); "$@" > /dev/null 2>&1 || true; e=$(date +%s.%N)
    local x; x=$(echo "$e - $s" | bc)
    if [ -z "$b" ] || [ "$(echo "$x < $b" | bc)" = 1 ]; then b=$x; fi
  done
  echo "$b"
}
if [ -n "$plan" ]; then
  pdir="$dir/plan-$plan"
  bench/make-plan.sh "$plan" "$pdir"
  h=$(best sh -c "rm -rf '$pdir/out'; '$bin' check '$pdir/plan.yaml' --out '$pdir/out'")
  p=$(best "$venv/bin/python" bench/dataframe_inspect.py "$pdir/rec" 0.69 50)
  echo "$plan tests: holdfast check ${h} s (evidence pack with SVG figures), pandas+numpy plan mode ${p} s (no figures)"
  echo "ratio: $(echo "scale=2; $p / $h" | bc)x"
  exit 0
fi
f="$dir/bench-${d}s.csv"
[ -f "$f" ] || "$bin" synth --out "$f" --sample-rate 100000 --duration "$d" \
    --fault-start 2 --fault-duration 0.3 --noise 0.001 >/dev/null 2>&1
cat "$f" > /dev/null
h=$(best "$bin" inspect "$f" --rated-kv 0.69 --rated-mva 4.2 --frequency 50)
p=$(best "$venv/bin/python" bench/dataframe_inspect.py "$f" 0.69 50)
# The script's own time without Python's start-up and imports, best of three.
inner=$(for _ in 1 2 3; do "$venv/bin/python" bench/dataframe_inspect.py "$f" 0.69 50 | cut -d' ' -f1; done | sort -n | head -1)
mb=$(echo "scale=1; $(stat -c %s "$f") / 1000000" | bc)
echo "$mb MB: holdfast inspect ${h} s (whole process), pandas+numpy ${p} s whole process / ${inner} s without start-up and imports"
echo "ratio: $(echo "scale=2; $p / $h" | bc)x whole process, $(echo "scale=2; $inner / $h" | bc)x against the script's own time"
