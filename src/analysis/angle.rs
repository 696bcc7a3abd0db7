//! Phase-angle jumps and the grid frequency from the positive-sequence
//! voltage angle (docs/method.md, "Phase jumps and frequency").
//!
//! The one-cycle DFT turns its reference at the nominal frequency, so the
//! unwrapped angle `θ(t)` of `V1` ([`Quantity::V1Angle`]) is constant at
//! nominal frequency and turns at `2π·(f − fn)` otherwise:
//! `f = fn + (dθ/dt)/2π`.
//!
//! * **Jumps.** `D(t) = θ(t) − θ(t − T) − s·T` (one nominal cycle `T`, `s`
//!   the median one-cycle rate of `θ` over the 0.1 s before `t − T`, i.e.
//!   the frequency drift, robust to an earlier step) is zero while the
//!   frequency changes slowly and rises to the jump within one cycle of a
//!   step (the DFT window). Where `|D|` first
//!   exceeds the detection threshold, the jump is the mean of `θ` over two
//!   cycles after the step has passed through the window, minus the line
//!   fitted to `θ` over the 0.1 s that end one cycle before the crossing
//!   (the pre-event rotating reference, drift removed), wrapped to ±180°.
//! * **Frequency.** The least-squares slope of `θ` over a window of at least
//!   0.1 s, centred half a cycle after the point (the DFT's phasor lags its
//!   time stamp by half a window), on windows that hold no excluded sample
//!   (disturbances and phase-jump transitions, where the angle does not
//!   follow the frequency); NaN elsewhere. For a steady frequency or a
//!   linear ramp this slope is exact; see docs/method.md for the accuracy.
//! * **ROCOF** over `W`: `(f(t + W/2) − f(t − W/2)) / W`.
//!
//! [`Quantity::V1Angle`]: super::Quantity::V1Angle

use serde::{Deserialize, Serialize};

/// Length of the reference and averaging windows, s.
pub const REFERENCE_S: f64 = 0.1;
/// Smallest step reported as a phase jump by default, degrees.
pub const DEFAULT_THRESHOLD_DEG: f64 = 3.0;

/// A step of the positive-sequence voltage angle.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize, schemars::JsonSchema)]
pub struct PhaseJump {
    /// Where the step was first seen (the one-cycle difference crossed the
    /// threshold), s.
    pub at_s: f64,
    /// The settled angle after the step minus the pre-event reference,
    /// degrees, in (−180, 180].
    pub jump_deg: f64,
    /// The frequency of the pre-event reference, Hz (drift removed with it).
    pub reference_hz: f64,
    /// The reference window `[from, to]`, s.
    pub reference_s: [f64; 2],
    /// False when the angle did not settle for two cycles before the next
    /// change (the jump is then the largest one-cycle difference).
    pub settled: bool,
}

/// Running sums for least-squares lines over index ranges (time taken
/// from `t0` to keep the sums well conditioned); NaN samples are skipped
/// and counted.
struct Sums {
    t0: f64,
    n: Vec<f64>,
    st: Vec<f64>,
    sy: Vec<f64>,
    stt: Vec<f64>,
    sty: Vec<f64>,
}

impl Sums {
    fn new(t: &[f64], y: &[f64]) -> Self {
        let t0 = t.first().copied().unwrap_or(0.0);
        let len = t.len() + 1;
        let mut s = Sums {
            t0,
            n: Vec::with_capacity(len),
            st: Vec::with_capacity(len),
            sy: Vec::with_capacity(len),
            stt: Vec::with_capacity(len),
            sty: Vec::with_capacity(len),
        };
        let (mut n, mut st, mut sy, mut stt, mut sty) = (0.0, 0.0, 0.0, 0.0, 0.0);
        s.push(n, st, sy, stt, sty);
        for (x, v) in t.iter().zip(y) {
            if v.is_finite() {
                let x = x - t0;
                n += 1.0;
                st += x;
                sy += v;
                stt += x * x;
                sty += x * v;
            }
            s.push(n, st, sy, stt, sty);
        }
        s
    }
    fn push(&mut self, n: f64, st: f64, sy: f64, stt: f64, sty: f64) {
        self.n.push(n);
        self.st.push(st);
        self.sy.push(sy);
        self.stt.push(stt);
        self.sty.push(sty);
    }
    /// Finite samples in `a..b`.
    fn count(&self, a: usize, b: usize) -> f64 {
        self.n[b] - self.n[a]
    }
    /// The line `(slope, value at time 0 of the original axis)` over `a..b`.
    fn line(&self, a: usize, b: usize) -> Option<(f64, f64)> {
        let n = self.count(a, b);
        if n < 3.0 {
            return None;
        }
        let st = self.st[b] - self.st[a];
        let sy = self.sy[b] - self.sy[a];
        let stt = self.stt[b] - self.stt[a];
        let sty = self.sty[b] - self.sty[a];
        let den = n * stt - st * st;
        if den.abs() < 1e-300 {
            return None;
        }
        let slope = (n * sty - st * sy) / den;
        let icpt = (sy - slope * st) / n;
        Some((slope, icpt - slope * self.t0))
    }
}

