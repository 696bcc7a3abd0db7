//! Reactive current injection (docs/rules.md,
//! `reactive_current`).
//!
//! `ΔV(t) = V(t) − V_pre` (positive or negative sequence), required extra
//! current `ΔIq_req = −k·(|ΔV| − db)·sign(ΔV)` (offset dead band) or
//! `−k·|ΔV|·sign(ΔV)` (full), zero inside the dead band; the total
//! `Iq_pre + ΔIq_req` is limited to `±limit`.
//!
//! * **Segments** (`follow: settled`): where the voltage moves by more than
//!   `segment_step_pu` and then holds for the settling time, a new
//!   quasi-steady segment begins; each segment's requirement comes from the
//!   mean `ΔV` over its settled part (from the settling time after its start
//!   to one nominal cycle before its end, where the one-cycle window mixes
//!   it with the next level).
//! * **Rise time**: from the time reference (start or inception) to the
//!   first time `ΔIq` reaches 90 % of the first segment's requirement, within
//!   the first segment.
//! * **Settling time**: per segment, from its start (the first from the time
//!   reference) to the entry into the band `[r + s·lo, r + s·hi]` (`s` the
//!   sign of the requirement `r`) for good, up to the end of its settled part.
//! * `follow: instantaneous`: the requirement follows the voltage sample by
//!   sample; the settling clock restarts whenever the one-cycle average of the
//!   requirement has moved by more than the band's width.
//! * A fault shorter than the settling time is judged on the rise time
//!   alone, the requirement from the mean deviation between the rise-time
//!   limit and one cycle before the end; shorter than the rise time it is
//!   inconclusive.
//! * Margin: the smallest of the rise-time and settling-time margins, in s.

use crate::analysis::events::DisturbanceKind;
use crate::analysis::Quantity;
use crate::rules::check::{Check, Context, FigureKind, Overlay, RuleDrawing};
use crate::rules::registry::{CheckKind, Unit};
use crate::rules::result::{CheckResult, Reason, Segment, Verdict};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

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

