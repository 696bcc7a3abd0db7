//! Phase-angle jumps and the frequency estimator against constructed
//! waveforms whose angle and frequency are known in closed form: a phase
//! step of J degrees at t0 is `cos(φ(t) + J·[t ≥ t0])`, a frequency ramp
//! `f(t) = f0 + r·(t − t1)` has the phase `φ(t) = 2π·∫f dt`.

use crate::analysis::analyse_memory;
use holdfast::analysis::angle::{self, PhaseJump};
use holdfast::analysis::Quantity;
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};
use std::f64::consts::{PI, SQRT_2};

/// Three-phase per-unit waveforms: magnitude `mag(t)`, phase `phase(t)`
/// (radians, of phase a), Gaussian noise of `noise` pu.
fn three_phase(
    fs: f64,
    seconds: f64,
    mag: impl Fn(f64) -> f64,
    phase: impl Fn(f64) -> f64,
    noise: f64,
) -> Vec<Vec<f64>> {
    let n = (seconds * fs) as usize;
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
    let normal = Normal::new(0.0, 1.0).unwrap();
    (0..3)
        .map(|k| {
            (0..n)
                .map(|m| {
                    let t = m as f64 / fs;
                    SQRT_2 * mag(t) * (phase(t) - 2.0 * PI * k as f64 / 3.0).cos()
                        + noise * normal.sample(&mut rng)
                })
                .collect()
        })
        .collect()
}

fn jumps_of(cols: &[Vec<f64>], fs: f64, f_nom: f64) -> Vec<PhaseJump> {
    let a = analyse_memory(cols, fs, f_nom);
    let theta = a.series.get(Quantity::V1Angle).expect("angle series");
    angle::phase_jumps(&a.series.t, theta, f_nom, angle::DEFAULT_THRESHOLD_DEG)
}

#[test]
fn constructed_phase_jumps_are_measured_with_and_without_a_dip() {
    // 10 kHz: 200 samples per 50 Hz cycle, 166.7 per 60 Hz cycle (the
    // fractional window). Jump at 0.5 s, back at 0.8 s (with the dip's
    // clearance where there is one).
    for f in [50.0, 60.0] {
        for jump in [10.0f64, 25.0, 40.0] {
            for dip in [1.0, 0.5] {
                let fs = 10_000.0;
                let j = jump.to_radians();
                let in_event = |t: f64| (0.5..0.8).contains(&t);
                let cols = three_phase(
                    fs,
                    1.4,
                    |t| if in_event(t) { dip } else { 1.0 },
                    |t| 2.0 * PI * f * t + 0.3 + if in_event(t) { j } else { 0.0 },
                    0.003,
                );
                let found = jumps_of(&cols, fs, f);
                let what = format!("{f} Hz, {jump}°, dip to {dip} pu: {found:?}");
                assert_eq!(found.len(), 2, "{what}");
                // Within 0.1° (noise 0.003 pu per sample) and one cycle.
                assert!((found[0].jump_deg - jump).abs() < 0.1, "{what}");
                assert!((found[1].jump_deg + jump).abs() < 0.1, "{what}");
                assert!(
                    found[0].at_s >= 0.5 && found[0].at_s <= 0.5 + 1.0 / f,
                    "{what}"
                );
                assert!(
                    found[1].at_s >= 0.8 && found[1].at_s <= 0.8 + 1.0 / f,
                    "{what}"
                );
                assert!(found
                    .iter()
                    .all(|p| p.settled && (p.reference_hz - f).abs() < 0.01));
            }
        }
    }
}

#[test]
fn a_dip_without_a_phase_jump_is_no_jump() {
    let (fs, f) = (10_000.0, 50.0);
    let cols = three_phase(
        fs,
        1.2,
        |t| if (0.5..0.75).contains(&t) { 0.2 } else { 1.0 },
        |t| 2.0 * PI * f * t,
        0.003,
    );
    assert_eq!(jumps_of(&cols, fs, f), vec![]);
}

#[test]
fn a_phase_jump_at_off_nominal_frequency_has_the_drift_removed() {
    // 49.5 Hz steady (the angle turns at −π rad/s against the 50 Hz
    // reference), 20° jump at 1 s that stays.
    let (fs, f_nom, f) = (10_000.0, 50.0, 49.5);
    let j = 20f64.to_radians();
    let cols = three_phase(
        fs,
        1.6,
        |_| 1.0,
        |t| 2.0 * PI * f * t + if t >= 1.0 { j } else { 0.0 },
        0.003,
    );
    let found = jumps_of(&cols, fs, f_nom);
    assert_eq!(found.len(), 1, "{found:?}");
    assert!((found[0].jump_deg - 20.0).abs() < 0.3, "{found:?}");
    assert!((found[0].reference_hz - 49.5).abs() < 0.005, "{found:?}");
}

#[test]
fn a_frequency_ramp_is_followed_to_a_few_millihertz() {
    // 50 Hz until 1 s, then −0.5 Hz/s to 49 Hz at 3 s, then 49 Hz.
    // φ(t) = 2π·∫f: 50t before 1 s; 50t − 0.25(t − 1)² on the ramp;
    // after 3 s the ramp's phase at 3 s plus 49(t − 3).
    let (fs, f_nom) = (10_000.0, 50.0);
    let phase = |t: f64| {
        let cyc = if t < 1.0 {
            50.0 * t
        } else if t < 3.0 {
            50.0 * t - 0.25 * (t - 1.0) * (t - 1.0)
        } else {
            150.0 - 1.0 + 49.0 * (t - 3.0)
        };
        2.0 * PI * cyc
    };
    let f_true = |t: f64| {
        if t < 1.0 {
            50.0
        } else if t < 3.0 {
            50.0 - 0.5 * (t - 1.0)
        } else {
            49.0
        }
    };
    let cols = three_phase(fs, 4.0, |_| 1.0, phase, 0.003);
    let a = analyse_memory(&cols, fs, f_nom);
    let theta = a.series.get(Quantity::V1Angle).unwrap();
    let t = &a.series.t;
    let f = angle::frequency(t, theta, f_nom, &[], angle::REFERENCE_S);
    let r = angle::rocof(t, &f, 0.5);
    let mut worst_f = 0.0f64;
    let mut worst_r = 0.0f64;
    let mut checked = 0;
    for k in 0..t.len() {
        let tk = t[k];
        // Away from the ramp's corners by half a window (the slope over a
        // window across a corner is the mean of both sides).
        let near_corner = |c: f64, half: f64| (tk - c).abs() < half + 0.01;
        if !f[k].is_finite() || near_corner(1.0, 0.05) || near_corner(3.0, 0.05) {
            continue;
        }
        worst_f = worst_f.max((f[k] - f_true(tk)).abs());
        checked += 1;
        if r[k].is_finite() && !near_corner(1.0, 0.3) && !near_corner(3.0, 0.3) {
            let want = if (1.0..3.0).contains(&tk) { -0.5 } else { 0.0 };
            worst_r = worst_r.max((r[k] - want).abs());
        }
    }
    assert!(checked > 10_000, "{checked}");
    // The accuracy docs/method.md states: 1 mHz and 0.005 Hz/s here
    // (measured 0.7 mHz and 0.0023 Hz/s).
    assert!(worst_f < 0.001, "frequency error {worst_f} Hz");
    assert!(worst_r < 0.005, "ROCOF error {worst_r} Hz/s");
}
