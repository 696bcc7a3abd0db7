//! Ride-through zone checks: envelopes and duration tables, and the verdict
//! rules they share (domain reference §5).

use super::result::{CheckResult, Verdict};
use super::spec::{Bound, Cessation, Side, TableMode, TableRow};

/// The boundary `C(τ)` of an envelope: linear between points, a repeated
/// time is a vertical step (the later point holds from that time on), flat
/// before the first and after the last point.
pub fn curve_at(points: &[[f64; 2]], tau: f64) -> f64 {
    if points.is_empty() {
        return f64::NAN;
    }
    if tau < points[0][0] {
        return points[0][1];
    }
    // Last point with time ≤ τ: at a repeated time, the later point.
    let i = points.partition_point(|p| p[0] <= tau) - 1;
    match points.get(i + 1) {
        Some(next) if next[0] > points[i][0] => {
            let [t0, v0] = points[i];
            let [t1, v1] = *next;
            v0 + (v1 - v0) * (tau - t0) / (t1 - t0)
        }
        _ => points[i][1],
    }
}

/// What a scan of the zone found between `t0` and `t_end`.
#[derive(Clone, Debug, PartialEq)]
pub struct ZoneScan {
    /// First time the voltage was outside the zone.
    pub first_outside: Option<f64>,
    /// Smallest margin (pu for envelopes, s for tables) and where.
    pub margin: f64,
    pub at_s: f64,
    pub measured: f64,
    pub limit: f64,
    /// Sentence fragment naming what was closest.
    pub closest: String,
    pub samples: usize,
}

impl ZoneScan {
    fn empty() -> Self {
        ZoneScan {
            first_outside: None,
            margin: f64::INFINITY,
            at_s: f64::NAN,
            measured: f64::NAN,
            limit: f64::NAN,
            closest: String::new(),
            samples: 0,
        }
    }
}

/// Indices of the finite samples with `t0 ≤ t ≤ t_end`.
fn window<'a>(t: &'a [f64], v: &'a [f64], t0: f64, t_end: f64) -> impl Iterator<Item = usize> + 'a {
    let from = t.partition_point(|x| *x < t0);
    (from..t.len())
        .take_while(move |k| t[*k] <= t_end)
        .filter(move |k| v[*k].is_finite())
}

/// Scans an envelope over samples with `t0 ≤ t ≤ t_end`.
pub fn scan_envelope(
    t: &[f64],
    v: &[f64],
    t0: f64,
    t_end: f64,
    bound: Bound,
    points: &[[f64; 2]],
) -> ZoneScan {
    let mut s = ZoneScan::empty();
    for k in window(t, v, t0, t_end) {
        s.samples += 1;
        let c = curve_at(points, t[k] - t0);
        let m = match bound {
            Bound::Lower => v[k] - c,
            Bound::Upper => c - v[k],
        };
        if m < 0.0 && s.first_outside.is_none() {
            s.first_outside = Some(t[k]);
        }
        if m < s.margin {
            s.margin = m;
            s.at_s = t[k];
            s.measured = v[k];
            s.limit = c;
        }
    }
    if s.samples > 0 {
        let tau = s.at_s - t0;
        // Name the envelope point nearest in time to the closest approach.
        let nearest = points
            .iter()
            .min_by(|a, b| (a[0] - tau).abs().total_cmp(&(b[0] - tau).abs()))
            .copied()
            .unwrap_or([0.0, 0.0]);
        s.closest = format!(
            "closest approach {:.3} pu against the boundary {:.3} pu at {:.3} s after the start (nearest envelope point [{}, {}])",
            s.measured, s.limit, tau, nearest[0], nearest[1]
        );
    }
    s
}