impl Check for ReactiveCurrentSpec {
    fn id(&self) -> &str {
        &self.id
    }
    fn kind(&self) -> CheckKind {
        CheckKind::ReactiveCurrent
    }
    fn unit(&self) -> Unit {
        Unit::S
    }
    fn problems(&self, out: &mut Vec<(&'static str, String)>) {
        let r = self;
        let mut p = |key: &'static str, message: String| out.push((key, message));
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
                format!("tolerance_pu [{lo}, {hi}] must satisfy lo ≤ 0 ≤ hi with lo < hi"),
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
    fn concerns(&self, kind: DisturbanceKind) -> bool {
        match self.applies_to {
            AppliesTo::Both => true,
            AppliesTo::Undervoltage => kind == DisturbanceKind::Undervoltage,
            AppliesTo::Overvoltage => kind == DisturbanceKind::Overvoltage,
        }
    }
    fn evaluate(&self, ctx: &Context<'_>, r: CheckResult) -> CheckResult {
        evaluate_at(self, ctx, r)
    }
    fn extent_s(&self) -> f64 {
        0.0
    }
    fn summary(&self) -> String {
        format!(
            "{:?}-sequence reactive current, k = {}, dead band {} pu ({:?}), rise {} s, settling {} s",
            self.sequence,
            self.gain,
            self.dead_band_pu,
            self.dead_band_mode,
            self.rise_time_s,
            self.settling_time_s
        )
        .to_lowercase()
    }
    fn figure(&self) -> FigureKind {
        FigureKind::ReactiveCurrent {
            negative: self.sequence == Sequence::Negative,
        }
    }
    fn overlay(&self, r: &CheckResult, ctx: &Context<'_>) -> Option<Overlay> {
        overlay(self, r, ctx)
    }
    fn drawing(&self, rule_set_id: &str) -> Option<RuleDrawing> {
        Some(drawing(self, rule_set_id))
    }
}

/// The check of one disturbance: the references and series of the judged
/// sequence, then [`evaluate_input`].
fn evaluate_at(rc: &ReactiveCurrentSpec, p: &Context<'_>, r: CheckResult) -> CheckResult {
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
    evaluate_input(rc, &inp, r)
}

/// Inputs of one reactive-current evaluation.
pub struct ReactiveInput<'a> {
    pub t: &'a [f64],
    /// Voltage magnitude of the judged sequence, pu.
    pub v: &'a [f64],
    /// Reactive current of that sequence, pu.
    pub iq: &'a [f64],
    pub start_s: f64,
    /// Waveform inception, where known.
    pub inception_s: Option<f64>,
    /// Disturbance end (or the recording end when it never ended).
    pub end_s: f64,
    pub ended: bool,
    pub v_pre: f64,
    pub iq_pre: f64,
    pub trip_s: Option<f64>,
    pub cycle_s: f64,
}

/// Required extra current for a deviation `dv` (before the limit).
pub fn required(spec: &ReactiveCurrentSpec, dv: f64) -> f64 {
    let a = dv.abs();
    if a <= spec.dead_band_pu {
        return 0.0;
    }
    let mag = match spec.dead_band_mode {
        DeadBandMode::Offset => spec.gain * (a - spec.dead_band_pu),
        DeadBandMode::Full => spec.gain * a,
    };
    -mag * dv.signum()
}

/// The requirement with the total limited to `±limit_pu`.
pub fn limited(spec: &ReactiveCurrentSpec, iq_pre: f64, req: f64) -> f64 {
    (iq_pre + req).clamp(-spec.limit_pu, spec.limit_pu) - iq_pre
}

fn mean_between(t: &[f64], x: &[f64], a: f64, b: f64) -> Option<f64> {
    let i0 = t.partition_point(|v| *v < a);
    let i1 = t.partition_point(|v| *v <= b);
    let (s, n) = x[i0.min(i1)..i1]
        .iter()
        .filter(|v| v.is_finite())
        .fold((0.0, 0usize), |(s, n), v| (s + v, n + 1));
    (n > 0).then(|| s / n as f64)
}

/// Where a new quasi-steady level begins: the voltage moved by more than
/// `step` from the current level and then stayed within `step` of its new
/// level for `hold` (after the one-cycle ramp of the phasor).
pub fn segment_starts(
    t: &[f64],
    v: &[f64],
    from: f64,
    until: f64,
    step: f64,
    hold: f64,
    cycle: f64,
) -> Vec<f64> {
    let at = |x: f64| t.partition_point(|y| *y < x);
    let mut out = vec![from];
    let mut k = at(from + cycle);
    if k >= t.len() || t[k] > until {
        return out;
    }
    let mut level = v[k];
    let stop = t.partition_point(|y| *y <= until);
    while k < stop {
        if v[k].is_finite() && (v[k] - level).abs() > step {
            let tc = t[k];
            let a = at(tc + cycle);
            let b = t.partition_point(|y| *y <= tc + cycle + hold);
            if a < stop && b <= stop && tc + cycle + hold <= until && a < b {
                let new = v[a];
                if v[a..b]
                    .iter()
                    .all(|x| x.is_finite() && (x - new).abs() <= step)
                {
                    out.push(tc);
                    level = new;
                    k = a;
                    continue;
                }
            }
        }
        k += 1;
    }
    out
}

/// Each quasi-steady segment of the fault: its bounds, the settled part its
/// requirement comes from, and that requirement.
struct Seg {
    a: f64,
    b: f64,
    win: (f64, f64),
    dv: f64,
    raw: f64,
    req: f64,
}

/// The instant rise and settling times count from, and how the text says so.
fn time_reference(spec: &ReactiveCurrentSpec, inp: &ReactiveInput<'_>) -> (f64, String) {
    match (spec.time_from, inp.inception_s) {
        (TimeFrom::Start, _) => (inp.start_s, String::new()),
        (TimeFrom::Inception, Some(i)) => (i, format!(" (times from the inception at {i:.4} s)")),
        (TimeFrom::Inception, None) => (
            inp.start_s,
            " (no waveform inception known: times from the disturbance start)".to_string(),
        ),
    }
}

/// Where the disturbance and the data allow no judgement at all: a trip
/// before the rise time ended, or a fault shorter than the rise time.
fn too_short(spec: &ReactiveCurrentSpec, inp: &ReactiveInput<'_>, t_ref: f64) -> Option<String> {
    let duration = inp.end_s - inp.start_s;
    if let Some(tt) = inp.trip_s {
        if tt < t_ref + spec.rise_time_s {
            return Some(format!("the unit tripped at {tt:.3} s, before the rise time ended; the ride-through checks judge the trip"));
        }
    }
    (duration < spec.rise_time_s).then(|| {
        format!(
            "the disturbance lasted {:.4} s, shorter than the required rise time {:.3} s: the data cannot decide",
            duration,
            spec.rise_time_s
        )
    })
}

/// The time window the judgement works in.
struct Span {
    /// Where rise and settling times count from.
    t_ref: f64,
    /// The disturbance end or the trip, whichever comes first.
    data_end: f64,
    /// One cycle before `data_end`: the last instant of quasi-steady data.
    qs_end: f64,
    /// Whether the settling time fits (else the rise time alone is judged).
    full: bool,
}

/// The quasi-steady segments `[start_j, end_j)` (the first starts at the
/// time reference), each with its settled part and requirement; an error
/// text when the first has no settled part.
fn segments(
    spec: &ReactiveCurrentSpec,
    inp: &ReactiveInput<'_>,
    span: &Span,
) -> Result<Vec<Seg>, String> {
    let cycle = inp.cycle_s;
    let starts = if span.full && spec.follow == Follow::Settled {
        segment_starts(
            inp.t,
            inp.v,
            span.t_ref,
            span.data_end - cycle,
            spec.segment_step_pu,
            spec.settling_time_s,
            cycle,
        )
    } else {
        vec![span.t_ref]
    };
    let mut segs: Vec<Seg> = Vec::new();
    for (j, a) in starts.iter().enumerate() {
        let b = starts.get(j + 1).copied().unwrap_or(span.data_end);
        let win = if span.full {
            (a + spec.settling_time_s, b - cycle)
        } else {
            // Rise time only: the voltage between the rise-time limit and one
            // cycle before the end (docs/rules.md, `reactive_current`).
            (span.t_ref + spec.rise_time_s, span.qs_end)
        };
        let Some(vm) = mean_between(inp.t, inp.v, win.0, win.1) else {
            if j == 0 {
                return Err(format!(
                    "no settled part of the fault ({:.4} s long) to take the voltage from",
                    (inp.end_s - inp.start_s)
                ));
            }
            continue;
        };
        let dv = vm - inp.v_pre;
        let raw = required(spec, dv);
        segs.push(Seg {
            a: *a,
            b,
            win,
            dv,
            raw,
            req: limited(spec, inp.iq_pre, raw),
        });
    }
    Ok(segs)
}

/// The requirement sample by sample, and whether the current is inside its
/// tolerance band.
struct Requirement<'a> {
    spec: &'a ReactiveCurrentSpec,
    inp: &'a ReactiveInput<'a>,
    segs: &'a [Seg],
}

