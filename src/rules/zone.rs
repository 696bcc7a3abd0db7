//! Ride-through zone checks: envelopes and duration tables, and the verdict
//! rules they share (docs/rules.md: `envelope`, `duration_table`, "Reasons and
//! margins").
//!
//! A scan follows the zone sample by sample from the disturbance start and
//! records the **headroom**: for an envelope `V − C(τ)` (lower) or `C(τ) − V`
//! (upper), in pu, inside while ≥ 0; for a duration table the least
//! `d_i − r_i(t)` over the rows the voltage is beyond (continuous mode) or
//! has been beyond (cumulative), in s, inside while > 0.

use super::check::{Context, Overlay};
use super::registry::Unit;
use super::result::{CheckResult, Reason, Verdict};
use crate::analysis::events::TripMethod;
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum Bound {
    /// Inside while V ≥ C(t − t0) (undervoltage ride-through).
    Lower,
    /// Inside while V ≤ C(t − t0) (overvoltage ride-through).
    Upper,
}

/// What to do when the unit stops injecting current and resumes (momentary cessation).
#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum Cessation {
    /// Reported in the detail, not judged.
    #[default]
    Allowed,
    /// Momentary cessation inside the ride-through zone fails the check.
    Forbidden,
}

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum Side {
    Below,
    Above,
}

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum TableMode {
    /// Time beyond a row's level counts from the last time the voltage went beyond it.
    #[default]
    Continuous,
    /// Time beyond a row's level adds up from the disturbance start.
    Cumulative,
}

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct TableRow {
    /// Level, pu: below it (side below) or above it (side above).
    pub beyond_pu: f64,
    /// Longest time beyond the level the unit must ride through, s.
    pub max_s: f64,
}

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

/// The staircase envelope equivalent to a duration table in continuous mode:
/// `C(τ) = max{x_i : d_i ≤ τ}` below (min above), with vertical steps at
/// each `d_i`. For a dip that steps at the start and then recovers
/// monotonically, "below `x_i` for `d_i`" ⇔ "below `C` at `τ = d_i`"; the
/// figures draw tables this way and the property test relies on it.
pub fn table_boundary(rows: &[TableRow], side: Side) -> Vec<[f64; 2]> {
    let mut ds: Vec<f64> = rows.iter().map(|r| r.max_s).collect();
    ds.sort_by(f64::total_cmp);
    ds.dedup();
    let level = |tau: f64| {
        let lv = rows.iter().filter(|r| r.max_s <= tau).map(|r| r.beyond_pu);
        match side {
            Side::Below => lv.fold(0.0, f64::max),
            Side::Above => lv.fold(3.0, f64::min),
        }
    };
    let mut pts = vec![[0.0, level(-1.0)]];
    for d in ds {
        let before = pts.last().map_or(0.0, |p| p[1]);
        pts.push([d, before]);
        pts.push([d, level(d)]);
    }
    pts
}

/// What a zone scan describes its samples against.
#[derive(Clone, Debug, PartialEq)]
enum Against {
    Envelope(Vec<[f64; 2]>),
    Table {
        rows: Vec<TableRow>,
        side: Side,
        mode: TableMode,
        /// Binding row per sample (`usize::MAX`: none active).
        row_at: Vec<usize>,
    },
}

/// The zone followed sample by sample from `t0` to the end of the scan.
#[derive(Clone, Debug, PartialEq)]
pub struct ZoneScan {
    pub t0: f64,
    pub t: Vec<f64>,
    /// Headroom per sample (pu for envelopes, s for tables; +∞ when no table
    /// row is active).
    pub headroom: Vec<f64>,
    /// The voltage (envelope) or the time beyond the binding row (table).
    pub measured: Vec<f64>,
    /// The boundary `C(τ)` (envelope) or the binding row's `max_s` (table).
    pub limit: Vec<f64>,
    /// First time the voltage was outside the zone.
    pub first_outside: Option<f64>,
    /// Unit of headroom, measured and limit.
    pub unit: Unit,
    /// Table: the headroom when no row is active (the shortest non-zero
    /// `max_s`); NaN for envelopes.
    pub idle_headroom: f64,
    /// A lower zone (undervoltage) rather than an upper one.
    pub lower: bool,
    against: Against,
}

impl ZoneScan {
    pub fn samples(&self) -> usize {
        self.t.len()
    }

