//! Every verdict path of every check type, on constructed RMS-level series
//! whose correct answer follows from how they are built. Each test states
//! the derivation. Samples every 1 ms; nominal frequency 50 Hz (one cycle =
//! 20 ms); disturbance defaults: start below 0.90 pu, end back above 0.91 pu
//! for 50 ms; pre-fault window 100 ms ending 20 ms before the start.

use holdfast::analysis::events::DetectionSettings;
use holdfast::analysis::{Quantity, Series};
use holdfast::rules::engine::{self, detection_settings};
use holdfast::rules::result::{CheckResult, Reason, Verdict};
use holdfast::rules::spec::RuleSet;

const DT: f64 = 0.001;

type Signal = Box<dyn Fn(f64) -> f64>;

struct Sig {
    dur: f64,
    v: Signal,
    ip: Signal,
    iq: Signal,
    status: Option<Signal>,
    v2: Option<(Signal, Signal)>,
    /// Waveform deviation `|x[n] − x[n−N]|` (marks inception and clearance).
    dev: Option<Signal>,
    /// Positive-sequence angle against the 50 Hz reference, radians.
    angle: Option<Signal>,
    currents: bool,
}

impl Sig {
    fn new(v: impl Fn(f64) -> f64 + 'static) -> Self {
        Sig {
            dur: 3.0,
            v: Box::new(v),
            ip: Box::new(|_| 0.8),
            iq: Box::new(|_| 0.0),
            status: None,
            v2: None,
            dev: None,
            angle: None,
            currents: true,
        }
    }
    fn series(&self) -> Series {
        let n = (self.dur / DT).round() as usize + 1;
        let t: Vec<f64> = (0..n).map(|k| k as f64 * DT).collect();
        let v: Vec<f64> = t.iter().map(|x| (self.v)(*x)).collect();
        let mut cols = vec![(Quantity::V1, v.clone())];
        if self.currents {
            let ip: Vec<f64> = t.iter().map(|x| (self.ip)(*x)).collect();
            let iq: Vec<f64> = t.iter().map(|x| (self.iq)(*x)).collect();
            let i1: Vec<f64> = ip.iter().zip(&iq).map(|(a, b)| a.hypot(*b)).collect();
            cols.push((Quantity::P, v.iter().zip(&ip).map(|(a, b)| a * b).collect()));
            cols.push((Quantity::Q, v.iter().zip(&iq).map(|(a, b)| a * b).collect()));
            cols.push((Quantity::Ip, ip));
            cols.push((Quantity::Iq, iq));
            cols.push((Quantity::I1, i1.clone()));
            cols.push((Quantity::IMax, i1));
        }
        if let Some(s) = &self.status {
            cols.push((Quantity::Status, t.iter().map(|x| s(*x)).collect()));
        }
        if let Some(d) = &self.dev {
            cols.push((Quantity::WaveDeviation, t.iter().map(|x| d(*x)).collect()));
        }
        if let Some(a) = &self.angle {
            cols.push((Quantity::V1Angle, t.iter().map(|x| a(*x)).collect()));
        }
        if let Some((v2, iq2)) = &self.v2 {
            cols.push((Quantity::V2, t.iter().map(|x| v2(*x)).collect()));
            cols.push((Quantity::Iq2, t.iter().map(|x| iq2(*x)).collect()));
        }
        Series::from_columns(t, cols).unwrap()
    }
}

fn rules(checks: &str) -> RuleSet {
    rules_with(checks, "")
}

fn rules_with(checks: &str, disturbance: &str) -> RuleSet {
    let text = format!("id: t\ntitle: t\nsource: test\n{disturbance}checks:\n{checks}");
    let r: RuleSet =
        holdfast::rules::yaml::parse(std::path::Path::new("test.yaml"), &text).unwrap();
    assert!(r.problems().is_empty(), "{:?}", r.problems());
    r
}

/// The rule set's checks (without the connection check every recording gets).
fn run(sig: &Sig, r: &RuleSet) -> Vec<CheckResult> {
    run_all(sig, r)
        .into_iter()
        .filter(|c| c.id != "connection")
        .collect()
}

/// Every check, the connection check included.
fn run_all(sig: &Sig, r: &RuleSet) -> Vec<CheckResult> {
    let det: DetectionSettings = detection_settings(r, 50.0);
    engine::evaluate(&sig.series(), r, &det, None).checks
}

/// The connection check of a recording.
fn connection(sig: &Sig, r: &RuleSet) -> CheckResult {
    run_all(sig, r)
        .into_iter()
        .find(|c| c.id == "connection")
        .expect("every recording has a connection check")
}

fn one(sig: &Sig, r: &RuleSet) -> CheckResult {
    let c = run(sig, r);
    assert_eq!(c.len(), 1, "{c:#?}");
    c.into_iter().next().unwrap()
}

/// A dip to `depth` pu from 1.0 s for `len` s.
fn dip(depth: f64, len: f64) -> impl Fn(f64) -> f64 {
    move |t| {
        if (1.0..1.0 + len).contains(&t) {
            depth
        } else {
            1.0
        }
    }
}

fn status_open_at(at: f64) -> Option<Box<dyn Fn(f64) -> f64>> {
    Some(Box::new(move |t| if t >= at { 0.0 } else { 1.0 }))
}

const LVRT: &str =
    "  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0], [0.15, 0], [1.5, 0.85]] }\n";

fn close(a: Option<f64>, b: f64, tol: f64) -> bool {
    a.is_some_and(|a| (a - b).abs() <= tol)
}

// ---------------------------------------------------------------- envelope

#[test]
fn envelope_inside_no_trip_passes_with_smallest_margin() {
    // 0.3 pu for 0.3 s (1.0..1.3 s): C(τ) = 0 up to 0.15 s, then
    // 0.85·(τ − 0.15)/1.35. The margin is the smallest headroom over the
    // disturbance itself (start to end, docs/rules.md "Reasons and margins"), not over the
    // recovered tail: at the last dip sample, τ = 0.299 s,
    // 0.3 − 0.85·0.149/1.35 = 0.206185 pu.
    let mut s = Sig::new(dip(0.3, 0.3));
    s.status = status_open_at(99.0);
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert_eq!(c.reason, Some(Reason::NoTrip));
    assert!(
        close(c.margin, 0.3 - 0.85 * 0.149 / 1.35, 1e-9),
        "{:?}",
        c.margin
    );
    assert!(close(c.at_s, 1.299, 1e-9), "{:?}", c.at_s);
    assert!(close(c.measured, 0.3, 1e-12));
    assert_eq!(c.left_zone_s, None);
}

#[test]
fn envelope_trip_inside_zone_fails() {
    // Same dip; breaker opens at 1.2 s (τ = 0.2 s, C = 0.031 < 0.3): inside.
    let mut s = Sig::new(dip(0.3, 0.3));
    s.status = status_open_at(1.2);
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.verdict, Verdict::Fail, "{}", c.detail);
    assert_eq!(c.permitted_trip, Some(false));
}

#[test]
fn envelope_trip_after_leaving_zone_is_permitted() {
    // 0.3 pu for 1 s: C reaches 0.3 at τ = 0.15 + 0.3·1.35/0.85 = 0.62647 s,
    // i.e. the zone is left at 1.62647 s (first 1 ms sample after: 1.627).
    let mut s = Sig::new(dip(0.3, 1.0));
    s.status = status_open_at(1.8);
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert_eq!(c.permitted_trip, Some(true));
    assert!(close(c.left_zone_s, 1.62647, 1e-3), "{:?}", c.left_zone_s);
    // A trip 30 ms before that instant is inside the zone: fail.
    s.status = status_open_at(1.597);
    assert_eq!(one(&s, &rules(LVRT)).verdict, Verdict::Fail);
}