impl Requirement<'_> {
    /// The required extra current at sample `k`.
    fn at(&self, k: usize) -> f64 {
        let (spec, inp) = (self.spec, self.inp);
        match spec.follow {
            Follow::Settled => {
                let x = inp.t[k];
                let j = self.segs.iter().rposition(|s| s.a <= x).unwrap_or(0);
                self.segs[j].req
            }
            Follow::Instantaneous => {
                limited(spec, inp.iq_pre, required(spec, inp.v[k] - inp.v_pre))
            }
        }
    }

    /// Whether the extra current at sample `k` is inside the band
    /// `[r + s·lo, r + s·hi]`.
    fn in_band(&self, k: usize) -> bool {
        let [lo, hi] = self.spec.tolerance_pu;
        let rq = self.at(k);
        let s = if rq >= 0.0 { 1.0 } else { -1.0 };
        let d = (self.inp.iq[k] - self.inp.iq_pre) * s;
        let need = rq.abs();
        d.is_finite() && d >= need + lo && d <= need + hi
    }

    /// The first instant the extra current reaches 90 % of the requirement
    /// in the direction `dir`, between `from` and `until` (interpolated
    /// between the samples around the crossing).
    fn rise_at(&self, dir: f64, from: f64, until: f64) -> Option<f64> {
        let inp = self.inp;
        let i0 = inp.t.partition_point(|x| *x < from);
        let i_end = inp.t.partition_point(|x| *x <= until);
        for k in i0..i_end {
            let d = (inp.iq[k] - inp.iq_pre) * dir;
            let need = 0.9 * self.at(k).abs();
            if d.is_finite() && d >= need && need > 0.0 {
                return Some(if k > i0 {
                    let dp = (inp.iq[k - 1] - inp.iq_pre) * dir;
                    if dp.is_finite() && dp < need {
                        inp.t[k - 1] + (need - dp) / (d - dp) * (inp.t[k] - inp.t[k - 1])
                    } else {
                        inp.t[k]
                    }
                } else {
                    inp.t[k]
                });
            }
        }
        None
    }

    /// The entry into the band for good between `from` and `until`, samples
    /// where `exempt` holds not counting; `None` when the last sample is
    /// outside.
    fn settled_at(&self, from: f64, until: f64, exempt: &dyn Fn(usize) -> bool) -> Option<f64> {
        let t = self.inp.t;
        let a = t.partition_point(|x| *x < from);
        let b = t.partition_point(|x| *x <= until);
        if a >= b {
            return None;
        }
        match (a..b).rev().find(|&k| !self.in_band(k) && !exempt(k)) {
            None => Some(from),
            Some(k) if k + 1 < b => Some(t[k + 1]),
            Some(_) => None,
        }
    }

    /// Settling segment by segment, each clock from its start (the first
    /// from the time reference) to the end of its settled part.
    fn settle_segments(&self, t_ref: f64) -> Vec<Segment> {
        let inp = self.inp;
        self.segs
            .iter()
            .enumerate()
            .map(|(j, s)| {
                let clock = if j == 0 { t_ref } else { s.a };
                let at = self.settled_at(clock, s.win.1, &|_| false);
                Segment {
                    start_s: s.a,
                    end_s: s.b,
                    settled_deviation_pu: s.dv,
                    required_pu: s.req,
                    settling_time_s: at.map(|x| x - clock),
                    measured_pu: mean_between(inp.t, inp.iq, s.win.0, s.win.1)
                        .map(|m| m - inp.iq_pre),
                }
            })
            .collect()
    }

    /// Settling of a requirement that follows the voltage: one segment whose
    /// clock restarts where the one-cycle average of the requirement moves
    /// by more than the band's width.
    fn settle_following(&self, span: &Span) -> Segment {
        let (inp, spec) = (self.inp, self.spec);
        let (t_ref, cycle) = (span.t_ref, inp.cycle_s);
        let [lo, hi] = spec.tolerance_pu;
        let a = inp.t.partition_point(|x| *x < t_ref);
        let b = inp.t.partition_point(|x| *x <= span.qs_end);
        let width = hi - lo;
        let mut exempt_until = vec![f64::NEG_INFINITY; b.saturating_sub(a)];
        let mut anchor: Option<f64> = None;
        let mut until = f64::NEG_INFINITY;
        let (mut sum, mut n, mut tail) = (0.0, 0usize, a);
        for k in a..b {
            sum += self.at(k);
            n += 1;
            while inp.t[tail] < inp.t[k] - cycle {
                sum -= self.at(tail);
                n -= 1;
                tail += 1;
            }
            let avg = sum / n.max(1) as f64;
            if inp.t[k] >= t_ref + cycle {
                match anchor {
                    None => anchor = Some(avg),
                    Some(an) if (avg - an).abs() > width => {
                        anchor = Some(avg);
                        if inp.t[k] > t_ref + spec.settling_time_s {
                            // The move began up to one averaging window
                            // earlier: the clock restarts there.
                            until = inp.t[k] + spec.settling_time_s;
                            let from = inp.t.partition_point(|x| *x < inp.t[k] - cycle);
                            for j in from.max(a)..k {
                                exempt_until[j - a] = until;
                            }
                        }
                    }
                    _ => {}
                }
            }
            exempt_until[k - a] = until;
        }
        let exempt = |k: usize| k >= a && k < b && inp.t[k] < exempt_until[k - a];
        let at = self.settled_at(t_ref, span.qs_end, &exempt);
        let first = &self.segs[0];
        Segment {
            start_s: t_ref,
            end_s: span.data_end,
            settled_deviation_pu: first.dv,
            required_pu: first.req,
            settling_time_s: at.map(|x| x - t_ref),
            measured_pu: mean_between(inp.t, inp.iq, first.win.0, first.win.1)
                .map(|m| m - inp.iq_pre),
        }
    }
}

