//! The figures of one test: applicable voltage against the ride-through
//! boundaries, reactive current against its requirement, active power
//! against its recovery target. Built from the analysis series and the check
//! results; nothing here decides a verdict.

use super::plot::{self, FigureSpec, Mark, Shade, Trace, VLine};
use crate::analysis::events::{Balance, Disturbance, TripInfo, TripMethod};
use crate::analysis::{Quantity, Series};
use crate::rules::reactive;
use crate::rules::result::CheckResult;
use crate::rules::spec::{Bound, CheckSpec, Follow, RuleSet, Sequence, Side, TableMode};

pub struct FigureInput<'a> {
    pub test_id: &'a str,
    pub series: &'a Series,
    /// The applicable voltage, on the series' time base.
    pub applicable: &'a [f64],
    pub rules: &'a RuleSet,
    pub disturbances: &'a [Disturbance],
    pub trip: &'a TripInfo,
    pub checks: &'a [CheckResult],
    pub frequency_hz: f64,
}

/// One figure of a test.
pub struct Figure {
    /// `voltage`, `reactive_current`, `negative_sequence_current`, `active_power`.
    pub quantity: &'static str,
    pub spec: FigureSpec,
}

const POINTS: usize = 2 * plot::WIDTH as usize;

fn verdicts(checks: &[&CheckResult]) -> String {
    if checks.is_empty() {
        return "no check".into();
    }
    checks
        .iter()
        .map(|c| {
            format!(
                "{}{}: {}",
                c.id,
                c.disturbance.map(|d| format!(" #{d}")).unwrap_or_default(),
                c.verdict.name().to_uppercase().replace('_', " ")
            )
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// The boundary of a ride-through zone check (a table as its equivalent curve).
fn zone_boundary(spec: &CheckSpec) -> Option<(Vec<[f64; 2]>, Bound)> {
    match spec {
        CheckSpec::Envelope(e) => Some((e.points.clone(), e.bound)),
        CheckSpec::DurationTable(tb) => Some((
            crate::rules::zone::table_boundary(&tb.rows, tb.side),
            if tb.side == Side::Below {
                Bound::Lower
            } else {
                Bound::Upper
            },
        )),
        _ => None,
    }
}

fn marks_for(d: &[Disturbance], k: Option<usize>, t_hi: f64) -> Vec<VLine> {
    let mut v = Vec::new();
    for (i, x) in d.iter().enumerate() {
        if k.is_some_and(|k| k != i) {
            continue;
        }
        let tag = if d.len() > 1 {
            format!(" #{i}")
        } else {
            String::new()
        };
        v.push(VLine {
            t: x.start_s,
            label: format!("start{tag}"),
        });
        if let Some(e) = x.end_s.filter(|e| *e <= t_hi) {
            v.push(VLine {
                t: e,
                label: format!("end{tag}"),
            });
        }
    }
    v
}

fn value_at(s: &Series, v: &[f64], t: f64) -> f64 {
    let i = s.index_at(t).min(v.len().saturating_sub(1));
    v.get(i).copied().unwrap_or(f64::NAN)
}

/// Builds the figures of a test.
pub fn figures(inp: &FigureInput<'_>) -> Vec<Figure> {
    let s = inp.series;
    let t = &s.t;
    if t.is_empty() {
        return Vec::new();
    }
    let cycle = 1.0 / inp.frequency_hz;
    let (t_first, t_last) = (t[0], t[t.len() - 1]);
    // Display window: from a little before the first disturbance to past the
    // longest requirement after the last one.
    let mut extent: f64 = 0.4;
    for c in &inp.rules.checks {
        match c {
            CheckSpec::Envelope(e) => {
                extent = extent.max(e.points.last().map_or(0.0, |p| p[0]) + 0.1)
            }
            CheckSpec::DurationTable(tb) => {
                extent = extent.max(tb.rows.iter().map(|r| r.max_s).fold(0.0, f64::max) + 0.1)
            }
            CheckSpec::ActivePowerRecovery(a) => extent = extent.max(a.within_s + 0.2),
            CheckSpec::ReactiveCurrent(_) => {}
        }
    }
    let (lo, hi) = match (inp.disturbances.first(), inp.disturbances.last()) {
        (Some(a), Some(b)) => {
            let end = b.end_s.unwrap_or(t_last);
            (
                (a.start_s - 0.25).max(t_first),
                (end + extent).max(b.start_s + extent).min(t_last),
            )
        }
        _ => (t_first, t_last),
    };
    let trace = |label: &str, v: &[f64], color, width| Trace {
        label: label.into(),
        points: plot::minmax_decimate(t, v, lo, hi, POINTS / 2),
        color,
        dashed: false,
        width,
    };
    let spec_of = |id: &str| inp.rules.checks.iter().find(|c| c.id() == id);
    let trip_line = |v: &mut Vec<VLine>| {
        if let (true, Some(tt)) = (inp.trip.tripped, inp.trip.time_s) {
            let how = match inp.trip.method {
                TripMethod::Status => "status",
                TripMethod::Current => "current",
                TripMethod::None => "?",
            };
            v.push(VLine {
                t: tt,
                label: format!("trip ({how})"),
            });
        }
    };
    let mut out = Vec::new();

    // --- Voltage.
    let mut f = FigureSpec {
        x_label: "time since the first sample (s)".into(),
        y_label: "voltage (pu)".into(),
        x_range: (lo, hi),
        ..Default::default()
    };
    let name = inp.rules.applicable_voltage.name().replace('_', " ");
    let unbalanced = inp
        .disturbances
        .iter()
        .any(|d| d.balance == Balance::Unbalanced);
    if unbalanced {
        for (k, q) in [Quantity::Va, Quantity::Vb, Quantity::Vc]
            .into_iter()
            .enumerate()
        {
            if let Some(v) = s.get(q) {
                f.traces.push(trace(q.name(), v, plot::PHASES[k], 1));
            }
        }
    }
    f.traces.push(trace(
        &format!("applicable voltage ({name})"),
        inp.applicable,
        plot::MEASURED,
        2,
    ));
    let zone: Vec<&CheckResult> = inp
        .checks
        .iter()
        .filter(|c| c.check_type == "envelope" || c.check_type == "duration_table")
        .collect();
    let mut y_values: Vec<f64> = f
        .traces
        .iter()
        .flat_map(|tr| tr.points.iter().map(|p| p.1))
        .collect();
    for c in &zone {
        let (Some(k), Some(spec)) = (c.disturbance, spec_of(&c.id)) else {
            continue;
        };
        let Some(d) = inp.disturbances.get(k) else {
            continue;
        };
        let Some((pts, bound)) = zone_boundary(spec) else {
            continue;
        };
        let note = match spec {
            CheckSpec::DurationTable(tb) if tb.mode == TableMode::Cumulative => {
                " (table as one excursion)"
            }
            CheckSpec::DurationTable(_) => " (table as curve)",
            _ => "",
        };
        let mut abs: Vec<(f64, f64)> = pts
            .iter()
            .filter(|p| p[1].is_finite())
            .map(|p| (d.start_s + p[0], p[1]))
            .collect();
        if let Some(last) = abs.last().copied() {
            if last.0 < hi {
                abs.push((hi, last.1));
            }
        }
        y_values.extend(abs.iter().map(|p| p.1));
        f.traces.push(Trace {
            label: format!(
                "{} boundary{note}: {}",
                c.id,
                c.verdict.name().to_uppercase().replace('_', " ")
            ),
            points: abs.clone(),
            color: plot::BOUNDARY,
            dashed: false,
            width: 2,
        });
        let edge = if bound == Bound::Lower {
            f64::INFINITY
        } else {
            f64::NEG_INFINITY
        };
        let mut poly = abs.clone();
        poly.push((abs.last().map_or(hi, |p| p.0), edge));
        poly.push((d.start_s, edge));
        f.shades.push(Shade {
            polygon: poly,
            color: plot::ZONE,
            opacity: 0.10,
        });
        if let (Some(at), Some(m)) = (c.at_s, c.margin) {
            let v = if c.unit == "pu" {
                c.measured.unwrap_or(f64::NAN)
            } else {
                value_at(s, inp.applicable, at)
            };
            f.marks.push(Mark {
                t: at,
                v,
                label: format!(
                    "{} smallest margin {}",
                    c.id,
                    super::fmt_value(Some(m), &c.unit)
                ),
            });
        }
        if let Some(l) = c.left_zone_s {
            f.vlines.push(VLine {
                t: l,
                label: format!("{} left zone", c.id),
            });
        }
    }
    let (y0, y1) = plot::y_range(y_values.into_iter(), (0.0, 1.1));
    f.y_range = (y0.max(-0.05), y1.min(3.0));
    for sh in &mut f.shades {
        for p in &mut sh.polygon {
            p.1 = p.1.clamp(f.y_range.0, f.y_range.1);
        }
    }
    f.vlines.extend(marks_for(inp.disturbances, None, hi));
    trip_line(&mut f.vlines);
    f.spans = inp
        .trip
        .cessations
        .iter()
        .map(|(a, b)| (*a, *b, "cessation".to_string()))
        .collect();
    f.title = format!("{} – voltage – {}", inp.test_id, verdicts(&zone));
    out.push(Figure {
        quantity: "voltage",
        spec: f,
    });

    // --- Reactive current, positive and negative sequence.
    for (seq, q_iq, q_v, quantity, label) in [
        (
            Sequence::Positive,
            Quantity::Iq,
            Quantity::V1,
            "reactive_current",
            "positive-sequence reactive current Iq1",
        ),
        (
            Sequence::Negative,
            Quantity::Iq2,
            Quantity::V2,
            "negative_sequence_current",
            "negative-sequence reactive current Iq2",
        ),
    ] {
        let checks: Vec<&CheckResult> = inp
            .checks
            .iter()
            .filter(|c| c.check_type == "reactive_current")
            .filter(|c| matches!(spec_of(&c.id), Some(CheckSpec::ReactiveCurrent(r)) if r.sequence == seq))
            .collect();
        let (Some(iq), Some(vq)) = (s.get(q_iq), s.get(q_v)) else {
            continue;
        };
        if checks.is_empty() {
            continue;
        }
        let mut f = FigureSpec {
            x_label: "time since the first sample (s)".into(),
            y_label: "reactive current (pu)".into(),
            x_range: (lo, hi),
            ..Default::default()
        };
        f.traces.push(trace(label, iq, plot::MEASURED, 2));
        let mut ys: Vec<f64> = f.traces[0].points.iter().map(|p| p.1).collect();
        for c in &checks {
            let (Some(k), Some(CheckSpec::ReactiveCurrent(rc))) = (c.disturbance, spec_of(&c.id))
            else {
                continue;
            };
            let (Some(d), Some(req)) = (inp.disturbances.get(k), c.required_pu) else {
                continue;
            };
            // The references and segments the check used (nothing is
            // re-derived here).
            let Some(iq_pre) = c.reference_pu else {
                continue;
            };
            let v_pre = match (seq, d.prefault) {
                (Sequence::Positive, Some(p)) => p.v1_pu,
                (Sequence::Negative, Some(p)) => p.v2_pu.unwrap_or(0.0),
                (_, None) => continue,
            };
            let end = d.end_s.unwrap_or(t_last);
            let t0 = c.time_from_s.unwrap_or(d.start_s);
            let [tlo, thi] = rc.tolerance_pu;
            // Quasi-steady segments: (from, to, requirement, band from).
            let segs: Vec<(f64, f64, f64, f64)> = if c.segments.is_empty() {
                vec![(t0, end, req, t0 + rc.settling_time_s)]
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
                            clock + rc.settling_time_s,
                        )
                    })
                    .collect()
            };
            let required: Vec<(f64, f64)> = match rc.follow {
                Follow::Settled => segs
                    .iter()
                    .flat_map(|(a, b, r, _)| [(*a, iq_pre + r), (*b, iq_pre + r)])
                    .collect(),
                Follow::Instantaneous => plot::minmax_decimate(t, vq, d.start_s, end, POINTS / 4)
                    .into_iter()
                    .map(|(x, v)| {
                        (
                            x,
                            iq_pre
                                + reactive::limited(rc, iq_pre, reactive::required(rc, v - v_pre)),
                        )
                    })
                    .collect(),
            };
            ys.extend(required.iter().map(|p| p.1));
            f.traces.push(Trace {
                label: format!(
                    "required ({}): {}",
                    c.id,
                    c.verdict.name().to_uppercase().replace('_', " ")
                ),
                points: required,
                color: plot::REQUIRED,
                dashed: true,
                width: 2,
            });
            for (_, b, r, from) in &segs {
                let until = b - cycle;
                if until <= *from {
                    continue;
                }
                let dir = if *r >= 0.0 { 1.0 } else { -1.0 };
                let (l, h) = if dir > 0.0 {
                    (r + tlo, r + thi)
                } else {
                    (r - thi, r - tlo)
                };
                ys.extend([iq_pre + l, iq_pre + h]);
                f.shades.push(Shade {
                    polygon: vec![
                        (*from, iq_pre + l),
                        (until, iq_pre + l),
                        (until, iq_pre + h),
                        (*from, iq_pre + h),
                    ],
                    color: plot::MARK,
                    opacity: 0.18,
                });
            }
            if let (Some(at), Some(rise)) = (c.at_s, c.measured) {
                f.marks.push(Mark {
                    t: at,
                    v: iq_pre + 0.9 * segs[0].2,
                    label: format!("90 % after {:.1} ms", rise * 1e3),
                });
            }
            f.vlines.push(VLine {
                t: t0 + rc.rise_time_s,
                label: format!("rise limit {:.0} ms", rc.rise_time_s * 1e3),
            });
            if let Some(st) = c.settling_time_s {
                f.vlines.push(VLine {
                    t: t0 + st,
                    label: format!("settled {:.1} ms", st * 1e3),
                });
            }
        }
        f.y_range = plot::y_range(ys.into_iter(), (-0.1, 0.1));
        f.vlines.extend(marks_for(inp.disturbances, None, hi));
        trip_line(&mut f.vlines);
        f.title = format!("{} – {} – {}", inp.test_id, label, verdicts(&checks));
        out.push(Figure { quantity, spec: f });
    }

    // --- Active power.
    let checks: Vec<&CheckResult> = inp
        .checks
        .iter()
        .filter(|c| c.check_type == "active_power_recovery")
        .collect();
    if let (Some(p), false) = (s.get(Quantity::P), checks.is_empty()) {
        let mut f = FigureSpec {
            x_label: "time since the first sample (s)".into(),
            y_label: "active power (pu)".into(),
            x_range: (lo, hi),
            ..Default::default()
        };
        f.traces.push(trace("active power P", p, plot::MEASURED, 2));
        let mut ys: Vec<f64> = f.traces[0].points.iter().map(|p| p.1).collect();
        for c in &checks {
            let (Some(k), Some(CheckSpec::ActivePowerRecovery(ap))) =
                (c.disturbance, spec_of(&c.id))
            else {
                continue;
            };
            let (Some(d), Some(p0)) = (inp.disturbances.get(k), c.prefault_pu) else {
                continue;
            };
            let Some(end) = d.end_s else { continue };
            let target = ap.fraction * p0;
            ys.push(target);
            f.traces.push(Trace {
                label: format!(
                    "target {:.0} % of pre-fault ({}): {}",
                    ap.fraction * 100.0,
                    c.id,
                    c.verdict.name().to_uppercase().replace('_', " ")
                ),
                points: vec![(end, target), (hi.max(end + ap.within_s), target)],
                color: plot::REQUIRED,
                dashed: true,
                width: 2,
            });
            f.vlines.push(VLine {
                t: end + ap.within_s,
                label: format!("deadline {} s", ap.within_s),
            });
            if let (Some(at), Some(m)) = (c.at_s, c.measured) {
                f.marks.push(Mark {
                    t: at,
                    v: value_at(s, p, at),
                    label: format!("reached after {:.1} ms", m * 1e3),
                });
            }
        }
        f.y_range = plot::y_range(ys.into_iter(), (0.0, 0.1));
        f.vlines.extend(marks_for(inp.disturbances, None, hi));
        trip_line(&mut f.vlines);
        f.title = format!("{} – active power – {}", inp.test_id, verdicts(&checks));
        out.push(Figure {
            quantity: "active_power",
            spec: f,
        });
    }
    out
}