#[test]
fn envelope_left_zone_without_trip_passes_with_note() {
    // 0.3 pu for 1 s leaves the zone at 1.627 s (see above) and the unit
    // stays connected: pass, reason rode_through_beyond_zone, and no margin
    // (a margin would have no meaning, docs/rules.md "Reasons and margins").
    let mut s = Sig::new(dip(0.3, 1.0));
    s.status = status_open_at(99.0);
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.verdict, Verdict::Pass);
    assert_eq!(c.reason, Some(Reason::RodeThroughBeyondZone));
    assert!(
        c.detail.contains("left the ride-through zone"),
        "{}",
        c.detail
    );
    assert_eq!(c.margin, None);
    assert!(close(c.left_zone_s, 1.62647, 1e-3), "{:?}", c.left_zone_s);
}

#[test]
fn short_fault_is_decided_unless_its_depth_matters() {
    // Decision A.5. A 30 ms dip is less than two 20 ms cycles at phasor
    // level, so its true depth is unknown (anything from 0 pu to the
    // measured 0.2 pu).
    // (a) No trip: the unit rode through whatever the depth: pass, no_trip,
    //     margin null.
    let mut s = Sig::new(dip(0.2, 0.03));
    s.status = status_open_at(99.0);
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert_eq!(c.reason, Some(Reason::NoTrip));
    assert_eq!(c.margin, None);
    // (b) Trip at 1.05 s (τ = 0.05 s): the LVRT floor is 0 pu up to 0.15 s,
    //     so even a 0 pu fault stays inside (0 ≥ 0): fail for every depth.
    s.status = status_open_at(1.05);
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.verdict, Verdict::Fail, "{}", c.detail);
    assert_eq!(c.reason, Some(Reason::TripInsideZone));
    // (c) A floor of 0.1 pu for 0.15 s: as measured (0.2 pu) the trip at
    //     1.05 s is inside the zone (fail); a true depth below 0.1 pu would
    //     have left the zone at the start (permitted trip): undecidable.
    let floor = "  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0.1], [0.15, 0.1], [1.5, 0.85]] }\n";
    let c = one(&s, &rules(floor));
    assert_eq!(c.verdict, Verdict::Inconclusive, "{}", c.detail);
    assert_eq!(c.reason, Some(Reason::DepthUnresolved));
    assert_eq!((c.measured, c.margin), (None, None));
}

#[test]
fn envelope_without_status_or_current_is_inconclusive() {
    let mut s = Sig::new(dip(0.3, 0.3));
    s.currents = false;
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.verdict, Verdict::Inconclusive, "{}", c.detail);
}

#[test]
fn envelope_without_disturbance_is_not_applicable() {
    let s = Sig::new(|_| 1.0);
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.verdict, Verdict::NotApplicable);
    assert_eq!(c.disturbance, None);
    // The test is no evidence, and the outcome says so.
    let r = rules(LVRT);
    let out = engine::evaluate(&s.series(), &r, &detection_settings(&r, 50.0), None);
    assert!(
        out.notes.iter().any(|n| n.contains("no evidence")),
        "{:?}",
        out.notes
    );
}

#[test]
fn upper_envelope_and_forbidden_cessation() {
    // Upper envelope 1.3 pu for 0.1 s, then 1.2 pu to 1 s, then 1.1 pu.
    // A 1.25 pu swell leaves the zone at τ = 0.1 s.
    let upper = "  - { id: hv, type: envelope, bound: upper, points: [[0, 1.3], [0.1, 1.3], [0.1, 1.2], [1.0, 1.2], [1.0, 1.1]] }\n";
    let swell = |t: f64| if (1.0..1.2).contains(&t) { 1.25 } else { 1.0 };
    let mut s = Sig::new(swell);
    s.status = status_open_at(1.05);
    assert_eq!(
        one(&s, &rules(upper)).verdict,
        Verdict::Fail,
        "trip at τ = 0.05 s, inside"
    );
    s.status = status_open_at(1.15);
    assert_eq!(
        one(&s, &rules(upper)).verdict,
        Verdict::Pass,
        "trip at τ = 0.15 s, after leaving"
    );
    // Momentary cessation: current zero 1.05..1.10 s during a 0.3 pu dip
    // (inside the lower envelope), status closed throughout.
    let mut s = Sig::new(dip(0.3, 0.3));
    s.status = status_open_at(99.0);
    s.ip = Box::new(|t| if (1.05..1.10).contains(&t) { 0.0 } else { 0.8 });
    let allowed = one(&s, &rules(LVRT));
    assert_eq!(allowed.verdict, Verdict::Pass);
    assert!(
        allowed.detail.contains("momentary cessation"),
        "{}",
        allowed.detail
    );
    let forbidding = LVRT.replace(" }", ", momentary_cessation: forbidden }");
    assert_eq!(one(&s, &rules(&forbidding)).verdict, Verdict::Fail);
}

// ---------------------------------------------------------- duration table

const TABLE: &str = "  - { id: lv, type: duration_table, side: below, rows: [{ beyond_pu: 0.45, max_s: 0.15 }, { beyond_pu: 0.65, max_s: 0.30 }] }\n";

#[test]
fn table_inside_passes_with_time_margin() {
    // 0.5 pu for 0.25 s: beyond 0.65 pu for 0.249 s (first to last 1 ms
    // sample) against 0.30 s: margin 0.051 s; never below 0.45 pu.
    let mut s = Sig::new(dip(0.5, 0.25));
    s.status = status_open_at(99.0);
    let c = one(&s, &rules(TABLE));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert!(close(c.margin, 0.051, 1e-9), "{:?}", c.margin);
    assert_eq!(c.unit.name(), "s");
}

#[test]
fn table_trip_inside_fails_and_after_is_permitted() {
    let mut s = Sig::new(dip(0.5, 0.4));
    s.status = status_open_at(1.2); // r = 0.2 s < 0.3 s: inside
    assert_eq!(one(&s, &rules(TABLE)).verdict, Verdict::Fail);
    s.status = status_open_at(1.35); // zone left at r = 0.3 s (1.3 s)
    let c = one(&s, &rules(TABLE));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert!(close(c.left_zone_s, 1.3, 1e-9));
}

#[test]
fn table_cumulative_mode_adds_separate_excursions() {
    // Two 0.1 s excursions to 0.4 pu separated by 30 ms at 0.95 pu (too short
    // to end the disturbance). Continuous: each run lasts 0.099 s < 0.15 s.
    // Cumulative: 0.099 s + (time into the second run) reaches 0.15 s at
    // 1.13 + 0.051 = 1.181 s. A trip at 1.2 s is inside the zone in
    // continuous mode (fail) and after leaving it in cumulative mode (pass).
    let v = |t: f64| {
        if (1.0..1.1).contains(&t) || (1.13..1.23).contains(&t) {
            0.4
        } else if (1.1..1.13).contains(&t) {
            0.95
        } else {
            1.0
        }
    };
    let mut s = Sig::new(v);
    s.status = status_open_at(1.2);
    let row = "  - { id: lv, type: duration_table, side: below, mode: MODE, rows: [{ beyond_pu: 0.45, max_s: 0.15 }] }\n";
    let cont = one(&s, &rules(&row.replace("MODE", "continuous")));
    assert_eq!(cont.verdict, Verdict::Fail, "{}", cont.detail);
    let cum = one(&s, &rules(&row.replace("MODE", "cumulative")));
    assert_eq!(cum.verdict, Verdict::Pass, "{}", cum.detail);
    // Within one sample: run boundaries of the 1 ms grid are subject to rounding.
    assert!(
        close(cum.left_zone_s, 1.181, 1.5e-3),
        "{:?}",
        cum.left_zone_s
    );
}

// -------------------------------------------------------- reactive current

const IQ: &str = "  - { id: iq, type: reactive_current, gain: 2, dead_band_pu: 0.1, rise_time_s: 0.03, settling_time_s: 0.06, tolerance_pu: [-0.1, 0.2], limit_pu: 1.0 }\n";