    fn headroom_at(&self, k: usize) -> f64 {
        let h = self.headroom[k];
        if h.is_infinite() && h > 0.0 {
            self.idle_headroom
        } else {
            h
        }
    }

    /// Index of the smallest headroom among samples with `t ≤ until`.
    fn smallest_until(&self, until: f64) -> Option<usize> {
        let n = self.t.partition_point(|x| *x <= until);
        (0..n).min_by(|a, b| self.headroom[*a].total_cmp(&self.headroom[*b]))
    }

    /// Index of the last sample at or before `t`.
    fn at_or_before(&self, t: f64) -> Option<usize> {
        self.t.partition_point(|x| *x <= t).checked_sub(1)
    }

    /// A sentence fragment about sample `k`.
    fn describe(&self, k: usize) -> String {
        let tau = self.t[k] - self.t0;
        match &self.against {
            Against::Envelope(points) => {
                let nearest = points
                    .iter()
                    .min_by(|a, b| (a[0] - tau).abs().total_cmp(&(b[0] - tau).abs()))
                    .copied()
                    .unwrap_or([0.0, 0.0]);
                format!(
                    "{:.3} pu against the boundary {:.3} pu at {:.3} s after the start (nearest envelope point [{}, {}])",
                    self.measured[k], self.limit[k], tau, nearest[0], nearest[1]
                )
            }
            Against::Table {
                rows,
                side,
                mode,
                row_at,
            } => match rows.get(row_at[k]) {
                Some(row) => format!(
                    "{} {} pu for {:.3} s{} against the row's {} s, {:.3} s after the start",
                    match side {
                        Side::Below => "below",
                        Side::Above => "above",
                    },
                    row.beyond_pu,
                    self.measured[k],
                    if *mode == TableMode::Cumulative {
                        " in total"
                    } else {
                        ""
                    },
                    row.max_s,
                    tau
                ),
                None => format!("the voltage was beyond no row's level {tau:.3} s after the start"),
            },
        }
    }

