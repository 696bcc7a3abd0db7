//! Applies a rule set to one analysed recording: each check to each
//! disturbance it concerns, each disturbance judged on its own, and the
//! `connection` check over the whole recording.

use super::connection::{self, ConnectionInput};
use super::reactive::{self, ReactiveInput};
use super::realisation::{self, Expect};
use super::recovery::{self, RecoveryInput};
use super::result::{CheckResult, Reason, Verdict};
use super::spec::{AppliesTo, Bound, Cessation, CheckSpec, RuleSet, Sequence, Side};
use super::zone::{self, ConnectionFacts};
use crate::analysis::events::{
    detect_disturbances, detect_trip, ApplicableVoltage, DetectionSettings, Disturbance,
    DisturbanceKind, TripInfo, TripMethod,
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
    // A later disturbance's pre-fault window keeps clear of an earlier
    // one's recovery (decision C.9): the longest recovery time asked for.
    s.recovery_allowance_s = rules
        .checks
        .iter()
        .filter_map(|c| match c {
            CheckSpec::ActivePowerRecovery(a) => Some(a.within_s + a.hold_s),
            _ => None,
        })
        .fold(None, |m: Option<f64>, x| Some(m.map_or(x, |m| m.max(x))))
        .unwrap_or(1.0);
    s
}

/// Does a check concern a disturbance of this kind?
fn concerns(spec: &CheckSpec, kind: DisturbanceKind) -> bool {
    let under = kind == DisturbanceKind::Undervoltage;
    match spec {
        CheckSpec::Envelope(e) => (e.bound == Bound::Lower) == under,
        CheckSpec::DurationTable(tb) => (tb.side == Side::Below) == under,
        CheckSpec::ReactiveCurrent(r) => match r.applies_to {
            AppliesTo::Both => true,
            AppliesTo::Undervoltage => under,
            AppliesTo::Overvoltage => !under,
        },
        CheckSpec::ActivePowerRecovery(_) => true,
    }
}

fn is_zone(spec: &CheckSpec) -> bool {
    matches!(spec, CheckSpec::Envelope(_) | CheckSpec::DurationTable(_))
}

fn unit_of(spec: &CheckSpec) -> &'static str {
    match spec {
        CheckSpec::Envelope(_) => "pu",
        _ => "s",
    }
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
                realisation::TYPE,
                Some(e.disturbance),
                "pu",
            )
            .decide(Verdict::Inconclusive, reason, why.to_string()),
        );
    }
    out.extend(rules.checks.iter().map(|c| {
        CheckResult::new(c.id(), c.type_name(), None, unit_of(c)).decide(
            Verdict::Inconclusive,
            reason,
            why.to_string(),
        )
    }));
    out
}

/// One check for one disturbance.
struct Place<'a> {
    series: &'a Series,
    v: &'a [f64],
    d: &'a Disturbance,
    trip: &'a TripInfo,
    /// Trip time attributed to this disturbance.
    trip_in: Option<f64>,
    trip_before: Option<f64>,
    /// Where this disturbance's window ends: the next start or the recording end.
    win_end: f64,
    next_start: Option<f64>,
    rec_end: f64,
    cycle: f64,
}

fn zone_check(spec: &CheckSpec, p: &Place<'_>, r: CheckResult) -> CheckResult {
    let (t, v, d) = (&p.series.t, p.v, p.d);
    let scan_end = p.trip_in.unwrap_or(p.win_end);
    let (bound, last, cessation): (Bound, f64, Cessation) = match spec {
        CheckSpec::Envelope(e) => (
            e.bound,
            e.points.last().map_or(0.0, |x| x[0]),
            e.momentary_cessation,
        ),
        CheckSpec::DurationTable(tb) => (
            if tb.side == Side::Below {
                Bound::Lower
            } else {
                Bound::Upper
            },
            tb.rows.iter().map(|r| r.max_s).fold(0.0, f64::max),
            tb.momentary_cessation,
        ),
        _ => unreachable!("zone checks only"),
    };
    let scan = |v: &[f64]| match spec {
        CheckSpec::Envelope(e) => {
            zone::scan_envelope(t, v, d.start_s, scan_end, e.bound, &e.points)
        }
        CheckSpec::DurationTable(tb) => {
            zone::scan_table(t, v, d.start_s, scan_end, tb.side, &tb.rows, tb.mode)
        }
        _ => unreachable!("zone checks only"),
    };
    let timing = zone::Timing {
        t0: d.start_s,
        end_s: d.end_s,
        cycle_s: p.cycle,
        recording_end_s: p.rec_end,
        // Only a disturbance that never ended needs the recording to reach
        // the requirement's last time.
        needs_until_s: if d.end_s.is_some() {
            f64::NEG_INFINITY
        } else {
            d.start_s + last
        },
    };
    let conn = ConnectionFacts {
        trip_s: p.trip_in,
        tripped_before_s: p.trip_before,
        trip_visible: p.trip.method != TripMethod::None,
        cessations: p.trip.cessations.clone(),
    };
    let measured = scan(v);
    let short = d.end_s.is_some_and(|e| e - d.start_s < 2.0 * p.cycle);
    let deep = (short && p.trip_in.is_some()).then(|| scan(&zone::deepest(t, v, &timing, bound)));
    zone::zone_verdict(r, &measured, deep.as_ref(), &conn, &timing, cessation)
}