/// First-order response from 0 to `fin` starting at 1.0 s with time
/// constant `tau`, back to 0 at the end of a fault of length `len`.
fn first_order(fin: f64, tau: f64, len: f64) -> Box<dyn Fn(f64) -> f64> {
    Box::new(move |t| {
        if (1.0..1.0 + len).contains(&t) {
            fin * (1.0 - (-(t - 1.0) / tau).exp())
        } else {
            0.0
        }
    })
}

#[test]
fn reactive_current_pass_rise_time_is_tau_ln10() {
    // ΔV = −0.5: required k·(|ΔV| − db) = 2·0.4 = 0.8 pu. A first-order
    // response to 0.8 pu reaches 90 % at τ·ln 10 (Ogata §5-2: y = 1 − e^(−t/τ)).
    let tau = 0.005;
    let mut s = Sig::new(dip(0.5, 0.3));
    s.iq = first_order(0.8, tau, 0.3);
    let c = one(&s, &rules(IQ));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert!(close(c.required_pu, 0.8, 1e-9));
    assert!(close(c.measured, tau * 10f64.ln(), DT), "{:?}", c.measured);
    // Band [0.7, 1.0] entered at 87.5 %: τ·ln 8.
    assert!(
        close(c.settling_time_s, tau * 8f64.ln(), DT),
        "{:?}",
        c.settling_time_s
    );
    assert!(close(c.measured_gain, 2.0, 1e-3), "{:?}", c.measured_gain);
}

#[test]
fn reactive_current_slow_weak_or_overshooting_fails() {
    // τ = 20 ms: 90 % after τ·ln 10 = 46.05 ms > 30 ms.
    let mut s = Sig::new(dip(0.5, 0.3));
    s.iq = first_order(0.8, 0.02, 0.3);
    let c = one(&s, &rules(IQ));
    assert_eq!(c.verdict, Verdict::Fail);
    assert!(close(c.measured, 0.02 * 10f64.ln(), DT));
    // Final 0.6 pu < 90 % of 0.8 pu: never reached.
    s.iq = first_order(0.6, 0.005, 0.3);
    let c = one(&s, &rules(IQ));
    assert_eq!(c.verdict, Verdict::Fail);
    assert_eq!(c.measured, None);
    // Final 1.05 pu: fast, but above the band's upper edge 0.8 + 0.2.
    s.iq = first_order(1.05, 0.005, 0.3);
    let c = one(&s, &rules(IQ));
    assert_eq!(c.verdict, Verdict::Fail, "{}", c.detail);
    assert_eq!(c.settling_time_s, None);
}

#[test]
fn reactive_current_inside_dead_band_is_not_applicable() {
    // Disturbance threshold 0.96 pu; dip to 0.95 pu: |ΔV| = 0.05 < db 0.1.
    let r = rules_with(IQ, "disturbance: { below_pu: 0.96 }\n");
    let s = Sig::new(dip(0.95, 0.3));
    assert_eq!(one(&s, &r).verdict, Verdict::NotApplicable);
}

#[test]
fn reactive_current_short_faults() {
    // 25 ms fault < 30 ms rise time: inconclusive.
    let mut s = Sig::new(dip(0.5, 0.025));
    s.iq = first_order(0.8, 0.005, 0.025);
    assert_eq!(one(&s, &rules(IQ)).verdict, Verdict::Inconclusive);
    // 50 ms fault: longer than the rise time, shorter than settling time +
    // one cycle: judged on the rise time alone.
    let mut s = Sig::new(dip(0.5, 0.05));
    s.iq = first_order(0.8, 0.005, 0.05);
    let c = one(&s, &rules(IQ));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert!(c.detail.contains("too short for the settling time"));
}

#[test]
fn reactive_current_limit_applies_to_the_total() {
    // Pre-fault Iq0 = 0.3; ΔV = −0.5 asks 0.8, but Iq0 + 0.8 = 1.1 > 1.0:
    // the required extra current is 1.0 − 0.3 = 0.7 (docs/rules.md).
    let mut s = Sig::new(dip(0.5, 0.3));
    let resp = first_order(0.7, 0.005, 0.3);
    s.iq = Box::new(move |t| 0.3 + resp(t));
    s.ip = Box::new(|_| 0.6);
    let c = one(&s, &rules(IQ));
    assert!(close(c.required_pu, 0.7, 1e-9), "{:?}", c.required_pu);
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
}

#[test]
fn reactive_current_full_dead_band_and_instantaneous_follow() {
    // Full mode: k·|ΔV| = 2·0.3 = 0.6 for ΔV = −0.3.
    let full = IQ.replace("limit_pu: 1.0", "limit_pu: 1.0, dead_band_mode: full");
    let mut s = Sig::new(dip(0.7, 0.3));
    s.iq = first_order(0.6, 0.005, 0.3);
    let c = one(&s, &rules(&full));
    assert!(close(c.required_pu, 0.6, 1e-9));
    assert_eq!(c.verdict, Verdict::Pass);
    // A two-step fault (docs/rules.md, `reactive_current` segments): 0.7 pu for 150 ms, then 0.3 pu for
    // 150 ms. Offset dead band: 2·(0.3 − 0.1) = 0.4 pu, then
    // min(2·(0.7 − 0.1), 1.0) = 1.0 pu (limited). The unit follows each
    // level with τ = 5 ms.
    let v = |t: f64| {
        if (1.0..1.15).contains(&t) {
            0.7
        } else if (1.15..1.3).contains(&t) {
            0.3
        } else {
            1.0
        }
    };
    let follower = |low: f64, high: f64| -> Box<dyn Fn(f64) -> f64> {
        let a = first_order(low, 0.005, 0.3);
        Box::new(move |t| {
            if (1.15..1.3).contains(&t) {
                low + (high - low) * (1.0 - (-(t - 1.15) / 0.005).exp())
            } else {
                a(t)
            }
        })
    };
    let mut s = Sig::new(v);
    s.iq = follower(0.4, 1.0);
    // Settled requirement, by segments: the 0.4 pu step (> 0.05 pu) holds
    // for more than the 60 ms settling time, so each segment has its own
    // requirement: 0.4 then 1.0 pu. The second segment starts at 1.15 s;
    // its band [0.9, 1.2] is entered when 0.4 + 0.6·(1 − e^(−t/τ)) = 0.9,
    // t = τ·ln(0.6/0.1) = τ·ln 6 = 8.96 ms after 1.15 s.
    let c = one(&s, &rules(IQ));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert_eq!(c.segments.len(), 2, "{:?}", c.segments);
    assert!(close(Some(c.segments[0].required_pu), 0.4, 1e-9));
    assert!(close(Some(c.segments[1].required_pu), 1.0, 1e-9));
    assert!(close(Some(c.segments[1].start_s), 1.15, 1e-9));
    assert!(
        close(c.segments[1].settling_time_s, 0.005 * 6f64.ln(), DT),
        "{:?}",
        c.segments[1].settling_time_s
    );
    assert_eq!(c.limited, Some(true));
    // Following the voltage: the one-cycle average of the requirement moves
    // by 0.6 pu, more than the band's width 0.3 pu, so the settling clock
    // restarts at the step and the unit that follows passes.
    let inst = IQ.replace("limit_pu: 1.0", "limit_pu: 1.0, follow: instantaneous");
    let c = one(&s, &rules(&inst));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    // The same with a step of the requirement smaller than the band width
    // (0.5 → 0.3 pu: 0.8 → 1.0 pu, 0.2 < 0.3): the clock does not restart,
    // and a unit that lags the step by τ·ln 2 = 3.5 ms below the band's
    // lower edge 0.9 pu is outside the band 150 ms after the start: fail.
    let v2 = |t: f64| {
        if (1.0..1.15).contains(&t) {
            0.5
        } else if (1.15..1.3).contains(&t) {
            0.3
        } else {
            1.0
        }
    };
    let mut s = Sig::new(v2);
    s.iq = follower(0.8, 1.0);
    let c = one(&s, &rules(&inst));
    assert_eq!(c.verdict, Verdict::Fail, "{}", c.detail);
    assert_eq!(c.reason, Some(Reason::SettledTooLate));
    assert!(
        close(c.settling_time_s, 0.15 + 0.005 * 2f64.ln(), DT),
        "{:?}",
        c.settling_time_s
    );
}

