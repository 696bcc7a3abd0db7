//! The rule-set format: the serde types are the documented format.
//!
//! Strict: unknown keys and wrong types are errors (with line and column from
//! the YAML parser); values that cannot make sense are found by
//! [`RuleSet::problems`], all of them in one run.

use crate::analysis::events::ApplicableVoltage;
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

/// When a disturbance starts and ends (domain reference §4).
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
    0.90
}
fn d_above() -> f64 {
    1.10
}
fn d_hyst() -> f64 {
    0.01
}
fn d_return() -> f64 {
    0.05
}
fn d_pre() -> f64 {
    0.10
}
fn d_unb() -> f64 {
    0.05
}
fn d_trip() -> f64 {
    0.05
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

/// One requirement.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(tag = "type", rename_all = "snake_case", deny_unknown_fields)]
pub enum CheckSpec {
    /// Voltage-against-time boundary of the ride-through zone.
    Envelope(EnvelopeSpec),
    /// "Below (above) x pu for up to d s" rows.
    DurationTable(DurationTableSpec),
    /// Fast reactive current injection.
    ReactiveCurrent(ReactiveCurrentSpec),
    /// Active power back to a fraction of pre-fault within a time.
    ActivePowerRecovery(ActivePowerRecoverySpec),
}

impl CheckSpec {
    pub fn id(&self) -> &str {
        match self {
            CheckSpec::Envelope(c) => &c.id,
            CheckSpec::DurationTable(c) => &c.id,
            CheckSpec::ReactiveCurrent(c) => &c.id,
            CheckSpec::ActivePowerRecovery(c) => &c.id,
        }
    }
    pub fn type_name(&self) -> &'static str {
        match self {
            CheckSpec::Envelope(_) => "envelope",
            CheckSpec::DurationTable(_) => "duration_table",
            CheckSpec::ReactiveCurrent(_) => "reactive_current",
            CheckSpec::ActivePowerRecovery(_) => "active_power_recovery",
        }
    }
}

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum Bound {
    /// Inside while V ≥ C(t − t0) (undervoltage ride-through).
    Lower,
    /// Inside while V ≤ C(t − t0) (overvoltage ride-through).
    Upper,
}

/// What to do when the unit stops injecting current and resumes (momentary cessation).
#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum Cessation {
    /// Reported in the detail, not judged.
    #[default]
    Allowed,
    /// Momentary cessation inside the ride-through zone fails the check.
    Forbidden,
}

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

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum Side {
    Below,
    Above,
}

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum TableMode {
    /// Time beyond a row's level counts from the last time the voltage went beyond it.
    #[default]
    Continuous,
    /// Time beyond a row's level adds up from the disturbance start.
    Cumulative,
}

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

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct TableRow {
    /// Level, pu: below it (side below) or above it (side above).
    pub beyond_pu: f64,
    /// Longest time beyond the level the unit must ride through, s.
    pub max_s: f64,
}

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum Sequence {
    #[default]
    Positive,
    Negative,
}

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum DeadBandMode {
    /// Required extra current `k·(|ΔV| − db)` outside the dead band.
    #[default]
    Offset,
    /// Required extra current `k·|ΔV|` once outside the dead band.
    Full,
}

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum Follow {
    /// One required value from the settled fault voltage.
    #[default]
    Settled,
    /// The requirement follows the voltage sample by sample.
    Instantaneous,
}

/// The instant rise and settling times count from.
#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum TimeFrom {
    /// The disturbance start (the phasor crossing of the detection threshold).
    #[default]
    Start,
    /// The waveform inception (where the waveform left the pre-fault
    /// sinusoid); the start where the recording has no waveforms.
    Inception,
}

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum AppliesTo {
    /// Sags and swells (a swell asks for inductive current).
    #[default]
    Both,
    Undervoltage,
    Overvoltage,
}

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ReactiveCurrentSpec {
    pub id: String,
    #[serde(default)]
    pub sequence: Sequence,
    /// Gain k: extra reactive current, pu, per pu of voltage deviation.
    pub gain: f64,
    /// Dead band of the voltage deviation, pu.
    #[serde(default)]
    pub dead_band_pu: f64,
    #[serde(default)]
    pub dead_band_mode: DeadBandMode,
    /// From disturbance start to 90 % of the required current, s.
    pub rise_time_s: f64,
    /// From disturbance start until inside the tolerance band for good, s.
    pub settling_time_s: f64,
    /// `[lo, hi]` around the required extra current, pu, in the direction of
    /// the requirement (lo ≤ 0 ≤ hi: lo less, hi more current than required).
    pub tolerance_pu: [f64; 2],
    /// Limit of the total reactive current `|Iq0 + ΔIq|`, pu.
    #[serde(default = "d_limit")]
    pub limit_pu: f64,
    #[serde(default)]
    pub follow: Follow,
    #[serde(default)]
    pub applies_to: AppliesTo,
    /// A move of the voltage by more than this that then holds for the
    /// settling time starts a new quasi-steady segment with its own
    /// requirement, pu (default 0.05).
    #[serde(default = "d_segment")]
    pub segment_step_pu: f64,
    /// Where rise and settling times count from (default `start`).
    #[serde(default)]
    pub time_from: TimeFrom,
}

