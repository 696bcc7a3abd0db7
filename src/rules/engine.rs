//! Applies a rule set to one analysed recording: each check to each
//! disturbance it concerns, each disturbance judged on its own.

use super::reactive::{self, ReactiveInput};
use super::realisation::{self, Expect};
use super::recovery::{self, RecoveryInput};
use super::result::{CheckResult, Verdict};
use super::spec::{AppliesTo, Bound, CheckSpec, RuleSet, Sequence, Side};
use super::zone::{self, ConnectionFacts};
use crate::analysis::events::{
    detect_disturbances, detect_trip, DetectionSettings, Disturbance, DisturbanceKind, TripInfo,
    TripMethod,
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
    s
}

fn kind_name(k: DisturbanceKind) -> &'static str {
    match k {
        DisturbanceKind::Undervoltage => "undervoltage",
        DisturbanceKind::Overvoltage => "overvoltage",
    }
}

fn mean_over(t: &[f64], v: &[f64], a: f64, b: f64) -> Option<f64> {
    let i0 = t.partition_point(|x| *x < a);
    let i1 = t.partition_point(|x| *x <= b);
    let (s, n) = v[i0.min(i1)..i1]
        .iter()
        .filter(|x| x.is_finite())
        .fold((0.0, 0usize), |(s, n), x| (s + x, n + 1));
    (n > 0).then(|| s / n as f64)
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
    let t = &series.t;
    let rec_end = t.last().copied().unwrap_or(0.0);
    let (disturbances, v) = match (
        detect_disturbances(series, det),
        det.applicable.series(series),
    ) {
        (Ok(d), Ok(v)) => (d, Some(v)),
        (Err(why), _) | (_, Err(why)) => {
            notes.push(why.clone());
            let checks = rules
                .checks
                .iter()
                .map(|c| {
                    CheckResult::new(c.id(), c.type_name(), None, "pu").verdict(
                        Verdict::Inconclusive,
                        format!(
                            "{why}; the rule set judges the {} voltage",
                            det.applicable.name().replace('_', " ")
                        ),
                    )
                })
                .collect::<Vec<_>>();
            return Outcome {
                verdict: Verdict::combine(checks.iter().map(|c| c.verdict)),
                disturbances: Vec::new(),
                trip,
                checks,
                notes,
                applicable: None,
            };
        }
    };
    let v = v.unwrap_or_default();
    if let Some(n) = &trip.note {
        notes.push(n.clone());
    }
    let trip_time = if trip.tripped { trip.time_s } else { None };
    let mut checks = Vec::new();
    if let Some(e) = expect {
        let res = |d: &Disturbance| d.settled_s.and_then(|(a, b)| mean_over(t, &v, a, b));
        checks.push(realisation::evaluate(e, &disturbances, res));
    }
    for spec in &rules.checks {
        let wants = |d: &Disturbance| -> bool {
            match spec {
                CheckSpec::Envelope(e) => match e.bound {
                    Bound::Lower => d.kind == DisturbanceKind::Undervoltage,
                    Bound::Upper => d.kind == DisturbanceKind::Overvoltage,
                },
                CheckSpec::DurationTable(tb) => match tb.side {
                    Side::Below => d.kind == DisturbanceKind::Undervoltage,
                    Side::Above => d.kind == DisturbanceKind::Overvoltage,
                },
                CheckSpec::ReactiveCurrent(r) => match r.applies_to {
                    AppliesTo::Both => true,
                    AppliesTo::Undervoltage => d.kind == DisturbanceKind::Undervoltage,
                    AppliesTo::Overvoltage => d.kind == DisturbanceKind::Overvoltage,
                },
                CheckSpec::ActivePowerRecovery(_) => true,
            }
        };
        let unit = match spec {
            CheckSpec::Envelope(_) => "pu",
            _ => "s",
        };
        let mut any = false;
        for (k, d) in disturbances.iter().enumerate() {
            if !wants(d) {
                continue;
            }
            any = true;
            let win_end = disturbances.get(k + 1).map_or(rec_end, |n| n.start_s);
            let r = CheckResult::new(spec.id(), spec.type_name(), Some(k), unit);
            let trip_in = trip_time.filter(|tt| *tt >= d.start_s - cycle && *tt < win_end);
            let trip_before = trip_time.filter(|tt| *tt < d.start_s - cycle);
            let conn = ConnectionFacts {
                trip_s: trip_in,
                tripped_before_s: trip_before,
                trip_visible: trip.method != TripMethod::None,
                cessations: trip.cessations.clone(),
            };
            let scan_end = trip_in.unwrap_or(win_end);
            let result = match spec {
                CheckSpec::Envelope(_) | CheckSpec::DurationTable(_) => {
                    // The scan, the requirement's last time, and the cessation rule.
                    let (scan, last, cessation) = match spec {
                        CheckSpec::Envelope(e) => (
                            zone::scan_envelope(t, &v, d.start_s, scan_end, e.bound, &e.points),
                            e.points.last().map_or(0.0, |p| p[0]),
                            e.momentary_cessation,
                        ),
                        CheckSpec::DurationTable(tb) => (
                            zone::scan_table(
                                t, &v, d.start_s, scan_end, tb.side, &tb.rows, tb.mode,
                            ),
                            tb.rows.iter().map(|r| r.max_s).fold(0.0, f64::max),
                            tb.momentary_cessation,
                        ),
                        _ => unreachable!("matched above"),
                    };
                    // Only a disturbance that never ended needs the recording
                    // to reach the requirement's last time.
                    let needs = if d.end_s.is_some() {
                        f64::NEG_INFINITY
                    } else {
                        d.start_s + last
                    };
                    let timing = zone::Timing {
                        t0: d.start_s,
                        disturbance_s: d.duration_s(),
                        cycle_s: cycle,
                        recording_end_s: rec_end,
                        needs_until_s: needs,
                    };
                    zone::zone_verdict(r, &scan, &conn, &timing, cessation)
                }
                CheckSpec::ReactiveCurrent(rc) => {
                    let (vq, iq) = match rc.sequence {
                        Sequence::Positive => (Quantity::V1, Quantity::Iq),
                        Sequence::Negative => (Quantity::V2, Quantity::Iq2),
                    };
                    match (series.get(vq), series.get(iq), &d.prefault) {
                        (Some(vs), Some(is), Some(pre)) => {
                            let (v_pre, iq_pre) = match rc.sequence {
                                Sequence::Positive => (pre.v1_pu, pre.iq_pu.unwrap_or(f64::NAN)),
                                Sequence::Negative => (
                                    pre.v2_pu.unwrap_or(0.0),
                                    pre.iq2_pu.filter(|x| x.is_finite()).unwrap_or(0.0),
                                ),
                            };
                            if !iq_pre.is_finite() {
                                r.verdict(
                                    Verdict::Inconclusive,
                                    "no pre-fault reactive current reference",
                                )
                            } else {
                                let inp = ReactiveInput {
                                    t,
                                    v: vs,
                                    iq: is,
                                    start_s: d.start_s,
                                    end_s: d.end_s.unwrap_or(rec_end),
                                    ended: d.end_s.is_some(),
                                    v_pre,
                                    iq_pre,
                                    trip_s: trip_in,
                                    cycle_s: cycle,
                                };
                                reactive::evaluate(rc, &inp, r)
                            }
                        }
                        (_, None, _) | (None, _, _) => r.verdict(
                            Verdict::Inconclusive,
                            format!(
                                "the recording has no {} reactive current (currents missing{})",
                                if rc.sequence == Sequence::Negative {
                                    "negative-sequence"
                                } else {
                                    "positive-sequence"
                                },
                                if rc.sequence == Sequence::Negative {
                                    ", or an RMS-level recording without phases"
                                } else {
                                    ""
                                }
                            ),
                        ),
                        (_, _, None) => r.verdict(
                            Verdict::Inconclusive,
                            format!(
                                "no pre-fault reference: {}",
                                d.prefault_problem.clone().unwrap_or_else(|| {
                                    "too little data before the disturbance".into()
                                })
                            ),
                        ),
                    }
                }
                CheckSpec::ActivePowerRecovery(ap) => match series.get(Quantity::P) {
                    None => r.verdict(
                        Verdict::Inconclusive,
                        "the recording has no active power (currents missing)",
                    ),
                    Some(p) => {
                        let inp = RecoveryInput {
                            t,
                            p,
                            end_s: d.end_s,
                            p_pre: d.prefault.and_then(|x| x.p_pu),
                            trip_s: trip_time.filter(|tt| *tt >= d.start_s - cycle),
                            recording_end_s: win_end,
                        };
                        recovery::evaluate(ap, &inp, r)
                    }
                },
            };
            checks.push(result);
        }
        if !any {
            let what = match spec {
                CheckSpec::Envelope(e) if e.bound == Bound::Upper => "overvoltage",
                CheckSpec::DurationTable(tb) if tb.side == Side::Above => "overvoltage",
                CheckSpec::Envelope(_) | CheckSpec::DurationTable(_) => "undervoltage",
                CheckSpec::ReactiveCurrent(rc) => match rc.applies_to {
                    AppliesTo::Overvoltage => "overvoltage",
                    AppliesTo::Undervoltage => "undervoltage",
                    AppliesTo::Both => "",
                },
                CheckSpec::ActivePowerRecovery(_) => "",
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
                        .map(|d| kind_name(d.kind))
                        .collect::<Vec<_>>()
                        .join(", ")
                )
            };
            checks.push(
                CheckResult::new(spec.id(), spec.type_name(), None, unit)
                    .verdict(Verdict::NotApplicable, sentence),
            );
        }
    }
    // Active power recovery after a permitted trip is not required.
    let permitted: Vec<Option<usize>> = checks
        .iter()
        .filter(|c| {
            c.permitted_trip == Some(true)
                && matches!(c.check_type.as_str(), "envelope" | "duration_table")
        })
        .map(|c| c.disturbance)
        .collect();
    for c in checks.iter_mut() {
        if c.check_type == "active_power_recovery"
            && c.permitted_trip == Some(false)
            && permitted.contains(&c.disturbance)
        {
            c.permitted_trip = None;
            c.verdict = Verdict::NotApplicable;
            c.detail = format!(
                "{}; the trip was permitted (the voltage had left the ride-through zone), so recovery is not required",
                c.detail
            );
        }
    }
    if !checks.is_empty() && checks.iter().all(|c| c.verdict == Verdict::NotApplicable) {
        notes.push(
            "no requirement applied to this recording (every check is not applicable): it is no evidence of ride-through behaviour"
                .into(),
        );
    }
    Outcome {
        verdict: Verdict::combine(checks.iter().map(|c| c.verdict)),
        disturbances,
        trip,
        checks,
        notes,
        applicable: Some(v),
    }
}