    /// Measured value and limit at sample `k` (a table with no active row:
    /// 0 s against the shortest non-zero duration).
    fn values_at(&self, k: usize) -> (Option<f64>, Option<f64>) {
        let f = |x: f64| x.is_finite().then_some(x);
        if self.headroom[k].is_infinite() {
            (Some(0.0), f(self.idle_headroom))
        } else {
            (f(self.measured[k]), f(self.limit[k]))
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
    let mut s = ZoneScan {
        t0,
        t: Vec::new(),
        headroom: Vec::new(),
        measured: Vec::new(),
        limit: Vec::new(),
        first_outside: None,
        unit: Unit::Pu,
        idle_headroom: f64::NAN,
        lower: bound == Bound::Lower,
        against: Against::Envelope(points.to_vec()),
    };
    for k in window(t, v, t0, t_end) {
        let c = curve_at(points, t[k] - t0);
        let h = match bound {
            Bound::Lower => v[k] - c,
            Bound::Upper => c - v[k],
        };
        if h < 0.0 && s.first_outside.is_none() {
            s.first_outside = Some(t[k]);
        }
        s.t.push(t[k]);
        s.headroom.push(h);
        s.measured.push(v[k]);
        s.limit.push(c);
    }
    s
}

/// Scans a duration table over samples with `t0 ≤ t ≤ t_end`. At time `t`,
/// `r_i(t)` is how long the voltage has been beyond row `i`'s level (from
/// the first to the current sample of the run; cumulative mode adds the
/// earlier runs since `t0`); the zone is left at the first `t` where some
/// `r_i(t) ≥ d_i`.
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
    let idle = rows
        .iter()
        .map(|r| r.max_s)
        .filter(|d| *d > 0.0)
        .fold(f64::INFINITY, f64::min);
    let mut s = ZoneScan {
        t0,
        t: Vec::new(),
        headroom: Vec::new(),
        measured: Vec::new(),
        limit: Vec::new(),
        first_outside: None,
        unit: Unit::S,
        idle_headroom: if idle.is_finite() { idle } else { f64::NAN },
        lower: side == Side::Below,
        against: Against::Table {
            rows: rows.to_vec(),
            side,
            mode,
            row_at: Vec::new(),
        },
    };
    let mut row_at = Vec::new();
    for k in window(t, v, t0, t_end) {
        let mut best = (f64::INFINITY, usize::MAX, f64::NAN);
        for (i, row) in rows.iter().enumerate() {
            let beyond = match side {
                Side::Below => v[k] < row.beyond_pu,
                Side::Above => v[k] > row.beyond_pu,
            };
            let r = if beyond {
                let a = *run_start[i].get_or_insert(t[k]);
                last_beyond[i] = t[k];
                Some(match mode {
                    TableMode::Continuous => t[k] - a,
                    TableMode::Cumulative => done[i] + (t[k] - a),
                })
            } else {
                if let Some(a) = run_start[i].take() {
                    // The run ended at the previous beyond sample.
                    done[i] += last_beyond[i] - a;
                }
                (mode == TableMode::Cumulative && done[i] > 0.0).then_some(done[i])
            };
            if let Some(r) = r {
                let h = row.max_s - r;
                if h < best.0 {
                    best = (h, i, r);
                }
            }
        }
        if best.0 <= 0.0 && s.first_outside.is_none() {
            s.first_outside = Some(t[k]);
        }
        s.t.push(t[k]);
        s.headroom.push(best.0);
        s.measured.push(best.2);
        s.limit.push(rows.get(best.1).map_or(f64::NAN, |r| r.max_s));
        row_at.push(best.1);
    }
    if let Against::Table { row_at: ra, .. } = &mut s.against {
        *ra = row_at;
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
    /// Disturbance end (re-entry), `None` when it never ended.
    pub end_s: Option<f64>,
    pub cycle_s: f64,
    pub recording_end_s: f64,
    /// The recording must reach this time when the voltage never recovered.
    pub needs_until_s: f64,
}

impl Timing {
    /// Phasor-level duration; below two nominal cycles the one-cycle window
    /// cannot show the fault's depth (a fault of length L gives an excursion
    /// of about L + one cycle whose depth is only reached when L ≥ one cycle).
    fn short(&self) -> Option<f64> {
        self.end_s
            .map(|e| e - self.t0)
            .filter(|d| *d < 2.0 * self.cycle_s)
    }
}

/// The deepest case of a short fault: the voltage replaced by 0 (lower
/// zones) or a very high value (upper) from the start to the end, so that a
/// verdict can be checked for every true depth between it and the measured one.
pub fn deepest(t: &[f64], v: &[f64], timing: &Timing, bound: Bound) -> Vec<f64> {
    let end = timing.end_s.unwrap_or(timing.t0);
    let floor = match bound {
        Bound::Lower => 0.0,
        Bound::Upper => 1e6,
    };
    t.iter()
        .zip(v)
        .map(|(x, y)| {
            if *x >= timing.t0 && *x <= end {
                floor
            } else {
                *y
            }
        })
        .collect()
}

/// The measured value and limit at scan point `k`.
fn set_values(r: &mut CheckResult, scan: &ZoneScan, k: usize) {
    let (m, l) = scan.values_at(k);
    r.measured = m;
    r.limit = l;
}

/// The momentary cessations from `t0` on, as a clause of the sentence.
fn cessation_note(conn: &ConnectionFacts, t0: f64) -> String {
    let noted = conn
        .cessations
        .iter()
        .filter(|(a, _)| *a >= t0)
        .map(|(a, b)| format!("{a:.3}–{b:.3} s"))
        .collect::<Vec<_>>();
    if noted.is_empty() {
        String::new()
    } else {
        format!(
            "; momentary cessation (current blocked) at {}",
            noted.join(", ")
        )
    }
}

/// Verdict, reason, margin and sentence from a scan and the trip (no short-fault handling).
fn judge(
    mut r: CheckResult,
    scan: &ZoneScan,
    conn: &ConnectionFacts,
    timing: &Timing,
    cessation: Cessation,
) -> CheckResult {
    let t0 = timing.t0;
    r.left_zone_s = scan.first_outside;
    r.unit = scan.unit;
    let cess_note = cessation_note(conn, t0);
    if let Some(tt) = conn.trip_s {
        return judge_trip(r, scan, tt, &cess_note);
    }
    if cessation == Cessation::Forbidden {
        let inside_until = scan.first_outside.unwrap_or(f64::INFINITY);
        if let Some((a, b)) = conn
            .cessations
            .iter()
            .find(|(a, _)| *a >= t0 - timing.cycle_s && *a < inside_until)
        {
            r.at_s = Some(*a);
            return r.decide(
                Verdict::Fail,
                Reason::TripInsideZone,
                format!("momentary cessation {a:.3}–{b:.3} s inside the ride-through zone, which the rule forbids"),
            );
        }
    }
    if !conn.trip_visible {
        return r.decide(
            Verdict::Inconclusive,
            Reason::TripNotVisible,
            "the recording has neither a status channel nor usable current, so staying connected cannot be shown",
        );
    }
    if scan.first_outside.is_none() && timing.recording_end_s < timing.needs_until_s {
        return r.decide(
            Verdict::Inconclusive,
            Reason::InsufficientData,
            format!(
                "the recording ends at {:.3} s, before the voltage returned to normal and before the requirement's last point at {:.3} s",
                timing.recording_end_s, timing.needs_until_s
            ),
        );
    }
    judge_connected(r, scan, timing, &cess_note)
}

/// A trip at `tt`: permitted once the voltage had left the zone, a failure
/// inside it (margin: minus the headroom at the trip).
fn judge_trip(mut r: CheckResult, scan: &ZoneScan, tt: f64, cess_note: &str) -> CheckResult {
    match scan.first_outside {
        Some(o) if o <= tt => {
            r.permitted_trip = Some(true);
            r.unit = Unit::S;
            r.measured = Some(tt - o);
            r.limit = Some(0.0);
            r.margin = Some(tt - o);
            r.at_s = Some(tt);
            r.decide(
                Verdict::Pass,
                Reason::PermittedTrip,
                format!(
                    "permitted trip: the voltage left the ride-through zone at {o:.3} s and the unit tripped {:.3} s later, at {tt:.3} s{cess_note}",
                    tt - o
                ),
            )
        }
        _ => {
            r.permitted_trip = Some(false);
            let at = scan.at_or_before(tt);
            let h = at.map(|k| scan.headroom_at(k)).filter(|h| h.is_finite());
            if let Some(k) = at {
                set_values(&mut r, scan, k);
            }
            r.margin = h.map(|h| -h);
            r.at_s = Some(tt);
            let then = at
                .map(|k| format!("; at the trip: {}", scan.describe(k)))
                .unwrap_or_default();
            r.decide(
                Verdict::Fail,
                Reason::TripInsideZone,
                format!(
                    "the unit tripped at {tt:.3} s while the voltage was inside the ride-through zone{then}{cess_note}"
                ),
            )
        }
    }
}

/// No trip, and the data covers the requirement: rode through beyond the
/// zone, or stayed inside it with the smallest headroom as the margin.
fn judge_connected(
    mut r: CheckResult,
    scan: &ZoneScan,
    timing: &Timing,
    cess_note: &str,
) -> CheckResult {
    match scan.first_outside {
        Some(o) => {
            if let Some(k) = scan.smallest_until(f64::INFINITY) {
                set_values(&mut r, scan, k);
                r.at_s = Some(scan.t[k]);
            }
            r.margin = None;
            r.decide(
                Verdict::Pass,
                Reason::RodeThroughBeyondZone,
                format!(
                    "the voltage left the ride-through zone at {o:.3} s; the unit stayed connected (not required after that){cess_note}"
                ),
            )
        }
        None => {
            // Headroom over the disturbance itself, not the recovered tail.
            let until = timing.end_s.unwrap_or(f64::INFINITY);
            let k = scan
                .smallest_until(until)
                .or(scan.smallest_until(f64::INFINITY));
            if let Some(k) = k {
                set_values(&mut r, scan, k);
                r.margin = Some(scan.headroom_at(k)).filter(|h| h.is_finite());
                r.at_s = Some(scan.t[k]);
            }
            let closest = k
                .map(|k| format!("; smallest headroom: {}", scan.describe(k)))
                .unwrap_or_default();
            r.decide(
                Verdict::Pass,
                Reason::NoTrip,
                format!(
                    "no trip; the voltage stayed inside the ride-through zone{closest}{cess_note}"
                ),
            )
        }
    }
}

/// Turns a zone scan into a verdict (docs/rules.md,
/// `envelope`: short faults, reasons and margins). `deep` is the scan of the deepest case
/// ([`deepest`]) for faults shorter than two cycles at phasor level.
pub fn zone_verdict(
    r: CheckResult,
    scan: &ZoneScan,
    deep: Option<&ZoneScan>,
    conn: &ConnectionFacts,
    timing: &Timing,
    cessation: Cessation,
) -> CheckResult {
    let t0 = timing.t0;
    if let Some(tb) = conn.tripped_before_s {
        return r.decide(
            Verdict::Inconclusive,
            Reason::AlreadyTripped,
            format!("the unit had already tripped at {tb:.3} s, before this disturbance started at {t0:.3} s"),
        );
    }
    if scan.samples() == 0 {
        return r.decide(
            Verdict::Inconclusive,
            Reason::InsufficientData,
            "no analysed samples after the disturbance start",
        );
    }
    let Some(d) = timing.short() else {
        return judge(r, scan, conn, timing, cessation);
    };
    let smear = format!(
        "the disturbance lasted {:.4} s at phasor level (less than two nominal cycles, {:.4} s), too short for one-cycle phasors to show its depth",
        d,
        2.0 * timing.cycle_s
    );
    let measured = judge(r.clone(), scan, conn, timing, cessation);
    if conn.trip_s.is_none() {
        if measured.verdict != Verdict::Pass {
            return measured;
        }
        // Whatever the true depth, the unit rode through it.
        let mut p = measured;
        p.margin = None;
        p.left_zone_s = None;
        return p.decide(
            Verdict::Pass,
            Reason::NoTrip,
            format!("{smear}; the unit did not trip, so it rode through whatever the depth"),
        );
    }
    let Some(deep) = deep else {
        return measured.decide(
            Verdict::Inconclusive,
            Reason::DepthUnresolved,
            format!("{smear}, and the verdict on the trip depends on it"),
        );
    };
    let deepest = judge(r, deep, conn, timing, cessation);
    if deepest.verdict == measured.verdict {
        let detail = format!(
            "{}; {smear}, but the verdict is the same for every depth down to {}",
            measured.detail,
            if deep.lower { "0 pu" } else { "any height" }
        );
        let v = measured.verdict;
        let reason = measured.reason.unwrap_or(Reason::NoTrip);
        measured.decide(v, reason, detail)
    } else {
        let detail = format!(
            "{smear}: as measured the verdict is {}, for a deeper fault it would be {}, so the data cannot decide",
            measured.verdict.name(),
            deepest.verdict.name()
        );
        measured.decide(Verdict::Inconclusive, Reason::DepthUnresolved, detail)
    }
}

/// A zone check of one disturbance: scans the zone from the start to the
/// trip (or the next disturbance), and for a fault shorter than two cycles
/// the deepest case too, then gives the verdict. `last` is the
/// requirement's last time (s after the start); `scan(t, v, t0, end)`
/// scans the check's own zone.
pub fn evaluate(
    ctx: &Context<'_>,
    r: CheckResult,
    bound: Bound,
    last: f64,
    cessation: Cessation,
    scan: impl Fn(&[f64], &[f64], f64, f64) -> ZoneScan,
) -> CheckResult {
    let (t, v, d) = (&ctx.series.t, ctx.v, ctx.d);
    let scan_end = ctx.trip_in.unwrap_or(ctx.win_end);
    let timing = Timing {
        t0: d.start_s,
        end_s: d.end_s,
        cycle_s: ctx.cycle,
        recording_end_s: ctx.rec_end,
        // Only a disturbance that never ended needs the recording to reach
        // the requirement's last time.
        needs_until_s: if d.end_s.is_some() {
            f64::NEG_INFINITY
        } else {
            d.start_s + last
        },
    };
    let conn = ConnectionFacts {
        trip_s: ctx.trip_in,
        tripped_before_s: ctx.trip_before,
        trip_visible: ctx.trip.method != TripMethod::None,
        cessations: ctx.trip.cessations.clone(),
    };
    let measured = scan(t, v, d.start_s, scan_end);
    let short = d.end_s.is_some_and(|e| e - d.start_s < 2.0 * ctx.cycle);
    let deep = (short && ctx.trip_in.is_some())
        .then(|| scan(t, &deepest(t, v, &timing, bound), d.start_s, scan_end));
    zone_verdict(r, &measured, deep.as_ref(), &conn, &timing, cessation)
}

/// The figure overlay of a zone boundary given as `[τ, pu]` points, placed
/// at the disturbance start.
pub fn overlay(points: &[[f64; 2]], lower: bool, start_s: f64, note: &'static str) -> Overlay {
    Overlay::Zone {
        boundary: points
            .iter()
            .filter(|p| p[1].is_finite())
            .map(|p| (start_s + p[0], p[1]))
            .collect(),
        lower,
        start_s,
        note,
    }
}