/// Measured gain: mean of s·ΔIq/(|ΔV| − db) (offset) or s·ΔIq/|ΔV| (full)
/// over the settled parts (docs/rules.md, `reactive_current`).
fn measured_gain(spec: &ReactiveCurrentSpec, inp: &ReactiveInput<'_>, segs: &[Seg]) -> Option<f64> {
    let mut gsum = 0.0;
    let mut gn = 0usize;
    for s in segs {
        let a = inp.t.partition_point(|x| *x < s.win.0);
        let b = inp.t.partition_point(|x| *x <= s.win.1);
        for k in a..b {
            let dv = inp.v[k] - inp.v_pre;
            let eff = match spec.dead_band_mode {
                DeadBandMode::Offset => dv.abs() - spec.dead_band_pu,
                DeadBandMode::Full => dv.abs(),
            };
            let d_iq = inp.iq[k] - inp.iq_pre;
            if eff > 0.01 && d_iq.is_finite() && dv.abs() > spec.dead_band_pu {
                gsum += -dv.signum() * d_iq / eff;
                gn += 1;
            }
        }
    }
    (gn > 0).then(|| gsum / gn as f64)
}

/// The sub-script of the judged sequence's symbols (`ΔIq2`).
fn sub(spec: &ReactiveCurrentSpec) -> &'static str {
    if spec.sequence == Sequence::Negative {
        "2"
    } else {
        ""
    }
}