#[test]
fn negative_sequence_requirement_is_inductive() {
    // V2 from 0 to 0.2 pu: ΔV2 = +0.2, required ΔIq2 = −2·(0.2 − 0.1) = −0.2
    // (inductive, docs/method.md, "Sign conventions"). Pre-fault Iq2 has no reference (NaN).
    let neg = IQ.replace("gain: 2", "sequence: negative, gain: 2");
    let mut s = Sig::new(dip(0.7, 0.3));
    let resp = first_order(-0.2, 0.005, 0.3);
    s.v2 = Some((
        Box::new(|t| if (1.0..1.3).contains(&t) { 0.2 } else { 0.0 }),
        Box::new(move |t| {
            if (1.0..1.3).contains(&t) {
                resp(t)
            } else {
                f64::NAN
            }
        }),
    ));
    let c = one(&s, &rules(&neg));
    assert!(close(c.required_pu, -0.2, 1e-9), "{:?}", c.required_pu);
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    // Capacitive negative-sequence current of the same size fails.
    let resp = first_order(0.2, 0.005, 0.3);
    s.v2 = Some((
        Box::new(|t| if (1.0..1.3).contains(&t) { 0.2 } else { 0.0 }),
        Box::new(move |t| {
            if (1.0..1.3).contains(&t) {
                resp(t)
            } else {
                f64::NAN
            }
        }),
    ));
    assert_eq!(one(&s, &rules(&neg)).verdict, Verdict::Fail);
}

// ------------------------------------------------------- active power

const APR: &str = "  - { id: p, type: active_power_recovery, fraction: 0.9, within_s: 1.0 }\n";

/// Active current 0.8 pu, 0 during the fault (1.0–1.3 s), then a ramp at
/// `rate` pu/s; P = V·ip with V = 1 after the fault, so P reaches
/// 0.9·0.8 = 0.72 pu at 0.72/rate s after the end (1.3 s).
fn ramp(rate: f64) -> Box<dyn Fn(f64) -> f64> {
    Box::new(move |t| {
        if t < 1.0 {
            0.8
        } else if t < 1.3 {
            0.0
        } else {
            (rate * (t - 1.3)).min(0.8)
        }
    })
}

#[test]
fn active_power_recovery_paths() {
    let mut s = Sig::new(dip(0.2, 0.3));
    s.status = status_open_at(99.0);
    s.iq = first_order(0.5, 0.005, 0.3); // keeps I1 above the cessation threshold
    s.ip = ramp(2.0);
    let c = one(&s, &rules(APR));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert!(close(c.measured, 0.36, DT), "{:?}", c.measured);
    s.ip = ramp(0.5); // 1.44 s > 1.0 s
    let c = one(&s, &rules(APR));
    assert_eq!(c.verdict, Verdict::Fail);
    assert!(close(c.measured, 1.44, DT));
    // Recording ends 0.5 s after the fault: not yet recovered, limit not reached.
    s.dur = 1.8;
    assert_eq!(one(&s, &rules(APR)).verdict, Verdict::Inconclusive);
    s.dur = 3.0;
    // Tripped: fail.
    s.ip = ramp(2.0);
    s.status = status_open_at(1.4);
    assert_eq!(one(&s, &rules(APR)).verdict, Verdict::Fail);
    // Pre-fault loading 0.05 pu < 0.1 pu: not applicable.
    s.status = status_open_at(99.0);
    s.ip = Box::new(|_| 0.05);
    assert_eq!(one(&s, &rules(APR)).verdict, Verdict::NotApplicable);
}

#[test]
fn recovery_after_a_permitted_trip_is_not_required() {
    // 0.3 pu for 1 s, trip at 1.8 s after leaving the zone (see the envelope test).
    let mut s = Sig::new(dip(0.3, 1.0));
    s.status = status_open_at(1.8);
    let c = run(&s, &rules(&format!("{LVRT}{APR}")));
    assert_eq!(c[0].verdict, Verdict::Pass);
    assert_eq!(c[1].verdict, Verdict::NotApplicable, "{}", c[1].detail);
    // Inside the zone the same trip fails both.
    let mut s = Sig::new(dip(0.3, 0.3));
    s.status = status_open_at(1.2);
    let c = run(&s, &rules(&format!("{LVRT}{APR}")));
    assert_eq!((c[0].verdict, c[1].verdict), (Verdict::Fail, Verdict::Fail));
}

#[test]
fn each_disturbance_is_judged_on_its_own() {
    // Two dips: 0.3 pu at 1.0 s (inside) and 0.3 pu for 1 s at 3.0 s
    // (leaves the zone); trip at 3.8 s is permitted for the second only.
    let v = |t: f64| {
        if (1.0..1.3).contains(&t) || (3.0..4.0).contains(&t) {
            0.3
        } else {
            1.0
        }
    };
    let mut s = Sig::new(v);
    s.dur = 5.0;
    s.status = status_open_at(3.8);
    let c = run(&s, &rules(LVRT));
    assert_eq!(c.len(), 2);
    assert_eq!((c[0].disturbance, c[0].verdict), (Some(0), Verdict::Pass));
    assert_eq!((c[1].disturbance, c[1].verdict), (Some(1), Verdict::Pass));
    assert_eq!(c[1].permitted_trip, Some(true));
}

// ------------------------------------------------ connection

#[test]
fn a_trip_without_any_disturbance_fails_the_connection_check() {
    // A pure phase jump leaves |V| at 1.0 pu (no disturbance); the unit
    // trips at 1.1 s. Every rule check is not applicable, but the unit left
    // the grid while the voltage was inside the normal band: fail.
    let mut s = Sig::new(|_| 1.0);
    s.status = status_open_at(1.1);
    let r = rules(LVRT);
    let c = connection(&s, &r);
    assert_eq!(c.verdict, Verdict::Fail, "{}", c.detail);
    assert_eq!(c.reason, Some(Reason::TripOutsideDisturbance));
    assert!(close(c.at_s, 1.1, 1e-9));
    assert!(close(c.measured, 1.0, 1e-12), "voltage at the trip");
    let det = detection_settings(&r, 50.0);
    assert_eq!(
        engine::evaluate(&s.series(), &r, &det, None).verdict,
        Verdict::Fail
    );
    // Connected throughout: pass.
    s.status = status_open_at(99.0);
    let c = connection(&s, &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::StayedConnected))
    );
    // Neither status nor current: a trip cannot be seen.
    s.status = None;
    s.currents = false;
    let c = connection(&s, &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Inconclusive, Some(Reason::TripNotVisible))
    );
}

