//! Applies a rule set to one analysed recording: each check to each
//! disturbance it concerns, each disturbance judged on its own, and the
//! `connection` check over the whole recording. The engine knows no check
//! type: it asks each through the [`Check`] trait.

use super::check::{Check, Context, Overlay, Recording};
use super::connection::{self, ConnectionInput};
use super::realisation::{self, Expect};
use super::registry::{CheckKind, Unit};
use super::result::{CheckResult, Reason, Verdict};
use super::spec::RuleSet;
use crate::analysis::events::{
    detect_disturbances, detect_trip, ApplicableVoltage, DetectionSettings, Disturbance, TripInfo,
};
use crate::analysis::{Quantity, Series};

/// Everything the checks found in one recording.
pub struct Outcome {
    pub disturbances: Vec<Disturbance>,
    pub trip: TripInfo,
    pub checks: Vec<CheckResult>,
    pub verdict: Verdict,
    pub notes: Vec<String>,
    /// Applicable voltage series (same time base as the analysis series).
    pub applicable: Option<Vec<f64>>,
    /// Phase jumps and the frequency in brief (waveform recordings).
    pub angle: Option<(
        Vec<crate::analysis::angle::PhaseJump>,
        crate::analysis::angle::FrequencySummary,
    )>,
}

/// Detection thresholds from a rule set.
pub fn detection_settings(rules: &RuleSet, frequency_hz: f64) -> DetectionSettings {
    let d = &rules.disturbance;
    let mut s = DetectionSettings::defaults(frequency_hz);
    s.applicable = rules.applicable_voltage;
    s.below_pu = d.below_pu;
    s.above_pu = d.above_pu;
    s.hysteresis_pu = d.hysteresis_pu;
    s.min_return_s = d.min_return_s;
    s.prefault_window_s = d.prefault_window_s;
    s.unbalance_ratio = d.unbalance_ratio;
    s.trip_current_pu = d.trip_current_pu;
    // A later disturbance's pre-fault window keeps clear of an earlier
    // one's recovery (docs/rules.md, pre-fault references): the longest recovery time asked for.
    s.recovery_allowance_s = rules
        .checks
        .iter()
        .filter_map(|c| c.check().recovery_allowance_s())
        .fold(None, |m: Option<f64>, x| Some(m.map_or(x, |m| m.max(x))))
        .unwrap_or(1.0);
    s
}

/// Every check inconclusive for one reason (the recording cannot be judged).
fn all_undecided(
    rules: &RuleSet,
    expect: Option<&Expect>,
    reason: Reason,
    why: &str,
) -> Vec<CheckResult> {
    let mut out = Vec::new();
    if let Some(e) = expect {
        out.push(
            CheckResult::new(
                realisation::ID,
                CheckKind::TestRealisation,
                Some(e.disturbance),
                Unit::Pu,
            )
            .decide(Verdict::Inconclusive, reason, why.to_string()),
        );
    }
    out.extend(rules.checks.iter().map(|c| {
        let c = c.check();
        CheckResult::new(c.id(), c.kind(), None, c.unit()).decide(
            Verdict::Inconclusive,
            reason,
            why.to_string(),
        )
    }));
    out
}

/// The context of disturbance `k` (what its checks see).
fn context<'a>(
    series: &'a Series,
    v: &'a [f64],
    disturbances: &'a [Disturbance],
    k: usize,
    trip: &'a TripInfo,
    cycle: f64,
) -> Context<'a> {
    let d = &disturbances[k];
    let rec_end = series.t.last().copied().unwrap_or(0.0);
    let next_start = disturbances.get(k + 1).map(|n| n.start_s);
    let win_end = next_start.unwrap_or(rec_end);
    let trip_time = if trip.tripped { trip.time_s } else { None };
    Context {
        series,
        v,
        d,
        trip,
        trip_in: trip_time.filter(|tt| *tt >= d.start_s - cycle && *tt < win_end),
        trip_before: trip_time.filter(|tt| *tt < d.start_s - cycle),
        win_end,
        next_start,
        rec_end,
        cycle,
    }
}

/// The sentence of a check that concerns no disturbance of the recording.
fn not_triggered(
    c: &dyn Check,
    det: &DetectionSettings,
    disturbances: &[Disturbance],
) -> CheckResult {
    use crate::analysis::events::DisturbanceKind::{Overvoltage, Undervoltage};
    let what = match (c.concerns(Undervoltage), c.concerns(Overvoltage)) {
        (true, false) => "undervoltage",
        (false, true) => "overvoltage",
        _ => "",
    };
    let sentence = if disturbances.is_empty() {
        format!(
            "the recording shows no disturbance ({} voltage stayed within {}..{} pu)",
            det.applicable.name().replace('_', " "),
            det.below_pu,
            det.above_pu
        )
    } else {
        format!(
            "no {what} disturbance in the recording (found: {})",
            disturbances
                .iter()
                .map(|d| d.kind.name())
                .collect::<Vec<_>>()
                .join(", ")
        )
    };
    CheckResult::new(c.id(), c.kind(), None, c.unit()).decide(
        Verdict::NotApplicable,
        Reason::NotTriggered,
        sentence,
    )
}

