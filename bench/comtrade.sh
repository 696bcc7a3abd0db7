#!/usr/bin/env bash
# COMTRADE decode and analysis speed of `holdfast inspect`: a 10 s recording
# at 100 kHz (1 M rows, 6 analog channels and a status channel) in each
# binary data type; prints the best of seven wall times as rows/s and
# channel values/s, and the peak memory.
# Usage: bench/comtrade.sh [SECONDS_AT_100kHz]   (default 10)
set -euo pipefail
cd "$(dirname "$0")/.."
d=${1:-10}
cargo build --release --quiet
bin=target/release/holdfast
dir=${BENCH_DIR:-$(mktemp -d)}
rows=$(( d * 100000 + 1 ))
for t in binary binary32 float32; do
  f="$dir/comtrade-$t-${d}s.cfg"
  [ -f "$f" ] || "$bin" synth --out "$f" --comtrade-type "$t" --sample-rate 100000 --duration "$d" \
      --fault-start 2 --fault-duration 0.3 --noise 0.001 --status >/dev/null 2>&1
  cat "${f%.cfg}.dat" > /dev/null
  best=""
  for _ in 1 2 3 4 5 6 7; do
    # Wall time to the microsecond from the shell's own clock (no timer
    # process around the run; GNU time's %e has 10 ms steps).
    start=$EPOCHREALTIME
    "$bin" inspect "$f" --rated-kv 0.69 --rated-mva 4.2 >/dev/null 2>&1
    s=$(echo "$EPOCHREALTIME - $start" | bc)
    if [ -z "$best" ] || [ "$(echo "$s < $best" | bc)" = 1 ]; then best=$s; fi
  done
  # Peak memory from a run of its own under GNU time.
  /usr/bin/time -o "$dir/rss" -f "%M" "$bin" inspect "$f" --rated-kv 0.69 --rated-mva 4.2 >/dev/null 2>&1
  rss=$(tail -1 "$dir/rss")
  echo "$t: $rows rows in $best s = $(echo "scale=1; $rows / $best / 1000000" | bc) M rows/s, $(echo "scale=1; 6 * $rows / $best / 1000000" | bc) M analog values/s; peak RSS $rss KB"
done
