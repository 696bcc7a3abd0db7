//! Disturbances, trips and momentary cessation.
//!
//! A disturbance starts when the applicable voltage leaves the normal band
//! (`below_pu`..`above_pu`) and ends when it has been back inside the
//! narrower band (`below_pu + hysteresis_pu`..`above_pu − hysteresis_pu`)
//! for `min_return_s`; the reported end is the instant of re-entry. Times are
//! those of the one-cycle phasors, so a voltage step shows up to one nominal
//! cycle late, and both start and end carry that delay.
//!
//! A trip comes from the status channel when there is one; otherwise from
//! the current: below `trip_current_pu` for at least `trip_min_s` and not
//! back before the recording ends. Current that drops and comes back is
//! momentary cessation.

use super::{Quantity, Series};
use serde::{Deserialize, Serialize};

/// Which voltage a rule set judges.
#[derive(
    Clone,
    Copy,
    Debug,
    PartialEq,
    Eq,
    Serialize,
    Deserialize,
    Default,
    schemars::JsonSchema,
    clap::ValueEnum,
)]
#[serde(rename_all = "snake_case")]
#[value(rename_all = "snake_case")]
pub enum ApplicableVoltage {
    #[default]
    PositiveSequence,
    MinPhaseToPhase,
    MinPhaseToNeutral,
    MaxPhaseToPhase,
    MaxPhaseToNeutral,
}

impl ApplicableVoltage {
    pub fn name(self) -> &'static str {
        match self {
            ApplicableVoltage::PositiveSequence => "positive_sequence",
            ApplicableVoltage::MinPhaseToPhase => "min_phase_to_phase",
            ApplicableVoltage::MinPhaseToNeutral => "min_phase_to_neutral",
            ApplicableVoltage::MaxPhaseToPhase => "max_phase_to_phase",
            ApplicableVoltage::MaxPhaseToNeutral => "max_phase_to_neutral",
        }
    }

    /// The voltage series, or why the recording cannot give it.
    pub fn series(self, s: &Series) -> Result<Vec<f64>, String> {
        let pick = |qs: [Quantity; 3], max: bool| -> Result<Vec<f64>, String> {
            let cols: Vec<&[f64]> = qs.iter().filter_map(|q| s.get(*q)).collect();
            if cols.len() != 3 {
                return Err(format!(
                    "the recording has no phase voltages, so the {} voltage is not available",
                    self.name().replace('_', " ")
                ));
            }
            Ok((0..s.len())
                .map(|i| {
                    let (a, b, c) = (cols[0][i], cols[1][i], cols[2][i]);
                    if max {
                        a.max(b).max(c)
                    } else {
                        a.min(b).min(c)
                    }
                })
                .collect())
        };
        match self {
            ApplicableVoltage::PositiveSequence => s
                .get(Quantity::V1)
                .map(|v| v.to_vec())
                .ok_or_else(|| "the recording has no voltage".to_string()),
            ApplicableVoltage::MinPhaseToPhase => {
                pick([Quantity::Vab, Quantity::Vbc, Quantity::Vca], false)
            }
            ApplicableVoltage::MaxPhaseToPhase => {
                pick([Quantity::Vab, Quantity::Vbc, Quantity::Vca], true)
            }
            ApplicableVoltage::MinPhaseToNeutral | ApplicableVoltage::MaxPhaseToNeutral
                if s.has(Quantity::Va) && !s.has(Quantity::V0) =>
            {
                Err(format!(
                    "the recording's voltages are phase to phase, so the zero sequence is unobservable and the {} voltage is not known",
                    self.name().replace('_', " ")
                ))
            }
            ApplicableVoltage::MinPhaseToNeutral => {
                pick([Quantity::Va, Quantity::Vb, Quantity::Vc], false)
            }
            ApplicableVoltage::MaxPhaseToNeutral => {
                pick([Quantity::Va, Quantity::Vb, Quantity::Vc], true)
            }
        }
    }
}