/// What was required, in words: the segments' requirements or the
/// following requirement, with the limit and time-reference notes.
fn describe(spec: &ReactiveCurrentSpec, segs: &[Seg], notes: &str) -> String {
    let sub = sub(spec);
    let first = &segs[0];
    match spec.follow {
        Follow::Settled if segs.len() > 1 => format!(
            "{} quasi-steady segments, required ΔIq{sub} {} pu from their settled deviations {} pu with k = {}{notes}",
            segs.len(),
            segs.iter()
                .map(|s| format!("{:+.3}", s.req))
                .collect::<Vec<_>>()
                .join(" / "),
            segs.iter()
                .map(|s| format!("{:+.3}", s.dv))
                .collect::<Vec<_>>()
                .join(" / "),
            spec.gain
        ),
        Follow::Settled => format!(
            "required ΔIq{sub} {:+.3} pu from the settled deviation {:+.3} pu with k = {}{notes}",
            first.req, first.dv, spec.gain
        ),
        Follow::Instantaneous => format!(
            "requirement following the voltage with k = {} (settled value {:+.3} pu){notes}",
            spec.gain, first.req
        ),
    }
}

/// How each segment settled, in words.
fn settle_text(spec: &ReactiveCurrentSpec, seg_results: &[Segment], segs: &[Seg]) -> String {
    let sub = sub(spec);
    let [lo, hi] = spec.tolerance_pu;
    let band = |req: f64| {
        if req >= 0.0 {
            format!("[{:+.3}, {:+.3}]", req + lo, req + hi)
        } else {
            format!("[{:+.3}, {:+.3}]", req - hi, req - lo)
        }
    };
    let texts: Vec<String> = seg_results
        .iter()
        .zip(segs)
        .map(|(s, g)| match s.settling_time_s {
            Some(st) => format!("settling into {} pu after {:.4} s", band(g.req), st),
            None => format!(
                "ΔIq{sub} did not stay inside {} pu before {:.3} s",
                band(g.req),
                g.win.1
            ),
        })
        .collect();
    if seg_results.len() > 1 {
        texts
            .iter()
            .enumerate()
            .map(|(j, s)| {
                format!(
                    "segment {} from {:.3} s: {s}",
                    j + 1,
                    seg_results[j].start_s
                )
            })
            .collect::<Vec<_>>()
            .join("; ")
    } else {
        texts.join("")
    }
}

