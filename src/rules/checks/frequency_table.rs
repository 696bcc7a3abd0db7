//! `frequency_table`: rows "below (above) f Hz for up to d s" of frequency
//! ride-through (docs/rules.md). The frequency is estimated from the
//! positive-sequence angle ([`angle::series_frequency`], voltage
//! disturbances and phase jumps excluded); an excursion starts where it
//! goes beyond the table's outermost level and ends 0.01 Hz back inside.
//! Each excursion is judged like a voltage duration table (continuous
//! time beyond each row, [`zone::scan_table`] and [`zone::zone_verdict`]).
//!
//! Verdict paths (tests in tests/it/checks.rs): no angle → inconclusive
//! `missing_channel`; the recording shorter than the averaging window →
//! inconclusive `insufficient_data`; no excursion → not applicable
//! `not_triggered`; per excursion, the zone verdicts: `no_trip` (pass,
//! margin the smallest headroom in s), `trip_inside_zone` (fail),
//! `permitted_trip` (pass), `rode_through_beyond_zone` (pass),
//! `already_tripped`, `trip_not_visible` and, for an excursion that lasts
//! to the end of a recording shorter than the longest row,
//! `insufficient_data` (inconclusive).

use crate::analysis::angle;
use crate::analysis::events::TripMethod;
use crate::rules::check::{Check, FigureKind, Overlay, Recording};
use crate::rules::registry::{CheckKind, Unit};
use crate::rules::result::{CheckResult, Reason, Verdict};
use crate::rules::zone::{self, Cessation, ConnectionFacts, Side, TableMode, TableRow, Timing};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct FrequencyRow {
    /// Level, Hz: below it (side below) or above it (side above).
    pub beyond_hz: f64,
    /// Longest time beyond the level the unit must ride through, s.
    pub max_s: f64,
}

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct FrequencyTableSpec {
    pub id: String,
    pub side: Side,
    pub rows: Vec<FrequencyRow>,
    /// The frequency is averaged over this window, s (at least 0.1; default 0.1).
    #[serde(default = "d_avg")]
    pub averaging_s: f64,
}

fn d_avg() -> f64 {
    angle::REFERENCE_S
}

/// An excursion ends this far back inside the outermost level, Hz.
const HYSTERESIS_HZ: f64 = 0.01;

impl FrequencyTableSpec {
    fn level(&self) -> f64 {
        let it = self.rows.iter().map(|r| r.beyond_hz);
        match self.side {
            Side::Below => it.fold(f64::NEG_INFINITY, f64::max),
            Side::Above => it.fold(f64::INFINITY, f64::min),
        }
    }
    fn word(&self) -> &'static str {
        match self.side {
            Side::Below => "below",
            Side::Above => "above",
        }
    }
    fn result(&self) -> CheckResult {
        CheckResult::new(&self.id, CheckKind::FrequencyTable, None, Unit::S)
    }
    /// Excursions `(start, end)` of the held frequency beyond the level.
    fn excursions(&self, t: &[f64], f: &[f64]) -> Vec<(f64, Option<f64>)> {
        let level = self.level();
        let beyond = |x: f64| match self.side {
            Side::Below => x < level,
            Side::Above => x > level,
        };
        let back = |x: f64| match self.side {
            Side::Below => x >= level + HYSTERESIS_HZ,
            Side::Above => x <= level - HYSTERESIS_HZ,
        };
        let mut out = Vec::new();
        let mut open: Option<f64> = None;
        for (tk, x) in t.iter().zip(f) {
            match open {
                None if beyond(*x) => open = Some(*tk),
                Some(s) if back(*x) => {
                    out.push((s, Some(*tk)));
                    open = None;
                }
                _ => {}
            }
        }
        if let Some(s) = open {
            out.push((s, None));
        }
        out
    }

    fn judge_excursion(
        &self,
        rec: &Recording<'_>,
        f: &[f64],
        (start, end): (f64, Option<f64>),
        next: Option<f64>,
    ) -> CheckResult {
        let f_nom = rec.f_nom;
        let t = &rec.series.t;
        let vp: Vec<f64> = f.iter().map(|x| x / f_nom).collect();
        let rows: Vec<TableRow> = self
            .rows
            .iter()
            .map(|r| TableRow {
                beyond_pu: r.beyond_hz / f_nom,
                max_s: r.max_s,
            })
            .collect();
        let win_end = next.unwrap_or(rec.rec_end);
        let tt = rec.trip.time_s.filter(|_| rec.trip.tripped);
        let trip_in = tt.filter(|x| *x >= start && *x < win_end);
        let longest = self.rows.iter().map(|r| r.max_s).fold(0.0, f64::max);
        let timing = Timing {
            t0: start,
            end_s: end,
            cycle_s: rec.cycle,
            recording_end_s: rec.rec_end,
            needs_until_s: if end.is_some() {
                f64::NEG_INFINITY
            } else {
                start + longest
            },
        };
        let conn = ConnectionFacts {
            trip_s: trip_in,
            tripped_before_s: tt.filter(|x| *x < start),
            trip_visible: rec.trip.method != TripMethod::None,
            cessations: rec.trip.cessations.clone(),
        };
        let scan = zone::scan_table(
            t,
            &vp,
            start,
            trip_in.unwrap_or(win_end),
            self.side,
            &rows,
            TableMode::Continuous,
        );
        let mut r = zone::zone_verdict(self.result(), &scan, None, &conn, &timing, Cessation::Allowed);
        let (a, b) = (
            t.partition_point(|x| *x < start),
            t.partition_point(|x| *x <= end.unwrap_or(rec.rec_end)),
        );
        let extreme = f[a..b.max(a)].iter().copied().fold(f64::NAN, |m, x| match self.side {
            Side::Below => m.min(x),
            Side::Above => m.max(x),
        });
        let span = format!(
            "the frequency was {} {} Hz from {start:.3} s {} ({} {extreme:.3} Hz)",
            self.word(),
            self.level(),
            end.map_or("to the end of the recording".to_string(), |e| format!("to {e:.3} s")),
            if self.side == Side::Below { "lowest" } else { "highest" },
        );
        let said = match r.reason {
            Some(Reason::NoTrip) => "no trip; it stayed inside the ride-through zone".to_string(),
            Some(Reason::TripInsideZone) => format!(
                "the unit tripped at {:.3} s while inside the ride-through zone ({:.3} s beyond a row's level against its {} s)",
                trip_in.unwrap_or(f64::NAN),
                r.measured.unwrap_or(f64::NAN),
                r.limit.unwrap_or(f64::NAN)
            ),
            Some(Reason::PermittedTrip) => format!(
                "the unit tripped at {:.3} s after the frequency had been beyond a row's level longer than the row allows: a permitted trip",
                trip_in.unwrap_or(f64::NAN)
            ),
            Some(Reason::RodeThroughBeyondZone) => {
                "it stayed beyond a row's level longer than the row allows and the unit stayed connected".to_string()
            }
            _ => r.detail.replace("the voltage", "the frequency").replace("disturbance", "excursion"),
        };
        r.detail = format!("{span}; {said}");
        r
    }
}

