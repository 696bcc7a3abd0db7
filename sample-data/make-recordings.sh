#!/usr/bin/env bash
# Regenerates the sample recordings of the Saltmarsh Ridge demo plan (an
# invented 4.2 MVA, 0.69 kV, 50 Hz inverter station "SR-07"). Every file is a
# synthetic `holdfast synth` recording; the expected verdicts follow from how
# each one is built (see plan.yaml).
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
s() { target/release/holdfast synth --rated-kv 0.69 --rated-mva 4.2 --frequency 50 \
      --sample-rate 5000 --fault-start 0.5 --iq-tau 0.005 --noise 0.002 --harmonics 5:0.01,7:0.006 "$@"; }
d=sample-data/recordings
s --out $d/t01-deep-symmetrical.csv   --duration 2.5 --residual 0.2 --fault-duration 0.25
s --out $d/t02-unbalanced.csv         --duration 2.5 --residuals 0.5,0.5,1.0 --fault-duration 0.2 --k2-gain 2
s --out $d/t03-inside-dead-band.csv   --duration 2.5 --prefault 0.97 --residual 0.885 --fault-duration 0.4
s --out $d/t04-trip-inside.csv        --duration 2.5 --residual 0.5 --fault-duration 0.3 --trip-at 0.65 --status
s --out $d/t05-permitted-trip.csv     --duration 3.0 --residual 0.3 --fault-duration 1.2 --trip-at 1.3 --status
s --out $d/t06-slow-iq.csv            --duration 2.5 --residual 0.3 --fault-duration 0.3 --iq-tau 0.05
s --out $d/t07-weak-iq.csv            --duration 2.5 --residual 0.6 --fault-duration 0.3 --k-gain 1
s --out $d/t08-slow-p-recovery.csv    --duration 3.5 --residual 0.2 --fault-duration 0.25 --k-gain 4 --p-ramp 0.4
s --out $d/t09-swell.csv              --duration 2.5 --residual 1.16 --fault-duration 0.3
s --out $d/t10-too-short.csv          --duration 2.0 --residual 0.2 --fault-duration 0.012
s --out $d/t11-rms-level.csv          --duration 2.5 --residual 0.4 --fault-duration 0.2 --layout rms --sample-rate 1000 --harmonics ""
s --out $d/t12-cessation.csv          --duration 2.5 --residual 0.3 --fault-duration 0.3 --block 0.5,0.6
s --out $d/t13-table-trip.csv         --duration 2.5 --residual 0.6 --fault-duration 0.3 --trip-at 0.7 --status
# COMTRADE (IEEE C37.111-2013 single-file .cff, 16-bit binary data, secondary values
# with a breaker status channel): a single-phase dip with negative-sequence support.
s --out $d/t14-comtrade-single-phase.cff --duration 2.5 --residuals 0.25,1.0,1.0 --fault-duration 0.2 --k2-gain 2 --status --comtrade-type binary --revision 2013 --station "SALTMARSH RIDGE" --device "SR07 RECORDER"
# Events that are not voltage dips (rule sets rules/nerc-prc-029-1-phase-jump.yaml,
# sample-data/demo-repeated-faults.yaml, rules/eu-rfg-2016-631-frequency.yaml):
# a 20° phase jump with no change of magnitude and a trip 0.3 s later; two dips
# to 0.4 pu 1 s apart, ridden through; the frequency falling at 0.5 Hz/s to
# 48.8 Hz and a trip at 4 s.
s --out $d/t15-phase-jump-trip.csv    --duration 2.5 --residual 1.0 --fault-duration 5 --phase-jump 20 --trip-at 0.8 --status
s --out $d/t16-repeated-faults.csv    --duration 3.0 --steps 0.5:0.4,0.7:1.0,1.5:0.4,1.7:1.0 --status
s --out $d/t17-frequency-trip.csv     --duration 5.0 --residual 1.0 --frequency-profile 1.0:50,3.4:48.8 --trip-at 4.0 --status
# Simulated twins for `holdfast validate` (sample-data/validation-rule.yaml):
# T01 as an RMS-level simulation with a slightly slower, slightly stronger
# reactive current controller; T02 as a waveform simulation with a slightly
# higher negative-sequence gain.
m=sample-data/simulations
s --out $m/t01-deep-symmetrical-sim.csv --duration 2.5 --residual 0.2 --fault-duration 0.25 --iq-tau 0.008 --k-gain 2.1 --layout rms --sample-rate 1000 --harmonics "" --noise 0 --seed 2
s --out $m/t02-unbalanced-sim.csv       --duration 2.5 --residuals 0.5,0.5,1.0 --fault-duration 0.2 --k2-gain 2.2 --noise 0 --harmonics "" --seed 2