#[test]
fn connection_follows_the_zone_checks_during_a_disturbance() {
    // A trip the zone check permits (0.3 pu for 1 s, trip at 1.8 s after
    // leaving the zone at 1.627 s) passes; one inside the zone fails.
    let mut s = Sig::new(dip(0.3, 1.0));
    s.status = status_open_at(1.8);
    let c = connection(&s, &rules(LVRT));
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::PermittedTrip))
    );
    s.status = status_open_at(1.2);
    let c = connection(&s, &rules(LVRT));
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Fail, Some(Reason::TripInsideZone))
    );
    // A trip during a swell that no zone check of the rule set judges
    // (only an undervoltage envelope): the data cannot decide.
    let mut s = Sig::new(|t| if (1.0..1.3).contains(&t) { 1.2 } else { 1.0 });
    s.status = status_open_at(1.1);
    let c = connection(&s, &rules(LVRT));
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Inconclusive, Some(Reason::TripNotJudged))
    );
    // After the disturbance the voltage is normal again: a trip 1 s after
    // the swell ended is outside every disturbance the rule set judges.
    s.status = status_open_at(2.5);
    let c = connection(&s, &rules(LVRT));
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Fail, Some(Reason::TripOutsideDisturbance))
    );
    // Momentary cessation while the voltage is normal, with a rule that
    // forbids cessation: fail; allowed: pass.
    let mut s = Sig::new(|_| 1.0);
    s.status = status_open_at(99.0);
    s.ip = Box::new(|t| if (1.5..1.6).contains(&t) { 0.0 } else { 0.8 });
    let forbidding = LVRT.replace(" }", ", momentary_cessation: forbidden }");
    let c = connection(&s, &rules(&forbidding));
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Fail, Some(Reason::CessationOutsideDisturbance))
    );
    assert_eq!(connection(&s, &rules(LVRT)).verdict, Verdict::Pass);
}

#[test]
fn no_analysed_samples_never_passes() {
    // Decision A.3: an empty series (shorter than one analysis window).
    let s = Series::from_columns(Vec::new(), vec![(Quantity::V1, Vec::new())]).unwrap();
    let r = rules(LVRT);
    let out = engine::evaluate(&s, &r, &detection_settings(&r, 50.0), None);
    assert_eq!(out.verdict, Verdict::Inconclusive);
    assert!(out
        .checks
        .iter()
        .all(|c| c.verdict == Verdict::Inconclusive && c.reason == Some(Reason::InsufficientData)));
}

#[test]
fn phase_to_neutral_rules_need_the_zero_sequence() {
    // Decision A.4: phase voltages derived from phase-to-phase recordings
    // assume V0 = 0, so a min-phase-to-neutral rule cannot judge them: the
    // series has Va..Vc but no V0 (what the analysis gives for such data).
    let n = 3000;
    let t: Vec<f64> = (0..n).map(|k| k as f64 * DT).collect();
    let v: Vec<f64> = t
        .iter()
        .map(|x| if (1.0..1.3).contains(x) { 0.5 } else { 1.0 })
        .collect();
    let cols = [Quantity::V1, Quantity::Va, Quantity::Vb, Quantity::Vc]
        .into_iter()
        .map(|q| (q, v.clone()))
        .collect();
    let mut cols: Vec<(Quantity, Vec<f64>)> = cols;
    cols.push((Quantity::Status, vec![1.0; n]));
    let s = Series::from_columns(t, cols).unwrap();
    let r = rules(LVRT);
    let mut r2 = r.clone();
    r2.applicable_voltage = holdfast::analysis::events::ApplicableVoltage::MinPhaseToNeutral;
    let out = engine::evaluate(&s, &r2, &detection_settings(&r2, 50.0), None);
    let lvrt = out.checks.iter().find(|c| c.id == "lvrt").unwrap();
    assert_eq!(lvrt.verdict, Verdict::Inconclusive);
    assert_eq!(lvrt.reason, Some(Reason::VoltageUnobservable));
    // The positive sequence is observable from the same data.
    let out = engine::evaluate(&s, &r, &detection_settings(&r, 50.0), None);
    assert_ne!(
        out.checks.iter().find(|c| c.id == "lvrt").unwrap().verdict,
        Verdict::Inconclusive
    );
}

// ----------------------------------------- margins and reasons (B.6, B.7)

#[test]
fn zone_margins_agree_with_the_verdict() {
    // Trip inside the zone: 0.3 pu held, trip at 1.2 s (τ = 0.2 s,
    // C = 0.85·0.05/1.35 = 0.0315 pu): headroom 0.3 − 0.0315 = 0.2685 pu at
    // the trip instant, so the margin is −0.2685 pu.
    let mut s = Sig::new(dip(0.3, 0.3));
    s.status = status_open_at(1.2);
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.reason, Some(Reason::TripInsideZone));
    assert!(
        close(c.margin, -(0.3 - 0.85 * 0.05 / 1.35), 1e-9),
        "{:?}",
        c.margin
    );
    assert!(close(c.at_s, 1.2, 1e-9));
    // Permitted trip: 1 s dip leaves the zone at 1.627 s; trip at 1.8 s:
    // margin 0.173 s in seconds.
    let mut s = Sig::new(dip(0.3, 1.0));
    s.status = status_open_at(1.8);
    let c = one(&s, &rules(LVRT));
    assert_eq!(
        (c.reason, c.unit.name()),
        (Some(Reason::PermittedTrip), "s")
    );
    assert!(close(c.margin, 1.8 - 1.627, 1e-9), "{:?}", c.margin);
    // Duration table, trip inside: 0.5 pu from 1.0 s, trip at 1.2 s: below
    // 0.65 pu for 0.2 s (samples 1.000..1.200) against 0.30 s: −0.1 s.
    let mut s = Sig::new(dip(0.5, 0.4));
    s.status = status_open_at(1.2);
    let c = one(&s, &rules(TABLE));
    assert_eq!(c.reason, Some(Reason::TripInsideZone));
    assert!(close(c.margin, -(0.30 - 0.2), 1e-9), "{:?}", c.margin);
    // Inconclusive rows carry neither measured value nor margin.
    let mut s = Sig::new(dip(0.3, 0.3));
    s.currents = false;
    let c = one(&s, &rules(LVRT));
    assert_eq!(c.verdict, Verdict::Inconclusive);
    assert_eq!((c.measured, c.margin), (None, None));
}

// ---------------------------------------- several disturbances (C.9–C.11)

#[test]
fn two_faults_share_references_and_bound_each_search() {
    // Faults at 1.0–1.2 s and 1.5–1.7 s (to 0.3 pu). Active current 0.8 pu
    // before, 0 in each fault, ramping back at 2 pu/s after each. The second
    // fault's pre-fault window (1.38–1.48 s) lies inside the first's
    // recovery allowance (1.2 + 1.0 s), so it inherits the first's
    // references: P0 = 0.8 pu, not the 0.36–0.56 pu of the ramp.
    let v = |t: f64| {
        if (1.0..1.2).contains(&t) || (1.5..1.7).contains(&t) {
            0.3
        } else {
            1.0
        }
    };
    let ip = |t: f64| {
        if t < 1.0 {
            0.8
        } else if t < 1.2 {
            0.0
        } else if t < 1.5 {
            (2.0 * (t - 1.2)).min(0.8)
        } else if t < 1.7 {
            0.0
        } else {
            (2.0 * (t - 1.7)).min(0.8)
        }
    };
    let mut s = Sig::new(v);
    s.ip = Box::new(ip);
    s.iq = Box::new(|t| {
        if (1.0..1.2).contains(&t) || (1.5..1.7).contains(&t) {
            0.5
        } else {
            0.0
        }
    });
    s.status = status_open_at(99.0);
    let r = rules(APR);
    let out = engine::evaluate(&s.series(), &r, &detection_settings(&r, 50.0), None);
    assert_eq!(out.disturbances.len(), 2);
    assert_eq!(out.disturbances[1].prefault_from, Some(0));
    let p0 = out.disturbances[1].prefault.unwrap().p_pu.unwrap();
    assert!((p0 - 0.8).abs() < 1e-9, "{p0}");
    // First fault: target 0.72 pu, which the ramp reaches at 1.2 + 0.36 s
    // = 1.56 s, after the second fault started at 1.5 s: the search ends
    // there and the 1 s deadline lies beyond it: inconclusive.
    let c: Vec<_> = out.checks.iter().filter(|c| c.id == "p").collect();
    assert_eq!(
        (c[0].verdict, c[0].reason),
        (Verdict::Inconclusive, Some(Reason::NextDisturbance))
    );
    // Second fault: reached at 1.7 + 0.36 = 2.06 s: 0.36 s.
    assert_eq!(c[1].verdict, Verdict::Pass);
    assert!(close(c[1].measured, 0.36, DT), "{:?}", c[1].measured);
}

