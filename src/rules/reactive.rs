//! Reactive current injection (domain reference §5).
//!
//! `ΔV(t) = V(t) − V_pre` (positive or negative sequence), required extra
//! current `ΔIq_req = −k·(|ΔV| − db)·sign(ΔV)` (offset dead band) or
//! `−k·|ΔV|·sign(ΔV)` (full), zero inside the dead band; the total
//! `Iq_pre + ΔIq_req` is limited to `±limit`. By default one required value
//! comes from the mean `ΔV` over the quasi-steady part of the fault (from the
//! settling time after the start to one nominal cycle before the end).
//!
//! * rise time: start → first time the measured `ΔIq` reaches 90 % of the
//!   requirement (in its direction);
//! * settling time: start → entry into the band `[req + lo, req + hi]`
//!   (mirrored for a negative requirement: `lo` is always "less current than
//!   required") for good, up to the end of the quasi-steady part;
//! * margin: the smaller of the rise-time and settling-time margins, in s.
//!
//! With `follow: instantaneous` the requirement follows the voltage sample by
//! sample; a step of the requirement later in the fault (larger than half the
//! tolerance band) restarts a settling period, during which the band is not
//! enforced.

use super::result::{CheckResult, Verdict};
use super::spec::{DeadBandMode, Follow, ReactiveCurrentSpec, Sequence};

/// Inputs of one reactive-current evaluation.
pub struct ReactiveInput<'a> {
    pub t: &'a [f64],
    /// Voltage magnitude of the judged sequence, pu.
    pub v: &'a [f64],
    /// Reactive current of that sequence, pu.
    pub iq: &'a [f64],
    pub start_s: f64,
    /// Disturbance end (or the recording end when it never ended).
    pub end_s: f64,
    pub ended: bool,
    pub v_pre: f64,
    pub iq_pre: f64,
    pub trip_s: Option<f64>,
    pub cycle_s: f64,
}

/// Required extra current for a deviation `dv` (before the limit).
pub fn required(spec: &ReactiveCurrentSpec, dv: f64) -> f64 {
    let a = dv.abs();
    if a <= spec.dead_band_pu {
        return 0.0;
    }
    let mag = match spec.dead_band_mode {
        DeadBandMode::Offset => spec.gain * (a - spec.dead_band_pu),
        DeadBandMode::Full => spec.gain * a,
    };
    -mag * dv.signum()
}

/// The requirement with the total limited to `±limit_pu`.
pub fn limited(spec: &ReactiveCurrentSpec, iq_pre: f64, req: f64) -> f64 {
    (iq_pre + req).clamp(-spec.limit_pu, spec.limit_pu) - iq_pre
}

fn mean_between(t: &[f64], x: &[f64], a: f64, b: f64) -> Option<f64> {
    let i0 = t.partition_point(|v| *v < a);
    let i1 = t.partition_point(|v| *v <= b);
    let (s, n) = x[i0.min(i1)..i1]
        .iter()
        .filter(|v| v.is_finite())
        .fold((0.0, 0usize), |(s, n), v| (s + v, n + 1));
    (n > 0).then(|| s / n as f64)
}

