//! The neutral result of checking recordings: what every reporter renders.
//! Field names are the `results.json` schema version 1 (schemas/results-v1.schema.json);
//! additions are optional fields only.

pub use super::registry::{CheckKind, Unit};
use crate::analysis::events::{Balance, DisturbanceKind, TripMethod};
use crate::model::{RecordingFormat, RecordingKind};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};
use std::borrow::Cow;
use std::marker::PhantomData;

/// Schema helper: a field that is always present and may be null.
pub struct Nullable<T>(PhantomData<T>);

impl<T: JsonSchema> JsonSchema for Nullable<T> {
    fn schema_name() -> Cow<'static, str> {
        format!("Nullable_{}", T::schema_name()).into()
    }
    fn inline_schema() -> bool {
        true
    }
    fn json_schema(generator: &mut schemars::SchemaGenerator) -> schemars::Schema {
        let inner = generator.subschema_for::<T>();
        schemars::json_schema!({ "anyOf": [inner, { "type": "null" }] })
    }
}

#[derive(
    Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize, JsonSchema,
)]
#[serde(rename_all = "snake_case")]
pub enum Verdict {
    Pass,
    NotApplicable,
    Inconclusive,
    Fail,
}

impl Verdict {
    pub fn name(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Fail => "fail",
            Verdict::Inconclusive => "inconclusive",
            Verdict::NotApplicable => "not_applicable",
        }
    }

    /// A test's verdict from its checks: fail if any fails, else inconclusive
    /// if any is, else pass (not-applicable checks do not count).
    pub fn combine(vs: impl IntoIterator<Item = Verdict>) -> Verdict {
        let mut out = Verdict::Pass;
        for v in vs {
            match v {
                Verdict::Fail => return Verdict::Fail,
                Verdict::Inconclusive => out = Verdict::Inconclusive,
                _ => {}
            }
        }
        out
    }
}