#[test]
fn recovery_after_a_trip_is_excused_only_when_every_zone_check_permits_it() {
    // 0.3 pu for 1 s; trip at 1.8 s. The envelope was left at 1.627 s
    // (permitted); a table "below 0.45 pu for up to 0.9 s" is only left at
    // 1.9 s, so for it the trip is inside the zone: recovery is required
    // and fails (docs/rules.md, `active_power_recovery`).
    let table = "  - { id: lv, type: duration_table, side: below, rows: [{ beyond_pu: 0.45, max_s: 0.9 }] }\n";
    let mut s = Sig::new(dip(0.3, 1.0));
    s.status = status_open_at(1.8);
    let c = run(&s, &rules(&format!("{LVRT}{table}{APR}")));
    assert_eq!(c[0].reason, Some(Reason::PermittedTrip));
    assert_eq!(c[1].reason, Some(Reason::TripInsideZone));
    assert_eq!(
        (c[2].verdict, c[2].reason),
        (Verdict::Fail, Some(Reason::TrippedBeforeRecovery))
    );
    // With only the envelope, every zone check permits it: not applicable.
    let c = run(&s, &rules(&format!("{LVRT}{APR}")));
    assert_eq!(
        (c[1].verdict, c[1].reason),
        (Verdict::NotApplicable, Some(Reason::TripPermitted))
    );
}

#[test]
fn recovery_hold_time() {
    // The ramp at 2 pu/s from the end at 1.3 s reaches 0.72 pu at 1.66 s; P
    // drops to 0.5 pu for 1.70–1.75 s, then holds. With hold_s 0.1 the first
    // run (1.66–1.70 s) is too short, so recovery counts from 1.75 s:
    // 0.45 s after the end; without a hold time it is 0.36 s.
    let mut s = Sig::new(dip(0.2, 0.3));
    s.status = status_open_at(99.0);
    s.iq = first_order(0.5, 0.005, 0.3);
    let base = ramp(2.0);
    s.ip = Box::new(move |t| {
        if (1.70..1.75).contains(&t) {
            0.5
        } else {
            base(t)
        }
    });
    let held = APR.replace("within_s: 1.0", "within_s: 1.0, hold_s: 0.1");
    let c = one(&s, &rules(&held));
    assert_eq!(c.verdict, Verdict::Pass, "{}", c.detail);
    assert!(close(c.measured, 0.45, DT), "{:?}", c.measured);
    let c = one(&s, &rules(APR));
    assert!(close(c.measured, 0.36, DT), "{:?}", c.measured);
}

// ------------------------------------------------ reactive current (D.13–15)

#[test]
fn negative_requirement_band_is_mirrored() {
    // Required ΔIq2 = −0.2 pu (see above), tolerance [−0.1, +0.2]: the band
    // is [r + s·lo, r + s·hi] with s = −1: from −0.1 to −0.4 pu. A unit
    // settling at −0.38 pu (0.18 pu more inductive current than required)
    // is inside; at −0.42 pu it is outside.
    let neg = IQ.replace("gain: 2", "sequence: negative, gain: 2");
    for (fin, ok) in [(-0.38, true), (-0.42, false)] {
        let mut s = Sig::new(dip(0.7, 0.3));
        let resp = first_order(fin, 0.005, 0.3);
        s.v2 = Some((
            Box::new(|t| if (1.0..1.3).contains(&t) { 0.2 } else { 0.0 }),
            Box::new(move |t| {
                if (1.0..1.3).contains(&t) {
                    resp(t)
                } else {
                    0.0
                }
            }),
        ));
        let c = one(&s, &rules(&neg));
        assert_eq!(c.verdict == Verdict::Pass, ok, "{fin}: {}", c.detail);
    }
}

#[test]
fn rise_time_from_the_inception() {
    // The waveform deviation marks the inception 10 ms before the phasor
    // start at 1.0 s (as a one-cycle window shows a shallow step late).
    // time_from: inception measures the rise from 0.99 s: τ·ln 10 + 10 ms.
    let tau = 0.005;
    let mut s = Sig::new(dip(0.5, 0.3));
    s.iq = first_order(0.8, tau, 0.3);
    s.dev = Some(Box::new(
        |t| if (0.99..1.01).contains(&t) { 0.5 } else { 0.0 },
    ));
    s.status = status_open_at(99.0);
    let from = IQ.replace("limit_pu: 1.0", "limit_pu: 1.0, time_from: inception");
    let c = one(&s, &rules(&from));
    assert!(close(c.time_from_s, 0.99, 1e-9), "{:?}", c.time_from_s);
    assert!(
        close(c.measured, tau * 10f64.ln() + 0.01, DT),
        "{:?}",
        c.measured
    );
    let c = one(&s, &rules(IQ));
    assert!(close(c.measured, tau * 10f64.ln(), DT));
}

#[test]
fn short_fault_requirement_comes_from_after_the_rise_time() {
    // A 55 ms fault: 0.7 pu for 25 ms, then 0.5 pu. Shorter than the 60 ms
    // settling time, so only the rise time is judged, with the requirement
    // from the mean deviation between the rise-time limit (1.03 s) and one
    // cycle before the end (1.035 s), where V = 0.5 pu: 2·(0.5 − 0.1) = 0.8.
    let v = |t: f64| {
        if (1.0..1.025).contains(&t) {
            0.7
        } else if (1.025..1.055).contains(&t) {
            0.5
        } else {
            1.0
        }
    };
    let mut s = Sig::new(v);
    s.iq = first_order(0.8, 0.002, 0.055);
    let c = one(&s, &rules(IQ));
    assert!(close(c.required_pu, 0.8, 1e-9), "{:?}", c.required_pu);
    assert!(
        c.detail.contains("too short for the settling time"),
        "{}",
        c.detail
    );
}

#[test]
fn measured_gain_of_an_exact_unit_is_the_required_gain() {
    // Decision B.8: ΔIq = k·(|ΔV| − db) exactly (no lag): the mean of
    // ΔIq/(|ΔV| − db) over the settled part is k = 2; a limited requirement
    // says so instead.
    let mut s = Sig::new(dip(0.6, 0.3));
    s.iq = Box::new(|t| {
        if (1.0..1.3).contains(&t) {
            2.0 * (0.4 - 0.1)
        } else {
            0.0
        }
    });
    let c = one(&s, &rules(IQ));
    assert!(close(c.measured_gain, 2.0, 1e-9), "{:?}", c.measured_gain);
    assert_eq!(c.limited, Some(false));
    let mut s = Sig::new(dip(0.2, 0.3));
    s.iq = Box::new(|t| if (1.0..1.3).contains(&t) { 1.0 } else { 0.0 });
    let c = one(&s, &rules(IQ));
    assert_eq!(c.limited, Some(true), "2·0.7 = 1.4 > 1.0");
    assert_eq!(c.verdict, Verdict::Pass);
}

// ------------------------------------------------ test realisation (D.16)

