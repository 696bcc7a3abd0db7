//! The `connection` check that every recording gets (docs/rules.md,
//! "Checks holdfast adds itself"): did the unit stay connected wherever the rule set asks it
//! to? A trip while no disturbance is under way is a failure to stay
//! connected, which zone checks alone cannot see (a phase jump without a
//! magnitude change is a common cause); a trip during a disturbance follows
//! the zone checks that judged it.

use super::registry::{CheckKind, Unit};
use super::result::{CheckResult, Reason, Verdict};
use crate::analysis::events::{Disturbance, TripInfo, TripMethod};

/// The check's id and type in results.
pub const ID: &str = "connection";

pub struct ConnectionInput<'a> {
    pub t: &'a [f64],
    /// Applicable voltage on the series' time base (`None`: not observable).
    pub v: Option<&'a [f64]>,
    pub trip: &'a TripInfo,
    pub disturbances: &'a [Disturbance],
    /// Per disturbance: some zone check of the rule set concerns it.
    pub zone_checked: &'a [bool],
    /// Results of the zone checks (envelopes, duration tables).
    pub zone: &'a [&'a CheckResult],
    /// Some zone check forbids momentary cessation.
    pub forbid_cessation: bool,
    /// The normal band of the applicable voltage, pu.
    pub band: (f64, f64),
    pub cycle_s: f64,
}

fn value_at(t: &[f64], v: &[f64], at: f64) -> Option<f64> {
    let k = t.partition_point(|x| *x <= at).checked_sub(1)?;
    v.get(k).copied().filter(|x| x.is_finite())
}

pub fn evaluate(inp: &ConnectionInput<'_>) -> CheckResult {
    let mut r = CheckResult::new(ID, CheckKind::Connection, None, Unit::Pu);
    let Some(&t_end) = inp.t.last() else {
        return r.decide(
            Verdict::Inconclusive,
            Reason::InsufficientData,
            "no analysed samples: the recording is shorter than one analysis window",
        );
    };
    let how = match inp.trip.method {
        TripMethod::Status => "seen from the status channel",
        TripMethod::Current => "seen from the current",
        TripMethod::None => "",
    };
    if let (true, Some(tt)) = (inp.trip.tripped, inp.trip.time_s) {
        return judge_trip(inp, r, tt, how);
    }
    if inp.trip.method == TripMethod::None {
        return r.decide(
            Verdict::Inconclusive,
            Reason::TripNotVisible,
            format!(
                "staying connected cannot be shown: {}",
                inp.trip
                    .note
                    .clone()
                    .unwrap_or_else(|| "the recording shows no trip indication".into())
            ),
        );
    }
    if inp.forbid_cessation {
        let outside = inp.trip.cessations.iter().find(|(a, _)| {
            !inp.disturbances.iter().any(|d| {
                *a >= d.start_s - inp.cycle_s && d.end_s.is_none_or(|e| *a <= e + inp.cycle_s)
            })
        });
        if let Some((a, b)) = outside {
            r.at_s = Some(*a);
            r.measured = inp.v.and_then(|v| value_at(inp.t, v, *a));
            return r.decide(
                Verdict::Fail,
                Reason::CessationOutsideDisturbance,
                format!(
                    "momentary cessation {a:.3}–{b:.3} s while no disturbance was under way, which the rule set forbids"
                ),
            );
        }
    }
    r.decide(
        Verdict::Pass,
        Reason::StayedConnected,
        format!(
            "the unit stayed connected from {:.3} s to the end of the recording at {t_end:.3} s ({how})",
            inp.t[0]
        ),
    )
}

/// A trip at `tt`: failed inside a zone, permitted outside it, not judged
/// during a disturbance no check decided, failed with no disturbance under way.
fn judge_trip(inp: &ConnectionInput<'_>, mut r: CheckResult, tt: f64, how: &str) -> CheckResult {
    r.at_s = Some(tt);
    r.measured = inp.v.and_then(|v| value_at(inp.t, v, tt));
    let judged: Vec<&&CheckResult> = inp
        .zone
        .iter()
        .filter(|c| c.permitted_trip.is_some())
        .collect();
    if let Some(c) = judged.iter().find(|c| c.permitted_trip == Some(false)) {
        r.disturbance = c.disturbance;
        let inside = match c.disturbance {
            Some(d) => format!(
                "while the voltage was inside the ride-through zone of check {} (disturbance #{d})",
                c.id
            ),
            None => format!(
                "within what check {} requires the unit to ride through (its result says why)",
                c.id
            ),
        };
        return r.decide(
            Verdict::Fail,
            Reason::TripInsideZone,
            format!("the unit tripped at {tt:.3} s ({how}) {inside}"),
        );
    }
    if let Some(c) = judged.first() {
        r.disturbance = c.disturbance;
        let ids = judged
            .iter()
            .map(|c| c.id.as_str())
            .collect::<Vec<_>>()
            .join(", ");
        let after = match c.disturbance {
            Some(d) => format!(
                "after the voltage had left the ride-through zone of {ids} (disturbance #{d})"
            ),
            None => format!("beyond what {ids} requires the unit to ride through"),
        };
        return r.decide(
            Verdict::Pass,
            Reason::PermittedTrip,
            format!("the unit tripped at {tt:.3} s ({how}) {after}: a permitted trip"),
        );
    }
    // No zone check judged the trip: where was it?
    let during = inp
        .disturbances
        .iter()
        .enumerate()
        .find(|(_, d)| tt >= d.start_s - inp.cycle_s && d.end_s.is_none_or(|e| tt <= e));
    if let Some((k, d)) = during {
        r.disturbance = Some(k);
        let why = if inp.zone_checked.get(k).copied().unwrap_or(false) {
            let reasons: Vec<String> = inp
                .zone
                .iter()
                .filter(|c| c.disturbance == Some(k))
                .map(|c| format!("{}: {}", c.id, c.detail))
                .collect();
            format!(
                "whose zone checks could not decide ({})",
                reasons.join("; ")
            )
        } else {
            format!(
                "an {} that no ride-through check of this rule set judges",
                d.kind.name()
            )
        };
        return r.decide(
            Verdict::Inconclusive,
            Reason::TripNotJudged,
            format!("the unit tripped at {tt:.3} s ({how}) during disturbance #{k}, {why}"),
        );
    }
    if inp.v.is_none() {
        return r.decide(
            Verdict::Inconclusive,
            Reason::VoltageUnobservable,
            format!(
                "the unit tripped at {tt:.3} s ({how}); the voltage the rule set judges is not available, so whether a disturbance was under way is unknown"
            ),
        );
    }
    let then = r
        .measured
        .map(|v| format!(" while the applicable voltage was {v:.3} pu"))
        .unwrap_or_default();
    r.decide(
        Verdict::Fail,
        Reason::TripOutsideDisturbance,
        format!(
            "the unit tripped at {tt:.3} s ({how}){then}, inside the normal band {}..{} pu with no disturbance under way: a failure to stay connected",
            inp.band.0, inp.band.1
        ),
    )
}
