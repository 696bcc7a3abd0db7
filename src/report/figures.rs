//! The figures of one test: applicable voltage against the ride-through
//! boundaries, reactive current against its requirement, active power
//! against its recovery target. Drawn from the analysis series, the check
//! results and the overlays the checks hand over; nothing here knows a
//! check type or decides a verdict.

use super::plot::{self, Band, BandKind, FigureSpec, Mark, Shade, Trace, VLine};
use crate::analysis::events::{Balance, Disturbance, TripInfo, TripMethod};
use crate::analysis::{Quantity, Series};
use crate::rules::check::{FigureKind, Overlay, RuleDrawing};
use crate::rules::registry::Unit;
use crate::rules::result::CheckResult;

pub struct FigureInput<'a> {
    pub test_id: &'a str,
    pub series: &'a Series,
    /// The applicable voltage, on the series' time base, and its name.
    pub applicable: &'a [f64],
    pub applicable_name: String,
    pub disturbances: &'a [Disturbance],
    pub trip: &'a TripInfo,
    /// Every check result with the figure it belongs to.
    pub results: Vec<(&'a CheckResult, FigureKind)>,
    /// What the checks hand to the figures.
    pub overlays: &'a [(&'a CheckResult, Overlay)],
    /// How far after a disturbance the requirements reach, s.
    pub extent_s: f64,
    /// One nominal cycle, s: the phasor-transition window after each
    /// waveform edge.
    pub cycle_s: f64,
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

fn verdict_label(c: &CheckResult) -> String {
    c.verdict.name().to_uppercase().replace('_', " ")
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

/// The display window and the pieces every figure shares.
struct Frame<'a> {
    inp: &'a FigureInput<'a>,
    lo: f64,
    hi: f64,
}

impl Frame<'_> {
    fn trace(&self, label: &str, v: &[f64], color: plotters::style::RGBColor, width: u32) -> Trace {
        Trace {
            label: label.into(),
            points: plot::minmax_decimate(&self.inp.series.t, v, self.lo, self.hi, POINTS / 2),
            color,
            dashed: false,
            width,
        }
    }
    fn spec(&self, y_label: &str) -> FigureSpec {
        FigureSpec {
            x_label: "time since the first sample (s)".into(),
            y_label: y_label.into(),
            x_range: (self.lo, self.hi),
            ..Default::default()
        }
    }
    /// Disturbance start/end lines, the trip line and the shaded windows:
    /// momentary cessation, after the trip, phasor transitions.
    fn events(&self, f: &mut FigureSpec) {
        let inp = self.inp;
        for (a, b) in &inp.trip.cessations {
            f.bands.push(Band {
                from: *a,
                to: *b,
                kind: BandKind::Cessation,
            });
        }
        if let (true, Some(tt)) = (inp.trip.tripped, inp.trip.time_s) {
            f.bands.push(Band {
                from: tt,
                to: self.hi.max(tt),
                kind: BandKind::Tripped,
            });
        }
        for d in inp.disturbances {
            for edge in [d.inception_s, d.clearance_s].into_iter().flatten() {
                f.bands.push(Band {
                    from: edge,
                    to: edge + inp.cycle_s,
                    kind: BandKind::Transition,
                });
            }
        }
        f.vlines
            .extend(marks_for(self.inp.disturbances, None, self.hi));
        if let (true, Some(tt)) = (self.inp.trip.tripped, self.inp.trip.time_s) {
            let how = match self.inp.trip.method {
                TripMethod::Status => "status",
                TripMethod::Current => "current",
                TripMethod::None => "?",
            };
            f.vlines.push(VLine {
                t: tt,
                label: format!("trip ({how})"),
            });
        }
    }
    fn results(&self, kind: FigureKind) -> Vec<&CheckResult> {
        self.inp
            .results
            .iter()
            .filter(|(_, k)| *k == kind)
            .map(|(c, _)| *c)
            .collect()
    }
}