#[test]
fn realisation_uses_the_extreme_and_inception_to_clearance() {
    use holdfast::rules::realisation::Expect;
    // Dip to 0.3 pu from 1.0 to 1.25 s at phasor level; the waveform
    // deviation |x[n] − x[n−N]| is non-zero for one cycle (20 ms) after the
    // inception at 0.995 s and after the clearance at 1.245 s: 0.25 s.
    // Planned 0.25 s ± max(20 ms, 10 %) = ± 25 ms; residual 0.3 ± 0.05.
    let mut s = Sig::new(dip(0.3, 0.25));
    s.dev = Some(Box::new(|t| {
        if (0.9945..1.0145).contains(&t) || (1.2445..1.2645).contains(&t) {
            0.5
        } else {
            0.0
        }
    }));
    s.status = status_open_at(99.0);
    let r = rules(LVRT);
    let e: Expect = serde_saphyr::from_str("{ residual_pu: 0.3, duration_s: 0.25 }").unwrap();
    let out = engine::evaluate(&s.series(), &r, &detection_settings(&r, 50.0), Some(&e));
    let d = &out.disturbances[0];
    assert!(close(d.inception_s, 0.995, 1e-9), "{:?}", d.inception_s);
    assert!(close(d.clearance_s, 1.245, 1e-9), "{:?}", d.clearance_s);
    let c = &out.checks[0];
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::AsPlanned)),
        "{}",
        c.detail
    );
    assert!(c.detail.contains("inception to clearance"), "{}", c.detail);
    assert!(close(Some(e.duration_tolerance(0.25)), 0.025, 1e-12));
    assert!(close(Some(e.duration_tolerance(0.1)), 0.02, 1e-12));
    // Planned 0.3 s: 0.25 differs by 0.05 > 0.03 (10 %): not as planned.
    let e: Expect = serde_saphyr::from_str("{ duration_s: 0.3 }").unwrap();
    let out = engine::evaluate(&s.series(), &r, &detection_settings(&r, 50.0), Some(&e));
    assert_eq!(out.checks[0].reason, Some(Reason::NotAsPlanned));
}

// ------------------------------------------------ phase jumps, sequences, frequency
//
// The angle series is the positive-sequence angle against the 50 Hz
// reference (radians): a phase jump of J degrees at t0 is a step of J·π/180;
// a frequency f(t) gives the angle 2π·∫(f − 50) dt.

/// A step of `deg` degrees at `at` (and back at `back`, if given).
fn jump(deg: f64, at: f64, back: Option<f64>) -> Option<Signal> {
    let j = deg.to_radians();
    Some(Box::new(move |t| {
        if t >= at && back.is_none_or(|b| t < b) {
            j
        } else {
            0.0
        }
    }))
}

const JUMP: &str = "  - { id: pj, type: phase_jump, ride_through_deg: 25, trip_window_s: 0.5 }\n";

#[test]
fn phase_jump_paths() {
    let r = rules(JUMP);
    let flat = |a: Option<Signal>| {
        let mut s = Sig::new(|_| 1.0);
        s.angle = a;
        s.status = Some(Box::new(|_| 1.0));
        s
    };
    // No angle in the recording (RMS-level values): inconclusive.
    let c = one(&Sig::new(|_| 1.0), &r);
    assert_eq!(c.reason, Some(Reason::MissingChannel), "{c:?}");
    assert_eq!(c.verdict, Verdict::Inconclusive);
    // A constant angle: no jump, not applicable.
    let c = one(&flat(Some(Box::new(|_| 0.3))), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::NotApplicable, Some(Reason::NotTriggered))
    );
    // 20° at 1.0 s that stays, no trip: pass, margin 25 − 20 = 5°.
    let c = one(&flat(jump(20.0, 1.0, None)), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::NoTrip)),
        "{c:?}"
    );
    assert!(
        close(c.measured, 20.0, 0.01) && close(c.margin, 5.0, 0.01),
        "{c:?}"
    );
    assert!(close(c.at_s, 1.0, 0.001), "{c:?}");
    // 20° and a trip 0.2 s later (inside the 0.5 s window): fail; the
    // connection check follows it.
    let mut s = flat(jump(20.0, 1.0, None));
    s.status = status_open_at(1.2);
    let all = run_all(&s, &r);
    let c = all.iter().find(|c| c.id == "pj").unwrap();
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Fail, Some(Reason::TripInsideZone)),
        "{c:?}"
    );
    assert!(close(c.margin, -5.0, 0.01), "{c:?}");
    let conn = all.iter().find(|c| c.id == "connection").unwrap();
    assert_eq!(
        (conn.verdict, conn.reason),
        (Verdict::Fail, Some(Reason::TripInsideZone)),
        "{conn:?}"
    );
    // 40° (beyond 25°) and a trip: permitted, margin 40 − 25 = 15°; the
    // connection check passes the trip.
    let mut s = flat(jump(40.0, 1.0, None));
    s.status = status_open_at(1.2);
    let all = run_all(&s, &r);
    let c = all.iter().find(|c| c.id == "pj").unwrap();
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::PermittedTrip)),
        "{c:?}"
    );
    assert!(close(c.margin, 15.0, 0.01), "{c:?}");
    let conn = all.iter().find(|c| c.id == "connection").unwrap();
    assert_eq!(
        (conn.verdict, conn.reason),
        (Verdict::Pass, Some(Reason::PermittedTrip)),
        "{conn:?}"
    );
    // 40° and no trip: rode through beyond the limit.
    let c = one(&flat(jump(40.0, 1.0, None)), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::RodeThroughBeyondZone))
    );
    // A trip a second after the window: not the jump's; the connection
    // check fails it as a trip with no event under way.
    let mut s = flat(jump(20.0, 1.0, None));
    s.status = status_open_at(2.0);
    let all = run_all(&s, &r);
    let c = all.iter().find(|c| c.id == "pj").unwrap();
    assert_eq!(c.reason, Some(Reason::NoTrip), "{c:?}");
    let conn = all.iter().find(|c| c.id == "connection").unwrap();
    assert_eq!(
        conn.reason,
        Some(Reason::TripOutsideDisturbance),
        "{conn:?}"
    );
    // A jump 0.2 s before the recording ends (3 s): the 0.5 s window is not
    // covered, inconclusive.
    let c = one(&flat(jump(20.0, 2.8, None)), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Inconclusive, Some(Reason::InsufficientData))
    );
    // Tripped before the jump.
    let mut s = flat(jump(20.0, 1.0, None));
    s.status = status_open_at(0.5);
    let c = one(&s, &r);
    assert_eq!(c.reason, Some(Reason::AlreadyTripped), "{c:?}");
    // Neither status nor current: no trip can be seen.
    let mut s = flat(jump(20.0, 1.0, None));
    s.status = None;
    s.currents = false;
    let c = one(&s, &r);
    assert_eq!(c.reason, Some(Reason::TripNotVisible), "{c:?}");
    // +24° and back 45 ms later: the angle never settles for two cycles
    // before the step back, and 24° is within 5° of the limit: its size
    // cannot decide.
    let all = run(&flat(jump(24.0, 1.0, Some(1.045))), &r);
    assert_eq!(all[0].reason, Some(Reason::DepthUnresolved), "{all:?}");
    // A step and the step back 0.3 s later: two jumps, +20° and −20°, the
    // second measured against the first one's reference moved by it.
    let all = run(&flat(jump(20.0, 1.0, Some(1.3))), &r);
    assert_eq!(all.len(), 2, "{all:?}");
    assert!(
        close(all[1].measured, 20.0, 0.01) && all[1].event == Some(1),
        "{all:?}"
    );
}

const SEQ: &str = "  - { id: seq, type: consecutive_disturbances, count: 2, window_s: 5 }\n";

/// Dips to 0.3 pu for 0.2 s from each start.
fn dips(starts: &'static [f64]) -> Sig {
    let mut s = Sig::new(move |t| {
        if starts.iter().any(|a| (*a..*a + 0.2).contains(&t)) {
            0.3
        } else {
            1.0
        }
    });
    s.dur = 8.0;
    s.status = Some(Box::new(|_| 1.0));
    s
}