fn reactive_check(
    rc: &super::spec::ReactiveCurrentSpec,
    p: &Place<'_>,
    r: CheckResult,
) -> CheckResult {
    let series = p.series;
    let d = p.d;
    let (vq, iq) = match rc.sequence {
        Sequence::Positive => (Quantity::V1, Quantity::Iq),
        Sequence::Negative => (Quantity::V2, Quantity::Iq2),
    };
    let (Some(vs), Some(is)) = (series.get(vq), series.get(iq)) else {
        return r.decide(
            Verdict::Inconclusive,
            Reason::MissingChannel,
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
        );
    };
    let Some(pre) = &d.prefault else {
        return r.decide(
            Verdict::Inconclusive,
            Reason::NoPrefaultReference,
            format!(
                "no pre-fault reference: {}",
                d.prefault_problem
                    .clone()
                    .unwrap_or_else(|| "too little data before the disturbance".into())
            ),
        );
    };
    let (v_pre, iq_pre) = match rc.sequence {
        Sequence::Positive => (pre.v1_pu, pre.iq_pu.unwrap_or(f64::NAN)),
        Sequence::Negative => (
            pre.v2_pu.unwrap_or(0.0),
            pre.iq2_pu.filter(|x| x.is_finite()).unwrap_or(0.0),
        ),
    };
    if !iq_pre.is_finite() {
        return r.decide(
            Verdict::Inconclusive,
            Reason::NoPrefaultReference,
            "no pre-fault reactive current reference",
        );
    }
    let inp = ReactiveInput {
        t: &series.t,
        v: vs,
        iq: is,
        start_s: d.start_s,
        inception_s: d.inception_s,
        end_s: d.end_s.unwrap_or(p.rec_end),
        ended: d.end_s.is_some(),
        v_pre,
        iq_pre,
        trip_s: p.trip_in,
        cycle_s: p.cycle,
    };
    reactive::evaluate(rc, &inp, r)
}

fn recovery_check(
    ap: &super::spec::ActivePowerRecoverySpec,
    p: &Place<'_>,
    r: CheckResult,
) -> CheckResult {
    let Some(pw) = p.series.get(Quantity::P) else {
        return r.decide(
            Verdict::Inconclusive,
            Reason::MissingChannel,
            "the recording has no active power (currents missing)",
        );
    };
    let inp = RecoveryInput {
        t: &p.series.t,
        p: pw,
        end_s: p.d.end_s,
        p_pre: p.d.prefault.and_then(|x| x.p_pu),
        trip_s: p.trip_in,
        search_end_s: p.win_end,
        next_start_s: p.next_start,
    };
    recovery::evaluate(ap, &inp, r)
}

