//! `rocof`: ride through a rate of change of frequency up to
//! `limit_hz_per_s`, measured over `window_s` (docs/rules.md). An event is
//! a stretch where `|ROCOF|` is at least `detect_hz_per_s`; a trip from its
//! start to `trip_window_s` after its end is the event's.
//!
//! Verdict paths (tests in tests/it/checks.rs): no angle → inconclusive
//! `missing_channel`; no event → not applicable `not_triggered`; per event,
//! [`ride::judge`]: `already_tripped`, `trip_not_visible` (inconclusive);
//! a trip while `|ROCOF|` had stayed within the limit → fail
//! `trip_inside_zone`; a trip after it went beyond → pass `permitted_trip`;
//! no trip but the recording ends inside the trip window → inconclusive
//! `insufficient_data`; no trip, beyond the limit → pass
//! `rode_through_beyond_zone`; no trip, within it → pass `no_trip` (margin
//! `limit − max |ROCOF|`, Hz/s).

use super::frequency_table::frequency_of;
use crate::analysis::angle;
use crate::rules::check::{Check, FigureKind, Overlay, Recording};
use crate::rules::registry::{CheckKind, Unit};
use crate::rules::result::{CheckResult, Reason, Verdict};
use crate::rules::ride;
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct RocofSpec {
    pub id: String,
    /// The largest |df/dt| the unit must ride through, Hz/s.
    pub limit_hz_per_s: f64,
    /// ROCOF is measured over this window, s (default 0.5).
    #[serde(default = "d_window")]
    pub window_s: f64,
    /// A trip up to this long after an event counts against it, s.
    pub trip_window_s: f64,
    /// Smaller rates are no event, Hz/s (default 0.1).
    #[serde(default = "d_detect")]
    pub detect_hz_per_s: f64,
}

fn d_window() -> f64 {
    0.5
}

fn d_detect() -> f64 {
    0.1
}

impl RocofSpec {
    fn result(&self) -> CheckResult {
        CheckResult::new(&self.id, CheckKind::Rocof, None, Unit::HzPerS)
    }
    fn rocof(&self, rec: &Recording<'_>) -> Option<Vec<f64>> {
        let f = frequency_of(rec, angle::REFERENCE_S)?;
        Some(angle::rocof(&rec.series.t, &f, self.window_s))
    }
    /// Stretches `(first, last)` sample indices where `|r| ≥ detect`;
    /// unknown values do not end a stretch.
    fn events(&self, r: &[f64]) -> Vec<(usize, usize)> {
        let mut out = Vec::new();
        let mut open: Option<(usize, usize)> = None;
        for (k, x) in r.iter().enumerate() {
            match (open, x.abs() >= self.detect_hz_per_s) {
                (None, true) => open = Some((k, k)),
                (Some((a, _)), true) => open = Some((a, k)),
                (Some(e), false) if x.is_finite() => {
                    out.push(e);
                    open = None;
                }
                _ => {}
            }
        }
        out.extend(open);
        out
    }
}