/// Defines [`Reason`] with each variant's name in one place.
macro_rules! reasons {
    ($( $(#[$doc:meta])* $v:ident = $n:literal, )*) => {
        /// Why a check reached its verdict: one word a reviewer can sort and
        /// filter by, beside the sentence in `detail` (docs/rules.md lists
        /// them per check type).
        #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize, JsonSchema)]
        pub enum Reason {
            $( $(#[$doc])* #[serde(rename = $n)] $v, )*
        }
        impl Reason {
            pub const ALL: &'static [Reason] = &[$(Reason::$v,)*];
            /// The name written in results.json, summary.csv and the table.
            pub fn name(self) -> &'static str {
                match self { $(Reason::$v => $n,)* }
            }
        }
    };
}

reasons! {
    /// Zone checks: no trip; the voltage stayed inside the zone.
    NoTrip = "no_trip",
    /// Zone checks: the unit tripped while the voltage was inside the zone.
    TripInsideZone = "trip_inside_zone",
    /// Zone checks: the unit tripped after the voltage had left the zone.
    PermittedTrip = "permitted_trip",
    /// Zone checks: the voltage left the zone and the unit stayed connected.
    RodeThroughBeyondZone = "rode_through_beyond_zone",
    /// Connection: no trip in the whole recording.
    StayedConnected = "stayed_connected",
    /// Connection: a trip while no disturbance was under way.
    TripOutsideDisturbance = "trip_outside_disturbance",
    /// Connection: momentary cessation while no disturbance was under way,
    /// which a rule forbids.
    CessationOutsideDisturbance = "cessation_outside_disturbance",
    /// Connection: the trip happened during a disturbance that no zone check
    /// judges, or whose zone checks could not decide.
    TripNotJudged = "trip_not_judged",
    /// The requirement was not triggered (no such disturbance, inside the
    /// dead band, low pre-fault loading).
    NotTriggered = "not_triggered",
    /// Too few samples, or the recording or the fault too short.
    InsufficientData = "insufficient_data",
    /// No pre-fault window to take the references from.
    NoPrefaultReference = "no_prefault_reference",
    /// The recording can show no trip (no status channel, no usable current).
    TripNotVisible = "trip_not_visible",
    /// A channel the check needs is not in the recording.
    MissingChannel = "missing_channel",
    /// The voltage the rule set judges is not observable in the recording
    /// (phase to neutral from phase-to-phase voltages).
    VoltageUnobservable = "voltage_unobservable",
    /// A fault too short for one-cycle phasors to show its depth, and the
    /// depth decides the verdict.
    DepthUnresolved = "depth_unresolved",
    /// The unit had tripped before this disturbance.
    AlreadyTripped = "already_tripped",
    /// The next disturbance started before the requirement's deadline.
    NextDisturbance = "next_disturbance",
    /// Reactive current: rise and settling within their limits.
    WithinLimits = "within_limits",
    /// Reactive current: 90 % reached after the rise-time limit.
    RiseTooSlow = "rise_too_slow",
    /// Reactive current: never reached 90 % of the requirement.
    NeverReached = "never_reached",
    /// Reactive current: did not stay inside the tolerance band.
    NotSettled = "not_settled",
    /// Reactive current: inside the band for good only after the settling limit.
    SettledTooLate = "settled_too_late",
    /// Active power recovered in time.
    Recovered = "recovered",
    /// Active power recovered after the limit.
    RecoveredLate = "recovered_late",
    /// Active power had not recovered at the deadline.
    NotRecovered = "not_recovered",
    /// The unit tripped before active power recovered.
    TrippedBeforeRecovery = "tripped_before_recovery",
    /// Recovery is not required after a trip every zone check permits.
    TripPermitted = "trip_permitted",
    /// Test realisation: the recording shows the planned test.
    AsPlanned = "as_planned",
    /// Test realisation: the recording does not show the planned test.
    NotAsPlanned = "not_as_planned",
}

/// One quasi-steady segment of a multi-step fault (reactive current).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Segment {
    pub start_s: f64,
    pub end_s: f64,
    /// Mean voltage deviation over the segment's settled part, pu.
    pub settled_deviation_pu: f64,
    /// Required extra current from that deviation (after the limit), pu.
    pub required_pu: f64,
    /// From the segment's start until inside the band for good, s (null: never).
    #[schemars(with = "Nullable<f64>")]
    pub settling_time_s: Option<f64>,
    /// Mean measured extra current over the settled part, pu.
    #[schemars(with = "Nullable<f64>")]
    pub measured_pu: Option<f64>,
}

/// The verdict of one check for one disturbance.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct CheckResult {
    pub id: String,
    #[serde(rename = "type")]
    pub check_type: CheckKind,
    /// Index into the test's `disturbances`, or null when none applied.
    #[schemars(with = "Nullable<usize>")]
    pub disturbance: Option<usize>,
    pub verdict: Verdict,
    #[schemars(with = "Nullable<f64>")]
    pub measured: Option<f64>,
    #[schemars(with = "Nullable<f64>")]
    pub limit: Option<f64>,
    /// Positive inside the requirement, negative outside.
    #[schemars(with = "Nullable<f64>")]
    pub margin: Option<f64>,
    /// Unit of measured, limit and margin: `pu` or `s`.
    pub unit: Unit,
    /// Time of the smallest margin, s from the first sample.
    #[schemars(with = "Nullable<f64>")]
    pub at_s: Option<f64>,
    /// A plain sentence a reviewer can read without the manual.
    pub detail: String,
    /// Why the verdict was reached (one word; see docs/rules.md).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reason: Option<Reason>,
    /// Reactive current: measured settling time, s (null if it never settled).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub settling_time_s: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub required_gain: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub measured_gain: Option<f64>,
    /// Reactive current: required extra current ΔIq, pu (settled mode).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub required_pu: Option<f64>,
    /// Reactive current: mean measured ΔIq over the quasi-steady part, pu.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub measured_pu: Option<f64>,
    /// Active power recovery: pre-fault active power, pu.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub prefault_pu: Option<f64>,
    /// Ride-through checks: the voltage left the zone at this time, s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub left_zone_s: Option<f64>,
    /// Ride-through checks: the trip was permitted (after leaving the zone).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub permitted_trip: Option<bool>,
    /// Reactive current: the current limit cut the requirement.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub limited: Option<bool>,
    /// Reactive current: pre-fault reactive current the extra current is
    /// measured from, pu.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference_pu: Option<f64>,
    /// Reactive current: the instant rise and settling times count from
    /// (disturbance start or waveform inception), s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time_from_s: Option<f64>,
    /// Reactive current: the quasi-steady segments of a multi-step fault.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub segments: Vec<Segment>,
    /// Checks of events other than voltage disturbances: the event's index
    /// in the test's `phase_jumps` or frequency `events`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub event: Option<usize>,
    /// Sequence rules: the disturbances counted and their spacing, s.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub counted: Vec<usize>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub spacing_s: Vec<f64>,
}

impl CheckResult {
    /// The margin as a fraction of the limit (the margin itself where the
    /// limit is zero or missing).
    pub fn relative_margin(&self) -> Option<f64> {
        let m = self.margin.filter(|m| m.is_finite())?;
        Some(match self.limit.filter(|l| l.is_finite() && *l != 0.0) {
            Some(l) => m / l.abs(),
            None => m,
        })
    }

    pub fn new(id: &str, check_type: CheckKind, disturbance: Option<usize>, unit: Unit) -> Self {
        CheckResult {
            id: id.to_string(),
            check_type,
            disturbance,
            verdict: Verdict::Inconclusive,
            measured: None,
            limit: None,
            margin: None,
            unit,
            at_s: None,
            detail: String::new(),
            settling_time_s: None,
            required_gain: None,
            measured_gain: None,
            required_pu: None,
            measured_pu: None,
            prefault_pu: None,
            left_zone_s: None,
            permitted_trip: None,
            reason: None,
            limited: None,
            reference_pu: None,
            time_from_s: None,
            segments: Vec::new(),
            event: None,
            counted: Vec::new(),
            spacing_s: Vec::new(),
        }
    }
    pub fn verdict(mut self, v: Verdict, detail: impl Into<String>) -> Self {
        self.verdict = v;
        self.detail = detail.into();
        self
    }
    /// Sets verdict, reason and sentence at once.
    pub fn decide(mut self, v: Verdict, reason: Reason, detail: impl Into<String>) -> Self {
        self.verdict = v;
        self.reason = Some(reason);
        self.detail = detail.into();
        self
    }
    /// Inconclusive and not-applicable rows carry no measured value or
    /// margin that could be read as a pass (the limit, a requirement, stays).
    pub fn clear_if_undecided(&mut self) {
        if matches!(self.verdict, Verdict::Inconclusive | Verdict::NotApplicable) {
            self.measured = None;
            self.margin = None;
            self.measured_gain = None;
            self.measured_pu = None;
            self.settling_time_s = None;
        }
    }
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct DisturbanceResult {
    pub kind: DisturbanceKind,
    pub start_s: f64,
    /// Null when the recording ends before the voltage returned.
    #[schemars(with = "Nullable<f64>")]
    pub end_s: Option<f64>,
    pub extreme_pu: f64,
    pub balance: Balance,
    #[serde(default)]
    pub extreme_at_s: Option<f64>,
    #[serde(default)]
    pub duration_s: Option<f64>,
    /// Mean |V2|/|V1| over the settled part.
    #[serde(default)]
    pub unbalance_ratio: Option<f64>,
    /// Mean positive-sequence voltage over the settled part, pu.
    #[serde(default)]
    pub residual_v1_pu: Option<f64>,
    /// Mean phase-to-neutral voltages a, b, c over the settled part, pu.
    #[serde(default)]
    pub residual_phase_pu: Option<[f64; 3]>,
    /// Pre-fault applicable voltage, pu.
    #[serde(default)]
    pub prefault_v_pu: Option<f64>,
    #[serde(default)]
    pub prefault_p_pu: Option<f64>,
    #[serde(default)]
    pub prefault_q_pu: Option<f64>,
    /// Waveforms: the instant the waveform left the pre-fault sinusoid, s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub inception_s: Option<f64>,
    /// Waveforms: the instant the waveform left the fault-period sinusoid
    /// at the end of the disturbance (fault clearance), s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub clearance_s: Option<f64>,
    /// Pre-fault averaging window `[from, to]`, s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub prefault_window_s: Option<[f64; 2]>,
    /// The references were inherited from this earlier disturbance (the
    /// first of its chain): no clean pre-fault window lay in between.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub prefault_from: Option<usize>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct TripResult {
    pub tripped: bool,
    #[schemars(with = "Nullable<f64>")]
    pub time_s: Option<f64>,
    /// `none`: a trip cannot be seen.
    #[serde(default)]
    pub method: Option<TripMethod>,
    /// Momentary cessation intervals `[from, to]`, s.
    #[serde(default)]
    pub cessations: Vec<[f64; 2]>,
    #[serde(default)]
    pub note: Option<String>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct RecordingResult {
    pub path: String,
    pub sha256: String,
    pub sample_rate_hz: f64,
    pub duration_s: f64,
    #[serde(default)]
    pub format: Option<RecordingFormat>,
    #[serde(default)]
    pub kind: Option<RecordingKind>,
    #[serde(default)]
    pub samples: Option<u64>,
    /// Format facts worth a reviewer's eye (e.g. COMTRADE station, revision).
    #[serde(default)]
    pub header: Vec<(String, String)>,
    /// Mapped channels: `key ← source name (unit)`.
    #[serde(default)]
    pub channels: Vec<String>,
    /// Every file read for this recording (a COMTRADE `.dat` after its
    /// `.cfg`), with the SHA-256 of the bytes as the importer read them.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub files: Vec<HashedFile>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct HashedFile {
    pub path: String,
    pub sha256: String,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct TestResult {
    pub id: String,
    pub recording: RecordingResult,
    pub verdict: Verdict,
    pub disturbances: Vec<DisturbanceResult>,
    pub trip: TripResult,
    pub checks: Vec<CheckResult>,
    /// Rule set used by this test when it differs from the plan's.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rules: Option<FileRef>,
    /// Parameter values of the rule set used for this test.
    #[serde(default, skip_serializing_if = "std::collections::BTreeMap::is_empty")]
    pub parameters: std::collections::BTreeMap<String, f64>,
    #[serde(default)]
    pub notes: Vec<String>,
    /// Id of the rule set this test was judged by.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rule_set: Option<String>,
    /// The plan's description of this test.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub description: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub analysis: Option<TestAnalysis>,
    /// Steps of the positive-sequence voltage angle (waveform recordings).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub phase_jumps: Vec<crate::analysis::angle::PhaseJump>,
    /// The frequency in brief (waveform recordings).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub frequency: Option<crate::analysis::angle::FrequencySummary>,
    /// The validation of the test's simulation, where the plan names one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub validation: Option<ValidationBrief>,
}

/// A test's model validation in brief (the whole of it in the pack's
/// `validation/` folder).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct ValidationBrief {
    pub verdict: Verdict,
    /// Id of the validation rule.
    pub rules: String,
    pub simulated: HashedFile,
    /// Added to the simulated times, s.
    pub shift_s: f64,
    /// The validation page inside the pack.
    pub report: String,
    /// The windows and quantities that did not pass.
    #[serde(default)]
    pub failed: Vec<String>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct FileRef {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub id: Option<String>,
    pub path: String,
    pub sha256: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub title: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source: Option<String>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Tool {
    pub name: String,
    pub version: String,
    /// The source commit the tool was built from, where the build knew it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub commit: Option<String>,
}

impl Tool {
    /// This build: its version and the commit it was built from.
    pub fn this() -> Self {
        Tool {
            name: "holdfast".into(),
            version: env!("CARGO_PKG_VERSION").into(),
            commit: option_env!("HOLDFAST_COMMIT").map(Into::into),
        }
    }
}

/// Who and what the evidence is for: the plan's description and project
/// fields, as the plan states them.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct ProjectInfo {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub description: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub project: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub applicant: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub network_operator: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub test_campaign: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub report_revision: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub author: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reviewer: Option<String>,
}

impl ProjectInfo {
    /// The fields that are given, with their labels, in a fixed order.
    pub fn rows(&self) -> Vec<(&'static str, &str)> {
        [
            ("Project", &self.project),
            ("Applicant", &self.applicant),
            ("Network operator", &self.network_operator),
            ("Test campaign", &self.test_campaign),
            ("Report revision", &self.report_revision),
            ("Author", &self.author),
            ("Reviewer", &self.reviewer),
            ("Description", &self.description),
        ]
        .into_iter()
        .filter_map(|(k, v)| v.as_deref().map(|v| (k, v)))
        .collect()
    }
}

/// The unit's ratings and the per-unit bases derived from them.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct RatingsReport {
    /// Rated line-to-line RMS voltage `Un`, kV.
    pub rated_voltage_kv: f64,
    /// Rated apparent power `Sn`, MVA (also the power base).
    pub rated_power_mva: f64,
    /// Nominal frequency, Hz; null when each recording's own is used.
    #[schemars(with = "Nullable<f64>")]
    pub frequency_hz: Option<f64>,
    /// Phase-to-neutral voltage base `Un/√3`, V.
    pub voltage_base_phase_to_neutral_v: f64,
    /// Phase-to-phase voltage base `Un`, V.
    pub voltage_base_phase_to_phase_v: f64,
    /// Current base `Sn/(√3·Un)`, A.
    pub current_base_a: f64,
    /// Power base `Sn`, MW / Mvar / MVA.
    pub power_base_mva: f64,
}

impl RatingsReport {
    pub fn new(r: &crate::model::Ratings, frequency_hz: Option<f64>) -> Self {
        RatingsReport {
            rated_voltage_kv: r.rated_kv,
            rated_power_mva: r.rated_mva,
            frequency_hz,
            voltage_base_phase_to_neutral_v: r.voltage_base_phase_v(),
            voltage_base_phase_to_phase_v: r.voltage_base_line_v(),
            current_base_a: r.current_base_a(),
            power_base_mva: r.rated_mva,
        }
    }
}

/// A parameter of a rule set with the value this run used.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct AppliedParameter {
    pub name: String,
    pub value: f64,
    pub unit: String,
    /// The published range the value was checked against.
    pub range: [f64; 2],
    /// `default`, `plan` or `--set`.
    pub origin: String,
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub description: String,
}

/// A rule set as this run applied it: its parameters resolved, its
/// detection thresholds and every requirement with the values used, and
/// where the pack keeps a copy of its text and its figures.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct AppliedRuleSet {
    pub id: String,
    pub title: String,
    /// Which published document, edition and clause the numbers follow.
    pub source: String,
    pub path: String,
    pub sha256: String,
    /// The rule set's text as read, inside the pack.
    pub copy: String,
    /// Its requirement figures (`rules plot`), inside the pack.
    #[serde(default)]
    pub figures: Vec<String>,
    pub parameters: Vec<AppliedParameter>,
    pub applicable_voltage: crate::analysis::events::ApplicableVoltage,
    pub disturbance: super::spec::DisturbanceSpec,
    /// Each requirement with the parameter values put in.
    pub checks: Vec<super::spec::CheckSpec>,
}

/// How the recordings were analysed (the same for every test).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct AnalysisReport {
    /// The phasor method in words.
    pub method: String,
    /// Window length in nominal cycles.
    pub window_cycles: u32,
    /// Points per nominal cycle kept from waveform recordings.
    pub points_per_cycle: usize,
}

