//! `envelope`: a voltage-against-time boundary of the ride-through zone
//! (verdicts, reasons and margins in docs/rules.md).

use crate::analysis::events::DisturbanceKind;
use crate::rules::check::{Check, Context, FigureKind, Overlay, RuleDrawing, ZoneFacts};
use crate::rules::registry::{CheckKind, Unit};
use crate::rules::result::CheckResult;
use crate::rules::zone::{self, Bound, Cessation};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct EnvelopeSpec {
    pub id: String,
    pub bound: Bound,
    /// `[seconds since disturbance start, pu]`, times non-decreasing; a
    /// repeated time is a vertical step; flat after the last point.
    pub points: Vec<[f64; 2]>,
    #[serde(default)]
    pub momentary_cessation: Cessation,
}

impl Check for EnvelopeSpec {
    fn id(&self) -> &str {
        &self.id
    }
    fn kind(&self) -> CheckKind {
        CheckKind::Envelope
    }
    fn unit(&self) -> Unit {
        Unit::Pu
    }
    fn problems(&self, out: &mut Vec<(&'static str, String)>) {
        let mut p = |m: String| out.push(("points", m));
        if self.points.is_empty() {
            p("an envelope needs at least one point".into());
        }
        for (k, [t, v]) in self.points.iter().enumerate() {
            if !t.is_finite() || !v.is_finite() {
                p(format!("point {} is not a pair of finite numbers", k + 1));
                continue;
            }
            if *t < 0.0 {
                p(format!("point {} [{t}, {v}]: time must be ≥ 0", k + 1));
            }
            if !(0.0..=3.0).contains(v) {
                p(format!(
                    "point {} [{t}, {v}]: voltage must be in [0, 3] pu",
                    k + 1
                ));
            }
            if k > 0 && *t < self.points[k - 1][0] {
                p(format!(
                    "point {} [{t}, {v}]: time decreases (previous point at {} s); times must not decrease",
                    k + 1,
                    self.points[k - 1][0]
                ));
            }
            if k > 1 && *t == self.points[k - 1][0] && *t == self.points[k - 2][0] {
                p(format!(
                    "point {}: three points at {t} s; a step needs exactly two",
                    k + 1
                ));
            }
        }
        if let Some(first) = self.points.first() {
            if first[0] != 0.0 {
                p(format!(
                    "the first point is at {} s; the envelope must start at 0 s",
                    first[0]
                ));
            }
        }
    }
    fn concerns(&self, kind: DisturbanceKind) -> bool {
        (self.bound == Bound::Lower) == (kind == DisturbanceKind::Undervoltage)
    }
    fn evaluate(&self, ctx: &Context<'_>, r: CheckResult) -> CheckResult {
        let last = self.points.last().map_or(0.0, |p| p[0]);
        zone::evaluate(
            ctx,
            r,
            self.bound,
            last,
            self.momentary_cessation,
            |t, v, t0, end| zone::scan_envelope(t, v, t0, end, self.bound, &self.points),
        )
    }
    fn zone(&self) -> Option<ZoneFacts> {
        Some(ZoneFacts {
            lower: self.bound == Bound::Lower,
            forbids_cessation: self.momentary_cessation == Cessation::Forbidden,
        })
    }
    fn extent_s(&self) -> f64 {
        self.points.last().map_or(0.0, |p| p[0]) + 0.1
    }
    fn summary(&self) -> String {
        format!("{:?} envelope, {} points", self.bound, self.points.len()).to_lowercase()
    }
    fn figure(&self) -> FigureKind {
        FigureKind::Voltage
    }
    fn overlay(&self, r: &CheckResult, ctx: &Context<'_>) -> Option<Overlay> {
        r.disturbance?;
        Some(zone::overlay(
            &self.points,
            self.bound == Bound::Lower,
            ctx.d.start_s,
            "",
        ))
    }
    fn drawing(&self, _rule_set_id: &str) -> Option<RuleDrawing> {
        Some(RuleDrawing::Zone {
            points: self.points.clone(),
            lower: self.bound == Bound::Lower,
            what: format!("{:?} envelope", self.bound).to_lowercase(),
        })
    }
}