impl Check for RocofSpec {
    fn id(&self) -> &str {
        &self.id
    }
    fn kind(&self) -> CheckKind {
        CheckKind::Rocof
    }
    fn unit(&self) -> Unit {
        Unit::HzPerS
    }
    fn problems(&self, out: &mut Vec<(&'static str, String)>) {
        if !(self.limit_hz_per_s > 0.0 && self.limit_hz_per_s <= 20.0) {
            out.push((
                "limit_hz_per_s",
                format!("limit_hz_per_s {} must be in (0, 20] Hz/s", self.limit_hz_per_s),
            ));
        }
        if !(self.window_s >= 0.1 && self.window_s <= 10.0) {
            out.push((
                "window_s",
                format!("window_s {} must be in [0.1, 10] s", self.window_s),
            ));
        }
        if !(self.trip_window_s >= 0.0 && self.trip_window_s <= 60.0) {
            out.push((
                "trip_window_s",
                format!("trip_window_s {} must be in [0, 60] s", self.trip_window_s),
            ));
        }
        if !(self.detect_hz_per_s > 0.0 && self.detect_hz_per_s < self.limit_hz_per_s) {
            out.push((
                "detect_hz_per_s",
                format!(
                    "detect_hz_per_s {} must be above 0 and below limit_hz_per_s",
                    self.detect_hz_per_s
                ),
            ));
        }
    }
    fn summary(&self) -> String {
        format!(
            "ROCOF up to {} Hz/s over {} s ridden through (trips within {} s after an event count)",
            self.limit_hz_per_s, self.window_s, self.trip_window_s
        )
    }
    fn figure(&self) -> FigureKind {
        FigureKind::Frequency
    }
    fn evaluate_recording(&self, rec: &Recording<'_>) -> Option<Vec<CheckResult>> {
        let Some(r) = self.rocof(rec) else {
            return Some(vec![self.result().decide(
                Verdict::Inconclusive,
                Reason::MissingChannel,
                "the recording carries no positive-sequence voltage angle (RMS-level values or no voltage channels): ROCOF cannot be estimated",
            )]);
        };
        let t = &rec.series.t;
        let events = self.events(&r);
        if events.is_empty() {
            let largest = r.iter().copied().filter(|x| x.is_finite()).fold(0.0f64, |m, x| m.max(x.abs()));
            return Some(vec![self.result().decide(
                Verdict::NotApplicable,
                Reason::NotTriggered,
                format!(
                    "|ROCOF| over {} s stayed below {} Hz/s (largest {largest:.3} Hz/s)",
                    self.window_s, self.detect_hz_per_s
                ),
            )]);
        }
        let limit = self.limit_hz_per_s;
        let out = events
            .iter()
            .enumerate()
            .map(|(i, &(a, b))| {
                let abs: Vec<(f64, f64)> = (a..=b)
                    .filter(|&k| r[k].is_finite())
                    .map(|k| (t[k], r[k].abs()))
                    .collect();
                let measured = abs.iter().map(|x| x.1).fold(0.0, f64::max);
                let signed = (a..=b)
                    .map(|k| r[k])
                    .filter(|x| x.is_finite())
                    .fold(0.0f64, |m, x| if x.abs() > m.abs() { x } else { m });
                let beyond_at = abs.iter().find(|x| x.1 > limit).map(|x| x.0);
                let ev = ride::Event {
                    from: t[a],
                    to: t[b],
                    beyond_at,
                    measured,
                    limit,
                    measured_until: Box::new(move |until| {
                        abs.iter().filter(|x| x.0 <= until).map(|x| x.1).fold(0.0, f64::max)
                    }),
                };
                let words = ride::Words {
                    event: format!(
                        "ROCOF up to {signed:+.3} Hz/s over {} s ({:.3}–{:.3} s)",
                        self.window_s, t[a], t[b]
                    ),
                    limit: format!("{limit} Hz/s"),
                    what: "the event",
                };
                let mut res = self.result();
                res.event = Some(i);
                ride::judge(res, &ev, rec.trip, self.trip_window_s, rec.rec_end, &words)
            })
            .collect();
        Some(out)
    }
    fn recording_overlay(&self, r: &CheckResult, rec: &Recording<'_>) -> Option<Overlay> {
        r.event?;
        let f = frequency_of(rec, angle::REFERENCE_S)?;
        Some(Overlay::Frequency {
            f: rec.series.t.iter().copied().zip(f).collect(),
            levels: Vec::new(),
            note: Some(format!(
                "{}: {} over {} s (limit {} Hz/s)",
                self.id,
                r.measured
                    .map(|m| format!("|ROCOF| up to {m:.3} Hz/s"))
                    .unwrap_or_else(|| "ROCOF".into()),
                self.window_s,
                self.limit_hz_per_s
            )),
        })
    }
}