impl Check for FrequencyTableSpec {
    fn id(&self) -> &str {
        &self.id
    }
    fn kind(&self) -> CheckKind {
        CheckKind::FrequencyTable
    }
    fn unit(&self) -> Unit {
        Unit::S
    }
    fn problems(&self, out: &mut Vec<(&'static str, String)>) {
        if self.rows.is_empty() {
            out.push(("rows", "a frequency table needs at least one row".into()));
        }
        for (k, r) in self.rows.iter().enumerate() {
            if !(r.beyond_hz > 10.0 && r.beyond_hz < 100.0) {
                out.push((
                    "rows",
                    format!("row {}: beyond_hz {} must be in (10, 100) Hz", k + 1, r.beyond_hz),
                ));
            }
            if !(r.max_s.is_finite() && r.max_s >= 0.0) {
                out.push(("rows", format!("row {}: max_s {} must be ≥ 0", k + 1, r.max_s)));
            }
        }
        if !(self.averaging_s >= angle::REFERENCE_S && self.averaging_s <= 10.0) {
            out.push((
                "averaging_s",
                format!("averaging_s {} must be in [0.1, 10] s", self.averaging_s),
            ));
        }
    }
    fn summary(&self) -> String {
        format!(
            "frequency {} table, {} rows, averaged over {} s",
            self.word(),
            self.rows.len(),
            self.averaging_s
        )
    }
    fn figure(&self) -> FigureKind {
        FigureKind::Frequency
    }
    fn evaluate_recording(&self, rec: &Recording<'_>) -> Option<Vec<CheckResult>> {
        let Some(f) = frequency_of(rec, self.averaging_s) else {
            return Some(vec![self.result().decide(
                Verdict::Inconclusive,
                Reason::MissingChannel,
                "the recording carries no positive-sequence voltage angle (RMS-level values or no voltage channels): the frequency cannot be estimated",
            )]);
        };
        let held = angle::held(&f);
        if held.iter().all(|x| !x.is_finite()) {
            return Some(vec![self.result().decide(
                Verdict::Inconclusive,
                Reason::InsufficientData,
                format!("no stretch of {} s free of disturbances to estimate the frequency over", self.averaging_s),
            )]);
        }
        let ex = self.excursions(&rec.series.t, &held);
        if ex.is_empty() {
            let extreme = held.iter().copied().filter(|x| x.is_finite()).fold(f64::NAN, |m, x| match self.side {
                Side::Below => m.min(x),
                Side::Above => m.max(x),
            });
            return Some(vec![self.result().decide(
                Verdict::NotApplicable,
                Reason::NotTriggered,
                format!(
                    "the frequency never went {} {} Hz ({} {extreme:.3} Hz)",
                    self.word(),
                    self.level(),
                    if self.side == Side::Below { "lowest" } else { "highest" }
                ),
            )]);
        }
        Some(
            ex.iter()
                .enumerate()
                .map(|(k, e)| {
                    let mut r = self.judge_excursion(rec, &held, *e, ex.get(k + 1).map(|n| n.0));
                    r.event = Some(k);
                    r
                })
                .collect(),
        )
    }
    fn recording_overlay(&self, r: &CheckResult, rec: &Recording<'_>) -> Option<Overlay> {
        r.event.or((r.verdict == Verdict::NotApplicable).then_some(0))?;
        let f = frequency_of(rec, self.averaging_s)?;
        Some(Overlay::Frequency {
            f: rec.series.t.iter().copied().zip(f).collect(),
            levels: self
                .rows
                .iter()
                .map(|row| {
                    (
                        row.beyond_hz,
                        format!("{} {} Hz: up to {} s", self.word(), row.beyond_hz, row.max_s),
                    )
                })
                .collect(),
            note: None,
        })
    }
}

/// The recording's frequency over `window_s`, voltage disturbances and
/// phase jumps excluded.
pub fn frequency_of(rec: &Recording<'_>, window_s: f64) -> Option<Vec<f64>> {
    angle::series_frequency(rec.series, rec.f_nom, rec.disturbances, window_s)
}