/// Builds the figures of a test.
pub fn figures(inp: &FigureInput<'_>) -> Vec<Figure> {
    let t = &inp.series.t;
    if t.is_empty() {
        return Vec::new();
    }
    let (t_first, t_last) = (t[0], t[t.len() - 1]);
    // Display window: from a little before the first disturbance to past the
    // longest requirement after the last one.
    let extent = inp.extent_s.max(0.4);
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
    // Every instant a result names is inside the window.
    let instants = || {
        inp.results
            .iter()
            .filter_map(|(c, _)| c.at_s)
            .filter(|a| a.is_finite())
    };
    let pad = 0.05 * (hi - lo);
    let lo = instants().fold(lo, |l, a| l.min((a - pad).max(t_first)));
    let hi = instants().fold(hi, |h, a| h.max((a + pad).min(t_last)));
    let fr = Frame { inp, lo, hi };
    let mut out = vec![voltage_figure(&fr)];
    for negative in [false, true] {
        if let Some(f) = reactive_figure(&fr, negative) {
            out.push(f);
        }
    }
    if let Some(f) = power_figure(&fr) {
        out.push(f);
    }
    if let Some(f) = phase_figure(&fr) {
        out.push(f);
    }
    // Frequency over the whole recording: its events are long.
    let whole = Frame {
        inp,
        lo: t_first,
        hi: t_last,
    };
    if let Some(f) = frequency_figure(&whole) {
        out.push(f);
    }
    out
}

/// The points of `(t, v)` in `[lo, hi]`, decimated run by run: NaN
/// between runs of finite values, so that lines break there.
fn runs(points: &[(f64, f64)], lo: f64, hi: f64, buckets: usize) -> Vec<(f64, f64)> {
    let mut out = Vec::new();
    let mut k = 0;
    while k < points.len() {
        if !points[k].1.is_finite() {
            k += 1;
            continue;
        }
        let a = k;
        while k < points.len() && points[k].1.is_finite() {
            k += 1;
        }
        let (t, v): (Vec<f64>, Vec<f64>) = points[a..k].iter().copied().unzip();
        if !out.is_empty() {
            out.push((t[0], f64::NAN));
        }
        out.extend(plot::minmax_decimate(&t, &v, lo, hi, buckets));
    }
    out
}

/// The positive-sequence angle against its pre-event reference, with the
/// jumps and the ride-through limit.
fn phase_figure(fr: &Frame<'_>) -> Option<Figure> {
    let inp = fr.inp;
    let checks = fr.results(FigureKind::PhaseAngle);
    if checks.is_empty() {
        return None;
    }
    let mut f = fr.spec("angle against the pre-event reference (degrees)");
    let mut ys: Vec<f64> = vec![0.0];
    for (c, o) in inp.overlays {
        let Overlay::PhaseAngle {
            deviation,
            jumps,
            limit_deg,
        } = o
        else {
            continue;
        };
        let points = runs(deviation, fr.lo, fr.hi, POINTS / 2);
        ys.extend(points.iter().map(|p| p.1));
        f.traces.push(Trace {
            label: "positive-sequence voltage angle".into(),
            points,
            color: plot::MEASURED,
            dashed: false,
            width: 2,
        });
        for sign in [1.0, -1.0] {
            f.traces.push(Trace {
                label: if sign > 0.0 {
                    format!(
                        "ride-through limit ±{limit_deg}° ({}): {}",
                        c.id,
                        verdict_label(c)
                    )
                } else {
                    String::new()
                },
                points: vec![(fr.lo, sign * limit_deg), (fr.hi, sign * limit_deg)],
                color: plot::REQUIRED,
                dashed: true,
                width: 2,
            });
        }
        ys.extend([*limit_deg, -limit_deg]);
        for (t, j) in jumps {
            f.vlines.push(VLine {
                t: *t,
                label: format!("jump {j:+.1}°"),
            });
        }
        break;
    }
    f.y_range = plot::y_range(ys.into_iter(), (-5.0, 5.0));
    fr.events(&mut f);
    f.title = format!("{} – phase angle – {}", inp.test_id, verdicts(&checks));
    Some(Figure {
        quantity: "phase_angle",
        spec: f,
    })
}