/// Scans a duration table over samples with `t0 ≤ t ≤ t_end`. The margin is
/// `max_s − r` (s) of the row closest to its limit, over rows the voltage
/// went beyond.
pub fn scan_table(
    t: &[f64],
    v: &[f64],
    t0: f64,
    t_end: f64,
    side: Side,
    rows: &[TableRow],
    mode: TableMode,
) -> ZoneScan {
    let n = rows.len();
    let mut run_start: Vec<Option<f64>> = vec![None; n];
    let mut done: Vec<f64> = vec![0.0; n];
    let mut last_beyond: Vec<f64> = vec![f64::NAN; n];
    let mut worst_r: Vec<f64> = vec![f64::NAN; n];
    let mut worst_at: Vec<f64> = vec![f64::NAN; n];
    let mut s = ZoneScan::empty();
    for k in window(t, v, t0, t_end) {
        s.samples += 1;
        for (i, row) in rows.iter().enumerate() {
            let beyond = match side {
                Side::Below => v[k] < row.beyond_pu,
                Side::Above => v[k] > row.beyond_pu,
            };
            if beyond {
                let a = *run_start[i].get_or_insert(t[k]);
                let r = match mode {
                    TableMode::Continuous => t[k] - a,
                    TableMode::Cumulative => done[i] + (t[k] - a),
                };
                if !(worst_r[i] >= r) {
                    worst_r[i] = r;
                    worst_at[i] = t[k];
                }
                if r >= row.max_s && s.first_outside.is_none() {
                    s.first_outside = Some(t[k]);
                }
                last_beyond[i] = t[k];
            } else if let Some(a) = run_start[i].take() {
                // The run ended at the previous beyond sample.
                done[i] += last_beyond[i] - a;
            }
        }
    }
    // Cumulative runs: `done` is updated when a run ends; a run still open
    // at the end is already counted in worst_r.
    let mut best: Option<usize> = None;
    for i in 0..n {
        if worst_r[i].is_finite() {
            let m = rows[i].max_s - worst_r[i];
            if best.is_none_or(|b| m < rows[b].max_s - worst_r[b]) {
                best = Some(i);
            }
        }
    }
    match best {
        Some(i) => {
            s.margin = rows[i].max_s - worst_r[i];
            s.measured = worst_r[i];
            s.limit = rows[i].max_s;
            s.at_s = worst_at[i];
            s.closest = format!(
                "{} {} pu for {:.3} s{} against the row's {} s",
                match side {
                    Side::Below => "below",
                    Side::Above => "above",
                },
                rows[i].beyond_pu,
                worst_r[i],
                if mode == TableMode::Cumulative {
                    " in total"
                } else {
                    ""
                },
                rows[i].max_s
            );
        }
        None => {
            let lim = rows.iter().map(|r| r.max_s).fold(f64::INFINITY, f64::min);
            s.margin = lim;
            s.measured = 0.0;
            s.limit = lim;
            s.at_s = t0;
            s.closest = "the voltage never went beyond any row's level".into();
        }
    }
    s
}

/// Facts about the unit's connection that the zone verdict needs.
pub struct ConnectionFacts {
    /// Trip time inside this disturbance's window, if any.
    pub trip_s: Option<f64>,
    /// A trip before the window (the unit was already off).
    pub tripped_before_s: Option<f64>,
    /// False when the recording cannot show a trip.
    pub trip_visible: bool,
    pub cessations: Vec<(f64, f64)>,
}

/// When the disturbance happened and what the recording covers.
pub struct Timing {
    pub t0: f64,
    /// Phasor-level duration of the disturbance (None: it never ended).
    pub disturbance_s: Option<f64>,
    pub cycle_s: f64,
    pub recording_end_s: f64,
    /// The recording must reach this time when the voltage never recovered.
    pub needs_until_s: f64,
}

