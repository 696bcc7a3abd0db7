//! Active power recovery (domain reference §5; decisions C.10 and C.11 in
//! docs/rules.md): from the disturbance end, the time until P first reaches
//! `fraction · P_pre` and then stays there for `hold_s`. The search ends
//! where the next disturbance starts.

use super::result::{CheckResult, Reason, Verdict};
use super::spec::ActivePowerRecoverySpec;

pub struct RecoveryInput<'a> {
    pub t: &'a [f64],
    pub p: &'a [f64],
    pub end_s: Option<f64>,
    pub p_pre: Option<f64>,
    /// A trip attributed to this disturbance.
    pub trip_s: Option<f64>,
    /// Where the search ends: the next disturbance's start or the recording end.
    pub search_end_s: f64,
    /// The next disturbance's start, if there is one.
    pub next_start_s: Option<f64>,
}

/// First `k` in `i0..` (with `t ≤ until`) from which `p ≥ target` holds for
/// `hold` seconds; `Err(Some(k))` when a run started at `k` but the data
/// ended before it lasted `hold`.
fn first_held(
    t: &[f64],
    p: &[f64],
    i0: usize,
    until: f64,
    target: f64,
    hold: f64,
) -> Result<usize, Option<usize>> {
    let mut run: Option<usize> = None;
    for k in i0..t.len() {
        if t[k] > until {
            break;
        }
        if p[k].is_finite() && p[k] >= target {
            let a = *run.get_or_insert(k);
            if t[k] - t[a] >= hold {
                return Ok(a);
            }
        } else {
            run = None;
        }
    }
    Err(run)
}

pub fn evaluate(
    spec: &ActivePowerRecoverySpec,
    inp: &RecoveryInput<'_>,
    mut r: CheckResult,
) -> CheckResult {
    r.limit = Some(spec.within_s);
    let Some(p0) = inp.p_pre else {
        return r.decide(
            Verdict::Inconclusive,
            Reason::NoPrefaultReference,
            "no pre-fault active power: the recording has too little data before the disturbance",
        );
    };
    r.prefault_pu = Some(p0);
    if p0 < spec.min_prefault_pu {
        return r.decide(
            Verdict::NotApplicable,
            Reason::NotTriggered,
            format!(
                "pre-fault active power {p0:.3} pu is below the minimum loading {} pu for this requirement",
                spec.min_prefault_pu
            ),
        );
    }
    let Some(end) = inp.end_s else {
        return r.decide(
            Verdict::Inconclusive,
            Reason::InsufficientData,
            "the voltage had not recovered when the recording ends",
        );
    };
    let target = spec.fraction * p0;
    let hold_txt = if spec.hold_s > 0.0 {
        format!(" and held it for {} s", spec.hold_s)
    } else {
        String::new()
    };
    let i0 = inp.t.partition_point(|x| *x < end);
    let found = first_held(inp.t, inp.p, i0, inp.search_end_s, target, spec.hold_s);
    if let Some(tt) = inp.trip_s {
        if found.is_err() || found.is_ok_and(|k| inp.t[k] + spec.hold_s > tt) {
            r.permitted_trip = Some(false);
            r.at_s = Some(tt);
            return r.decide(
                Verdict::Fail,
                Reason::TrippedBeforeRecovery,
                format!("the unit tripped at {tt:.3} s, before active power recovered to {target:.3} pu{hold_txt}"),
            );
        }
    }
    let deadline = end + spec.within_s;
    match found {
        Ok(k) => {
            let rec = inp.t[k] - end;
            r.measured = Some(rec);
            r.margin = Some(spec.within_s - rec);
            r.at_s = Some(inp.t[k]);
            let (v, reason) = if rec <= spec.within_s {
                (Verdict::Pass, Reason::Recovered)
            } else {
                (Verdict::Fail, Reason::RecoveredLate)
            };
            r.decide(
                v,
                reason,
                format!(
                    "active power reached {:.0} % of the pre-fault {p0:.3} pu ({target:.3} pu){hold_txt} {:.3} s after the disturbance ended (limit {} s)",
                    spec.fraction * 100.0,
                    rec,
                    spec.within_s
                ),
            )
        }
        Err(open_run) => {
            let i1 = inp.t.partition_point(|x| *x <= inp.search_end_s);
            let best = inp.p[i0.min(i1)..i1]
                .iter()
                .copied()
                .filter(|x| x.is_finite())
                .fold(f64::NEG_INFINITY, f64::max);
            // A run that began in time but could not be followed for hold_s.
            let pending = open_run.is_some_and(|k| inp.t[k] <= deadline);
            if inp.search_end_s >= deadline + spec.hold_s
                || (inp.search_end_s >= deadline && !pending)
            {
                // No recovery time, so no margin: the sentence says what was seen.
                r.at_s = Some(deadline);
                r.decide(
                    Verdict::Fail,
                    Reason::NotRecovered,
                    format!(
                        "active power did not reach {target:.3} pu ({:.0} % of pre-fault {p0:.3} pu){hold_txt} within {} s of the disturbance end; highest {best:.3} pu",
                        spec.fraction * 100.0,
                        spec.within_s
                    ),
                )
            } else {
                match inp.next_start_s.filter(|n| *n <= inp.search_end_s + 1e-12) {
                    Some(n) => r.decide(
                        Verdict::Inconclusive,
                        Reason::NextDisturbance,
                        format!(
                            "the next disturbance starts at {n:.3} s, before the deadline at {deadline:.3} s, and P ({best:.3} pu) had not yet reached {target:.3} pu{hold_txt}"
                        ),
                    ),
                    None => r.decide(
                        Verdict::Inconclusive,
                        Reason::InsufficientData,
                        format!(
                            "the recording ends {:.3} s after the disturbance, before the {} s limit, and P ({best:.3} pu) has not yet reached {target:.3} pu{hold_txt}",
                            inp.search_end_s - end,
                            spec.within_s
                        ),
                    ),
                }
            }
        }
    }
}