/// The frequency over the whole recording with the ride-through levels.
fn frequency_figure(fr: &Frame<'_>) -> Option<Figure> {
    let inp = fr.inp;
    let checks = fr.results(FigureKind::Frequency);
    if checks.is_empty() {
        return None;
    }
    let mut f = fr.spec("frequency (Hz)");
    let mut ys: Vec<f64> = Vec::new();
    let mut traced = false;
    for (c, o) in inp.overlays {
        let Overlay::Frequency {
            f: freq,
            levels,
            note,
        } = o
        else {
            continue;
        };
        if !traced {
            let points = runs(freq, fr.lo, fr.hi, POINTS / 2);
            ys.extend(points.iter().map(|p| p.1));
            f.traces.push(Trace {
                label: "frequency (from the positive-sequence angle)".into(),
                points,
                color: plot::MEASURED,
                dashed: false,
                width: 2,
            });
            traced = true;
        }
        for (hz, label) in levels {
            ys.push(*hz);
            f.traces.push(Trace {
                label: format!("{label} ({}): {}", c.id, verdict_label(c)),
                points: vec![(fr.lo, *hz), (fr.hi, *hz)],
                color: plot::BOUNDARY,
                dashed: false,
                width: 2,
            });
        }
        if let Some(n) = note {
            f.traces.push(Trace {
                label: format!("{n}: {}", verdict_label(c)),
                points: Vec::new(),
                color: plot::REQUIRED,
                dashed: false,
                width: 1,
            });
        }
    }
    let mid = ys.iter().copied().filter(|y| y.is_finite()).sum::<f64>() / ys.len().max(1) as f64;
    f.y_range = plot::y_range(ys.into_iter(), (mid - 0.1, mid + 0.1));
    fr.events(&mut f);
    f.title = format!("{} – frequency – {}", inp.test_id, verdicts(&checks));
    Some(Figure {
        quantity: "frequency",
        spec: f,
    })
}

