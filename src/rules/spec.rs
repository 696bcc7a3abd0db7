//! The rule-set format: the serde types are the documented format.
//!
//! Strict: unknown keys and wrong types are errors (with line and column from
//! the YAML parser); values that cannot make sense are found by
//! [`RuleSet::problems`], all of them in one run.

pub use super::checks::active_power_recovery::ActivePowerRecoverySpec;
pub use super::checks::duration_table::DurationTableSpec;
pub use super::checks::envelope::EnvelopeSpec;
pub use super::checks::reactive_current::{
    AppliesTo, DeadBandMode, Follow, ReactiveCurrentSpec, Sequence, TimeFrom,
};
pub use super::checks::CheckSpec;
pub use super::registry::{CheckKind, Unit};
pub use super::zone::{Bound, Cessation, Side, TableMode, TableRow};
use crate::analysis::events::{default, ApplicableVoltage};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

/// A rule set: the requirements of one grid code (or project) for one kind of unit.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct RuleSet {
    /// Short identifier, e.g. `example-code-type-d`.
    pub id: String,
    /// Human-readable title.
    pub title: String,
    /// Which published document, edition and clause the numbers follow.
    pub source: String,
    /// Values the grid code leaves to the network operator within published
    /// ranges; checks refer to them as `"$name"` where a number is expected.
    #[serde(default)]
    pub parameters: Vec<super::params::ParameterSpec>,
    /// The voltage the envelopes and tables judge.
    #[serde(default)]
    pub applicable_voltage: ApplicableVoltage,
    /// Thresholds that define a disturbance.
    #[serde(default)]
    pub disturbance: DisturbanceSpec,
    /// The requirements.
    pub checks: Vec<CheckSpec>,
}

/// When a disturbance starts and ends (docs/rules.md, "Rule set").
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct DisturbanceSpec {
    /// A disturbance starts below this voltage, pu (default 0.90).
    #[serde(default = "d_below")]
    pub below_pu: f64,
    /// A disturbance starts above this voltage, pu (default 1.10).
    #[serde(default = "d_above")]
    pub above_pu: f64,
    /// It ends when back inside the band narrowed by this much, pu (default 0.01).
    #[serde(default = "d_hyst")]
    pub hysteresis_pu: f64,
    /// ... for at least this long, s (default 0.05).
    #[serde(default = "d_return")]
    pub min_return_s: f64,
    /// Pre-fault averaging window, s (default 0.10).
    #[serde(default = "d_pre")]
    pub prefault_window_s: f64,
    /// |V2|/|V1| above which a disturbance is unbalanced (default 0.05).
    #[serde(default = "d_unb")]
    pub unbalance_ratio: f64,
    /// Current below which the unit counts as not injecting, pu (default 0.05).
    #[serde(default = "d_trip")]
    pub trip_current_pu: f64,
}

fn d_below() -> f64 {
    default::BELOW_PU
}
fn d_above() -> f64 {
    default::ABOVE_PU
}
fn d_hyst() -> f64 {
    default::HYSTERESIS_PU
}
fn d_return() -> f64 {
    default::MIN_RETURN_S
}
fn d_pre() -> f64 {
    default::PREFAULT_WINDOW_S
}
fn d_unb() -> f64 {
    default::UNBALANCE_RATIO
}
fn d_trip() -> f64 {
    default::TRIP_CURRENT_PU
}

impl Default for DisturbanceSpec {
    fn default() -> Self {
        DisturbanceSpec {
            below_pu: d_below(),
            above_pu: d_above(),
            hysteresis_pu: d_hyst(),
            min_return_s: d_return(),
            prefault_window_s: d_pre(),
            unbalance_ratio: d_unb(),
            trip_current_pu: d_trip(),
        }
    }
}

/// Check ids holdfast uses for the checks it adds itself (the connection
/// check of every recording, the plan's test realisation).
pub const RESERVED_IDS: [&str; 2] = ["connection", "realisation"];

/// A value that cannot make sense, with where it is.
#[derive(Clone, Debug, PartialEq)]
pub struct Problem {
    /// Index of the check, or `None` for a top-level key.
    pub check: Option<usize>,
    /// The key the problem is about.
    pub key: &'static str,
    pub message: String,
}

impl RuleSet {
    /// Every value that cannot make sense (found all at once).
    pub fn problems(&self) -> Vec<Problem> {
        let mut out = Vec::new();
        let mut top = |key: &'static str, message: String| {
            out.push(Problem {
                check: None,
                key,
                message,
            })
        };
        if self.id.trim().is_empty() {
            top("id", "id is empty".into());
        }
        let d = &self.disturbance;
        if !(d.below_pu > 0.0 && d.below_pu < 1.0) {
            top(
                "below_pu",
                format!("below_pu {} must be between 0 and 1", d.below_pu),
            );
        }
        if !(d.above_pu > 1.0 && d.above_pu < 3.0) {
            top(
                "above_pu",
                format!("above_pu {} must be between 1 and 3", d.above_pu),
            );
        }
        if !(d.hysteresis_pu >= 0.0 && d.hysteresis_pu < 0.1) {
            top(
                "hysteresis_pu",
                format!("hysteresis_pu {} must be in [0, 0.1)", d.hysteresis_pu),
            );
        }
        if !(d.min_return_s >= 0.0 && d.min_return_s <= 10.0) {
            top(
                "min_return_s",
                format!("min_return_s {} must be in [0, 10] s", d.min_return_s),
            );
        }
        if !(d.prefault_window_s > 0.0 && d.prefault_window_s <= 10.0) {
            top(
                "prefault_window_s",
                format!(
                    "prefault_window_s {} must be in (0, 10] s",
                    d.prefault_window_s
                ),
            );
        }
        if !(d.unbalance_ratio > 0.0 && d.unbalance_ratio < 1.0) {
            top(
                "unbalance_ratio",
                format!("unbalance_ratio {} must be in (0, 1)", d.unbalance_ratio),
            );
        }
        if !(d.trip_current_pu > 0.0 && d.trip_current_pu < 0.5) {
            top(
                "trip_current_pu",
                format!("trip_current_pu {} must be in (0, 0.5)", d.trip_current_pu),
            );
        }
        if self.checks.is_empty() {
            top("checks", "the rule set has no checks".into());
        }
        let mut seen = std::collections::HashSet::new();
        for (i, c) in self.checks.iter().enumerate() {
            let mut p = |key: &'static str, message: String| {
                out.push(Problem {
                    check: Some(i),
                    key,
                    message,
                })
            };
            if c.id().trim().is_empty() {
                p("id", "check id is empty".into());
            } else if RESERVED_IDS.contains(&c.id().trim()) {
                p(
                    "id",
                    format!(
                        "check id '{}' is reserved for the check holdfast adds itself; choose another",
                        c.id()
                    ),
                );
            } else if !seen.insert(c.id().to_string()) {
                p("id", format!("check id '{}' is used twice", c.id()));
            }
            let mut own = Vec::new();
            c.check().problems(&mut own);
            for (key, message) in own {
                p(key, message);
            }
        }
        out
    }
}