pub fn evaluate_input(
    spec: &ReactiveCurrentSpec,
    inp: &ReactiveInput<'_>,
    mut r: CheckResult,
) -> CheckResult {
    let seq = match spec.sequence {
        Sequence::Positive => "positive",
        Sequence::Negative => "negative",
    };
    let sub = sub(spec);
    r.required_gain = Some(spec.gain);
    r.limit = Some(spec.rise_time_s);
    r.reference_pu = Some(inp.iq_pre);
    let (t_ref, ref_note) = time_reference(spec, inp);
    r.time_from_s = Some(t_ref);
    if let Some(why) = too_short(spec, inp, t_ref) {
        return r.decide(Verdict::Inconclusive, Reason::InsufficientData, why);
    }
    let data_end = inp.trip_s.map_or(inp.end_s, |tt| tt.min(inp.end_s));
    let qs_end = data_end - inp.cycle_s;
    let span = Span {
        t_ref,
        data_end,
        qs_end,
        full: qs_end > t_ref + spec.settling_time_s,
    };
    let segs = match segments(spec, inp, &span) {
        Ok(s) => s,
        Err(why) => return r.decide(Verdict::Inconclusive, Reason::InsufficientData, why),
    };
    let first = &segs[0];
    if spec.follow == Follow::Settled && segs.iter().all(|s| s.raw == 0.0) {
        return r.decide(
            Verdict::NotApplicable,
            Reason::NotTriggered,
            format!(
                "the settled {seq}-sequence voltage deviation {:+.3} pu is inside the dead band ±{} pu: no extra reactive current is required",
                first.dv, spec.dead_band_pu
            ),
        );
    }
    r.limited = Some(segs.iter().any(|s| (s.req - s.raw).abs() > 1e-9));
    let limited_note = if (first.req - first.raw).abs() > 1e-9 {
        format!(
            " (k·ΔV asks {:+.3} pu; the total is limited to ±{} pu)",
            first.raw, spec.limit_pu
        )
    } else {
        String::new()
    };
    let req = Requirement {
        spec,
        inp,
        segs: &segs,
    };
    // Rise time is judged on the first segment with a requirement.
    let rise_seg = segs.iter().position(|s| s.req != 0.0).unwrap_or(0);
    let rs = &segs[rise_seg];
    let dir = if rs.req >= 0.0 { 1.0 } else { -1.0 };
    let rise_from = if rise_seg == 0 { t_ref } else { rs.a };
    let rise_at = req.rise_at(dir, rise_from, rs.b.min(data_end));
    let seg_results: Vec<Segment> = match (span.full, spec.follow) {
        (false, _) => Vec::new(),
        (true, Follow::Settled) => req.settle_segments(t_ref),
        (true, Follow::Instantaneous) => vec![req.settle_following(&span)],
    };
    r.measured_gain = measured_gain(spec, inp, &segs);
    let measured_pu = mean_between(inp.t, inp.iq, first.win.0, first.win.1).map(|m| m - inp.iq_pre);
    r.required_pu = Some(first.req);
    r.measured_pu = measured_pu;
    let rise = rise_at.map(|a| a - rise_from);
    r.measured = rise;
    r.at_s = rise_at;
    r.settling_time_s = seg_results.first().and_then(|s| s.settling_time_s);
    let rise_margin = rise.map(|x| spec.rise_time_s - x);
    r.margin = match rise_margin {
        Some(a) if span.full => seg_results
            .iter()
            .map(|s| s.settling_time_s.map(|x| spec.settling_time_s - x))
            .try_fold(a, |m, s| s.map(|s| m.min(s))),
        Some(a) => Some(a),
        None => None,
    };
    let what = describe(spec, &segs, &format!("{limited_note}{ref_note}"));
    if segs.len() > 1 {
        r.segments = seg_results.clone();
    }
    let measured_txt = measured_pu
        .map(|m| format!("; measured ΔIq{sub} {m:+.3} pu"))
        .unwrap_or_default();
    let found = Found {
        rise,
        rise_until: rs.b.min(data_end),
        seg_results,
        what,
        measured_txt,
    };
    conclude(spec, &span, &segs, found, r)
}

