//! Model validation: a simulated recording of a test against the measured
//! one (docs/validation.md). Both are analysed as for `check`, aligned on
//! the disturbance start, and compared window by window on the quasi-steady
//! parts: mean error `ME = mean(sim − meas)`, mean absolute error
//! `MAE = mean|sim − meas|`, maximum error `MXE = max|sim − meas|`, in per
//! unit, at the measured series' time points (the simulated series
//! interpolated linearly), each window half-open `[from, to)`.
//!
//! Windows on the measured time axis (`start` the disturbance start,
//! `clear` its clearance: waveform clearance where the recording shows it,
//! else the disturbance end):
//! * pre-fault `[start − prefault_s, start − one cycle)`;
//! * fault `[start, clear)`, of which `[start, start + fault_transient_s)`
//!   is the excluded transient part;
//! * post-fault `[clear, clear + post_s)`, of which
//!   `[clear, clear + post_transient_s)` is excluded.
//!
//! A sample within 1 ns of a bound counts as on it.

pub mod run;
pub mod spec;

use crate::analysis::events::Disturbance;
use crate::analysis::{Quantity, Series};
use crate::rules::result::{FileRef, HashedFile, Nullable, Tool, Verdict};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};
pub use spec::{ValidatedQuantity, ValidationRules, WindowName};

/// One analysed side of the comparison.
pub struct Side<'a> {
    pub series: &'a Series,
    pub disturbance: Option<&'a Disturbance>,
    pub cycle_s: f64,
}

/// How the simulated recording was placed on the measured time axis.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Alignment {
    /// Disturbance start in each recording's own time, s.
    pub measured_start_s: f64,
    pub simulated_start_s: f64,
    /// The offset given on the command line (or in the plan), s.
    pub manual_offset_s: f64,
    /// Added to the simulated times: measured start − simulated start +
    /// manual offset, s.
    pub shift_s: f64,
    pub how: String,
}

/// A comparison window.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Window {
    pub name: WindowName,
    /// The whole window, s (measured time axis).
    pub from_s: f64,
    pub to_s: f64,
    /// The quasi-steady part that is compared, s.
    pub compared_from_s: f64,
    pub compared_to_s: f64,
}

/// The errors of one quantity in one window, with the verdict.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Row {
    pub window: WindowName,
    pub quantity: ValidatedQuantity,
    /// Compared samples.
    pub samples: usize,
    #[schemars(with = "Nullable<f64>")]
    pub me_pu: Option<f64>,
    #[schemars(with = "Nullable<f64>")]
    pub mae_pu: Option<f64>,
    #[schemars(with = "Nullable<f64>")]
    pub mxe_pu: Option<f64>,
    /// Time of the largest error, s.
    #[schemars(with = "Nullable<f64>")]
    pub mxe_at_s: Option<f64>,
    /// The rule's limits (null: not limited).
    #[schemars(with = "Nullable<f64>")]
    pub me_limit_pu: Option<f64>,
    #[schemars(with = "Nullable<f64>")]
    pub mae_limit_pu: Option<f64>,
    #[schemars(with = "Nullable<f64>")]
    pub mxe_limit_pu: Option<f64>,
    pub verdict: Verdict,
    pub detail: String,
}

/// Response times of one recording (reported side by side, not judged).
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Dynamics {
    /// From the disturbance start until the reactive current change first
    /// reaches 90 % of its quasi-steady fault value, s.
    #[schemars(with = "Nullable<f64>")]
    pub iq_rise_s: Option<f64>,
    /// From the start until it stays within ±10 % of that value up to the
    /// clearance, s.
    #[schemars(with = "Nullable<f64>")]
    pub iq_settling_s: Option<f64>,
    /// From the clearance until active power first reaches 90 % of its
    /// pre-fault value, s.
    #[schemars(with = "Nullable<f64>")]
    pub p_recovery_s: Option<f64>,
}

/// The response times of both recordings.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct DynamicsPair {
    pub measured: Dynamics,
    pub simulated: Dynamics,
}

/// The comparison of one test.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Comparison {
    pub alignment: Alignment,
    pub windows: Vec<Window>,
    pub rows: Vec<Row>,
    /// Response times of each recording, side by side.
    pub dynamics: DynamicsPair,
    pub verdict: Verdict,
    pub notes: Vec<String>,
}

/// The value of `v` at `x` by linear interpolation (NaN outside `t`).
pub fn interpolate(t: &[f64], v: &[f64], x: f64) -> f64 {
    let k = t.partition_point(|y| *y < x);
    if k < t.len() && t[k] == x {
        return v[k];
    }
    if k == 0 || k >= t.len() {
        return f64::NAN;
    }
    let (t0, t1) = (t[k - 1], t[k]);
    v[k - 1] + (v[k] - v[k - 1]) * (x - t0) / (t1 - t0)
}

/// Times this close to a window bound count as on it, s.
pub const BOUND_TOLERANCE_S: f64 = 1e-9;