pub fn evaluate(
    spec: &ReactiveCurrentSpec,
    inp: &ReactiveInput<'_>,
    mut r: CheckResult,
) -> CheckResult {
    let seq = match spec.sequence {
        Sequence::Positive => "positive",
        Sequence::Negative => "negative",
    };
    r.required_gain = Some(spec.gain);
    r.limit = Some(spec.rise_time_s);
    let start = inp.start_s;
    let data_end = inp.trip_s.map_or(inp.end_s, |tt| tt.min(inp.end_s));
    let duration = inp.end_s - start;
    if let Some(tt) = inp.trip_s {
        if tt < start + spec.rise_time_s {
            return r.verdict(
                Verdict::Inconclusive,
                format!("the unit tripped at {tt:.3} s, before the rise time ended; the ride-through checks judge the trip"),
            );
        }
    }
    if duration < spec.rise_time_s {
        return r.verdict(
            Verdict::Inconclusive,
            format!(
                "the disturbance lasted {:.1} ms, shorter than the required rise time {:.1} ms: the data cannot decide",
                duration * 1e3,
                spec.rise_time_s * 1e3
            ),
        );
    }
    // Quasi-steady part; for faults shorter than the settling time only the
    // rise time is judged, with the requirement from the settled part.
    let qs_end = data_end - inp.cycle_s;
    let qs_start = start + spec.settling_time_s;
    let full = qs_end > qs_start;
    let (win_a, win_b) = if full {
        (qs_start, qs_end)
    } else {
        (start + inp.cycle_s, qs_end)
    };
    let dv_mean = match mean_between(inp.t, inp.v, win_a, win_b) {
        Some(v) => v - inp.v_pre,
        None => {
            return r.verdict(
                Verdict::Inconclusive,
                format!(
                    "no settled part of the fault ({:.1} ms long) to take the voltage from",
                    duration * 1e3
                ),
            )
        }
    };
    let req_raw = required(spec, dv_mean);
    if req_raw == 0.0 && spec.follow == Follow::Settled {
        r.verdict = Verdict::NotApplicable;
        r.measured = None;
        r.detail = format!(
            "the settled {seq}-sequence voltage deviation {:+.3} pu is inside the dead band ±{} pu: no extra reactive current is required",
            dv_mean, spec.dead_band_pu
        );
        return r;
    }
    let req = limited(spec, inp.iq_pre, req_raw);
    let limited_note = if (req - req_raw).abs() > 1e-9 {
        format!(
            " (k·ΔV asks {:+.3} pu; the total is limited to ±{} pu)",
            req_raw, spec.limit_pu
        )
    } else {
        String::new()
    };
    // Requirement at each sample.
    let req_at = |k: usize| -> f64 {
        match spec.follow {
            Follow::Settled => req,
            Follow::Instantaneous => {
                limited(spec, inp.iq_pre, required(spec, inp.v[k] - inp.v_pre))
            }
        }
    };
    let dir = if req >= 0.0 { 1.0 } else { -1.0 };
    let [lo, hi] = spec.tolerance_pu;
    let i0 = inp.t.partition_point(|x| *x < start);
    let i_end = inp.t.partition_point(|x| *x <= data_end);
    // Rise time: first 90 % crossing, interpolated between output points.
    let mut rise_at: Option<f64> = None;
    for k in i0..i_end {
        let d = (inp.iq[k] - inp.iq_pre) * dir;
        let need = 0.9 * req_at(k).abs();
        if d.is_finite() && d >= need && need > 0.0 {
            rise_at = Some(if k > i0 {
                let dp = (inp.iq[k - 1] - inp.iq_pre) * dir;
                if dp.is_finite() && dp < need {
                    inp.t[k - 1] + (need - dp) / (d - dp) * (inp.t[k] - inp.t[k - 1])
                } else {
                    inp.t[k]
                }
            } else {
                inp.t[k]
            });
            break;
        }
    }
    // Settling: after the last sample outside the band (up to the quasi-steady end).
    let j_end = inp.t.partition_point(|x| *x <= qs_end);
    let in_band = |k: usize| -> bool {
        let d = (inp.iq[k] - inp.iq_pre) * dir;
        let need = req_at(k).abs();
        d.is_finite() && d >= need + lo && d <= need + hi
    };
    // Following the voltage, each step of the requirement (larger than half
    // the band width between two points) restarts a settling period: samples
    // within the settling time after such a step are not held to the band.
    let half_band = (hi - lo) / 2.0;
    let mut exempt_until = f64::NEG_INFINITY;
    let mut exempt = vec![false; j_end.saturating_sub(i0)];
    if spec.follow == Follow::Instantaneous {
        for k in i0.max(1)..j_end {
            if (req_at(k) - req_at(k - 1)).abs() > half_band
                && inp.t[k] > start + spec.settling_time_s
            {
                exempt_until = inp.t[k] + spec.settling_time_s;
            }
            exempt[k - i0] = inp.t[k] < exempt_until;
        }
    }
    let settle_at: Option<f64> = if full {
        match (i0..j_end).rev().find(|&k| !in_band(k) && !exempt[k - i0]) {
            None => Some(start),
            Some(k) if k + 1 < j_end => Some(inp.t[k + 1]),
            Some(_) => None,
        }
    } else {
        None
    };
    let measured_pu = mean_between(inp.t, inp.iq, win_a, win_b).map(|m| m - inp.iq_pre);
    r.required_pu = Some(req);
    r.measured_pu = measured_pu;
    let eff = match spec.dead_band_mode {
        DeadBandMode::Offset => dv_mean.abs() - spec.dead_band_pu,
        DeadBandMode::Full => dv_mean.abs(),
    };
    r.measured_gain = measured_pu.filter(|_| eff > 1e-6).map(|m| m * dir / eff);
    let rise = rise_at.map(|a| a - start);
    r.measured = rise;
    r.at_s = rise_at;
    r.settling_time_s = settle_at.map(|a| a - start);
    let rise_margin = rise.map(|x| spec.rise_time_s - x);
    let settle_margin = r.settling_time_s.map(|x| spec.settling_time_s - x);
    r.margin = match (rise_margin, settle_margin, full) {
        (Some(a), Some(b), true) => Some(a.min(b)),
        (Some(a), _, false) => Some(a),
        _ => None,
    };
    let band = if dir > 0.0 {
        format!("[{:+.3}, {:+.3}]", req + lo, req + hi)
    } else {
        format!("[{:+.3}, {:+.3}]", req - hi, req - lo)
    };
    let what = match spec.follow {
        Follow::Settled => format!(
            "required ΔIq{} {:+.3} pu from the settled deviation {:+.3} pu with k = {}{limited_note}",
            if spec.sequence == Sequence::Negative { "2" } else { "" },
            req,
            dv_mean,
            spec.gain
        ),
        Follow::Instantaneous => format!(
            "requirement following the voltage with k = {} (settled value {:+.3} pu){limited_note}",
            spec.gain, req
        ),
    };
    let measured_txt = measured_pu
        .map(|m| format!("; measured ΔIq {m:+.3} pu"))
        .unwrap_or_default();
    let Some(rise_v) = rise else {
        return r.verdict(
            Verdict::Fail,
            format!(
                "{what}: ΔIq never reached 90 % of it before {:.3} s{measured_txt}",
                data_end
            ),
        );
    };
    let rise_ok = rise_v <= spec.rise_time_s;
    if !full {
        let v = if rise_ok {
            Verdict::Pass
        } else {
            Verdict::Fail
        };
        return r.verdict(
            v,
            format!(
                "{what}: rise time {:.1} ms (limit {:.1} ms); the fault was too short for the settling time of {:.1} ms to be judged{measured_txt}",
                rise_v * 1e3,
                spec.rise_time_s * 1e3,
                spec.settling_time_s * 1e3
            ),
        );
    }
    match r.settling_time_s {
        None => r.verdict(
            Verdict::Fail,
            format!(
                "{what}: rise time {:.1} ms (limit {:.1} ms), but ΔIq did not stay inside the tolerance band {band} pu before {:.3} s{measured_txt}",
                rise_v * 1e3,
                spec.rise_time_s * 1e3,
                qs_end
            ),
        ),
        Some(st) => {
            let settle_ok = st <= spec.settling_time_s;
            let v = if rise_ok && settle_ok { Verdict::Pass } else { Verdict::Fail };
            r.verdict(
                v,
                format!(
                    "{what}: rise time {:.1} ms (limit {:.1} ms), settling into {band} pu after {:.1} ms (limit {:.1} ms){measured_txt}",
                    rise_v * 1e3,
                    spec.rise_time_s * 1e3,
                    st * 1e3,
                    spec.settling_time_s * 1e3
                ),
            )
        }
    }
}