/// The settings one test was analysed with.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct TestAnalysis {
    /// Nominal frequency used, Hz.
    pub frequency_hz: f64,
    /// Phasor window, s (one nominal cycle).
    pub window_s: f64,
    /// Disturbance and trip detection thresholds.
    pub detection: crate::analysis::events::DetectionSettings,
}

/// `results.json`, schema version 1.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Results {
    pub schema_version: u32,
    pub tool: Tool,
    /// Null for a one-off check without a plan file.
    #[schemars(with = "Nullable<FileRef>")]
    pub plan: Option<FileRef>,
    pub rules: FileRef,
    pub verdict: Verdict,
    pub tests: Vec<TestResult>,
    /// Unit name from the plan.
    #[serde(default)]
    pub unit: Option<String>,
    /// UTC time of the run, RFC 3339.
    #[serde(default)]
    pub generated_utc: Option<String>,
    #[serde(default)]
    pub command_line: Option<String>,
    #[serde(default)]
    pub caution: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub project: Option<ProjectInfo>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ratings: Option<RatingsReport>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub analysis: Option<AnalysisReport>,
    /// Every rule set of the run as applied (the plan's first).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub rule_sets: Vec<AppliedRuleSet>,
}

impl TestResult {
    /// The check that decides the test's verdict most: the worst verdict
    /// (fail, then inconclusive, then pass), among those the smallest
    /// margin relative to its limit (so that seconds and per unit compare;
    /// a check without a margin after those with one), then the first in
    /// the rule set. Not-applicable checks are never worst, nor is a
    /// passing test-realisation check (it judges the test, not the unit).
    pub fn worst_check(&self) -> Option<&CheckResult> {
        // Worst first: the verdicts are ordered pass < … < fail.
        let rank = std::cmp::Reverse;
        self.checks
            .iter()
            .filter(|c| c.verdict != Verdict::NotApplicable)
            .filter(|c| !(c.verdict == Verdict::Pass && c.check_type == CheckKind::TestRealisation))
            .min_by(|a, b| {
                rank(a.verdict).cmp(&rank(b.verdict)).then_with(|| {
                    match (a.relative_margin(), b.relative_margin()) {
                        (Some(x), Some(y)) => x.total_cmp(&y),
                        (Some(_), None) => std::cmp::Ordering::Less,
                        (None, Some(_)) => std::cmp::Ordering::Greater,
                        (None, None) => std::cmp::Ordering::Equal,
                    }
                })
            })
    }