/// Thresholds for disturbance and trip detection.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize, schemars::JsonSchema)]
pub struct DetectionSettings {
    pub applicable: ApplicableVoltage,
    pub below_pu: f64,
    pub above_pu: f64,
    pub hysteresis_pu: f64,
    /// Excursions shorter than this are ignored.
    pub min_duration_s: f64,
    /// Time back inside the band that confirms the end.
    pub min_return_s: f64,
    /// Length of the pre-fault averaging window.
    pub prefault_window_s: f64,
    /// Gap between the pre-fault window and the disturbance start (one
    /// nominal cycle: the one-cycle window reaches that far back).
    pub prefault_guard_s: f64,
    /// After a disturbance ends, the time its recovery may take; a later
    /// disturbance's pre-fault window must not overlap it (the rule set's
    /// longest `within_s`, 1 s when it has none).
    pub recovery_allowance_s: f64,
    /// `|V2|/|V1|` above which a disturbance is unbalanced.
    pub unbalance_ratio: f64,
    pub trip_current_pu: f64,
    pub trip_min_s: f64,
    pub frequency_hz: f64,
}

/// The detection defaults, also the rule format's (one source).
pub mod default {
    pub const BELOW_PU: f64 = 0.90;
    pub const ABOVE_PU: f64 = 1.10;
    pub const HYSTERESIS_PU: f64 = 0.01;
    pub const MIN_RETURN_S: f64 = 0.05;
    pub const PREFAULT_WINDOW_S: f64 = 0.10;
    pub const RECOVERY_ALLOWANCE_S: f64 = 1.0;
    pub const UNBALANCE_RATIO: f64 = 0.05;
    pub const TRIP_CURRENT_PU: f64 = 0.05;
    pub const TRIP_MIN_S: f64 = 0.02;
}