/// ME, MAE, MXE and where the largest error is, of `sim − meas` at the
/// measured times in `[from, to)`; NaN samples are left out.
pub fn errors(
    meas_t: &[f64],
    meas: &[f64],
    sim_t: &[f64],
    sim: &[f64],
    shift: f64,
    from: f64,
    to: f64,
) -> (usize, Option<(f64, f64, f64, f64)>) {
    // A sample within 1 ns of a bound is on it (times read from text and
    // bounds computed as sums differ in the last bit).
    let a = meas_t.partition_point(|x| *x < from - BOUND_TOLERANCE_S);
    let b = meas_t.partition_point(|x| *x < to - BOUND_TOLERANCE_S);
    let (mut n, mut sum, mut sum_abs, mut max, mut at) = (0usize, 0.0, 0.0, 0.0f64, f64::NAN);
    for k in a..b {
        let s = interpolate(sim_t, sim, meas_t[k] - shift);
        let e = s - meas[k];
        if !e.is_finite() {
            continue;
        }
        n += 1;
        sum += e;
        sum_abs += e.abs();
        if e.abs() > max || at.is_nan() {
            max = max.max(e.abs());
            at = meas_t[k];
        }
    }
    if n == 0 {
        return (0, None);
    }
    (n, Some((sum / n as f64, sum_abs / n as f64, max, at)))
}

/// The windows of a test on the measured time axis.
pub fn windows(
    rules: &ValidationRules,
    start: f64,
    clear: Option<f64>,
    cycle: f64,
    common: (f64, f64),
) -> Vec<Window> {
    let w = &rules.windows;
    let clip = |x: f64| x.clamp(common.0, common.1);
    let mut out = vec![Window {
        name: WindowName::Pre,
        from_s: clip(start - w.prefault_s),
        to_s: clip(start - cycle),
        compared_from_s: clip(start - w.prefault_s),
        compared_to_s: clip(start - cycle),
    }];
    if let Some(c) = clear {
        out.push(Window {
            name: WindowName::Fault,
            from_s: clip(start),
            to_s: clip(c),
            compared_from_s: clip((start + w.fault_transient_s).min(c)),
            compared_to_s: clip(c),
        });
        let end = clip(c + w.post_s);
        out.push(Window {
            name: WindowName::Post,
            from_s: clip(c),
            to_s: end,
            compared_from_s: clip((c + w.post_transient_s).min(end)),
            compared_to_s: end,
        });
    }
    out
}

/// The series of a quantity, where the recording has it.
fn quantity(s: &Series, q: ValidatedQuantity) -> Option<&[f64]> {
    s.get(q.analysis())
}

/// The response times of one side.
pub fn dynamics(side: &Side<'_>, rules: &ValidationRules, clear: Option<f64>) -> Dynamics {
    let Some(d) = side.disturbance else {
        return Dynamics::default();
    };
    let s = side.series;
    let t = &s.t;
    let start = d.start_s;
    let mean = |v: &[f64], a: f64, b: f64| {
        let (i, j) = (t.partition_point(|x| *x < a), t.partition_point(|x| *x < b));
        let xs: Vec<f64> = v[i..j.max(i)]
            .iter()
            .copied()
            .filter(|x| x.is_finite())
            .collect();
        (!xs.is_empty()).then(|| xs.iter().sum::<f64>() / xs.len() as f64)
    };
    let mut out = Dynamics::default();
    let pre = (start - rules.windows.prefault_s, start - side.cycle_s);
    if let (Some(iq), Some(c)) = (s.get(Quantity::Iq), clear) {
        let q0 = mean(iq, pre.0, pre.1);
        let qs = mean(iq, (start + rules.windows.fault_transient_s).min(c), c);
        if let (Some(q0), Some(qs)) = (q0, qs) {
            let delta = qs - q0;
            if delta.abs() > 0.05 {
                let (i, j) = (
                    t.partition_point(|x| *x < start),
                    t.partition_point(|x| *x < c),
                );
                out.iq_rise_s = (i..j)
                    .find(|&k| (iq[k] - q0) / delta >= 0.9)
                    .map(|k| t[k] - start);
                let outside = (i..j)
                    .rev()
                    .find(|&k| ((iq[k] - q0) / delta - 1.0).abs() > 0.1);
                out.iq_settling_s = match outside {
                    None => Some(0.0),
                    Some(k) if k + 1 < j => Some(t[k + 1] - start),
                    Some(_) => None,
                };
            }
        }
    }
    if let (Some(p), Some(c)) = (s.get(Quantity::P), clear) {
        if let Some(p0) = mean(p, pre.0, pre.1).filter(|p0| *p0 > 0.1) {
            let i = t.partition_point(|x| *x < c);
            out.p_recovery_s = (i..t.len()).find(|&k| p[k] >= 0.9 * p0).map(|k| t[k] - c);
        }
    }
    out
}

