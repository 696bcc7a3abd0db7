#!/usr/bin/env bash
# Throughput and peak memory of `holdfast inspect` (import + analysis + events).
#
# Generates waveform CSV recordings with `holdfast synth` (7 columns: t, va..ic)
# and reports MB/s and peak resident memory (GNU time's %M, which counts
# resident pages of the process, including any mapped input).
#
# Usage: bench/throughput.sh [SECONDS_AT_100kHz ...]   (default: 10 41)
#   10 s at 100 kHz is about 73 MB; 41 s is about 300 MB.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
bin=target/release/holdfast
dir=${BENCH_DIR:-$(mktemp -d)}
durations=("$@")
[ ${#durations[@]} -eq 0 ] && durations=(10 41)
timer=()
if [ -x /usr/bin/time ]; then timer=(/usr/bin/time -f "%e %M"); fi
for d in "${durations[@]}"; do
  f="$dir/bench-${d}s.csv"
  [ -f "$f" ] || "$bin" synth --out "$f" --sample-rate 100000 --duration "$d" \
      --fault-start 2 --fault-duration 0.3 --noise 0.001 2>/dev/null
  bytes=$(stat -c %s "$f")
  cat "$f" > /dev/null   # warm the page cache: measure parsing, not the disk
  best=""
  for run in 1 2 3; do
    if [ ${#timer[@]} -gt 0 ]; then
      out=$("${timer[@]}" "$bin" inspect "$f" --rated-kv 0.69 --rated-mva 4.2 --frequency 50 2>&1 >/dev/null | tail -1)
      secs=${out% *}; rss_kb=${out#* }
    else
      start=$(date +%s.%N)
      "$bin" inspect "$f" --rated-kv 0.69 --rated-mva 4.2 --frequency 50 >/dev/null
      secs=$(echo "$(date +%s.%N) - $start" | bc); rss_kb="n/a"
    fi
    if [ -z "$best" ] || [ "$(echo "$secs < $best" | bc)" = 1 ]; then best=$secs; best_rss=$rss_kb; fi
  done
  mb=$(echo "scale=1; $bytes / 1000000" | bc)
  rate=$(echo "scale=0; $bytes / 1000000 / $best" | bc)
  if [ "$best_rss" != "n/a" ]; then
    ratio=$(echo "scale=3; $best_rss * 1024 / $bytes" | bc)
    echo "${d} s at 100 kHz: ${mb} MB in ${best} s (best of 3) = ${rate} MB/s; peak RSS ${best_rss} KB = ${ratio} x file size"
  else
    echo "${d} s at 100 kHz: ${mb} MB in ${best} s (best of 3) = ${rate} MB/s"
  fi
done
