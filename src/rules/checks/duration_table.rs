//! `duration_table`: rows "below (above) x pu for up to d s", continuous or
//! cumulative (docs/rules.md). Verdicts as for an
//! envelope; a table equals its staircase envelope on monotone dips
//! ([`zone::table_boundary`], checked by a property test).

use crate::analysis::events::DisturbanceKind;
use crate::rules::check::{Check, Context, FigureKind, Overlay, RuleDrawing, ZoneFacts};
use crate::rules::registry::{CheckKind, Unit};
use crate::rules::result::CheckResult;
use crate::rules::zone::{self, Bound, Cessation, Side, TableMode, TableRow};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct DurationTableSpec {
    pub id: String,
    pub side: Side,
    pub rows: Vec<TableRow>,
    #[serde(default)]
    pub mode: TableMode,
    #[serde(default)]
    pub momentary_cessation: Cessation,
}

impl DurationTableSpec {
    fn bound(&self) -> Bound {
        match self.side {
            Side::Below => Bound::Lower,
            Side::Above => Bound::Upper,
        }
    }
}

impl Check for DurationTableSpec {
    fn id(&self) -> &str {
        &self.id
    }
    fn kind(&self) -> CheckKind {
        CheckKind::DurationTable
    }
    fn unit(&self) -> Unit {
        Unit::S
    }
    fn problems(&self, out: &mut Vec<(&'static str, String)>) {
        let mut p = |m: String| out.push(("rows", m));
        if self.rows.is_empty() {
            p("a duration table needs at least one row".into());
        }
        for (k, r) in self.rows.iter().enumerate() {
            if !(r.beyond_pu.is_finite() && r.beyond_pu > 0.0 && r.beyond_pu < 3.0) {
                p(format!(
                    "row {}: beyond_pu {} must be in (0, 3)",
                    k + 1,
                    r.beyond_pu
                ));
            }
            if !(r.max_s.is_finite() && r.max_s >= 0.0) {
                p(format!("row {}: max_s {} must be ≥ 0", k + 1, r.max_s));
            }
            if self.side == Side::Below && r.beyond_pu > 1.0 {
                p(format!(
                    "row {}: a 'below' row at {} pu is above nominal",
                    k + 1,
                    r.beyond_pu
                ));
            }
            if self.side == Side::Above && r.beyond_pu < 1.0 {
                p(format!(
                    "row {}: an 'above' row at {} pu is below nominal",
                    k + 1,
                    r.beyond_pu
                ));
            }
        }
    }
    fn concerns(&self, kind: DisturbanceKind) -> bool {
        (self.side == Side::Below) == (kind == DisturbanceKind::Undervoltage)
    }
    fn evaluate(&self, ctx: &Context<'_>, r: CheckResult) -> CheckResult {
        let last = self.rows.iter().map(|r| r.max_s).fold(0.0, f64::max);
        zone::evaluate(
            ctx,
            r,
            self.bound(),
            last,
            self.momentary_cessation,
            |t, v, t0, end| zone::scan_table(t, v, t0, end, self.side, &self.rows, self.mode),
        )
    }
    fn zone(&self) -> Option<ZoneFacts> {
        Some(ZoneFacts {
            lower: self.side == Side::Below,
            forbids_cessation: self.momentary_cessation == Cessation::Forbidden,
        })
    }
    fn extent_s(&self) -> f64 {
        self.rows.iter().map(|r| r.max_s).fold(0.0, f64::max) + 0.1
    }
    fn summary(&self) -> String {
        format!(
            "{:?} duration table, {} rows, {:?}",
            self.side,
            self.rows.len(),
            self.mode
        )
        .to_lowercase()
    }
    fn figure(&self) -> FigureKind {
        FigureKind::Voltage
    }
    fn overlay(&self, r: &CheckResult, ctx: &Context<'_>) -> Option<Overlay> {
        r.disturbance?;
        let note = match self.mode {
            TableMode::Cumulative => " (table as one excursion)",
            TableMode::Continuous => " (table as curve)",
        };
        Some(zone::overlay(
            &zone::table_boundary(&self.rows, self.side),
            self.side == Side::Below,
            ctx.d.start_s,
            note,
        ))
    }
    fn drawing(&self, _rule_set_id: &str) -> Option<RuleDrawing> {
        Some(RuleDrawing::Zone {
            points: zone::table_boundary(&self.rows, self.side),
            lower: self.side == Side::Below,
            what: format!(
                "duration table ({:?} {:?}), drawn as its equivalent curve",
                self.side, self.mode
            )
            .to_lowercase(),
        })
    }
}
