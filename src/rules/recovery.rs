//! Active power recovery (domain reference §5): from the disturbance end, the
//! time until P first reaches `fraction · P_pre`.

use super::result::{CheckResult, Verdict};
use super::spec::ActivePowerRecoverySpec;

pub struct RecoveryInput<'a> {
    pub t: &'a [f64],
    pub p: &'a [f64],
    pub end_s: Option<f64>,
    pub p_pre: Option<f64>,
    pub trip_s: Option<f64>,
    pub recording_end_s: f64,
}

pub fn evaluate(
    spec: &ActivePowerRecoverySpec,
    inp: &RecoveryInput<'_>,
    mut r: CheckResult,
) -> CheckResult {
    r.limit = Some(spec.within_s);
    let Some(p0) = inp.p_pre else {
        return r.verdict(
            Verdict::Inconclusive,
            "no pre-fault active power: the recording has too little data before the disturbance",
        );
    };
    r.prefault_pu = Some(p0);
    if p0 < spec.min_prefault_pu {
        return r.verdict(
            Verdict::NotApplicable,
            format!(
                "pre-fault active power {p0:.3} pu is below the minimum loading {} pu for this requirement",
                spec.min_prefault_pu
            ),
        );
    }
    let Some(end) = inp.end_s else {
        return r.verdict(
            Verdict::Inconclusive,
            "the voltage had not recovered when the recording ends",
        );
    };
    let target = spec.fraction * p0;
    let i0 = inp.t.partition_point(|x| *x < end);
    let hit = (i0..inp.t.len()).find(|&k| inp.p[k].is_finite() && inp.p[k] >= target);
    if let Some(tt) = inp.trip_s {
        if hit.is_none_or(|k| inp.t[k] >= tt) {
            r.permitted_trip = Some(false);
            return r.verdict(
                Verdict::Fail,
                format!("the unit tripped at {tt:.3} s, before active power recovered to {target:.3} pu"),
            );
        }
    }
    match hit {
        Some(k) => {
            let rec = inp.t[k] - end;
            r.measured = Some(rec);
            r.margin = Some(spec.within_s - rec);
            r.at_s = Some(inp.t[k]);
            let v = if rec <= spec.within_s {
                Verdict::Pass
            } else {
                Verdict::Fail
            };
            r.verdict(
                v,
                format!(
                    "active power reached {:.0} % of the pre-fault {p0:.3} pu ({target:.3} pu) {:.3} s after the disturbance ended (limit {} s)",
                    spec.fraction * 100.0,
                    rec,
                    spec.within_s
                ),
            )
        }
        None => {
            let best = inp.p[i0..]
                .iter()
                .copied()
                .filter(|x| x.is_finite())
                .fold(f64::NEG_INFINITY, f64::max);
            let seen = inp.recording_end_s - end;
            if seen >= spec.within_s {
                r.margin = Some(spec.within_s - seen);
                r.at_s = Some(end + spec.within_s);
                r.verdict(
                    Verdict::Fail,
                    format!(
                        "active power did not reach {target:.3} pu ({:.0} % of pre-fault {p0:.3} pu) within {} s of the disturbance end; highest {best:.3} pu",
                        spec.fraction * 100.0,
                        spec.within_s
                    ),
                )
            } else {
                r.verdict(
                    Verdict::Inconclusive,
                    format!(
                        "the recording ends {seen:.3} s after the disturbance, before the {} s limit, and P ({best:.3} pu) has not yet reached {target:.3} pu",
                        spec.within_s
                    ),
                )
            }
        }
    }
}