fn d_limit() -> f64 {
    1.0
}
fn d_segment() -> f64 {
    0.05
}

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
            let finite = |x: f64| x.is_finite();
            match c {
                CheckSpec::Envelope(e) => {
                    if e.points.is_empty() {
                        p("points", "an envelope needs at least one point".into());
                    }
                    for (k, [t, v]) in e.points.iter().enumerate() {
                        if !finite(*t) || !finite(*v) {
                            p(
                                "points",
                                format!("point {} is not a pair of finite numbers", k + 1),
                            );
                            continue;
                        }
                        if *t < 0.0 {
                            p(
                                "points",
                                format!("point {} [{t}, {v}]: time must be ≥ 0", k + 1),
                            );
                        }
                        if !(0.0..=3.0).contains(v) {
                            p(
                                "points",
                                format!("point {} [{t}, {v}]: voltage must be in [0, 3] pu", k + 1),
                            );
                        }
                        if k > 0 && *t < e.points[k - 1][0] {
                            p(
                                "points",
                                format!(
                                    "point {} [{t}, {v}]: time decreases (previous point at {} s); times must not decrease",
                                    k + 1,
                                    e.points[k - 1][0]
                                ),
                            );
                        }
                        if k > 1 && *t == e.points[k - 1][0] && *t == e.points[k - 2][0] {
                            p(
                                "points",
                                format!(
                                    "point {}: three points at {t} s; a step needs exactly two",
                                    k + 1
                                ),
                            );
                        }
                    }
                    if let Some(first) = e.points.first() {
                        if first[0] != 0.0 {
                            p(
                                "points",
                                format!(
                                    "the first point is at {} s; the envelope must start at 0 s",
                                    first[0]
                                ),
                            );
                        }
                    }
                }
                CheckSpec::DurationTable(t) => {
                    if t.rows.is_empty() {
                        p("rows", "a duration table needs at least one row".into());
                    }
                    for (k, r) in t.rows.iter().enumerate() {
                        if !(r.beyond_pu.is_finite() && r.beyond_pu > 0.0 && r.beyond_pu < 3.0) {
                            p(
                                "rows",
                                format!(
                                    "row {}: beyond_pu {} must be in (0, 3)",
                                    k + 1,
                                    r.beyond_pu
                                ),
                            );
                        }
                        if !(r.max_s.is_finite() && r.max_s >= 0.0) {
                            p(
                                "rows",
                                format!("row {}: max_s {} must be ≥ 0", k + 1, r.max_s),
                            );
                        }
                        if t.side == Side::Below && r.beyond_pu > 1.0 {
                            p(
                                "rows",
                                format!(
                                    "row {}: a 'below' row at {} pu is above nominal",
                                    k + 1,
                                    r.beyond_pu
                                ),
                            );
                        }
                        if t.side == Side::Above && r.beyond_pu < 1.0 {
                            p(
                                "rows",
                                format!(
                                    "row {}: an 'above' row at {} pu is below nominal",
                                    k + 1,
                                    r.beyond_pu
                                ),
                            );
                        }
                    }
                }
                CheckSpec::ReactiveCurrent(r) => {
                    if !(r.gain.is_finite() && r.gain > 0.0 && r.gain <= 20.0) {
                        p("gain", format!("gain {} must be in (0, 20]", r.gain));
                    }
                    if !(r.dead_band_pu >= 0.0 && r.dead_band_pu < 0.5) {
                        p(
                            "dead_band_pu",
                            format!("dead_band_pu {} must be in [0, 0.5)", r.dead_band_pu),
                        );
                    }
                    if !(r.rise_time_s > 0.0 && r.rise_time_s <= 10.0) {
                        p(
                            "rise_time_s",
                            format!("rise_time_s {} must be in (0, 10] s", r.rise_time_s),
                        );
                    }
                    if !(r.settling_time_s > 0.0 && r.settling_time_s <= 10.0) {
                        p(
                            "settling_time_s",
                            format!("settling_time_s {} must be in (0, 10] s", r.settling_time_s),
                        );
                    } else if r.settling_time_s < r.rise_time_s {
                        p(
                            "settling_time_s",
                            format!(
                                "settling_time_s {} is shorter than rise_time_s {}",
                                r.settling_time_s, r.rise_time_s
                            ),
                        );
                    }
                    let [lo, hi] = r.tolerance_pu;
                    if !(lo <= 0.0 && hi >= 0.0 && lo.is_finite() && hi.is_finite()) || lo == hi {
                        p(
                            "tolerance_pu",
                            format!(
                                "tolerance_pu [{lo}, {hi}] must satisfy lo ≤ 0 ≤ hi with lo < hi"
                            ),
                        );
                    }
                    if !(r.segment_step_pu > 0.0 && r.segment_step_pu < 1.0) {
                        p(
                            "segment_step_pu",
                            format!("segment_step_pu {} must be in (0, 1)", r.segment_step_pu),
                        );
                    }
                    if !(r.limit_pu > 0.0 && r.limit_pu <= 3.0) {
                        p(
                            "limit_pu",
                            format!("limit_pu {} must be in (0, 3]", r.limit_pu),
                        );
                    }
                }
                CheckSpec::ActivePowerRecovery(a) => {
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
            }
        }
        out
    }
}