#[test]
fn consecutive_disturbance_paths() {
    let r = rules(SEQ);
    // No disturbance: not applicable.
    let c = one(&dips(&[]), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::NotApplicable, Some(Reason::NotTriggered))
    );
    // Dips at 1.0 and 2.0 s, no trip: pass, two counted, spaced 1.0 s
    // (each start is the first point below 0.9 pu).
    let c = one(&dips(&[1.0, 2.0]), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::NoTrip)),
        "{c:?}"
    );
    assert_eq!(c.measured, Some(2.0));
    assert!(
        c.spacing_s.len() == 1 && (c.spacing_s[0] - 1.0).abs() < 0.002,
        "{c:?}"
    );
    // A trip during the second: fail.
    let mut s = dips(&[1.0, 2.0]);
    s.status = status_open_at(2.1);
    let c = one(&s, &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Fail, Some(Reason::TripInsideZone)),
        "{c:?}"
    );
    assert_eq!(c.measured, Some(2.0));
    // One dip, or the second after the 5 s window: fewer than the rule asks.
    for starts in [&[1.0][..], &[1.0, 6.5][..]] {
        let c = one(&dips(Box::leak(starts.to_vec().into_boxed_slice())), &r);
        assert_eq!(
            (c.verdict, c.reason),
            (Verdict::Inconclusive, Some(Reason::InsufficientData)),
            "{starts:?} {c:?}"
        );
    }
    // Tripped before the first; no trip visible.
    let mut s = dips(&[1.0, 2.0]);
    s.status = status_open_at(0.5);
    assert_eq!(one(&s, &r).reason, Some(Reason::AlreadyTripped));
    let mut s = dips(&[1.0, 2.0]);
    s.status = None;
    s.currents = false;
    assert_eq!(one(&s, &r).reason, Some(Reason::TripNotVisible));
}

/// The angle of a frequency `f(t)` against 50 Hz, integrated at 1 ms.
fn angle_of(f: impl Fn(f64) -> f64 + 'static) -> Option<Signal> {
    let n = 20_001;
    let mut acc = Vec::with_capacity(n);
    let mut a = 0.0;
    for k in 0..n {
        acc.push(a);
        let t = k as f64 * DT;
        a += std::f64::consts::TAU * (f(t + DT / 2.0) - 50.0) * DT;
    }
    Some(Box::new(move |t| {
        acc[((t / DT).round() as usize).min(n - 1)]
    }))
}

/// Frequency `low` Hz from `from` to `to` s, 50 Hz otherwise, with 0.1 s
/// linear ramps at both ends.
fn excursion(low: f64, from: f64, to: f64) -> impl Fn(f64) -> f64 {
    move |t| {
        let ramp = 0.1;
        if t < from || t > to + ramp {
            50.0
        } else if t < from + ramp {
            50.0 + (low - 50.0) * (t - from) / ramp
        } else if t <= to {
            low
        } else {
            low + (50.0 - low) * (t - to) / ramp
        }
    }
}

const FTABLE: &str = "  - { id: f-low, type: frequency_table, side: below, rows: [{ beyond_hz: 49.5, max_s: 1800 }, { beyond_hz: 48.0, max_s: 1.0 }] }\n";

fn freq_sig(f: impl Fn(f64) -> f64 + 'static, dur: f64, trip: Option<f64>) -> Sig {
    let mut s = Sig::new(|_| 1.0);
    s.dur = dur;
    s.angle = angle_of(f);
    s.status = match trip {
        Some(at) => status_open_at(at),
        None => Some(Box::new(|_| 1.0)),
    };
    s
}

#[test]
fn frequency_table_paths() {
    let r = rules(FTABLE);
    assert_eq!(
        one(&Sig::new(|_| 1.0), &r).reason,
        Some(Reason::MissingChannel)
    );
    // 50 Hz throughout: not applicable.
    let c = one(&freq_sig(|_| 50.0, 5.0, None), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::NotApplicable, Some(Reason::NotTriggered)),
        "{c:?}"
    );
    // 49 Hz from 1.0 to 2.0 s (below 49.5, never below 48), no trip: pass.
    let c = one(&freq_sig(excursion(49.0, 1.0, 2.0), 5.0, None), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::NoTrip)),
        "{c:?}"
    );
    // 47.5 Hz from 1.0 to 3.0 s: below 48 Hz from about 1.08 s, 1.0 s allowed.
    // A trip at 1.6 s (0.5 s below 48 Hz): fail. A trip at 2.5 s (1.4 s
    // below): permitted. No trip: rode through beyond the zone.
    let low = || excursion(47.5, 1.0, 3.0);
    let c = one(&freq_sig(low(), 5.0, Some(1.6)), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Fail, Some(Reason::TripInsideZone)),
        "{c:?}"
    );
    let c = one(&freq_sig(low(), 5.0, Some(2.5)), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::PermittedTrip)),
        "{c:?}"
    );
    let c = one(&freq_sig(low(), 5.0, None), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::RodeThroughBeyondZone)),
        "{c:?}"
    );
    // 49 Hz from 1.0 s to the end of a 5 s recording: the 1800 s row is
    // not covered, inconclusive.
    let c = one(&freq_sig(excursion(49.0, 1.0, 99.0), 5.0, None), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Inconclusive, Some(Reason::InsufficientData)),
        "{c:?}"
    );
    // Tripped before the excursion.
    let c = one(&freq_sig(excursion(49.0, 1.0, 2.0), 5.0, Some(0.5)), &r);
    assert_eq!(c.reason, Some(Reason::AlreadyTripped), "{c:?}");
}

const ROCOF: &str =
    "  - { id: rocof, type: rocof, limit_hz_per_s: 1.0, window_s: 0.5, trip_window_s: 0.5 }\n";

/// 50 Hz, then a ramp of `rate` Hz/s from 1.0 s for `len` s, then flat.
fn ramp_f(rate: f64, len: f64) -> impl Fn(f64) -> f64 {
    move |t| 50.0 + rate * (t - 1.0).clamp(0.0, len)
}

#[test]
fn rocof_paths() {
    let r = rules(ROCOF);
    assert_eq!(
        one(&Sig::new(|_| 1.0), &r).reason,
        Some(Reason::MissingChannel)
    );
    let c = one(&freq_sig(|_| 50.0, 4.0, None), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::NotApplicable, Some(Reason::NotTriggered))
    );
    // −0.5 Hz/s for 1 s: within 1 Hz/s. No trip: pass, margin 0.5 Hz/s.
    let c = one(&freq_sig(ramp_f(-0.5, 1.0), 4.0, None), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::NoTrip)),
        "{c:?}"
    );
    assert!(
        close(c.measured, 0.5, 0.01) && close(c.margin, 0.5, 0.01),
        "{c:?}"
    );
    // The same with a trip at 1.5 s: fail.
    let c = one(&freq_sig(ramp_f(-0.5, 1.0), 4.0, Some(1.5)), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Fail, Some(Reason::TripInsideZone)),
        "{c:?}"
    );
    // −2 Hz/s for 1 s (to 48 Hz): over 0.5 s the ROCOF is 2 Hz/s on the
    // ramp's middle half second, beyond 1 Hz/s. A trip at 1.8 s: permitted;
    // no trip: rode through beyond.
    let c = one(&freq_sig(ramp_f(-2.0, 1.0), 4.0, Some(1.8)), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::PermittedTrip)),
        "{c:?}"
    );
    assert!(close(c.measured, 2.0, 0.01), "{c:?}");
    let c = one(&freq_sig(ramp_f(-2.0, 1.0), 4.0, None), &r);
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Pass, Some(Reason::RodeThroughBeyondZone)),
        "{c:?}"
    );
    // A ramp that ends 0.2 s before the recording does: the 0.5 s trip
    // window is not covered.
    let c = one(
        &freq_sig(move |t| 50.0 - 0.5 * (t - 2.5).clamp(0.0, 1.0), 3.7, None),
        &r,
    );
    assert_eq!(
        (c.verdict, c.reason),
        (Verdict::Inconclusive, Some(Reason::InsufficientData)),
        "{c:?}"
    );
    // Tripped before.
    let c = one(&freq_sig(ramp_f(-0.5, 1.0), 4.0, Some(0.5)), &r);
    assert_eq!(c.reason, Some(Reason::AlreadyTripped), "{c:?}");
}