    /// The disturbance furthest from 1 pu (the one a test is named by).
    pub fn main_disturbance(&self) -> Option<(usize, &DisturbanceResult)> {
        self.disturbances.iter().enumerate().max_by(|a, b| {
            (a.1.extreme_pu - 1.0)
                .abs()
                .total_cmp(&(b.1.extreme_pu - 1.0).abs())
                .then(b.0.cmp(&a.0))
        })
    }
}

impl Results {
    pub fn counts(&self) -> [(Verdict, usize); 3] {
        let n = |v| self.tests.iter().filter(|t| t.verdict == v).count();
        [
            (Verdict::Pass, n(Verdict::Pass)),
            (Verdict::Fail, n(Verdict::Fail)),
            (Verdict::Inconclusive, n(Verdict::Inconclusive)),
        ]
    }
}

impl From<&crate::analysis::events::Disturbance> for DisturbanceResult {
    fn from(d: &crate::analysis::events::Disturbance) -> Self {
        DisturbanceResult {
            kind: d.kind,
            start_s: d.start_s,
            end_s: d.end_s,
            extreme_pu: d.extreme_pu,
            balance: d.balance,
            extreme_at_s: Some(d.extreme_at_s),
            duration_s: d.duration_s(),
            unbalance_ratio: d.unbalance_ratio,
            residual_v1_pu: d.residual.map(|r| r.v1_pu),
            residual_phase_pu: d.residual.and_then(|r| r.phase_pu),
            prefault_v_pu: d.prefault.map(|p| p.v_pu),
            prefault_p_pu: d.prefault.and_then(|p| p.p_pu),
            prefault_q_pu: d.prefault.and_then(|p| p.q_pu),
            inception_s: d.inception_s,
            clearance_s: d.clearance_s,
            prefault_window_s: d.prefault.map(|p| [p.from_s, p.to_s]),
            prefault_from: d.prefault_from,
        }
    }
}

impl From<&crate::analysis::events::TripInfo> for TripResult {
    fn from(t: &crate::analysis::events::TripInfo) -> Self {
        TripResult {
            tripped: t.tripped,
            time_s: if t.tripped { t.time_s } else { None },
            method: Some(t.method),
            cessations: t.cessations.iter().map(|(a, b)| [*a, *b]).collect(),
            note: t.note.clone(),
        }
    }
}