/// Inconclusive and not-applicable rows carry no measured value or margin;
/// the verdict of the recording from its checks.
fn finish(
    mut checks: Vec<CheckResult>,
    notes: Vec<String>,
    disturbances: Vec<Disturbance>,
    trip: TripInfo,
    applicable: Option<Vec<f64>>,
) -> Outcome {
    for c in &mut checks {
        c.clear_if_undecided();
    }
    Outcome {
        verdict: Verdict::combine(checks.iter().map(|c| c.verdict)),
        disturbances,
        trip,
        checks,
        notes,
        applicable,
        angle: None,
    }
}

/// A recording without analysed samples, or whose applicable voltage is
/// not available: every check inconclusive, and the connection check
/// knows no disturbance.
fn undecidable(
    series: &Series,
    rules: &RuleSet,
    det: &DetectionSettings,
    expect: Option<&Expect>,
    trip: TripInfo,
    mut notes: Vec<String>,
    why: String,
) -> Outcome {
    let cycle = 1.0 / det.frequency_hz;
    if series.is_empty() {
        let why = "no analysed samples: the recording is shorter than one analysis window (one nominal cycle of samples), so it cannot be judged";
        notes.push(why.into());
        let mut checks = all_undecided(rules, expect, Reason::InsufficientData, why);
        checks.insert(
            0,
            CheckResult::new(connection::ID, CheckKind::Connection, None, Unit::Pu).decide(
                Verdict::Inconclusive,
                Reason::InsufficientData,
                why,
            ),
        );
        return finish(checks, notes, Vec::new(), trip, None);
    }
    let unobservable = matches!(
        det.applicable,
        ApplicableVoltage::MinPhaseToNeutral | ApplicableVoltage::MaxPhaseToNeutral
    ) && series.has(Quantity::Va)
        && !series.has(Quantity::V0);
    let (reason, hint) = if unobservable {
        (
            Reason::VoltageUnobservable,
            "; map the residual voltage (vn) or use a rule set that judges phase-to-phase voltages",
        )
    } else {
        (Reason::MissingChannel, "")
    };
    let sentence = format!(
        "{why}; the rule set judges the {} voltage{hint}",
        det.applicable.name().replace('_', " ")
    );
    notes.push(why);
    let mut checks = all_undecided(rules, expect, reason, &sentence);
    let conn = connection::evaluate(&ConnectionInput {
        t: &series.t,
        v: None,
        trip: &trip,
        disturbances: &[],
        zone_checked: &[],
        zone: &[],
        forbid_cessation: false,
        band: (det.below_pu, det.above_pu),
        cycle_s: cycle,
    });
    checks.insert(0, conn);
    finish(checks, notes, Vec::new(), trip, None)
}

pub fn evaluate(
    series: &Series,
    rules: &RuleSet,
    det: &DetectionSettings,
    expect: Option<&Expect>,
) -> Outcome {
    let mut notes = Vec::new();
    let cycle = 1.0 / det.frequency_hz;
    let trip = detect_trip(series, det);
    if let Some(n) = &trip.note {
        notes.push(n.clone());
    }
    if series.is_empty() {
        return undecidable(series, rules, det, expect, trip, notes, String::new());
    }
    let (disturbances, v) = match (
        detect_disturbances(series, det),
        det.applicable.series(series),
    ) {
        (Ok(d), Ok(v)) => (d, v),
        (Err(why), _) | (_, Err(why)) => {
            return undecidable(series, rules, det, expect, trip, notes, why)
        }
    };
    let checks_of: Vec<&dyn Check> = rules.checks.iter().map(|c| c.check()).collect();
    let mut checks = Vec::new();
    if let Some(e) = expect {
        checks.push(realisation::evaluate(e, &disturbances));
    }
    let conn_at = checks.len();
    // Each check for each disturbance it concerns, in rule-set order.
    let first_rule_row = checks.len();
    let rec = Recording {
        series,
        v: &v,
        disturbances: &disturbances,
        trip: &trip,
        cycle,
        f_nom: det.frequency_hz,
        rec_end: series.t.last().copied().unwrap_or(0.0),
    };
    for c in &checks_of {
        if let Some(results) = c.evaluate_recording(&rec) {
            checks.extend(results);
            continue;
        }
        let mut any = false;
        for (k, d) in disturbances.iter().enumerate() {
            if !c.concerns(d.kind) {
                continue;
            }
            any = true;
            let ctx = context(series, &v, &disturbances, k, &trip, cycle);
            let r = CheckResult::new(c.id(), c.kind(), Some(k), c.unit());
            checks.push(c.evaluate(&ctx, r));
        }
        if !any {
            checks.push(not_triggered(*c, det, &disturbances));
        }
    }
    review(&mut checks[first_rule_row..], &checks_of);
    let conn = connection_check(series, &v, &disturbances, &trip, &checks, &checks_of, det);
    checks.insert(conn_at, conn);
    let judged = checks
        .iter()
        .filter(|c| c.check_type != CheckKind::Connection)
        .collect::<Vec<_>>();
    if !judged.is_empty() && judged.iter().all(|c| c.verdict == Verdict::NotApplicable) {
        notes.push(
            "no ride-through requirement applied to this recording (every check but the connection check is not applicable): it is no evidence of ride-through behaviour"
                .into(),
        );
    }
    let angle = crate::analysis::angle::summarise(series, det.frequency_hz, &disturbances);
    let mut out = finish(checks, notes, disturbances, trip, Some(v));
    out.angle = angle;
    out
}