/// What the judgement found, handed to [`conclude`].
struct Found {
    /// Rise time, when the current reached 90 % of the requirement.
    rise: Option<f64>,
    /// Until when the rise was looked for.
    rise_until: f64,
    seg_results: Vec<Segment>,
    /// The requirement in words.
    what: String,
    /// The measured extra current in words (or nothing).
    measured_txt: String,
}

/// The verdict, reason and text from the rise and settling times.
fn conclude(
    spec: &ReactiveCurrentSpec,
    span: &Span,
    segs: &[Seg],
    found: Found,
    r: CheckResult,
) -> CheckResult {
    let sub = sub(spec);
    let Found {
        rise,
        rise_until,
        seg_results,
        what,
        measured_txt,
    } = found;
    let Some(rise_v) = rise else {
        return r.decide(
            Verdict::Fail,
            Reason::NeverReached,
            format!(
                "{what}: ΔIq{sub} never reached 90 % of it before {:.3} s{measured_txt}",
                rise_until
            ),
        );
    };
    let rise_ok = rise_v <= spec.rise_time_s;
    let rise_txt = format!(
        "rise time {:.4} s (limit {:.3} s)",
        rise_v,
        spec.rise_time_s
    );
    if !span.full {
        let (v, reason) = if rise_ok {
            (Verdict::Pass, Reason::WithinLimits)
        } else {
            (Verdict::Fail, Reason::RiseTooSlow)
        };
        return r.decide(
            v,
            reason,
            format!(
                "{what}: {rise_txt}; the fault was too short for the settling time of {:.3} s to be judged{measured_txt}",
                spec.settling_time_s
            ),
        );
    }
    let settle_txt = settle_text(spec, &seg_results, segs);
    let never = seg_results.iter().any(|s| s.settling_time_s.is_none());
    let late = seg_results
        .iter()
        .any(|s| s.settling_time_s.is_some_and(|x| x > spec.settling_time_s));
    let (v, reason) = if !rise_ok {
        (Verdict::Fail, Reason::RiseTooSlow)
    } else if never {
        (Verdict::Fail, Reason::NotSettled)
    } else if late {
        (Verdict::Fail, Reason::SettledTooLate)
    } else {
        (Verdict::Pass, Reason::WithinLimits)
    };
    r.decide(
        v,
        reason,
        format!(
            "{what}: {rise_txt}, {settle_txt} (settling limit {:.3} s){measured_txt}",
            spec.settling_time_s
        ),
    )
}