fn range(t: &[f64], from: f64, to: f64) -> (usize, usize) {
    (
        t.partition_point(|x| *x < from),
        t.partition_point(|x| *x <= to),
    )
}

/// [`range`] for bounds that never decrease from call to call, by walking
/// forward from the previous answer instead of searching the whole series
/// (the same indices: `t` is sorted).
#[derive(Default)]
struct Walk {
    a: usize,
    b: usize,
}

impl Walk {
    fn range(&mut self, t: &[f64], from: f64, to: f64) -> (usize, usize) {
        self.a = self.before(t, from);
        while self.b < t.len() && t[self.b] <= to {
            self.b += 1;
        }
        (self.a, self.b)
    }

    /// `t.partition_point(|x| *x < x0)`.
    fn before(&mut self, t: &[f64], x0: f64) -> usize {
        while self.a < t.len() && t[self.a] < x0 {
            self.a += 1;
        }
        self.a
    }
}

fn wrap_deg(x: f64) -> f64 {
    let w = (x + 180.0).rem_euclid(360.0) - 180.0;
    if w == -180.0 {
        180.0
    } else {
        w
    }
}

/// The one-cycle difference `D` per sample with the drift removed: the
/// drift is the median of the one-cycle rates over the 0.1 s before `t − T`
/// (a median, so that an earlier step, which changes the differences for at
/// most two cycles of the window, does not move it).
fn one_cycle_difference(t: &[f64], theta: &[f64], cycle: f64) -> Vec<f64> {
    let n = t.len();
    // Index one cycle back, found by walking (times increase).
    let mut back_of = Vec::with_capacity(n);
    let mut j = 0;
    for x in t {
        while j < n && t[j] < x - cycle {
            j += 1;
        }
        back_of.push(j);
    }
    let rate: Vec<f64> = (0..n)
        .map(|k| {
            let j = back_of[k];
            if j < k && theta[k].is_finite() && theta[j].is_finite() {
                (theta[k] - theta[j]) / (t[k] - t[j])
            } else {
                f64::NAN
            }
        })
        .collect();
    let mut d = vec![f64::NAN; n];
    let mut buf: Vec<f64> = Vec::new();
    // The drift changes slowly: its median is taken afresh every quarter
    // cycle (from every fourth rate in the window) and held in between.
    let mut drift: Option<(f64, f64)> = None;
    for k in 0..n {
        let j = back_of[k];
        if j >= k || !rate[k].is_finite() {
            continue;
        }
        let fresh = drift.is_some_and(|(at, _)| (t[j] - at).abs() < 0.25 * cycle);
        if !fresh {
            let (a, b) = range(t, t[j] - REFERENCE_S, t[j]);
            buf.clear();
            buf.extend(
                rate[a..b]
                    .iter()
                    .step_by(4)
                    .copied()
                    .filter(|x| x.is_finite()),
            );
            drift = if buf.len() < 3 {
                None
            } else {
                let mid = buf.len() / 2;
                let (_, m, _) = buf.select_nth_unstable_by(mid, f64::total_cmp);
                Some((t[j], *m))
            };
        }
        let Some((_, m)) = drift else {
            continue;
        };
        d[k] = (rate[k] - m) * (t[k] - t[j]);
    }
    d
}

