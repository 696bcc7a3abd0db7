//! Active power recovery (docs/rules.md,
//! `active_power_recovery`): from the disturbance end, the time until P first reaches
//! `fraction · P_pre` and then stays there for `hold_s`. The search ends
//! where the next disturbance starts.

use crate::analysis::events::DisturbanceKind;
use crate::analysis::Quantity;
use crate::rules::check::{Check, Context, FigureKind, Overlay};
use crate::rules::registry::{CheckKind, Unit};
use crate::rules::result::{CheckResult, Reason, Verdict};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ActivePowerRecoverySpec {
    pub id: String,
    /// Fraction of pre-fault active power to reach.
    pub fraction: f64,
    /// Time limit from disturbance end, s.
    pub within_s: f64,
    /// Not applicable below this pre-fault loading, pu (default 0.1).
    #[serde(default = "d_minp")]
    pub min_prefault_pu: f64,
    /// The power must stay at or above the target this long, s (default 0).
    #[serde(default)]
    pub hold_s: f64,
}

fn d_minp() -> f64 {
    0.1
}

impl Check for ActivePowerRecoverySpec {
    fn id(&self) -> &str {
        &self.id
    }
    fn kind(&self) -> CheckKind {
        CheckKind::ActivePowerRecovery
    }
    fn unit(&self) -> Unit {
        Unit::S
    }
    fn problems(&self, out: &mut Vec<(&'static str, String)>) {
        let a = self;
        let mut p = |key: &'static str, message: String| out.push((key, message));
        if !(a.fraction > 0.0 && a.fraction <= 1.0) {
            p(
                "fraction",
                format!("fraction {} must be in (0, 1]", a.fraction),
            );
        }
        if !(a.within_s > 0.0 && a.within_s <= 60.0) {
            p(
                "within_s",
                format!("within_s {} must be in (0, 60] s", a.within_s),
            );
        }
        if !(a.hold_s >= 0.0 && a.hold_s <= 60.0) {
            p(
                "hold_s",
                format!("hold_s {} must be in [0, 60] s", a.hold_s),
            );
        }
        if !(a.min_prefault_pu >= 0.0 && a.min_prefault_pu < 1.0) {
            p(
                "min_prefault_pu",
                format!("min_prefault_pu {} must be in [0, 1)", a.min_prefault_pu),
            );
        }
    }
    fn concerns(&self, _kind: DisturbanceKind) -> bool {
        true
    }
    fn evaluate(&self, ctx: &Context<'_>, r: CheckResult) -> CheckResult {
        evaluate_at(self, ctx, r)
    }
    /// After a trip (docs/rules.md, `active_power_recovery`): required unless every zone check
    /// concerning the disturbance calls the trip permitted.
    fn review(&self, c: &mut CheckResult, zone: &[&CheckResult]) {
        if c.reason != Some(Reason::TrippedBeforeRecovery) {
            return;
        }
        let of: Vec<Option<Reason>> = zone.iter().map(|z| z.reason).collect();
        if of.is_empty() || of.contains(&Some(Reason::TripInsideZone)) {
            return;
        }
        if of.iter().all(|r| *r == Some(Reason::PermittedTrip)) {
            c.permitted_trip = None;
            let detail = format!(
                "{}; every ride-through check calls the trip permitted (the voltage had left the zone), so recovery is not required",
                c.detail
            );
            *c = c
                .clone()
                .decide(Verdict::NotApplicable, Reason::TripPermitted, detail);
        } else {
            let detail = format!(
                "{}; whether recovery was required depends on ride-through checks that could not decide",
                c.detail
            );
            *c = c
                .clone()
                .decide(Verdict::Inconclusive, Reason::TripNotJudged, detail);
        }
    }
    fn extent_s(&self) -> f64 {
        self.within_s + 0.2
    }
    fn recovery_allowance_s(&self) -> Option<f64> {
        Some(self.within_s + self.hold_s)
    }
    fn summary(&self) -> String {
        format!(
            "active power to {} of pre-fault within {} s (from {} pu loading)",
            self.fraction, self.within_s, self.min_prefault_pu
        )
    }
    fn figure(&self) -> FigureKind {
        FigureKind::ActivePower
    }
    fn overlay(&self, c: &CheckResult, ctx: &Context<'_>) -> Option<Overlay> {
        let (p0, end) = (c.prefault_pu?, ctx.d.end_s?);
        let reached = match (c.at_s, c.measured) {
            (Some(at), Some(m)) => Some((at, m)),
            _ => None,
        };
        Some(Overlay::Power {
            target: self.fraction * p0,
            from: end,
            deadline: end + self.within_s,
            fraction: self.fraction,
            within_s: self.within_s,
            reached,
        })
    }
}

/// The check of one disturbance: P, its pre-fault value, the trip and
/// where the search ends, then [`evaluate_input`].
fn evaluate_at(ap: &ActivePowerRecoverySpec, p: &Context<'_>, r: CheckResult) -> CheckResult {
    let Some(pw) = p.series.get(Quantity::P) else {
        return r.decide(
            Verdict::Inconclusive,
            Reason::MissingChannel,
            "the recording has no active power (currents missing)",
        );
    };
    let inp = RecoveryInput {
        t: &p.series.t,
        p: pw,
        end_s: p.d.end_s,
        p_pre: p.d.prefault.and_then(|x| x.p_pu),
        trip_s: p.trip_in,
        search_end_s: p.win_end,
        next_start_s: p.next_start,
    };
    evaluate_input(ap, &inp, r)
}

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

pub fn evaluate_input(
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
