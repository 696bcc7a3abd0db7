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
    Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, Default, schemars::JsonSchema,
)]
#[serde(rename_all = "snake_case")]
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

    pub const ALL: [ApplicableVoltage; 5] = [
        ApplicableVoltage::PositiveSequence,
        ApplicableVoltage::MinPhaseToPhase,
        ApplicableVoltage::MinPhaseToNeutral,
        ApplicableVoltage::MaxPhaseToPhase,
        ApplicableVoltage::MaxPhaseToNeutral,
    ];

    pub fn parse(s: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|a| a.name() == s.trim())
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
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
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
    /// Gap between the pre-fault window and the disturbance start.
    pub prefault_guard_s: f64,
    /// `|V2|/|V1|` above which a disturbance is unbalanced.
    pub unbalance_ratio: f64,
    pub trip_current_pu: f64,
    pub trip_min_s: f64,
    pub frequency_hz: f64,
}

impl DetectionSettings {
    pub fn defaults(frequency_hz: f64) -> Self {
        DetectionSettings {
            applicable: ApplicableVoltage::PositiveSequence,
            below_pu: 0.90,
            above_pu: 1.10,
            hysteresis_pu: 0.01,
            min_duration_s: 0.0,
            min_return_s: 0.05,
            prefault_window_s: 0.10,
            prefault_guard_s: 0.02,
            unbalance_ratio: 0.05,
            trip_current_pu: 0.05,
            trip_min_s: 0.02,
            frequency_hz,
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DisturbanceKind {
    Undervoltage,
    Overvoltage,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Balance {
    Symmetrical,
    Unbalanced,
    /// Too short for a settled part, or no phase information.
    Undetermined,
}

/// Means over the pre-fault window.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
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
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Residual {
    pub v1_pu: f64,
    pub v2_pu: Option<f64>,
    /// Phase-to-neutral a, b, c.
    pub phase_pu: Option<[f64; 3]>,
    /// Phase-to-phase ab, bc, ca.
    pub line_pu: Option<[f64; 3]>,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
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
    pub prefault: Option<Prefault>,
    /// Why no pre-fault reference could be formed.
    pub prefault_problem: Option<String>,
}

impl Disturbance {
    pub fn duration_s(&self) -> Option<f64> {
        self.end_s.map(|e| e - self.start_s)
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

/// Finds every disturbance of the applicable voltage.
pub fn detect_disturbances(
    s: &Series,
    cfg: &DetectionSettings,
) -> Result<Vec<Disturbance>, String> {
    let v = cfg.applicable.series(s)?;
    let lo_in = cfg.below_pu + cfg.hysteresis_pu;
    let hi_in = cfg.above_pu - cfg.hysteresis_pu;
    struct Open {
        kind: DisturbanceKind,
        start: f64,
        extreme: f64,
        extreme_at: f64,
        back_since: Option<f64>,
    }
    let mut raw: Vec<(DisturbanceKind, f64, Option<f64>, bool, f64, f64)> = Vec::new();
    let mut open: Option<Open> = None;
    for (i, &x) in v.iter().enumerate() {
        let t = s.t[i];
        if !x.is_finite() {
            continue;
        }
        let side = if x < cfg.below_pu {
            Some(DisturbanceKind::Undervoltage)
        } else if x > cfg.above_pu {
            Some(DisturbanceKind::Overvoltage)
        } else {
            None
        };
        match &mut open {
            None => {
                if let Some(kind) = side {
                    open = Some(Open {
                        kind,
                        start: t,
                        extreme: x,
                        extreme_at: t,
                        back_since: None,
                    });
                }
            }
            Some(o) => {
                if let Some(kind) = side {
                    if kind != o.kind {
                        // Straight from a sag into a swell (or back): close
                        // the first at its re-entry, or here.
                        let end = o.back_since.unwrap_or(t);
                        raw.push((o.kind, o.start, Some(end), true, o.extreme, o.extreme_at));
                        open = Some(Open {
                            kind,
                            start: t,
                            extreme: x,
                            extreme_at: t,
                            back_since: None,
                        });
                        continue;
                    }
                }
                let worse = match o.kind {
                    DisturbanceKind::Undervoltage => x < o.extreme,
                    DisturbanceKind::Overvoltage => x > o.extreme,
                };
                if worse {
                    o.extreme = x;
                    o.extreme_at = t;
                }
                let inside = x >= lo_in && x <= hi_in;
                if inside {
                    let since = *o.back_since.get_or_insert(t);
                    if t - since >= cfg.min_return_s {
                        raw.push((o.kind, o.start, Some(since), true, o.extreme, o.extreme_at));
                        open = None;
                    }
                } else {
                    o.back_since = None;
                }
            }
        }
    }
    if let Some(o) = open {
        raw.push((
            o.kind,
            o.start,
            o.back_since,
            false,
            o.extreme,
            o.extreme_at,
        ));
    }
    let cycle = 1.0 / cfg.frequency_hz;
    let t_first = s.t.first().copied().unwrap_or(0.0);
    let mut out = Vec::new();
    for (kind, start, end, confirmed, extreme, extreme_at) in raw {
        if let Some(e) = end {
            if e - start < cfg.min_duration_s {
                continue;
            }
        }
        let settled_end = end.map(|e| e - cycle).unwrap_or(s.t[s.len() - 1]);
        let settled = (settled_end > start + cycle).then_some((start + cycle, settled_end));
        let (balance, ratio, residual) = match settled {
            Some((a, b)) => {
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
            None => (Balance::Undetermined, None, None),
        };
        let pf_to = start - cfg.prefault_guard_s;
        let pf_from = pf_to - cfg.prefault_window_s;
        let (prefault, problem) = if pf_from < t_first {
            (
                None,
                Some(format!(
                    "the recording has {:.3} s before the disturbance; the pre-fault window needs {:.3} s",
                    (start - t_first).max(0.0),
                    cfg.prefault_window_s + cfg.prefault_guard_s
                )),
            )
        } else if out
            .last()
            .and_then(|d: &Disturbance| d.end_s)
            .is_some_and(|e| e > pf_from)
        {
            (
                None,
                Some("the previous disturbance ended inside the pre-fault window".to_string()),
            )
        } else {
            let vap = mean_of(&v, s, pf_from, pf_to).unwrap_or(f64::NAN);
            let pf = Prefault {
                from_s: pf_from,
                to_s: pf_to,
                v_pu: vap,
                v1_pu: mean_between(s, Quantity::V1, pf_from, pf_to).unwrap_or(f64::NAN),
                p_pu: mean_between(s, Quantity::P, pf_from, pf_to),
                q_pu: mean_between(s, Quantity::Q, pf_from, pf_to),
                ip_pu: mean_between(s, Quantity::Ip, pf_from, pf_to),
                iq_pu: mean_between(s, Quantity::Iq, pf_from, pf_to),
                iq2_pu: mean_between(s, Quantity::Iq2, pf_from, pf_to),
                v2_pu: mean_between(s, Quantity::V2, pf_from, pf_to),
            };
            (Some(pf), None)
        };
        out.push(Disturbance {
            kind,
            start_s: start,
            end_s: end,
            end_confirmed: confirmed,
            extreme_pu: extreme,
            extreme_at_s: extreme_at,
            balance,
            unbalance_ratio: ratio,
            settled_s: settled,
            residual,
            prefault,
            prefault_problem: problem,
        });
    }
    Ok(out)
}

/// How the trip state was determined.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum TripMethod {
    Status,
    Current,
    /// Neither a status channel nor usable current: a trip cannot be seen.
    None,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
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