/// The phase jumps of an angle series `theta` (radians) on times `t`,
/// at nominal frequency `f_nom`; steps smaller than `threshold_deg` are not
/// reported.
pub fn phase_jumps(t: &[f64], theta: &[f64], f_nom: f64, threshold_deg: f64) -> Vec<PhaseJump> {
    let cycle = 1.0 / f_nom;
    let sums = Sums::new(t, theta);
    let thr = threshold_deg.to_radians();
    let n = t.len();
    let d = one_cycle_difference(t, theta, cycle);
    // Regions where |D| exceeds the threshold, split where it stays below
    // for a cycle.
    let mut starts = Vec::new();
    let mut k = 0;
    while k < n {
        if d[k].abs() > thr {
            starts.push(k);
            let mut quiet_since = None;
            while k < n {
                if d[k].abs() > thr / 2.0 {
                    quiet_since = None;
                } else if quiet_since.is_none() {
                    quiet_since = Some(t[k]);
                }
                if quiet_since.is_some_and(|q| t[k] - q >= cycle) {
                    break;
                }
                k += 1;
            }
        }
        k += 1;
    }
    let mut out = Vec::new();
    // The reference of the event before: its line shifted by its jump, and
    // where the angle had settled after it.
    let mut prev: Option<(f64, f64, f64)> = None;
    for (i, &s) in starts.iter().enumerate() {
        let tc = t[s];
        let ref_to = tc - 1.25 * cycle;
        let mut ref_from = ref_to - REFERENCE_S;
        let line = match prev {
            Some((_, _, settled_from)) if settled_from > ref_from => {
                ref_from = settled_from;
                let (a, b) = range(t, ref_from, ref_to);
                if ref_to - ref_from >= 2.0 * cycle {
                    sums.line(a, b)
                } else {
                    // Too short to fit: the previous reference, moved by its jump.
                    prev.map(|(slope, icpt, _)| (slope, icpt))
                }
            }
            _ => {
                let (a, b) = range(t, ref_from, ref_to);
                sums.line(a, b)
            }
        };
        let Some((slope, icpt)) = line else {
            continue;
        };
        let next = starts.get(i + 1).map_or(f64::INFINITY, |&x| t[x] - cycle);
        let post_from = tc + 1.25 * cycle;
        let post_to = (post_from + 2.0 * cycle).min(next);
        let (pa, pb) = range(t, post_from, post_to);
        let settled = post_to - post_from >= 0.5 * cycle && sums.count(pa, pb) >= 3.0;
        let jump = if settled {
            (pa..pb)
                .filter(|&k| theta[k].is_finite())
                .map(|k| theta[k] - (icpt + slope * t[k]))
                .sum::<f64>()
                / sums.count(pa, pb)
        } else {
            let end = t.partition_point(|x| *x <= next.min(tc + 2.0 * cycle));
            (s..end.max(s + 1).min(n))
                .map(|k| d[k])
                .filter(|x| x.is_finite())
                .fold(0.0f64, |m, x| if x.abs() > m.abs() { x } else { m })
        };
        prev = Some((slope, icpt + jump, post_from));
        let jump_deg = wrap_deg(jump.to_degrees());
        if jump_deg.abs() < threshold_deg {
            continue;
        }
        out.push(PhaseJump {
            at_s: tc,
            jump_deg,
            reference_hz: f_nom + slope / std::f64::consts::TAU,
            reference_s: [ref_from, ref_to],
            settled,
        });
    }
    out
}

/// The windows where the angle does not follow the frequency: each
/// interval widened by one cycle before and two after.
pub fn exclusions(intervals: &[(f64, f64)], cycle: f64) -> Vec<(f64, f64)> {
    intervals
        .iter()
        .map(|(a, b)| (a - cycle, b + 2.0 * cycle))
        .collect()
}