/// What a result shows on its sequence's figure: the required total
/// current (segments, or following the voltage), the tolerance bands from
/// each segment's settling time to one cycle before its end, the 90 % point
/// and the rise and settling instants (all from the result's own values).
fn overlay(spec: &ReactiveCurrentSpec, c: &CheckResult, ctx: &Context<'_>) -> Option<Overlay> {
    let d = ctx.d;
    let (req, iq_pre) = (c.required_pu?, c.reference_pu?);
    let pre = d.prefault?;
    let v_pre = match spec.sequence {
        Sequence::Positive => pre.v1_pu,
        Sequence::Negative => pre.v2_pu.unwrap_or(0.0),
    };
    let end = d.end_s.unwrap_or(ctx.rec_end);
    let t0 = c.time_from_s.unwrap_or(d.start_s);
    let [tlo, thi] = spec.tolerance_pu;
    // Quasi-steady segments: (from, to, requirement, band from).
    let segs: Vec<(f64, f64, f64, f64)> = if c.segments.is_empty() {
        vec![(t0, end, req, t0 + spec.settling_time_s)]
    } else {
        c.segments
            .iter()
            .enumerate()
            .map(|(j, g)| {
                let clock = if j == 0 { t0 } else { g.start_s };
                (
                    g.start_s,
                    g.end_s,
                    g.required_pu,
                    clock + spec.settling_time_s,
                )
            })
            .collect()
    };
    let required: Vec<(f64, f64)> = match spec.follow {
        Follow::Settled => segs
            .iter()
            .flat_map(|(a, b, r, _)| [(*a, iq_pre + r), (*b, iq_pre + r)])
            .collect(),
        Follow::Instantaneous => {
            let vq = match spec.sequence {
                Sequence::Positive => Quantity::V1,
                Sequence::Negative => Quantity::V2,
            };
            let (t, v) = (&ctx.series.t, ctx.series.get(vq)?);
            let a = t.partition_point(|x| *x < d.start_s);
            let b = t.partition_point(|x| *x <= end);
            (a..b)
                .map(|k| {
                    (
                        t[k],
                        iq_pre + limited(spec, iq_pre, required(spec, v[k] - v_pre)),
                    )
                })
                .collect()
        }
    };
    let bands = segs
        .iter()
        .filter_map(|(_, b, r, from)| {
            let until = b - ctx.cycle;
            (until > *from).then(|| {
                let (l, h) = if *r >= 0.0 {
                    (r + tlo, r + thi)
                } else {
                    (r - thi, r - tlo)
                };
                (*from, until, iq_pre + l, iq_pre + h)
            })
        })
        .collect();
    Some(Overlay::Reactive {
        negative: spec.sequence == Sequence::Negative,
        required,
        bands,
        rise: match (c.at_s, c.measured) {
            (Some(at), Some(rise)) => Some((at, iq_pre + 0.9 * segs[0].2, rise)),
            _ => None,
        },
        rise_limit_at: t0 + spec.rise_time_s,
        rise_limit_s: spec.rise_time_s,
        settled_at: c.settling_time_s.map(|st| (t0 + st, st)),
    })
}

/// The characteristic `rules plot` draws: the required extra current
/// against the voltage deviation −1..0.5 pu (pre-fault current 0), with the
/// tolerance band.
fn drawing(rc: &ReactiveCurrentSpec, rule_set_id: &str) -> RuleDrawing {
    let n = 600;
    let (a, b) = (-1.0, 0.5);
    let curve: Vec<(f64, f64)> = (0..=n)
        .map(|k| {
            let dv = a + (b - a) * k as f64 / n as f64;
            (dv, limited(rc, 0.0, required(rc, dv)))
        })
        .collect();
    let [lo, hi] = rc.tolerance_pu;
    let band_hi: Vec<(f64, f64)> = curve
        .iter()
        .map(|(x, y)| (*x, if *y >= 0.0 { y + hi } else { y - hi }))
        .collect();
    let band_lo: Vec<(f64, f64)> = curve
        .iter()
        .map(|(x, y)| (*x, if *y >= 0.0 { y + lo } else { y - lo }))
        .collect();
    let mut band = band_hi;
    band.extend(band_lo.iter().rev());
    RuleDrawing::Characteristic {
        title: format!(
            "{} – {}: k = {}, dead band {} pu ({:?}), limit {} pu",
            rule_set_id, rc.id, rc.gain, rc.dead_band_pu, rc.dead_band_mode, rc.limit_pu
        )
        .replace("Offset", "offset")
        .replace("Full", "full"),
        curve,
        band,
        dead_band_pu: rc.dead_band_pu,
        negative: rc.sequence == Sequence::Negative,
        tolerance: rc.tolerance_pu,
    }
}