impl DetectionSettings {
    pub fn defaults(frequency_hz: f64) -> Self {
        DetectionSettings {
            applicable: ApplicableVoltage::PositiveSequence,
            below_pu: default::BELOW_PU,
            above_pu: default::ABOVE_PU,
            hysteresis_pu: default::HYSTERESIS_PU,
            min_duration_s: 0.0,
            min_return_s: default::MIN_RETURN_S,
            prefault_window_s: default::PREFAULT_WINDOW_S,
            prefault_guard_s: 1.0 / frequency_hz,
            recovery_allowance_s: default::RECOVERY_ALLOWANCE_S,
            unbalance_ratio: default::UNBALANCE_RATIO,
            trip_current_pu: default::TRIP_CURRENT_PU,
            trip_min_s: default::TRIP_MIN_S,
            frequency_hz,
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum DisturbanceKind {
    Undervoltage,
    Overvoltage,
}

impl DisturbanceKind {
    pub fn name(self) -> &'static str {
        match self {
            DisturbanceKind::Undervoltage => "undervoltage",
            DisturbanceKind::Overvoltage => "overvoltage",
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Balance {
    Symmetrical,
    Unbalanced,
    /// Too short for a settled part, or no phase information.
    Undetermined,
}

impl Balance {
    pub fn name(self) -> &'static str {
        match self {
            Balance::Symmetrical => "symmetrical",
            Balance::Unbalanced => "unbalanced",
            Balance::Undetermined => "undetermined",
        }
    }
}

/// Means over the pre-fault window.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, schemars::JsonSchema)]
pub struct Prefault {
    pub from_s: f64,
    pub to_s: f64,
    /// Applicable voltage.
    pub v_pu: f64,
    pub v1_pu: f64,
    pub p_pu: Option<f64>,
    pub q_pu: Option<f64>,
    pub ip_pu: Option<f64>,
    pub iq_pu: Option<f64>,
    pub iq2_pu: Option<f64>,
    pub v2_pu: Option<f64>,
}

/// Mean residual voltages over the settled part of a disturbance.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, schemars::JsonSchema)]
pub struct Residual {
    pub v1_pu: f64,
    pub v2_pu: Option<f64>,
    /// Phase-to-neutral a, b, c.
    pub phase_pu: Option<[f64; 3]>,
    /// Phase-to-phase ab, bc, ca.
    pub line_pu: Option<[f64; 3]>,
}

#[derive(Clone, Debug, PartialEq, Serialize, schemars::JsonSchema)]
pub struct Disturbance {
    pub kind: DisturbanceKind,
    pub start_s: f64,
    /// `None` when the recording ends before the voltage returned.
    pub end_s: Option<f64>,
    /// False when the return was seen but the recording ended before it
    /// lasted `min_return_s`.
    pub end_confirmed: bool,
    pub extreme_pu: f64,
    pub extreme_at_s: f64,
    pub balance: Balance,
    /// Mean `|V2|/|V1|` over the settled part.
    pub unbalance_ratio: Option<f64>,
    /// The settled part: one nominal cycle after the start to one before the end.
    pub settled_s: Option<(f64, f64)>,
    pub residual: Option<Residual>,
    /// The references this disturbance is judged against (its own, or
    /// those of the first disturbance of its chain).
    pub prefault: Option<Prefault>,
    /// Set when the references were inherited from that earlier disturbance.
    pub prefault_from: Option<usize>,
    /// Why no pre-fault reference could be formed.
    pub prefault_problem: Option<String>,
    /// Waveforms: the instant the waveform left the pre-fault sinusoid
    /// (resolution: one analysis output step, 1/64 cycle).
    pub inception_s: Option<f64>,
    /// Waveforms: the instant the waveform left the fault-period sinusoid at
    /// the end (fault clearance); `None` when the fault is too short to
    /// separate it from the inception, or it never ended.
    pub clearance_s: Option<f64>,
}

impl Disturbance {
    pub fn duration_s(&self) -> Option<f64> {
        self.end_s.map(|e| e - self.start_s)
    }
    /// Fault duration: inception to clearance on waveforms, else start to end.
    pub fn fault_duration_s(&self) -> Option<f64> {
        match (self.inception_s, self.clearance_s) {
            (Some(a), Some(b)) => Some(b - a),
            _ => self.duration_s(),
        }
    }
}

fn mean_between(s: &Series, q: Quantity, from: f64, to: f64) -> Option<f64> {
    mean_of(s.get(q)?, s, from, to)
}

fn mean_of(v: &[f64], s: &Series, from: f64, to: f64) -> Option<f64> {
    let a = s.index_at(from);
    let b = (s.index_at(to) + 1).min(s.len());
    if a >= b {
        return None;
    }
    let (sum, n) = v[a..b]
        .iter()
        .filter(|x| x.is_finite())
        .fold((0.0, 0usize), |(s, n), x| (s + x, n + 1));
    (n > 0).then(|| sum / n as f64)
}

/// An excursion of the applicable voltage beyond the normal band.
struct Excursion {
    kind: DisturbanceKind,
    start: f64,
    end: Option<f64>,
    confirmed: bool,
    extreme: f64,
    extreme_at: f64,
}

/// Finds the excursions: start when the voltage leaves the normal band, end
/// at the re-entry into the hysteresis band once it has lasted `min_return_s`.
fn excursions(t: &[f64], v: &[f64], cfg: &DetectionSettings) -> Vec<Excursion> {
    let lo_in = cfg.below_pu + cfg.hysteresis_pu;
    let hi_in = cfg.above_pu - cfg.hysteresis_pu;
    let mut out = Vec::new();
    let mut open: Option<Excursion> = None;
    // Since when the open excursion's voltage is back inside the band.
    let mut back_since: Option<f64> = None;
    for (i, &x) in v.iter().enumerate() {
        if !x.is_finite() {
            continue;
        }
        let ti = t[i];
        let side = if x < cfg.below_pu {
            Some(DisturbanceKind::Undervoltage)
        } else if x > cfg.above_pu {
            Some(DisturbanceKind::Overvoltage)
        } else {
            None
        };
        let begin = |kind| Excursion {
            kind,
            start: ti,
            end: None,
            confirmed: false,
            extreme: x,
            extreme_at: ti,
        };
        let Some(o) = open.as_mut() else {
            open = side.map(begin);
            back_since = None;
            continue;
        };
        if side.is_some_and(|k| k != o.kind) {
            // Straight from a sag into a swell (or back): close the first at
            // its re-entry, or here, and open the next.
            o.end = Some(back_since.unwrap_or(ti));
            o.confirmed = true;
            out.extend(open.take());
            open = side.map(begin);
            back_since = None;
            continue;
        }
        let worse = match o.kind {
            DisturbanceKind::Undervoltage => x < o.extreme,
            DisturbanceKind::Overvoltage => x > o.extreme,
        };
        if worse {
            o.extreme = x;
            o.extreme_at = ti;
        }
        if x >= lo_in && x <= hi_in {
            let since = *back_since.get_or_insert(ti);
            if ti - since >= cfg.min_return_s {
                o.end = Some(since);
                o.confirmed = true;
                out.extend(open.take());
                back_since = None;
            }
        } else {
            back_since = None;
        }
    }
    if let Some(mut o) = open {
        o.end = back_since;
        out.push(o);
    }
    out
}

/// Balance, unbalance ratio and residual voltages over the settled part.
fn settled_facts(
    s: &Series,
    cfg: &DetectionSettings,
    settled: Option<(f64, f64)>,
) -> (Balance, Option<f64>, Option<Residual>) {
    let Some((a, b)) = settled else {
        return (Balance::Undetermined, None, None);
    };
    let v1 = mean_between(s, Quantity::V1, a, b).unwrap_or(f64::NAN);
    let ratio = match (s.get(Quantity::V1), s.get(Quantity::V2)) {
        (Some(v1s), Some(v2s)) => {
            let r: Vec<f64> = v1s
                .iter()
                .zip(v2s)
                .map(|(a, b)| if *a > 1e-6 { b / a } else { f64::NAN })
                .collect();
            mean_of(&r, s, a, b)
        }
        _ => None,
    };
    let balance = match ratio {
        Some(r) if r > cfg.unbalance_ratio => Balance::Unbalanced,
        Some(_) => Balance::Symmetrical,
        None => Balance::Undetermined,
    };
    let tri = |qs: [Quantity; 3]| -> Option<[f64; 3]> {
        Some([
            mean_between(s, qs[0], a, b)?,
            mean_between(s, qs[1], a, b)?,
            mean_between(s, qs[2], a, b)?,
        ])
    };
    let residual = Residual {
        v1_pu: v1,
        v2_pu: mean_between(s, Quantity::V2, a, b),
        phase_pu: tri([Quantity::Va, Quantity::Vb, Quantity::Vc]),
        line_pu: tri([Quantity::Vab, Quantity::Vbc, Quantity::Vca]),
    };
    (balance, ratio, Some(residual))
}

fn prefault_means(s: &Series, v: &[f64], from: f64, to: f64) -> Prefault {
    Prefault {
        from_s: from,
        to_s: to,
        v_pu: mean_of(v, s, from, to).unwrap_or(f64::NAN),
        v1_pu: mean_between(s, Quantity::V1, from, to).unwrap_or(f64::NAN),
        p_pu: mean_between(s, Quantity::P, from, to),
        q_pu: mean_between(s, Quantity::Q, from, to),
        ip_pu: mean_between(s, Quantity::Ip, from, to),
        iq_pu: mean_between(s, Quantity::Iq, from, to),
        iq2_pu: mean_between(s, Quantity::Iq2, from, to),
        v2_pu: mean_between(s, Quantity::V2, from, to),
    }
}

/// The first output point in `[from, to]` whose waveform deviation exceeds
/// `threshold`.
fn first_deviation(s: &Series, dev: &[f64], from: f64, to: f64, threshold: f64) -> Option<f64> {
    let a = s.index_at(from);
    (a..s.len())
        .take_while(|&k| s.t[k] <= to)
        .find(|&k| dev[k] > threshold)
        .map(|k| s.t[k])
}

/// The clearance after an inception at `inc`, for a disturbance that ended
/// (phasor level) at `end`. `x[n] − x[n−N]` is non-zero for one cycle after
/// the inception; for a fault of length `L` longer than a cycle it is quiet
/// from `inc + N` until the clearance, for a shorter one it falls quiet at
/// the clearance within the first cycle (and echoes one cycle later). A
/// quiet stretch shorter than a quarter cycle is not told apart from the
/// zero crossings of the waveform.
fn clearance(s: &Series, dev: &[f64], inc: f64, end: f64, cycle: f64, thr: f64) -> Option<f64> {
    let a = s.index_at(inc);
    let b = s.index_at(inc + cycle);
    let quiet_for = |k: usize| -> bool {
        let until = s.t[k] + 0.25 * cycle;
        (k..s.len())
            .take_while(|&j| s.t[j] <= until)
            .all(|j| dev[j] <= thr)
    };
    if let Some(k) = (a + 1..b.min(s.len())).find(|&k| dev[k] <= thr && quiet_for(k)) {
        return Some(s.t[k]);
    }
    first_deviation(
        s,
        dev,
        (end - 1.25 * cycle).max(inc + cycle + s.step()),
        end,
        thr,
    )
}

/// Finds every disturbance of the applicable voltage.
///
/// Pre-fault references (docs/rules.md, "Rule set") come from the window
/// of `prefault_window_s` ending `prefault_guard_s` before the start, when
/// it overlaps no earlier disturbance and no earlier disturbance's recovery
/// allowance; otherwise the disturbance belongs to the chain of the previous
/// one and inherits the references of the chain's first disturbance.
pub fn detect_disturbances(
    s: &Series,
    cfg: &DetectionSettings,
) -> Result<Vec<Disturbance>, String> {
    let v = cfg.applicable.series(s)?;
    let cycle = 1.0 / cfg.frequency_hz;
    let t_first = s.t.first().copied().unwrap_or(0.0);
    let t_last = s.t.last().copied().unwrap_or(0.0);
    let dev = s.get(Quantity::WaveDeviation);
    let mut out: Vec<Disturbance> = Vec::new();
    // Index of the first disturbance of the current chain.
    let mut chain_head: Option<usize> = None;
    for x in excursions(&s.t, &v, cfg) {
        if x.end.is_some_and(|e| e - x.start < cfg.min_duration_s) {
            continue;
        }
        let start = x.start;
        let settled_end = x.end.map(|e| e - cycle).unwrap_or(t_last);
        let settled = (settled_end > start + cycle).then_some((start + cycle, settled_end));
        let (balance, ratio, residual) = settled_facts(s, cfg, settled);
        let pf_to = start - cfg.prefault_guard_s;
        let pf_from = pf_to - cfg.prefault_window_s;
        // The earliest time a clean window may start after the previous disturbance.
        let clear_from = out
            .last()
            .map(|d: &Disturbance| d.end_s.unwrap_or(d.start_s) + cfg.recovery_allowance_s);
        let (prefault, prefault_from, problem) = if clear_from.is_some_and(|c| pf_from < c) {
            // Part of the previous disturbance's chain.
            let head = chain_head.unwrap_or(out.len() - 1);
            let inherited = out[head].prefault;
            let problem = match inherited {
                Some(_) => None,
                None => Some(format!(
                    "no clean pre-fault window since disturbance #{head}, whose own references are missing: {}",
                    out[head].prefault_problem.clone().unwrap_or_default()
                )),
            };
            (inherited, Some(head), problem)
        } else if pf_from < t_first {
            chain_head = Some(out.len());
            (
                None,
                None,
                Some(format!(
                    "the recording has {:.3} s before the disturbance; the pre-fault window needs {:.3} s",
                    (start - t_first).max(0.0),
                    cfg.prefault_window_s + cfg.prefault_guard_s
                )),
            )
        } else {
            chain_head = Some(out.len());
            (Some(prefault_means(s, &v, pf_from, pf_to)), None, None)
        };
        // Inception and clearance from the waveform deviation: the threshold
        // sits above what the pre-fault window shows (noise, harmonics that
        // are not periodic, fractional windows).
        let (inception, clearance) = match (dev, prefault) {
            (Some(dev), Some(pf)) => {
                let base = {
                    let a = s.index_at(pf.from_s);
                    let b = s.index_at(pf.to_s).min(s.len());
                    dev[a.min(b)..b]
                        .iter()
                        .copied()
                        .filter(|x| x.is_finite())
                        .fold(0.0, f64::max)
                };
                let thr = 2.0 * base + 0.02;
                let floor = out.last().and_then(|d| d.end_s).unwrap_or(t_first);
                let inc = first_deviation(s, dev, (start - 1.25 * cycle).max(floor), start, thr);
                let clr = match (inc, x.end) {
                    (Some(i), Some(e)) => clearance(s, dev, i, e, cycle, thr),
                    _ => None,
                };
                (inc, clr)
            }
            _ => (None, None),
        };
        out.push(Disturbance {
            kind: x.kind,
            start_s: start,
            end_s: x.end,
            end_confirmed: x.confirmed,
            extreme_pu: x.extreme,
            extreme_at_s: x.extreme_at,
            balance,
            unbalance_ratio: ratio,
            settled_s: settled,
            residual,
            prefault,
            prefault_from,
            prefault_problem: problem,
            inception_s: inception,
            clearance_s: clearance,
        });
    }
    Ok(out)
}

/// How the trip state was determined.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum TripMethod {
    Status,
    Current,
    /// Neither a status channel nor usable current: a trip cannot be seen.
    None,
}

impl TripMethod {
    pub fn name(self) -> &'static str {
        match self {
            TripMethod::Status => "status",
            TripMethod::Current => "current",
            TripMethod::None => "none",
        }
    }
}

#[derive(Clone, Debug, PartialEq, Serialize, schemars::JsonSchema)]
pub struct TripInfo {
    pub tripped: bool,
    pub time_s: Option<f64>,
    pub method: TripMethod,
    /// The status channel closed again after the trip.
    pub reconnected_s: Option<f64>,
    /// Intervals of momentary cessation (current blocked, then back).
    pub cessations: Vec<(f64, f64)>,
    pub note: Option<String>,
}

/// Intervals where `pred` holds for at least `min_s` (the last may be open).
fn intervals(
    t: &[f64],
    v: &[f64],
    min_s: f64,
    pred: impl Fn(f64) -> bool,
) -> Vec<(f64, Option<f64>)> {
    let mut out = Vec::new();
    let mut from: Option<f64> = None;
    for (i, x) in v.iter().enumerate() {
        let hit = x.is_finite() && pred(*x);
        match (hit, from) {
            (true, None) => from = Some(t[i]),
            (false, Some(f)) => {
                if t[i] - f >= min_s {
                    out.push((f, Some(t[i])));
                }
                from = None;
            }
            _ => {}
        }
    }
    if let Some(f) = from {
        out.push((f, None));
    }
    out
}

/// Finds a trip and momentary cessation.
pub fn detect_trip(s: &Series, cfg: &DetectionSettings) -> TripInfo {
    let mut info = TripInfo {
        tripped: false,
        time_s: None,
        method: TripMethod::None,
        reconnected_s: None,
        cessations: Vec::new(),
        note: None,
    };
    if s.is_empty() {
        info.note = Some("no analysed samples".into());
        return info;
    }
    let t0 = s.t[0];
    if let Some(st) = s.get(Quantity::Status) {
        info.method = TripMethod::Status;
        let open = intervals(&s.t, st, 0.0, |x| x < 0.5);
        if let Some((from, to)) = open.first() {
            if *from <= t0 {
                info.note = Some(
                    "the status channel shows the unit open at the start of the recording".into(),
                );
                info.method = TripMethod::None;
            } else {
                info.tripped = true;
                info.time_s = Some(*from);
                info.reconnected_s = *to;
            }
        }
    }
    let current = s.get(Quantity::IMax).or_else(|| s.get(Quantity::I1));
    if let Some(i) = current {
        let low = intervals(&s.t, i, cfg.trip_min_s, |x| x < cfg.trip_current_pu);
        let mut started_low = false;
        for (from, to) in &low {
            if *from <= t0 {
                started_low = true;
                continue;
            }
            match to {
                Some(to) => info.cessations.push((*from, *to)),
                None => {
                    if info.method != TripMethod::Status {
                        info.tripped = true;
                        info.time_s = Some(*from);
                        info.method = TripMethod::Current;
                    }
                }
            }
        }
        if started_low && info.method != TripMethod::Status {
            info.note = Some(format!(
                "current is below the trip threshold ({} pu) at the start of the recording; a trip cannot be inferred from current",
                cfg.trip_current_pu
            ));
            info.tripped = false;
            info.time_s = None;
            info.method = TripMethod::None;
            info.cessations.clear();
        } else if info.method == TripMethod::None && info.note.is_none() {
            info.method = TripMethod::Current;
        }
    } else if info.method == TripMethod::None && info.note.is_none() {
        info.note = Some(
            "the recording has neither a status channel nor currents; a trip cannot be seen".into(),
        );
    }
    info
}

display_as_name!(DisturbanceKind, Balance, TripMethod);