/// The frequency, Hz, at each point of `t`: the least-squares slope of
/// `theta` over `window_s` centred half a cycle after the point; NaN where
/// the window reaches outside the recording, holds a NaN or touches an
/// excluded interval.
pub fn frequency(
    t: &[f64],
    theta: &[f64],
    f_nom: f64,
    excluded: &[(f64, f64)],
    window_s: f64,
) -> Vec<f64> {
    let sums = Sums::new(t, theta);
    let half_cycle = 0.5 / f_nom;
    let (first, last) = match (t.first(), t.last()) {
        (Some(a), Some(b)) => (*a, *b),
        _ => return Vec::new(),
    };
    // The window's bounds only move forward: `range` found by walking.
    let mut walk = Walk::default();
    t.iter()
        .map(|&tk| {
            let c = tk + half_cycle;
            let (from, to) = (c - window_s / 2.0, c + window_s / 2.0);
            if from < first || to > last || excluded.iter().any(|(a, b)| *a < to && *b > from) {
                return f64::NAN;
            }
            let (a, b) = walk.range(t, from, to);
            if sums.count(a, b) < (b - a) as f64 {
                return f64::NAN;
            }
            match sums.line(a, b) {
                Some((slope, _)) => f_nom + slope / std::f64::consts::TAU,
                None => f64::NAN,
            }
        })
        .collect()
}

/// The rate of change of frequency, Hz/s, over `window_s`: the frequency
/// `window_s/2` after the point minus the one `window_s/2` before, over
/// `window_s`; NaN where either is unknown.
pub fn rocof(t: &[f64], f: &[f64], window_s: f64) -> Vec<f64> {
    // Both instants only move forward: each has its own walk.
    let at = |walk: &mut Walk, x: f64| -> f64 {
        let k = walk.before(t, x);
        match (
            k.checked_sub(1).map(|j| (t[j], f[j])),
            t.get(k).map(|v| (*v, f[k])),
        ) {
            (Some((ta, fa)), Some((tb, fb))) if tb > ta => fa + (fb - fa) * (x - ta) / (tb - ta),
            (_, Some((tb, fb))) if tb == x => fb,
            _ => f64::NAN,
        }
    };
    let (mut ahead, mut behind) = (Walk::default(), Walk::default());
    t.iter()
        .map(|&tk| {
            (at(&mut ahead, tk + window_s / 2.0) - at(&mut behind, tk - window_s / 2.0)) / window_s
        })
        .collect()
}

/// The angle against a pre-event reference, degrees, for figures: the
/// line fitted over `reference`'s window (or over the first 0.1 s when
/// there is none) taken from the angle.
pub fn deviation_deg(
    t: &[f64],
    theta: &[f64],
    f_nom: f64,
    reference: Option<&PhaseJump>,
) -> Vec<(f64, f64)> {
    let sums = Sums::new(t, theta);
    let [from, to] = match reference {
        Some(j) => j.reference_s,
        None => {
            let t0 = t.first().copied().unwrap_or(0.0) + 1.0 / f_nom;
            [t0, t0 + REFERENCE_S]
        }
    };
    let (a, b) = range(t, from, to);
    let Some((slope, icpt)) = sums.line(a, b) else {
        return Vec::new();
    };
    t.iter()
        .zip(theta)
        .map(|(x, y)| (*x, (y - (icpt + slope * x)).to_degrees()))
        .collect()
}

/// The frequency of an analysed recording, Hz per series point, over
/// `window_s`, with the voltage disturbances and the phase jumps
/// (found with the default threshold) excluded; `None` without an angle.
pub fn series_frequency(
    series: &super::Series,
    f_nom: f64,
    disturbances: &[super::events::Disturbance],
    window_s: f64,
) -> Option<Vec<f64>> {
    let theta = series.get(super::Quantity::V1Angle)?;
    let jumps = phase_jumps(&series.t, theta, f_nom, DEFAULT_THRESHOLD_DEG);
    frequency_around(series, f_nom, disturbances, &jumps, window_s)
}