/// Active power recovery after a trip (decision C.11): required unless
/// every zone check concerning the disturbance calls the trip permitted.
fn excuse_recovery(checks: &mut [CheckResult], zone_ids: &[&str]) {
    let zone: Vec<(Option<usize>, Option<Reason>)> = checks
        .iter()
        .filter(|c| zone_ids.contains(&c.id.as_str()))
        .map(|c| (c.disturbance, c.reason))
        .collect();
    for c in checks.iter_mut() {
        if c.check_type != "active_power_recovery"
            || c.reason != Some(Reason::TrippedBeforeRecovery)
        {
            continue;
        }
        let of: Vec<Option<Reason>> = zone
            .iter()
            .filter(|(d, _)| *d == c.disturbance)
            .map(|(_, r)| *r)
            .collect();
        if of.is_empty() || of.contains(&Some(Reason::TripInsideZone)) {
            continue;
        }
        if of.iter().all(|r| *r == Some(Reason::PermittedTrip)) {
            c.permitted_trip = None;
            let detail = format!(
                "{}; every ride-through check calls the trip permitted (the voltage had left the zone), so recovery is not required",
                c.detail
            );
            *c = c
                .clone()
                .decide(Verdict::NotApplicable, Reason::TripPermitted, detail);
        } else {
            let detail = format!(
                "{}; whether recovery was required depends on ride-through checks that could not decide",
                c.detail
            );
            *c = c
                .clone()
                .decide(Verdict::Inconclusive, Reason::TripNotJudged, detail);
        }
    }
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
    let t = &series.t;
    let band = (det.below_pu, det.above_pu);
    let zone_ids: Vec<&str> = rules
        .checks
        .iter()
        .filter(|c| is_zone(c))
        .map(|c| c.id())
        .collect();
    let forbid_cessation = rules.checks.iter().any(|c| match c {
        CheckSpec::Envelope(e) => e.momentary_cessation == Cessation::Forbidden,
        CheckSpec::DurationTable(tb) => tb.momentary_cessation == Cessation::Forbidden,
        _ => false,
    });
    let finish = |mut checks: Vec<CheckResult>,
                  notes: Vec<String>,
                  disturbances: Vec<Disturbance>,
                  trip: TripInfo,
                  applicable: Option<Vec<f64>>| {
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
        }
    };
    if series.is_empty() {
        let why = "no analysed samples: the recording is shorter than one analysis window (one nominal cycle of samples), so it cannot be judged";
        notes.push(why.into());
        let mut checks = all_undecided(rules, expect, Reason::InsufficientData, why);
        checks.insert(
            0,
            CheckResult::new(connection::ID, connection::ID, None, "pu").decide(
                Verdict::Inconclusive,
                Reason::InsufficientData,
                why,
            ),
        );
        return finish(checks, notes, Vec::new(), trip, None);
    }
    let rec_end = t.last().copied().unwrap_or(0.0);
    let (disturbances, v) = match (
        detect_disturbances(series, det),
        det.applicable.series(series),
    ) {
        (Ok(d), Ok(v)) => (d, v),
        (Err(why), _) | (_, Err(why)) => {
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
                t,
                v: None,
                trip: &trip,
                disturbances: &[],
                zone_checked: &[],
                zone: &[],
                forbid_cessation: false,
                band,
                cycle_s: cycle,
            });
            checks.insert(0, conn);
            return finish(checks, notes, Vec::new(), trip, None);
        }
    };
    let trip_time = if trip.tripped { trip.time_s } else { None };
    let mut checks = Vec::new();
    if let Some(e) = expect {
        checks.push(realisation::evaluate(e, &disturbances));
    }
    let conn_at = checks.len();
    for spec in &rules.checks {
        let mut any = false;
        for (k, d) in disturbances.iter().enumerate() {
            if !concerns(spec, d.kind) {
                continue;
            }
            any = true;
            let next_start = disturbances.get(k + 1).map(|n| n.start_s);
            let win_end = next_start.unwrap_or(rec_end);
            let place = Place {
                series,
                v: &v,
                d,
                trip: &trip,
                trip_in: trip_time.filter(|tt| *tt >= d.start_s - cycle && *tt < win_end),
                trip_before: trip_time.filter(|tt| *tt < d.start_s - cycle),
                win_end,
                next_start,
                rec_end,
                cycle,
            };
            let r = CheckResult::new(spec.id(), spec.type_name(), Some(k), unit_of(spec));
            checks.push(match spec {
                CheckSpec::Envelope(_) | CheckSpec::DurationTable(_) => zone_check(spec, &place, r),
                CheckSpec::ReactiveCurrent(rc) => reactive_check(rc, &place, r),
                CheckSpec::ActivePowerRecovery(ap) => recovery_check(ap, &place, r),
            });
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
                        .map(|d| d.kind.name())
                        .collect::<Vec<_>>()
                        .join(", ")
                )
            };
            checks.push(
                CheckResult::new(spec.id(), spec.type_name(), None, unit_of(spec)).decide(
                    Verdict::NotApplicable,
                    Reason::NotTriggered,
                    sentence,
                ),
            );
        }
    }
    excuse_recovery(&mut checks, &zone_ids);
    let zone_checked: Vec<bool> = disturbances
        .iter()
        .map(|d| {
            rules
                .checks
                .iter()
                .any(|c| is_zone(c) && concerns(c, d.kind))
        })
        .collect();
    let zone_results: Vec<&CheckResult> = checks
        .iter()
        .filter(|c| zone_ids.contains(&c.id.as_str()) && c.disturbance.is_some())
        .collect();
    let conn = connection::evaluate(&ConnectionInput {
        t,
        v: Some(&v),
        trip: &trip,
        disturbances: &disturbances,
        zone_checked: &zone_checked,
        zone: &zone_results,
        forbid_cessation,
        band,
        cycle_s: cycle,
    });
    checks.insert(conn_at, conn);
    let judged = checks
        .iter()
        .filter(|c| c.id != connection::ID)
        .collect::<Vec<_>>();
    if !judged.is_empty() && judged.iter().all(|c| c.verdict == Verdict::NotApplicable) {
        notes.push(
            "no ride-through requirement applied to this recording (every check but the connection check is not applicable): it is no evidence of ride-through behaviour"
                .into(),
        );
    }
    finish(checks, notes, disturbances, trip, Some(v))
}
