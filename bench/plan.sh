#!/usr/bin/env bash
# Time of `holdfast check` on a plan of many tests (default 200), made from
# copies of the sample recordings; reports wall time and peak memory.
# Usage: bench/plan.sh [TESTS]
set -euo pipefail
cd "$(dirname "$0")/.."
n=${1:-200}
cargo build --release --quiet
dir=$(mktemp -d)
bench/make-plan.sh "$n" "$dir"
size=$(du -sm "$dir/rec" | cut -f1)
if [ -x /usr/bin/time ]; then
  /usr/bin/time -o "$dir/time" -f "%e %U %M" \
    target/release/holdfast check "$dir/plan.yaml" --out "$dir/out" > /dev/null || true
  read -r wall user rss < <(tail -1 "$dir/time")
  echo "$n tests, ${size} MB of CSV: $wall s wall, $user s user, peak RSS $rss KB, $(echo "scale=1; $n / $wall" | bc) tests/s"
else
  time (target/release/holdfast check "$dir/plan.yaml" --out "$dir/out" > /dev/null || true)
fi
echo "evidence pack: $dir/out ($(ls "$dir/out/plots" | wc -l) plot files, index.html $(du -h "$dir/out/index.html" | cut -f1), report.html $(du -h "$dir/out/report.html" | cut -f1))"
