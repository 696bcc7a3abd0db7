#!/usr/bin/env bash
# Writes small valid seed inputs for the fuzz targets into seeds/<target>/.
set -euo pipefail
cd "$(dirname "$0")"
root=..
(cd "$root" && cargo build --release --quiet)
h="$root/target/release/holdfast"
s() { "$h" synth --sample-rate 1000 --duration 0.3 --fault-start 0.1 --fault-duration 0.1 --status "$@" >/dev/null; }
mkdir -p seeds/csv seeds/comtrade_cfg seeds/comtrade_dat seeds/comtrade_cff seeds/rule_set seeds/plan
tmp=$(mktemp -d)
s --out seeds/csv/wave.csv
s --out seeds/csv/rms.csv --layout rms
s --out seeds/csv/iso.csv --time-format iso --delimiter semicolon --decimal-comma
for t in ascii binary binary32 float32; do
  s --out "$tmp/r-$t.cfg" --comtrade-type "$t" --revision 2013
  cp "$tmp/r-$t.cfg" "seeds/comtrade_cfg/$t.cfg"
  s --out "seeds/comtrade_cff/$t.cff" --comtrade-type "$t" --revision 2013
done
# The dat target's first byte picks the data type.
for i in 0 1 2 3; do
  t=(ascii binary binary32 float32); t=${t[$i]}
  { printf "\\x$(printf %02x "$i")"; cat "$tmp/r-$t.dat"; } > "seeds/comtrade_dat/$t.bin"
done
cp "$root"/rules/*.yaml seeds/rule_set/
cp "$root"/sample-data/plan.yaml seeds/plan/
rm -rf "$tmp"