/// [`series_frequency`] with the phase jumps already found.
fn frequency_around(
    series: &super::Series,
    f_nom: f64,
    disturbances: &[super::events::Disturbance],
    jumps: &[PhaseJump],
    window_s: f64,
) -> Option<Vec<f64>> {
    let theta = series.get(super::Quantity::V1Angle)?;
    let t = &series.t;
    let cycle = 1.0 / f_nom;
    // A disturbance that never ended lasts to the end of the recording.
    let end = t.last().copied().unwrap_or(0.0);
    let mut spans: Vec<(f64, f64)> = disturbances
        .iter()
        .map(|d| (d.start_s, d.end_s.unwrap_or(end)))
        .collect();
    spans.extend(jumps.iter().map(|j| (j.at_s - cycle, j.at_s + cycle)));
    Some(frequency(
        t,
        theta,
        f_nom,
        &exclusions(&spans, cycle),
        window_s,
    ))
}

/// `f` with each NaN replaced by the value before it (the first finite
/// value before the first one): for scanning levels across the excluded
/// windows.
pub fn held(f: &[f64]) -> Vec<f64> {
    let first = f
        .iter()
        .copied()
        .find(|x| x.is_finite())
        .unwrap_or(f64::NAN);
    let mut last = first;
    f.iter()
        .map(|x| {
            if x.is_finite() {
                last = *x;
            }
            last
        })
        .collect()
}

/// The frequency of a recording in brief (what `inspect` and the results
/// show): over 0.1 s, disturbances and jumps excluded; ROCOF over 0.5 s.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize, schemars::JsonSchema)]
pub struct FrequencySummary {
    /// Averaging window of the frequency, s.
    pub averaging_s: f64,
    /// Lowest and highest estimate, Hz (null: no estimate).
    pub min_hz: Option<f64>,
    pub max_hz: Option<f64>,
    /// ROCOF window, s, and the largest |ROCOF| over it, Hz/s.
    pub rocof_window_s: f64,
    pub max_abs_rocof_hz_per_s: Option<f64>,
    /// Share of the points with an estimate (the rest lie in excluded
    /// windows or too near the ends).
    pub estimated_share: f64,
}

/// ROCOF window of the summary, s.
pub const SUMMARY_ROCOF_S: f64 = 0.5;

/// The phase jumps (default threshold) and the frequency summary of an
/// analysed recording; `None` without an angle.
pub fn summarise(
    series: &super::Series,
    f_nom: f64,
    disturbances: &[super::events::Disturbance],
) -> Option<(Vec<PhaseJump>, FrequencySummary)> {
    let theta = series.get(super::Quantity::V1Angle)?;
    let t = &series.t;
    let jumps = phase_jumps(t, theta, f_nom, DEFAULT_THRESHOLD_DEG);
    let f = frequency_around(series, f_nom, disturbances, &jumps, REFERENCE_S)?;
    let r = rocof(t, &f, SUMMARY_ROCOF_S);
    let finite = |v: &[f64]| {
        v.iter()
            .copied()
            .filter(|x| x.is_finite())
            .collect::<Vec<_>>()
    };
    let fs = finite(&f);
    let rs = finite(&r);
    let fold = |v: &[f64], init: f64, op: fn(f64, f64) -> f64| {
        (!v.is_empty()).then(|| v.iter().copied().fold(init, op))
    };
    Some((
        jumps,
        FrequencySummary {
            averaging_s: REFERENCE_S,
            min_hz: fold(&fs, f64::INFINITY, f64::min),
            max_hz: fold(&fs, f64::NEG_INFINITY, f64::max),
            rocof_window_s: SUMMARY_ROCOF_S,
            max_abs_rocof_hz_per_s: (!rs.is_empty())
                .then(|| rs.iter().fold(0.0f64, |m, x| m.max(x.abs()))),
            estimated_share: fs.len() as f64 / f.len().max(1) as f64,
        },
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn least_squares_line_of_a_known_line() {
        // y = 2 + 3t sampled at 1 ms: slope 3, value at t = 0 is 2 (exact).
        let t: Vec<f64> = (0..200).map(|k| 10.0 + k as f64 * 1e-3).collect();
        let y: Vec<f64> = t.iter().map(|x| 2.0 + 3.0 * x).collect();
        let (s, c) = Sums::new(&t, &y).line(0, 200).unwrap();
        assert!((s - 3.0).abs() < 1e-9 && (c - 2.0).abs() < 1e-7, "{s} {c}");
        assert_eq!(wrap_deg(190.0), -170.0);
        assert_eq!(wrap_deg(-180.0), 180.0);
    }
}
