//! `phase_jump`: ride through steps of the positive-sequence voltage angle
//! up to `ride_through_deg` (docs/rules.md). Each jump the analysis finds
//! ([`angle::phase_jumps`]) is one result; a trip up to `trip_window_s`
//! after a jump is the jump's.
//!
//! Verdict paths (tests in tests/it/checks.rs):
//! * no angle (RMS-level recording, no voltage) → inconclusive, `missing_channel`;
//! * no jump of `detect_deg` or more → not applicable, `not_triggered`;
//! * per jump, [`ride::judge`]: tripped before → inconclusive `already_tripped`;
//!   trip not visible → inconclusive `trip_not_visible`; `|jump| ≤ limit` and a
//!   trip in the window → fail `trip_inside_zone`; `|jump| > limit` and a trip
//!   → pass `permitted_trip`; no trip but the recording ends inside the
//!   window → inconclusive `insufficient_data`; no trip, beyond the limit →
//!   pass `rode_through_beyond_zone`; no trip, within it → pass `no_trip`
//!   (margin `limit − |jump|`, degrees);
//! * a jump whose angle did not settle before the next change, within 5° of
//!   the limit → inconclusive `depth_unresolved` (its size is uncertain).

use crate::analysis::angle;
use crate::analysis::Quantity;
use crate::rules::check::{Check, FigureKind, Overlay, Recording};
use crate::rules::registry::{CheckKind, Unit};
use crate::rules::result::{CheckResult, Reason, Verdict};
use crate::rules::ride;
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct PhaseJumpSpec {
    pub id: String,
    /// The largest jump the unit must ride through, degrees.
    pub ride_through_deg: f64,
    /// A trip up to this long after a jump counts against it, s.
    pub trip_window_s: f64,
    /// Smaller steps are not phase jumps, degrees (default 3).
    #[serde(default = "d_detect")]
    pub detect_deg: f64,
}

fn d_detect() -> f64 {
    angle::DEFAULT_THRESHOLD_DEG
}

/// Within this of the limit an unsettled jump's size cannot decide, degrees.
const UNSETTLED_DEG: f64 = 5.0;

impl PhaseJumpSpec {
    fn result(&self) -> CheckResult {
        CheckResult::new(&self.id, CheckKind::PhaseJump, None, Unit::Deg)
    }
}

impl Check for PhaseJumpSpec {
    fn id(&self) -> &str {
        &self.id
    }
    fn kind(&self) -> CheckKind {
        CheckKind::PhaseJump
    }
    fn unit(&self) -> Unit {
        Unit::Deg
    }
    fn problems(&self, out: &mut Vec<(&'static str, String)>) {
        if !(self.ride_through_deg > 0.0 && self.ride_through_deg < 180.0) {
            out.push((
                "ride_through_deg",
                format!(
                    "ride_through_deg {} must be in (0, 180) degrees",
                    self.ride_through_deg
                ),
            ));
        }
        if !(self.trip_window_s >= 0.0 && self.trip_window_s <= 60.0) {
            out.push((
                "trip_window_s",
                format!("trip_window_s {} must be in [0, 60] s", self.trip_window_s),
            ));
        }
        if !(self.detect_deg >= 0.5 && self.detect_deg < self.ride_through_deg) {
            out.push((
                "detect_deg",
                format!(
                    "detect_deg {} must be at least 0.5° and below ride_through_deg",
                    self.detect_deg
                ),
            ));
        }
    }
    fn extent_s(&self) -> f64 {
        self.trip_window_s
    }
    fn summary(&self) -> String {
        format!(
            "phase jumps up to {}° ridden through (trips within {} s after a jump count; steps from {}°)",
            self.ride_through_deg, self.trip_window_s, self.detect_deg
        )
    }
    fn figure(&self) -> FigureKind {
        FigureKind::PhaseAngle
    }
    fn evaluate_recording(&self, rec: &Recording<'_>) -> Option<Vec<CheckResult>> {
        let Some(theta) = rec.series.get(Quantity::V1Angle) else {
            return Some(vec![self.result().decide(
                Verdict::Inconclusive,
                Reason::MissingChannel,
                "the recording carries no positive-sequence voltage angle (RMS-level values or no voltage channels): phase jumps cannot be seen",
            )]);
        };
        let jumps = angle::phase_jumps(&rec.series.t, theta, rec.f_nom, self.detect_deg);
        if jumps.is_empty() {
            return Some(vec![self.result().decide(
                Verdict::NotApplicable,
                Reason::NotTriggered,
                format!(
                    "no step of the positive-sequence voltage angle of {}° or more in the recording",
                    self.detect_deg
                ),
            )]);
        }
        let mut out = Vec::new();
        for (i, j) in jumps.iter().enumerate() {
            let mut r = self.result();
            r.event = Some(i);
            let size = j.jump_deg.abs();
            let limit = self.ride_through_deg;
            if !j.settled && (size - limit).abs() < UNSETTLED_DEG {
                r.limit = Some(limit);
                r.at_s = Some(j.at_s);
                out.push(r.decide(
                    Verdict::Inconclusive,
                    Reason::DepthUnresolved,
                    format!(
                        "a phase jump of about {:+.1}° at {:.3} s, but the angle did not settle for two cycles before the next change, so its size against the {limit}° limit is uncertain",
                        j.jump_deg, j.at_s
                    ),
                ));
                continue;
            }
            let ev = ride::Event {
                from: j.at_s,
                to: j.at_s,
                beyond_at: (size > limit).then_some(j.at_s),
                measured: size,
                limit,
                measured_until: Box::new(move |_| size),
            };
            let words = ride::Words {
                event: format!("a phase jump of {:+.1}°", j.jump_deg),
                limit: format!("{limit}° jump"),
                what: "the jump",
            };
            out.push(ride::judge(
                r,
                &ev,
                rec.trip,
                self.trip_window_s,
                rec.rec_end,
                &words,
            ));
        }
        Some(out)
    }
    fn recording_overlay(&self, r: &CheckResult, rec: &Recording<'_>) -> Option<Overlay> {
        r.event?;
        let theta = rec.series.get(Quantity::V1Angle)?;
        let t = &rec.series.t;
        let jumps = angle::phase_jumps(t, theta, rec.f_nom, self.detect_deg);
        Some(Overlay::PhaseAngle {
            deviation: angle::deviation_deg(t, theta, rec.f_nom, jumps.first()),
            jumps: jumps.iter().map(|j| (j.at_s, j.jump_deg)).collect(),
            limit_deg: self.ride_through_deg,
        })
    }
}