fn voltage_figure(fr: &Frame<'_>) -> Figure {
    let (inp, hi) = (fr.inp, fr.hi);
    let s = inp.series;
    let mut f = fr.spec("voltage (pu)");
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
                f.traces.push(fr.trace(q.name(), v, plot::PHASES[k], 1));
            }
        }
    }
    f.traces.push(fr.trace(
        &format!("applicable voltage ({})", inp.applicable_name),
        inp.applicable,
        plot::MEASURED,
        2,
    ));
    let zone = fr.results(FigureKind::Voltage);
    let mut y_values: Vec<f64> = f
        .traces
        .iter()
        .flat_map(|tr| tr.points.iter().map(|p| p.1))
        .collect();
    for (c, o) in inp.overlays {
        let Overlay::Zone {
            boundary,
            lower,
            start_s,
            note,
        } = o
        else {
            continue;
        };
        let mut abs = boundary.clone();
        if let Some(last) = abs.last().copied() {
            if last.0 < hi {
                abs.push((hi, last.1));
            }
        }
        y_values.extend(abs.iter().map(|p| p.1));
        f.traces.push(Trace {
            label: format!("{} boundary{note}: {}", c.id, verdict_label(c)),
            points: abs.clone(),
            color: plot::BOUNDARY,
            dashed: false,
            width: 2,
        });
        let edge = if *lower {
            f64::INFINITY
        } else {
            f64::NEG_INFINITY
        };
        let mut poly = abs.clone();
        poly.push((abs.last().map_or(hi, |p| p.0), edge));
        poly.push((*start_s, edge));
        f.shades.push(Shade {
            polygon: poly,
            color: plot::ZONE,
            opacity: 0.10,
            label: Some("ride-through zone".into()),
        });
        if let (Some(at), Some(m)) = (c.at_s, c.margin) {
            let v = if c.unit == Unit::Pu {
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
                    super::fmt_value(Some(m), c.unit)
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
    fr.events(&mut f);
    f.title = format!("{} – voltage – {}", inp.test_id, verdicts(&zone));
    Figure {
        quantity: "voltage",
        spec: f,
    }
}

fn reactive_figure(fr: &Frame<'_>, negative: bool) -> Option<Figure> {
    let inp = fr.inp;
    let (q_iq, quantity, label) = if negative {
        (
            Quantity::Iq2,
            "negative_sequence_current",
            "negative-sequence reactive current Iq2",
        )
    } else {
        (
            Quantity::Iq,
            "reactive_current",
            "positive-sequence reactive current Iq1",
        )
    };
    let q_v = if negative { Quantity::V2 } else { Quantity::V1 };
    let checks = fr.results(FigureKind::ReactiveCurrent { negative });
    let (Some(iq), Some(_)) = (inp.series.get(q_iq), inp.series.get(q_v)) else {
        return None;
    };
    if checks.is_empty() {
        return None;
    }
    let mut f = fr.spec("reactive current (pu)");
    f.traces.push(fr.trace(label, iq, plot::MEASURED, 2));
    let mut ys: Vec<f64> = f.traces[0].points.iter().map(|p| p.1).collect();
    for (c, o) in inp.overlays {
        let Overlay::Reactive {
            negative: neg,
            required,
            bands,
            rise,
            rise_limit_at,
            rise_limit_s,
            settled_at,
        } = o
        else {
            continue;
        };
        if *neg != negative {
            continue;
        }
        let required = if required.len() > 2 * POINTS {
            // Following the voltage: decimated like a measured trace.
            let (t, v): (Vec<f64>, Vec<f64>) = required.iter().copied().unzip();
            let (a, b) = (t[0], t[t.len() - 1]);
            plot::minmax_decimate(&t, &v, a, b, POINTS / 4)
        } else {
            required.clone()
        };
        ys.extend(required.iter().map(|p| p.1));
        f.traces.push(Trace {
            label: format!("required ({}): {}", c.id, verdict_label(c)),
            points: required,
            color: plot::REQUIRED,
            dashed: true,
            width: 2,
        });
        for (a, b, l, h) in bands {
            ys.extend([*l, *h]);
            f.shades.push(Shade {
                polygon: vec![(*a, *l), (*b, *l), (*b, *h), (*a, *h)],
                color: plot::BAND,
                opacity: 0.25,
                label: Some("tolerance band".into()),
            });
        }
        if let Some((at, level, rise)) = rise {
            f.marks.push(Mark {
                t: *at,
                v: *level,
                label: format!("90 % after {:.4} s", rise),
            });
        }
        f.vlines.push(VLine {
            t: *rise_limit_at,
            label: format!("rise limit {:.3} s", rise_limit_s),
        });
        if let Some((at, st)) = settled_at {
            f.vlines.push(VLine {
                t: *at,
                label: format!("settled {:.4} s", st),
            });
        }
    }
    f.y_range = plot::y_range(ys.into_iter(), (-0.1, 0.1));
    fr.events(&mut f);
    f.title = format!("{} – {} – {}", inp.test_id, label, verdicts(&checks));
    Some(Figure { quantity, spec: f })
}

fn power_figure(fr: &Frame<'_>) -> Option<Figure> {
    let inp = fr.inp;
    let checks = fr.results(FigureKind::ActivePower);
    let p = inp.series.get(Quantity::P)?;
    if checks.is_empty() {
        return None;
    }
    let mut f = fr.spec("active power (pu)");
    f.traces
        .push(fr.trace("active power P", p, plot::MEASURED, 2));
    let mut ys: Vec<f64> = f.traces[0].points.iter().map(|p| p.1).collect();
    for (c, o) in inp.overlays {
        let Overlay::Power {
            target,
            from,
            deadline,
            fraction,
            within_s,
            reached,
        } = o
        else {
            continue;
        };
        ys.push(*target);
        f.traces.push(Trace {
            label: format!(
                "target {:.0} % of pre-fault ({}): {}",
                fraction * 100.0,
                c.id,
                verdict_label(c)
            ),
            points: vec![(*from, *target), (fr.hi.max(*deadline), *target)],
            color: plot::REQUIRED,
            dashed: true,
            width: 2,
        });
        f.vlines.push(VLine {
            t: *deadline,
            label: format!("deadline {within_s} s"),
        });
        if let Some((at, m)) = reached {
            f.marks.push(Mark {
                t: *at,
                v: value_at(inp.series, p, *at),
                label: format!("reached after {:.4} s", m),
            });
        }
    }
    f.y_range = plot::y_range(ys.into_iter(), (0.0, 0.1));
    fr.events(&mut f);
    f.title = format!("{} – active power – {}", inp.test_id, verdicts(&checks));
    Some(Figure {
        quantity: "active_power",
        spec: f,
    })
}

/// The figures of a rule set with a file-name stem each (`rules plot`,
/// and the rule-set figures of an evidence pack).
pub fn rule_set_figures(r: &crate::rules::spec::RuleSet) -> Vec<(String, FigureSpec)> {
    rule_set_figures_of(&r.id, r.applicable_voltage, &r.checks)
}

/// [`rule_set_figures`] from the parts of a rule set (as results keep them).
pub fn rule_set_figures_of(
    id: &str,
    applicable: crate::analysis::events::ApplicableVoltage,
    checks: &[crate::rules::spec::CheckSpec],
) -> Vec<(String, FigureSpec)> {
    let drawings: Vec<(String, RuleDrawing)> = checks
        .iter()
        .filter_map(|c| Some((c.id().to_string(), c.check().drawing(id)?)))
        .collect();
    let name = applicable.name().replace('_', " ");
    rule_figures(id, &name, &drawings)
        .into_iter()
        .map(|(id, spec)| (crate::text::file_safe(&id), spec))
        .collect()
}

/// Figures of a rule set itself (`rules plot`): each zone boundary
/// against time since the disturbance start, each reactive-current
/// characteristic against the voltage deviation.
pub fn rule_figures(
    rule_set_id: &str,
    applicable_name: &str,
    drawings: &[(String, RuleDrawing)],
) -> Vec<(String, FigureSpec)> {
    let mut out = Vec::new();
    for (id, d) in drawings {
        match d {
            RuleDrawing::Zone {
                points,
                lower,
                what,
            } => {
                let last = points.last().map_or(1.0, |p| p[0]);
                let x1 = (last * 1.25).max(last + 0.2);
                let mut line: Vec<(f64, f64)> = points
                    .iter()
                    .filter(|p| p[1].is_finite())
                    .map(|p| (p[0], p[1]))
                    .collect();
                if let Some(l) = line.last().copied() {
                    line.push((x1, l.1));
                }
                let (y0, y1) = plot::y_range(line.iter().map(|p| p.1), (0.0, 1.2));
                let edge = if *lower { y1 } else { y0 };
                let mut poly = line.clone();
                poly.push((x1, edge));
                poly.push((0.0, edge));
                let mut f = FigureSpec {
                    title: format!("{rule_set_id} – {id}: {what}"),
                    x_label: "time since the disturbance start (s)".into(),
                    y_label: format!("{applicable_name} voltage (pu)"),
                    x_range: (0.0, x1),
                    y_range: (y0, y1),
                    shades: vec![Shade {
                        polygon: poly,
                        color: plot::ZONE,
                        opacity: 0.15,
                        label: Some("ride-through zone".into()),
                    }],
                    traces: vec![Trace {
                        label: format!("{id} boundary (shaded: ride-through zone)"),
                        points: line,
                        color: plot::BOUNDARY,
                        dashed: false,
                        width: 2,
                    }],
                    ..Default::default()
                };
                for p in points {
                    f.marks.push(Mark {
                        t: p[0],
                        v: p[1],
                        label: format!("[{}, {}]", p[0], p[1]),
                    });
                }
                out.push((id.clone(), f));
            }
            RuleDrawing::Characteristic {
                title,
                curve,
                band,
                dead_band_pu,
                negative,
                tolerance,
            } => {
                let (y0, y1) = plot::y_range(band.iter().map(|p| p.1), (-0.2, 0.2));
                let seq = if *negative { "2" } else { "1" };
                let [lo, hi] = tolerance;
                let f = FigureSpec {
                    title: title.clone(),
                    x_label: format!("voltage deviation ΔV{seq} (pu)"),
                    y_label: format!("required extra reactive current ΔIq{seq} (pu)"),
                    x_range: (-1.0, 0.5),
                    y_range: (y0, y1),
                    shades: vec![Shade {
                        polygon: band.clone(),
                        color: plot::BAND,
                        opacity: 0.25,
                        label: Some("tolerance band".into()),
                    }],
                    traces: vec![Trace {
                        label: format!("required ΔIq{seq} (band: tolerance {lo:+}/{hi:+} pu)"),
                        points: curve.clone(),
                        color: plot::REQUIRED,
                        dashed: false,
                        width: 2,
                    }],
                    vlines: vec![
                        VLine {
                            t: -dead_band_pu,
                            label: "dead band".into(),
                        },
                        VLine {
                            t: *dead_band_pu,
                            label: "dead band".into(),
                        },
                    ],
                    ..Default::default()
                };
                out.push((id.clone(), f));
            }
        }
    }
    out
}