/// Figures of a rule set itself: each envelope and duration table against
/// time since the disturbance start, and each reactive-current
/// characteristic (required extra current against the voltage deviation,
/// with pre-fault reactive current 0).
pub fn rule_figures(rules: &RuleSet) -> Vec<(String, FigureSpec)> {
    let mut out = Vec::new();
    for c in &rules.checks {
        match c {
            CheckSpec::Envelope(_) | CheckSpec::DurationTable(_) => {
                let Some((pts, bound)) = zone_boundary(c) else {
                    continue;
                };
                let what = match c {
                    CheckSpec::DurationTable(tb) => format!(
                        "duration table ({:?} {:?}), drawn as its equivalent curve",
                        tb.side, tb.mode
                    )
                    .to_lowercase(),
                    _ => format!("{:?} envelope", bound).to_lowercase(),
                };
                let last = pts.last().map_or(1.0, |p| p[0]);
                let x1 = (last * 1.25).max(last + 0.2);
                let mut line: Vec<(f64, f64)> = pts
                    .iter()
                    .filter(|p| p[1].is_finite())
                    .map(|p| (p[0], p[1]))
                    .collect();
                if let Some(l) = line.last().copied() {
                    line.push((x1, l.1));
                }
                let (y0, y1) = plot::y_range(line.iter().map(|p| p.1), (0.0, 1.2));
                let edge = if bound == Bound::Lower { y1 } else { y0 };
                let mut poly = line.clone();
                poly.push((x1, edge));
                poly.push((0.0, edge));
                let mut f = FigureSpec {
                    title: format!("{} – {}: {what}", rules.id, c.id()),
                    x_label: "time since the disturbance start (s)".into(),
                    y_label: format!(
                        "{} voltage (pu)",
                        rules.applicable_voltage.name().replace('_', " ")
                    ),
                    x_range: (0.0, x1),
                    y_range: (y0, y1),
                    shades: vec![Shade {
                        polygon: poly,
                        color: plot::ZONE,
                        opacity: 0.15,
                    }],
                    traces: vec![Trace {
                        label: format!("{} boundary (shaded: ride-through zone)", c.id()),
                        points: line,
                        color: plot::BOUNDARY,
                        dashed: false,
                        width: 2,
                    }],
                    ..Default::default()
                };
                for p in &pts {
                    f.marks.push(Mark {
                        t: p[0],
                        v: p[1],
                        label: format!("[{}, {}]", p[0], p[1]),
                    });
                }
                out.push((c.id().to_string(), f));
            }
            CheckSpec::ReactiveCurrent(rc) => {
                let n = 600;
                let (a, b) = (-1.0, 0.5);
                let req: Vec<(f64, f64)> = (0..=n)
                    .map(|k| {
                        let dv = a + (b - a) * k as f64 / n as f64;
                        (dv, reactive::limited(rc, 0.0, reactive::required(rc, dv)))
                    })
                    .collect();
                let [lo, hi] = rc.tolerance_pu;
                let band_hi: Vec<(f64, f64)> = req
                    .iter()
                    .map(|(x, y)| (*x, if *y >= 0.0 { y + hi } else { y - hi }))
                    .collect();
                let band_lo: Vec<(f64, f64)> = req
                    .iter()
                    .map(|(x, y)| (*x, if *y >= 0.0 { y + lo } else { y - lo }))
                    .collect();
                let mut poly = band_hi.clone();
                poly.extend(band_lo.iter().rev());
                let (y0, y1) = plot::y_range(poly.iter().map(|p| p.1), (-0.2, 0.2));
                let seq = if rc.sequence == Sequence::Negative {
                    "2"
                } else {
                    "1"
                };
                let f = FigureSpec {
                    title: format!(
                        "{} – {}: k = {}, dead band {} pu ({:?}), limit {} pu",
                        rules.id, rc.id, rc.gain, rc.dead_band_pu, rc.dead_band_mode, rc.limit_pu
                    )
                    .replace("Offset", "offset")
                    .replace("Full", "full"),
                    x_label: format!("voltage deviation ΔV{seq} (pu)"),
                    y_label: format!("required extra reactive current ΔIq{seq} (pu)"),
                    x_range: (a, b),
                    y_range: (y0, y1),
                    shades: vec![Shade {
                        polygon: poly,
                        color: plot::MARK,
                        opacity: 0.18,
                    }],
                    traces: vec![Trace {
                        label: format!("required ΔIq{seq} (band: tolerance {lo:+}/{hi:+} pu)"),
                        points: req,
                        color: plot::REQUIRED,
                        dashed: false,
                        width: 2,
                    }],
                    vlines: vec![
                        VLine {
                            t: -rc.dead_band_pu,
                            label: "dead band".into(),
                        },
                        VLine {
                            t: rc.dead_band_pu,
                            label: "dead band".into(),
                        },
                    ],
                    ..Default::default()
                };
                out.push((c.id().to_string(), f));
            }
            CheckSpec::ActivePowerRecovery(_) => {}
        }
    }
    out
}