/// Turns a zone scan into a verdict (domain reference §5, envelope).
pub fn zone_verdict(
    mut r: CheckResult,
    scan: &ZoneScan,
    conn: &ConnectionFacts,
    timing: &Timing,
    cessation: Cessation,
) -> CheckResult {
    let Timing {
        t0,
        disturbance_s,
        cycle_s,
        recording_end_s,
        needs_until_s,
    } = *timing;
    r.measured = scan.measured.is_finite().then_some(scan.measured);
    r.limit = scan.limit.is_finite().then_some(scan.limit);
    r.margin = scan.margin.is_finite().then_some(scan.margin);
    r.at_s = scan.at_s.is_finite().then_some(scan.at_s);
    r.left_zone_s = scan.first_outside;
    if let Some(tb) = conn.tripped_before_s {
        return r.verdict(
            Verdict::Inconclusive,
            format!("the unit had already tripped at {tb:.3} s, before this disturbance started at {t0:.3} s"),
        );
    }
    if let Some(d) = disturbance_s {
        // A one-cycle window turns a fault of length L into a phasor-level
        // excursion of about L + one cycle whose depth is only reached when
        // L ≥ one cycle; below two cycles at phasor level the depth is unknown.
        if d < 2.0 * cycle_s {
            return r.verdict(
                Verdict::Inconclusive,
                format!(
                    "the disturbance lasted {:.1} ms at phasor level (less than two nominal cycles, {:.1} ms): the fault was too short for one-cycle phasors to show its depth, so the data cannot decide",
                    d * 1e3,
                    2.0 * cycle_s * 1e3
                ),
            );
        }
    }
    if scan.samples == 0 {
        return r.verdict(
            Verdict::Inconclusive,
            "no analysed samples after the disturbance start",
        );
    }
    let forbidden_cessation = if cessation == Cessation::Forbidden {
        let inside_until = scan.first_outside.unwrap_or(f64::INFINITY);
        conn.cessations
            .iter()
            .find(|(a, _)| *a >= t0 && *a < inside_until)
            .copied()
    } else {
        None
    };
    let noted_cessation = conn
        .cessations
        .iter()
        .filter(|(a, _)| *a >= t0)
        .map(|(a, b)| format!("{a:.3}–{b:.3} s"))
        .collect::<Vec<_>>();
    let cess_note = if noted_cessation.is_empty() {
        String::new()
    } else {
        format!(
            "; momentary cessation (current blocked) at {}",
            noted_cessation.join(", ")
        )
    };
    match conn.trip_s {
        Some(tt) => match scan.first_outside {
            Some(o) if o <= tt => {
                r.permitted_trip = Some(true);
                r.verdict(
                    Verdict::Pass,
                    format!(
                        "permitted trip: the voltage left the ride-through zone at {o:.3} s and the unit tripped afterwards at {tt:.3} s{cess_note}"
                    ),
                )
            }
            _ => {
                r.permitted_trip = Some(false);
                r.verdict(
                    Verdict::Fail,
                    format!(
                        "the unit tripped at {tt:.3} s while the voltage was inside the ride-through zone; {}{cess_note}",
                        scan.closest
                    ),
                )
            }
        },
        None => {
            if let Some((a, b)) = forbidden_cessation {
                return r.verdict(
                    Verdict::Fail,
                    format!("momentary cessation {a:.3}–{b:.3} s inside the ride-through zone, which the rule forbids"),
                );
            }
            if !conn.trip_visible {
                return r.verdict(
                    Verdict::Inconclusive,
                    format!(
                        "the recording has neither a status channel nor usable current, so staying connected cannot be shown; {}",
                        scan.closest
                    ),
                );
            }
            if scan.first_outside.is_none() && recording_end_s < needs_until_s {
                return r.verdict(
                    Verdict::Inconclusive,
                    format!(
                        "the recording ends at {recording_end_s:.3} s, before the voltage returned to normal and before the requirement's last point at {needs_until_s:.3} s"
                    ),
                );
            }
            match scan.first_outside {
                Some(o) => r.verdict(
                    Verdict::Pass,
                    format!(
                        "the voltage left the ride-through zone at {o:.3} s; the unit stayed connected (not required after that){cess_note}"
                    ),
                ),
                None => r.verdict(
                    Verdict::Pass,
                    format!("no trip; the voltage stayed inside the ride-through zone; {}{cess_note}", scan.closest),
                ),
            }
        }
    }
}
