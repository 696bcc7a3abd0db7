//! The shape every check type has ([`Check`]) and what it is handed
//! ([`Context`]) and hands back besides its result ([`Overlay`],
//! [`RuleDrawing`], [`ZoneFacts`]).

use super::registry::{CheckKind, Unit};
use super::result::CheckResult;
use crate::analysis::events::{Disturbance, DisturbanceKind, TripInfo};
use crate::analysis::Series;

/// Where one check is applied: one disturbance of one analysed recording.
pub struct Context<'a> {
    pub series: &'a Series,
    /// The applicable voltage, on the series' time base.
    pub v: &'a [f64],
    pub d: &'a Disturbance,
    pub trip: &'a TripInfo,
    /// Trip time attributed to this disturbance.
    pub trip_in: Option<f64>,
    /// A trip before this disturbance.
    pub trip_before: Option<f64>,
    /// Where this disturbance's window ends: the next start or the recording end.
    pub win_end: f64,
    pub next_start: Option<f64>,
    pub rec_end: f64,
    pub cycle: f64,
}

/// What a check judged on the whole recording sees ([`Check::evaluate_recording`]).
pub struct Recording<'a> {
    pub series: &'a Series,
    /// The applicable voltage, on the series' time base.
    pub v: &'a [f64],
    pub disturbances: &'a [Disturbance],
    pub trip: &'a TripInfo,
    pub cycle: f64,
    pub f_nom: f64,
    pub rec_end: f64,
}

/// What a check result adds to its test's figures (absolute times).
#[derive(Clone, Debug, PartialEq)]
pub enum Overlay {
    /// A ride-through zone boundary on the voltage figure; `lower` zones
    /// lie above the boundary. `note` says how a table is drawn.
    Zone {
        boundary: Vec<(f64, f64)>,
        lower: bool,
        start_s: f64,
        note: &'static str,
    },
    /// A reactive-current requirement on the figure of its sequence.
    Reactive {
        negative: bool,
        /// The required total current against time.
        required: Vec<(f64, f64)>,
        /// Tolerance bands `(from, to, low, high)` in total current.
        bands: Vec<(f64, f64, f64, f64)>,
        /// `(time, level)` of the 90 % point, with the rise time.
        rise: Option<(f64, f64, f64)>,
        rise_limit_at: f64,
        rise_limit_s: f64,
        settled_at: Option<(f64, f64)>,
    },
    /// The positive-sequence angle against its pre-event reference, with
    /// the jumps and the ride-through limit.
    PhaseAngle {
        /// `(t, degrees)`.
        deviation: Vec<(f64, f64)>,
        /// `(t, jump degrees)` of every jump found.
        jumps: Vec<(f64, f64)>,
        limit_deg: f64,
    },
    /// The frequency with its ride-through levels (`(Hz, label)`), and the
    /// ROCOF limit in words where there is one.
    Frequency {
        /// `(t, Hz)`; NaN where the frequency is not estimated.
        f: Vec<(f64, f64)>,
        levels: Vec<(f64, String)>,
        note: Option<String>,
    },
    /// An active-power target from the disturbance end, with its deadline.
    Power {
        target: f64,
        from: f64,
        deadline: f64,
        fraction: f64,
        within_s: f64,
        reached: Option<(f64, f64)>,
    },
}

/// Which figure of a test a check belongs to (its result is named in that
/// figure's title, applicable or not).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum FigureKind {
    Voltage,
    ReactiveCurrent { negative: bool },
    ActivePower,
    PhaseAngle,
    Frequency,
}

/// How `rules plot` draws a check on its own (relative times, or the
/// voltage deviation).
#[derive(Clone, Debug, PartialEq)]
pub enum RuleDrawing {
    /// A zone boundary against time since the disturbance start.
    Zone {
        points: Vec<[f64; 2]>,
        lower: bool,
        what: String,
    },
    /// A required current against the voltage deviation, with its band.
    Characteristic {
        title: String,
        curve: Vec<(f64, f64)>,
        band: Vec<(f64, f64)>,
        dead_band_pu: f64,
        negative: bool,
        tolerance: [f64; 2],
    },
}

/// A zone check's boundary and rules, for the checks that depend on the
/// ride-through verdict (connection, recovery) and for the figures.
#[derive(Clone, Debug, PartialEq)]
pub struct ZoneFacts {
    pub lower: bool,
    pub forbids_cessation: bool,
}

/// One check type.
pub trait Check {
    fn id(&self) -> &str;
    fn kind(&self) -> CheckKind;
    fn unit(&self) -> Unit;
    /// Values that cannot make sense, as (key, message).
    fn problems(&self, out: &mut Vec<(&'static str, String)>);
    /// Does it concern a disturbance of this kind? (Checks judged on the
    /// whole recording concern none: the default.)
    fn concerns(&self, _kind: DisturbanceKind) -> bool {
        false
    }
    /// The verdict for one disturbance (`r` carries id, type, unit, index);
    /// called only for disturbances it [`Check::concerns`].
    fn evaluate(&self, _ctx: &Context<'_>, r: CheckResult) -> CheckResult {
        r
    }
    /// After every check of the disturbance was evaluated: a check whose
    /// verdict depends on the zone checks' (active power after a trip)
    /// looks at them here.
    fn review(&self, _own: &mut CheckResult, _zone: &[&CheckResult]) {}
    /// Zone checks (envelopes, tables) say so.
    fn zone(&self) -> Option<ZoneFacts> {
        None
    }
    /// How long after a disturbance its requirement reaches, s (the
    /// figures' extent; recovery also sets the pre-fault allowance).
    fn extent_s(&self) -> f64 {
        0.0
    }
    /// After a disturbance, how long its recovery may take (pre-fault
    /// windows of later disturbances keep clear of it).
    fn recovery_allowance_s(&self) -> Option<f64> {
        None
    }
    /// One line for `rules lint`.
    fn summary(&self) -> String;
    /// The figure its result belongs to.
    fn figure(&self) -> FigureKind;
    /// What the result adds to its test's figures.
    fn overlay(&self, _r: &CheckResult, _ctx: &Context<'_>) -> Option<Overlay> {
        None
    }
    /// How `rules plot` draws it.
    fn drawing(&self, _rule_set_id: &str) -> Option<RuleDrawing> {
        None
    }
    /// Checks judged on the whole recording rather than per voltage
    /// disturbance (phase jumps, frequency, sequences of disturbances)
    /// give their results here, after the per-disturbance checks; `None`
    /// (the default): judged per disturbance with [`Check::evaluate`].
    fn evaluate_recording(&self, _rec: &Recording<'_>) -> Option<Vec<CheckResult>> {
        None
    }
    /// What a result of [`Check::evaluate_recording`] adds to the figures.
    fn recording_overlay(&self, _r: &CheckResult, _rec: &Recording<'_>) -> Option<Overlay> {
        None
    }
}