fn judge(
    rules: &ValidationRules,
    w: &Window,
    q: ValidatedQuantity,
    stats: (usize, Option<(f64, f64, f64, f64)>),
) -> Option<Row> {
    let lim = rules.limit(q, w.name)?;
    let (n, s) = stats;
    let mut row = Row {
        window: w.name,
        quantity: q,
        samples: n,
        me_pu: s.map(|x| x.0),
        mae_pu: s.map(|x| x.1),
        mxe_pu: s.map(|x| x.2),
        mxe_at_s: s.map(|x| x.3),
        me_limit_pu: lim.me_pu,
        mae_limit_pu: lim.mae_pu,
        mxe_limit_pu: lim.mxe_pu,
        verdict: Verdict::Inconclusive,
        detail: String::new(),
    };
    let Some((me, mae, mxe, _)) = s.filter(|_| n >= 3) else {
        row.detail = format!(
            "{} compared samples in {:.3}..{:.3} s: too few to judge",
            n, w.compared_from_s, w.compared_to_s
        );
        return Some(row);
    };
    let mut over = Vec::new();
    for (name, value, limit) in [
        ("|ME|", me.abs(), lim.me_pu),
        ("MAE", mae, lim.mae_pu),
        ("MXE", mxe, lim.mxe_pu),
    ] {
        if let Some(l) = limit.filter(|l| value > *l) {
            over.push(format!("{name} {value:.4} pu > {l} pu"));
        }
    }
    if over.is_empty() {
        row.verdict = Verdict::Pass;
        row.detail = format!(
            "ME {me:+.4} pu, MAE {mae:.4} pu, MXE {mxe:.4} pu over {n} samples in {:.3}..{:.3} s: within the limits",
            w.compared_from_s, w.compared_to_s
        );
    } else {
        row.verdict = Verdict::Fail;
        row.detail = format!(
            "{} over {n} samples in {:.3}..{:.3} s",
            over.join(", "),
            w.compared_from_s,
            w.compared_to_s
        );
    }
    Some(row)
}

/// Compares the simulated side with the measured one.
pub fn compare(
    rules: &ValidationRules,
    meas: &Side<'_>,
    sim: &Side<'_>,
    manual_offset_s: f64,
) -> Result<Comparison, String> {
    let (Some(dm), Some(ds)) = (meas.disturbance, sim.disturbance) else {
        return Err(format!(
            "no disturbance in the {} recording to align on; a manual offset alone is not enough to place the windows",
            if meas.disturbance.is_none() { "measured" } else { "simulated" }
        ));
    };
    let shift = dm.start_s - ds.start_s + manual_offset_s;
    let alignment = Alignment {
        measured_start_s: dm.start_s,
        simulated_start_s: ds.start_s,
        manual_offset_s,
        shift_s: shift,
        how: format!(
            "simulated times shifted by {shift:+.4} s: disturbance start {:.4} s measured, {:.4} s simulated{}",
            dm.start_s,
            ds.start_s,
            if manual_offset_s != 0.0 {
                format!(", plus the manual offset {manual_offset_s:+.4} s")
            } else {
                String::new()
            }
        ),
    };
    let clear_of = |d: &Disturbance| d.clearance_s.or(d.end_s);
    let (mt, st) = (&meas.series.t, &sim.series.t);
    let common = (
        mt.first()
            .copied()
            .unwrap_or(0.0)
            .max(st.first().copied().unwrap_or(0.0) + shift),
        mt.last()
            .copied()
            .unwrap_or(0.0)
            .min(st.last().copied().unwrap_or(0.0) + shift),
    );
    let mut notes = Vec::new();
    let clear = clear_of(dm);
    if clear.is_none() {
        notes.push("the measured voltage did not recover in the recording: no fault and post-fault windows".into());
    }
    let windows = windows(rules, dm.start_s, clear, meas.cycle_s, common);
    let mut rows = Vec::new();
    for w in &windows {
        for q in rules.quantities_for(w.name) {
            let stats = match (quantity(meas.series, q), quantity(sim.series, q)) {
                (Some(a), Some(b)) => {
                    errors(mt, a, st, b, shift, w.compared_from_s, w.compared_to_s)
                }
                _ => {
                    let mut r = judge(rules, w, q, (0, None)).expect("a limited quantity");
                    r.detail = format!(
                        "{} is not in the {} recording",
                        q.name(),
                        if quantity(meas.series, q).is_none() {
                            "measured"
                        } else {
                            "simulated"
                        }
                    );
                    rows.push(r);
                    continue;
                }
            };
            if let Some(r) = judge(rules, w, q, stats) {
                rows.push(r);
            }
        }
    }
    let verdict = Verdict::combine(rows.iter().map(|r| r.verdict));
    Ok(Comparison {
        alignment,
        windows,
        dynamics: DynamicsPair {
            measured: dynamics(meas, rules, clear),
            simulated: dynamics(sim, rules, clear_of(ds)),
        },
        rows,
        verdict,
        notes,
    })
}

/// `validation.json`, schema version 1.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct ValidationResults {
    pub schema_version: u32,
    pub tool: Tool,
    pub rules: FileRef,
    /// Parameter values of the validation rule.
    #[serde(default)]
    pub parameters: std::collections::BTreeMap<String, f64>,
    pub measured: HashedFile,
    pub simulated: HashedFile,
    pub frequency_hz: f64,
    #[serde(flatten)]
    pub comparison: Comparison,
    #[serde(default)]
    pub generated_utc: Option<String>,
    #[serde(default)]
    pub command_line: Option<String>,
    pub caution: String,
}