/// Lets each check look at the zone checks of its disturbance
/// ([`Check::review`]).
fn review(rows: &mut [CheckResult], checks_of: &[&dyn Check]) {
    let spec_of = |id: &str| checks_of.iter().find(|c| c.id() == id).copied();
    let zone: Vec<CheckResult> = rows
        .iter()
        .filter(|r| spec_of(&r.id).is_some_and(|c| c.zone().is_some()))
        .cloned()
        .collect();
    for r in rows.iter_mut() {
        let Some(c) = spec_of(&r.id) else { continue };
        let of: Vec<&CheckResult> = zone
            .iter()
            .filter(|z| z.disturbance == r.disturbance)
            .collect();
        c.review(r, &of);
    }
}

/// The connection check, from the zone checks' results (docs/rules.md, "Checks holdfast adds itself").
fn connection_check(
    series: &Series,
    v: &[f64],
    disturbances: &[Disturbance],
    trip: &TripInfo,
    checks: &[CheckResult],
    checks_of: &[&dyn Check],
    det: &DetectionSettings,
) -> CheckResult {
    let zones: Vec<&&dyn Check> = checks_of.iter().filter(|c| c.zone().is_some()).collect();
    let zone_checked: Vec<bool> = disturbances
        .iter()
        .map(|d| zones.iter().any(|c| c.concerns(d.kind)))
        .collect();
    // Zone checks of the disturbances, and the checks of other events that
    // judged a trip (phase jumps, frequency).
    let zone_results: Vec<&CheckResult> = checks
        .iter()
        .filter(|r| {
            (r.disturbance.is_some() && zones.iter().any(|c| c.id() == r.id))
                || (r.disturbance.is_none() && r.permitted_trip.is_some())
        })
        .collect();
    connection::evaluate(&ConnectionInput {
        t: &series.t,
        v: Some(v),
        trip,
        disturbances,
        zone_checked: &zone_checked,
        zone: &zone_results,
        forbid_cessation: zones
            .iter()
            .any(|c| c.zone().is_some_and(|z| z.forbids_cessation)),
        band: (det.below_pu, det.above_pu),
        cycle_s: 1.0 / det.frequency_hz,
    })
}

/// What the checks hand to the figures: each result that concerns a
/// disturbance, with its overlay.
pub fn overlays<'a>(
    series: &Series,
    rules: &RuleSet,
    det: &DetectionSettings,
    outcome: &'a Outcome,
) -> Vec<(&'a CheckResult, Overlay)> {
    let Some(v) = outcome.applicable.as_deref() else {
        return Vec::new();
    };
    let cycle = 1.0 / det.frequency_hz;
    let rec = Recording {
        series,
        v,
        disturbances: &outcome.disturbances,
        trip: &outcome.trip,
        cycle,
        f_nom: det.frequency_hz,
        rec_end: series.t.last().copied().unwrap_or(0.0),
    };
    let mut out = Vec::new();
    let mut drawn: Vec<&str> = Vec::new();
    for r in &outcome.checks {
        let Some(spec) = rules.checks.iter().find(|c| c.id() == r.id) else {
            continue;
        };
        let Some(k) = r.disturbance else {
            // Checks of other events: one overlay per check.
            if !drawn.contains(&r.id.as_str()) {
                if let Some(o) = spec.check().recording_overlay(r, &rec) {
                    drawn.push(&r.id);
                    out.push((r, o));
                }
            }
            continue;
        };
        if k >= outcome.disturbances.len() {
            continue;
        }
        let ctx = context(series, v, &outcome.disturbances, k, &outcome.trip, cycle);
        if let Some(o) = spec.check().overlay(r, &ctx) {
            out.push((r, o));
        }
    }
    out
}
