//! `consecutive_disturbances`: the unit must ride through `count`
//! disturbances within `window_s` (docs/rules.md). Each disturbance is
//! judged by the other checks as usual (pre-fault references of a chain per
//! the rule set's "Rule set" section); this rule fails when the unit trips
//! during any of the first `count` disturbances of the window that starts
//! with the first one.
//!
//! Verdict paths (tests in tests/it/checks.rs):
//! * no disturbance of the kinds it applies to → not applicable, `not_triggered`;
//! * the unit had tripped before the first → inconclusive, `already_tripped`;
//! * a trip from the first start to the end of the last counted one → fail,
//!   `trip_inside_zone` (measured: the disturbances up to the trip);
//! * the recording can show no trip → inconclusive, `trip_not_visible`;
//! * fewer than `count` within the window and no trip → inconclusive,
//!   `insufficient_data` (the recording shows fewer than the rule asks);
//! * `count` within the window and no trip → pass, `no_trip` (margin: the
//!   window's time left after the last counted start, s).

use super::reactive_current::AppliesTo;
use crate::analysis::events::{DisturbanceKind, TripMethod};
use crate::rules::check::{Check, FigureKind, Recording};
use crate::rules::registry::{CheckKind, Unit};
use crate::rules::result::{CheckResult, Reason, Verdict};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ConsecutiveSpec {
    pub id: String,
    /// How many disturbances the unit must ride through.
    pub count: u32,
    /// Within this time from the first disturbance's start, s.
    pub window_s: f64,
    /// Which disturbances count (default both kinds).
    #[serde(default)]
    pub applies_to: AppliesTo,
}

fn ordinal(n: usize) -> String {
    let suffix = match (n % 10, n % 100) {
        (1, x) if x != 11 => "st",
        (2, x) if x != 12 => "nd",
        (3, x) if x != 13 => "rd",
        _ => "th",
    };
    format!("{n}{suffix}")
}

impl ConsecutiveSpec {
    fn counts(&self, kind: DisturbanceKind) -> bool {
        match self.applies_to {
            AppliesTo::Both => true,
            AppliesTo::Undervoltage => kind == DisturbanceKind::Undervoltage,
            AppliesTo::Overvoltage => kind == DisturbanceKind::Overvoltage,
        }
    }

    fn judge(&self, rec: &Recording<'_>) -> CheckResult {
        let mut r = CheckResult::new(&self.id, CheckKind::ConsecutiveDisturbances, None, Unit::Count);
        r.limit = Some(self.count as f64);
        let of_kind: Vec<usize> = (0..rec.disturbances.len())
            .filter(|&k| self.counts(rec.disturbances[k].kind))
            .collect();
        let Some(&first) = of_kind.first() else {
            return r.decide(
                Verdict::NotApplicable,
                Reason::NotTriggered,
                "no disturbance in the recording: no sequence to ride through",
            );
        };
        let d0 = &rec.disturbances[first];
        let until = d0.start_s + self.window_s;
        let counted: Vec<usize> = of_kind
            .iter()
            .copied()
            .filter(|&k| rec.disturbances[k].start_s <= until)
            .take(self.count as usize)
            .collect();
        let starts: Vec<f64> = counted.iter().map(|&k| rec.disturbances[k].start_s).collect();
        r.counted = counted.clone();
        r.spacing_s = starts.windows(2).map(|w| w[1] - w[0]).collect();
        r.measured = Some(counted.len() as f64);
        r.at_s = Some(d0.start_s);
        let spacing = if r.spacing_s.is_empty() {
            String::new()
        } else {
            format!(
                ", spaced {} s",
                r.spacing_s
                    .iter()
                    .map(|s| format!("{s:.3}"))
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        };
        let last = &rec.disturbances[*counted.last().unwrap_or(&first)];
        let last_end = last.end_s.unwrap_or(rec.rec_end) + rec.cycle;
        let tt = rec.trip.time_s.filter(|_| rec.trip.tripped);
        if let Some(tb) = tt.filter(|x| *x < d0.start_s - rec.cycle) {
            return r.decide(
                Verdict::Inconclusive,
                Reason::AlreadyTripped,
                format!("the unit had already tripped at {tb:.3} s, before the first disturbance at {:.3} s", d0.start_s),
            );
        }
        if let Some(t) = tt.filter(|x| *x <= last_end) {
            let upto = counted
                .iter()
                .filter(|&&k| rec.disturbances[k].start_s - rec.cycle <= t)
                .count();
            r.measured = Some(upto as f64);
            r.at_s = Some(t);
            return r.decide(
                Verdict::Fail,
                Reason::TripInsideZone,
                format!(
                    "the unit tripped at {t:.3} s, during the {} of the {} disturbances it must ride through within {} s (starts {}{spacing})",
                    ordinal(upto.max(1)),
                    self.count,
                    self.window_s,
                    starts.iter().map(|s| format!("{s:.3}")).collect::<Vec<_>>().join(", ")
                ),
            );
        }
        if rec.trip.method == TripMethod::None {
            return r.decide(
                Verdict::Inconclusive,
                Reason::TripNotVisible,
                format!("{} disturbances within {} s{spacing}, but the recording can show no trip", counted.len(), self.window_s),
            );
        }
        if counted.len() < self.count as usize {
            return r.decide(
                Verdict::Inconclusive,
                Reason::InsufficientData,
                format!(
                    "the recording shows {} disturbance(s) within {} s of the first{spacing}; the rule asks the unit to ride through {}",
                    counted.len(),
                    self.window_s,
                    self.count
                ),
            );
        }
        r.margin = Some(until - starts.last().copied().unwrap_or(d0.start_s));
        r.decide(
            Verdict::Pass,
            Reason::NoTrip,
            format!(
                "the unit rode through {} disturbances within {:.3} s (the rule: {} within {} s){spacing}",
                counted.len(),
                starts.last().copied().unwrap_or(d0.start_s) - d0.start_s,
                self.count,
                self.window_s
            ),
        )
    }
}

impl Check for ConsecutiveSpec {
    fn id(&self) -> &str {
        &self.id
    }
    fn kind(&self) -> CheckKind {
        CheckKind::ConsecutiveDisturbances
    }
    fn unit(&self) -> Unit {
        Unit::Count
    }
    fn problems(&self, out: &mut Vec<(&'static str, String)>) {
        if !(2..=100).contains(&self.count) {
            out.push(("count", format!("count {} must be from 2 to 100", self.count)));
        }
        if !(self.window_s > 0.0 && self.window_s <= 3600.0) {
            out.push((
                "window_s",
                format!("window_s {} must be in (0, 3600] s", self.window_s),
            ));
        }
    }
    fn summary(&self) -> String {
        format!(
            "{} disturbances within {} s ridden through ({:?})",
            self.count, self.window_s, self.applies_to
        )
        .to_lowercase()
    }
    fn figure(&self) -> FigureKind {
        FigureKind::Voltage
    }
    fn evaluate_recording(&self, rec: &Recording<'_>) -> Option<Vec<CheckResult>> {
        Some(vec![self.judge(rec)])
    }
}
