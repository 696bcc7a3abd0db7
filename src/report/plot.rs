//! Annotated figures (plotters), as SVG text for the HTML report and as SVG
//! and PNG files for word processors. Figures draw what the checks found;
//! they compute no verdict.
//!
//! Long series are reduced for display by keeping the minimum and maximum of
//! each pixel column ([`minmax_decimate`]), so a one-sample spike stays
//! visible while files stay small. Every line and shade is clipped to the
//! plot area before it is drawn, so nothing reaches the title or the axes in
//! either backend. Colours are the Okabe–Ito palette (Okabe and Ito, "Color
//! Universal Design", 2002/2008), chosen to stay distinct for the common
//! colour-vision deficiencies; the legend names it, and every verdict is
//! also written out in text. Zone boundaries are solid, requirements in a
//! figure of measured values dashed (the measured traces are solid). Text is
//! at least [`MIN_FONT_PX`] pixels: printed one figure across an A4 or
//! Letter page (186 mm of a 210 mm sheet with 12 mm margins) that is at
//! least 7 pt.

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use std::sync::Once;

pub const WIDTH: u32 = 900;
pub const HEIGHT: u32 = 420;
/// The smallest text of a figure, in plotters' font size. The SVG backend
/// writes `font-size` = size / 1.24 (12.9 px for 16); 12.9 px of 900 across
/// 186 mm (527 pt) prints at 7.5 pt.
pub const MIN_FONT_PX: u32 = 16;
const TITLE_PX: u32 = 19;

/// Palette (Okabe–Ito): measured quantity, phases, boundary, zone,
/// requirement, marks.
pub const MEASURED: RGBColor = RGBColor(0, 114, 178); // blue
pub const PHASES: [RGBColor; 3] = [
    RGBColor(230, 159, 0),   // orange
    RGBColor(86, 180, 233),  // sky blue
    RGBColor(204, 121, 167), // reddish purple
];
/// The boundary colour is used for nothing else (tests find the boundary by it).
pub const BOUNDARY: RGBColor = RGBColor(213, 94, 0); // vermillion
pub const ZONE: RGBColor = RGBColor(0, 158, 115); // bluish green
pub const REQUIRED: RGBColor = RGBColor(0, 0, 0); // black
pub const MARK: RGBColor = RGBColor(90, 90, 90);
/// Shade of tolerance bands.
pub const BAND: RGBColor = RGBColor(86, 180, 233); // sky blue
/// Shade of the phasor-transition windows.
pub const TRANSITION: RGBColor = RGBColor(240, 228, 66); // yellow
/// What the legend says about the colours.
pub const PALETTE_NOTE: &str = "colours: Okabe–Ito palette (colour-blind safe)";

static FONT: Once = Once::new();

/// Registers the bundled font: it lays out text in both backends and draws
/// it in bitmaps (SVG text itself is drawn by the viewer).
pub fn register_font() {
    FONT.call_once(|| {
        let _ = plotters::style::register_font(
            "sans-serif",
            FontStyle::Normal,
            include_bytes!("../../assets/fonts/DejaVuSans.ttf"),
        );
    });
}

/// Min/max reduction to `buckets` columns over `[t0, t1]`: each column keeps
/// its smallest and largest value, in time order, so extremes survive.
pub fn minmax_decimate(t: &[f64], v: &[f64], t0: f64, t1: f64, buckets: usize) -> Vec<(f64, f64)> {
    let i0 = t.partition_point(|x| *x < t0);
    let i1 = t.partition_point(|x| *x <= t1);
    let n = i1.saturating_sub(i0);
    if n <= 2 * buckets.max(1) {
        return (i0..i1)
            .filter(|k| v[*k].is_finite())
            .map(|k| (t[k], v[k]))
            .collect();
    }
    let width = (t1 - t0) / buckets as f64;
    let mut out = Vec::with_capacity(2 * buckets);
    let mut k = i0;
    for b in 0..buckets {
        let end_t = if b + 1 == buckets {
            f64::INFINITY
        } else {
            t0 + width * (b + 1) as f64
        };
        let (mut lo, mut hi): (Option<usize>, Option<usize>) = (None, None);
        while k < i1 && t[k] < end_t {
            if v[k].is_finite() {
                if lo.is_none_or(|l| v[k] < v[l]) {
                    lo = Some(k);
                }
                if hi.is_none_or(|h| v[k] > v[h]) {
                    hi = Some(k);
                }
            }
            k += 1;
        }
        match (lo, hi) {
            (Some(a), Some(b)) if a == b => out.push((t[a], v[a])),
            (Some(a), Some(b)) => {
                let (x, y) = if a < b { (a, b) } else { (b, a) };
                out.push((t[x], v[x]));
                out.push((t[y], v[y]));
            }
            _ => {}
        }
    }
    out
}

/// A labelled vertical marker line.
#[derive(Clone, Debug)]
pub struct VLine {
    pub t: f64,
    pub label: String,
}

/// A labelled point.
#[derive(Clone, Debug)]
pub struct Mark {
    pub t: f64,
    pub v: f64,
    pub label: String,
}

/// A line of a figure.
#[derive(Clone, Debug)]
pub struct Trace {
    pub label: String,
    pub points: Vec<(f64, f64)>,
    pub color: RGBColor,
    pub dashed: bool,
    pub width: u32,
}

/// A shaded region: a closed polygon in data coordinates.
#[derive(Clone, Debug)]
pub struct Shade {
    pub polygon: Vec<(f64, f64)>,
    pub color: RGBColor,
    pub opacity: f64,
    /// The legend's name for it (one entry per name).
    pub label: Option<String>,
}

/// What a shaded time window shows.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BandKind {
    /// Momentary cessation: the current dropped and came back.
    Cessation,
    /// After the trip: the unit is disconnected.
    Tripped,
    /// One nominal cycle after a waveform edge, where the one-cycle phasor
    /// mixes two states (its negative sequence is not real current); the
    /// checks leave it out where docs/method.md says so.
    Transition,
}

impl BandKind {
    pub fn label(self) -> &'static str {
        match self {
            BandKind::Cessation => "momentary cessation",
            BandKind::Tripped => "after the trip (disconnected)",
            BandKind::Transition => "phasor transition (one cycle)",
        }
    }
    fn style(self) -> (RGBColor, f64) {
        match self {
            BandKind::Cessation => (MARK, 0.30),
            BandKind::Tripped => (MARK, 0.14),
            BandKind::Transition => (TRANSITION, 0.45),
        }
    }
}

/// A shaded time window over the whole height of the plot.
#[derive(Clone, Debug, PartialEq)]
pub struct Band {
    pub from: f64,
    pub to: f64,
    pub kind: BandKind,
}

/// Everything a figure shows.
#[derive(Clone, Debug, Default)]
pub struct FigureSpec {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub x_range: (f64, f64),
    pub y_range: (f64, f64),
    pub shades: Vec<Shade>,
    pub traces: Vec<Trace>,
    pub vlines: Vec<VLine>,
    pub marks: Vec<Mark>,
    /// Time windows shaded over the whole height, named in the legend.
    pub bands: Vec<Band>,
}

/// Pixel positions of two data points, to map coordinates back, and where
/// the text went (tests).
#[derive(Clone, Debug, PartialEq)]
pub struct AxisMap {
    pub data: [(f64, f64); 2],
    pub pixel: [(i32, i32); 2],
    /// The plot area: left, top, right, bottom.
    pub plot: [i32; 4],
    /// The legend box, then each label of a marker line or point.
    pub legend: [i32; 4],
    pub labels: Vec<[i32; 4]>,
}

impl AxisMap {
    /// Data coordinates of a pixel position.
    pub fn to_data(&self, px: f64, py: f64) -> (f64, f64) {
        let [(x0, y0), (x1, y1)] = self.data;
        let [(p0, q0), (p1, q1)] = self.pixel;
        (
            x0 + (px - p0 as f64) * (x1 - x0) / (p1 - p0) as f64,
            y0 + (py - q0 as f64) * (y1 - y0) / (q1 - q0) as f64,
        )
    }
}

/// A value far outside any plot, standing in for an infinite one so that
/// clipping stays finite.
const FAR: f64 = 1e12;

fn finite(p: (f64, f64)) -> (f64, f64) {
    (p.0.clamp(-FAR, FAR), p.1.clamp(-FAR, FAR))
}

/// The parts of segment `a`–`b` inside the rectangle, as parameters
/// `0 ≤ u0 ≤ u1 ≤ 1` along it (Liang–Barsky clipping).
fn clip_segment(a: (f64, f64), b: (f64, f64), x: (f64, f64), y: (f64, f64)) -> Option<(f64, f64)> {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    let (mut u0, mut u1) = (0.0f64, 1.0f64);
    for (p, q) in [
        (-dx, a.0 - x.0),
        (dx, x.1 - a.0),
        (-dy, a.1 - y.0),
        (dy, y.1 - a.1),
    ] {
        if p == 0.0 {
            if q < 0.0 {
                return None;
            }
        } else {
            let r = q / p;
            if p < 0.0 {
                u0 = u0.max(r);
            } else {
                u1 = u1.min(r);
            }
        }
    }
    (u0 <= u1).then_some((u0, u1))
}

/// The pieces of a polyline inside the rectangle `x` × `y`; non-finite
/// values break the line, infinite ones run to the edge.
pub fn clip_polyline(points: &[(f64, f64)], x: (f64, f64), y: (f64, f64)) -> Vec<Vec<(f64, f64)>> {
    let mut out: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut open = false;
    let lerp =
        |a: (f64, f64), b: (f64, f64), u: f64| (a.0 + u * (b.0 - a.0), a.1 + u * (b.1 - a.1));
    for w in points.windows(2) {
        if w[0].0.is_nan() || w[0].1.is_nan() || w[1].0.is_nan() || w[1].1.is_nan() {
            open = false;
            continue;
        }
        let (a, b) = (finite(w[0]), finite(w[1]));
        match clip_segment(a, b, x, y) {
            Some((u0, u1)) => {
                let (p, q) = (lerp(a, b, u0), lerp(a, b, u1));
                if !(open && u0 == 0.0) {
                    out.push(vec![p]);
                }
                if let Some(last) = out.last_mut() {
                    last.push(q);
                }
                open = u1 == 1.0;
            }
            None => open = false,
        }
    }
    if points.len() == 1 {
        let p = points[0];
        if p.0 >= x.0 && p.0 <= x.1 && p.1 >= y.0 && p.1 <= y.1 {
            out.push(vec![p]);
        }
    }
    out
}

/// A polygon cut to the rectangle `x` × `y` (Sutherland–Hodgman).
pub fn clip_polygon(poly: &[(f64, f64)], x: (f64, f64), y: (f64, f64)) -> Vec<(f64, f64)> {
    let mut pts: Vec<(f64, f64)> = poly
        .iter()
        .filter(|p| !p.0.is_nan() && !p.1.is_nan())
        .map(|p| finite(*p))
        .collect();
    // Each edge: inside test and the crossing of a segment with the edge.
    type Edge = (fn(f64, f64, (f64, f64)) -> bool, usize, f64);
    let edges: [(Edge, f64); 4] = [
        ((|px, _, r| px >= r.0, 0, x.0), x.0),
        ((|px, _, r| px <= r.1, 0, x.1), x.1),
        ((|_, py, r| py >= r.0, 1, y.0), y.0),
        ((|_, py, r| py <= r.1, 1, y.1), y.1),
    ];
    for (k, ((inside, axis, _), at)) in edges.into_iter().enumerate() {
        let range = if k < 2 { x } else { y };
        let ins = |p: (f64, f64)| inside(p.0, p.1, range);
        let cross = |a: (f64, f64), b: (f64, f64)| {
            let (ca, cb) = if axis == 0 { (a.0, b.0) } else { (a.1, b.1) };
            let u = (at - ca) / (cb - ca);
            let p = (a.0 + u * (b.0 - a.0), a.1 + u * (b.1 - a.1));
            if axis == 0 {
                (at, p.1)
            } else {
                (p.0, at)
            }
        };
        let mut next = Vec::with_capacity(pts.len() + 4);
        for i in 0..pts.len() {
            let (cur, prev) = (pts[i], pts[(i + pts.len() - 1) % pts.len()]);
            match (ins(prev), ins(cur)) {
                (true, true) => next.push(cur),
                (true, false) => next.push(cross(prev, cur)),
                (false, true) => {
                    next.push(cross(prev, cur));
                    next.push(cur);
                }
                (false, false) => {}
            }
        }
        pts = next;
        if pts.is_empty() {
            break;
        }
    }
    pts
}

/// A text's box in pixels: left, top, right, bottom.
type TextBox = (i32, i32, i32, i32);

fn overlaps(a: &TextBox, b: &TextBox) -> bool {
    a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3
}

/// Places text boxes inside the plot area so that none overlaps another.
struct Labels {
    plot: TextBox,
    taken: Vec<TextBox>,
}

impl Labels {
    /// The first free place among `tries` (anchor x, top y, right-aligned),
    /// kept inside the plot area; the last try when none is free.
    fn place(&mut self, w: i32, h: i32, tries: &[(i32, i32, bool)]) -> (i32, i32, bool) {
        let fit = |&(x, top, right): &(i32, i32, bool)| {
            let left = if right { x - w } else { x };
            let left = left.clamp(self.plot.0 + 2, (self.plot.2 - w - 2).max(self.plot.0 + 2));
            let top = top.clamp(self.plot.1 + 2, (self.plot.3 - h - 2).max(self.plot.1 + 2));
            (left, top)
        };
        let mut chosen = None;
        for t in tries {
            let (left, top) = fit(t);
            let wanted = if t.2 { t.0 - w } else { t.0 };
            // A try that had to move far to stay inside is not beside its anchor.
            if (left - wanted).abs() > 6 || (top - t.1).abs() > 6 {
                continue;
            }
            let b = (left, top, left + w, top + h);
            if !self.taken.iter().any(|o| overlaps(o, &b)) {
                chosen = Some(b);
                break;
            }
        }
        let b = chosen.unwrap_or_else(|| {
            let (left, top) = fit(tries.last().unwrap_or(&(self.plot.0, self.plot.1, false)));
            (left, top, left + w, top + h)
        });
        self.taken.push(b);
        (b.0, b.1, false)
    }
}

const LEGEND_MARGIN: i32 = 8;
const LEGEND_SAMPLE: i32 = 28;

/// The legend's box: in the corner of the plot where it hides the least of
/// the lines (counted at points along each line), lower right on a tie.
fn legend_box(
    f: &FigureSpec,
    kinds: &[BandKind],
    plot: &TextBox,
    size: &dyn Fn(&str) -> (i32, i32),
    to_px: &dyn Fn((f64, f64)) -> (i32, i32),
) -> TextBox {
    let mut texts: Vec<&str> = f
        .traces
        .iter()
        .map(|t| t.label.as_str())
        .filter(|l| !l.is_empty())
        .collect();
    for name in f.shades.iter().filter_map(|s| s.label.as_deref()) {
        if !texts.contains(&name) {
            texts.push(name);
        }
    }
    texts.extend(kinds.iter().map(|k| k.label()));
    texts.push(PALETTE_NOTE);
    let text_w = texts.iter().map(|t| size(t).0).max().unwrap_or(0);
    let line_h = (MIN_FONT_PX as f64 * 1.25).ceil() as i32;
    let w = text_w + LEGEND_SAMPLE + 2 * LEGEND_MARGIN;
    let h = texts.len() as i32 * line_h + 2 * LEGEND_MARGIN;
    let (l, t, r, b) = *plot;
    let corners = [
        (r - w - 5, b - h - 5),
        (r - w - 5, t + 5),
        (l + 5, b - h - 5),
        (l + 5, t + 5),
    ];
    let mut samples: Vec<(i32, i32)> = Vec::new();
    for tr in &f.traces {
        for piece in clip_polyline(&tr.points, f.x_range, f.y_range) {
            for wdw in piece.windows(2) {
                let (a, c) = (to_px(wdw[0]), to_px(wdw[1]));
                let n = ((c.0 - a.0).abs().max((c.1 - a.1).abs()) / 4).clamp(1, 400);
                for k in 0..=n {
                    samples.push((a.0 + (c.0 - a.0) * k / n, a.1 + (c.1 - a.1) * k / n));
                }
            }
        }
    }
    let hidden = |(x, y): (i32, i32)| {
        samples
            .iter()
            .filter(|p| p.0 >= x && p.0 <= x + w && p.1 >= y && p.1 <= y + h)
            .count()
    };
    let best = corners
        .iter()
        .copied()
        .min_by_key(|c| hidden(*c))
        .unwrap_or(corners[0]);
    (best.0, best.1, best.0 + w, best.1 + h)
}

type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

fn font(c: RGBColor) -> TextStyle<'static> {
    ("sans-serif", MIN_FONT_PX).into_font().color(&c)
}

/// The shaded windows and areas, clipped; returns the band kinds drawn.
fn draw_areas<'a, DB: DrawingBackend + 'a>(
    chart: &mut Chart<'a, DB>,
    f: &FigureSpec,
) -> Result<Vec<BandKind>, String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
    let ((x0, x1), (y0, y1)) = (f.x_range, f.y_range);
    let clip = |poly: &[(f64, f64)]| clip_polygon(poly, (x0, x1), (y0, y1));
    let mut kinds: Vec<BandKind> = Vec::new();
    for b in &f.bands {
        let (color, opacity) = b.kind.style();
        let poly = clip(&[(b.from, y0), (b.to, y0), (b.to, y1), (b.from, y1)]);
        if poly.len() >= 3 {
            chart
                .draw_series(std::iter::once(Polygon::new(
                    poly,
                    color.mix(opacity).filled(),
                )))
                .map_err(e)?;
            if !kinds.contains(&b.kind) {
                kinds.push(b.kind);
            }
        }
    }
    for s in &f.shades {
        let poly = clip(&s.polygon);
        if poly.len() >= 3 {
            chart
                .draw_series(std::iter::once(Polygon::new(
                    poly,
                    s.color.mix(s.opacity).filled(),
                )))
                .map_err(e)?;
        }
    }
    Ok(kinds)
}

/// A legend entry for a shaded area: a filled square.
fn swatch<'a, DB: DrawingBackend + 'a>(
    chart: &mut Chart<'a, DB>,
    name: &str,
    color: RGBColor,
    opacity: f64,
) -> Result<(), String> {
    chart
        .draw_series(std::iter::empty::<Rectangle<(f64, f64)>>())
        .map_err(|x| x.to_string())?
        .label(name)
        .legend(move |(x, y)| {
            Rectangle::new([(x, y - 6), (x + 20, y + 6)], color.mix(opacity).filled())
        });
    Ok(())
}

/// The lines, clipped, and the legend entries of lines and bands.
fn draw_traces<'a, DB: DrawingBackend + 'a>(
    chart: &mut Chart<'a, DB>,
    f: &FigureSpec,
    kinds: &[BandKind],
    px: Pixels,
    bitmap: bool,
) -> Result<(), String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
    for tr in &f.traces {
        let style = tr.color.stroke_width(tr.width);
        let pieces: Vec<Vec<(f64, f64)>> = clip_polyline(&tr.points, f.x_range, f.y_range)
            .into_iter()
            .flat_map(|piece| without_sharp_turns(&piece, &px, bitmap && tr.width > 1))
            .collect();
        let mut labelled = tr.label.is_empty();
        if tr.points.is_empty() && !labelled {
            // A legend line of its own (a note on the figure).
            chart
                .draw_series(std::iter::empty::<Rectangle<(f64, f64)>>())
                .map_err(e)?
                .label(&tr.label)
                .legend(|(x, y)| EmptyElement::at((x, y)));
            continue;
        }
        for piece in pieces {
            let series = if tr.dashed {
                chart.draw_series(DashedLineSeries::new(piece, 8, 5, style))
            } else {
                chart.draw_series(LineSeries::new(piece, style))
            }
            .map_err(e)?;
            if !labelled {
                labelled = true;
                let dashed = tr.dashed;
                series.label(&tr.label).legend(move |(x, y)| {
                    let pts = if dashed {
                        vec![(x, y), (x + 8, y), (x + 12, y), (x + 20, y)]
                    } else {
                        vec![(x, y), (x + 20, y)]
                    };
                    PathElement::new(pts, style)
                });
            }
        }
    }
    let mut named: Vec<&str> = Vec::new();
    for sh in &f.shades {
        let Some(name) = sh.label.as_deref() else {
            continue;
        };
        if named.contains(&name) {
            continue;
        }
        named.push(name);
        swatch(chart, name, sh.color, sh.opacity.max(0.2))?;
    }
    for k in kinds {
        let (color, opacity) = k.style();
        swatch(chart, k.label(), color, opacity)?;
    }
    chart
        .draw_series(std::iter::empty::<Rectangle<(f64, f64)>>())
        .map_err(e)?
        .label(PALETTE_NOTE)
        .legend(|(x, y)| EmptyElement::at((x, y)));
    Ok(())
}

/// A polyline split where it turns back on itself. The bitmap backend
/// joins the segments of a line wider than one pixel with mitred corners,
/// and the mitre of a near-reversal (a one-sample spike) reaches far out
/// of the plot, across the title; browsers cap mitres in SVG, so only
/// bitmaps are split (`split`). Points on the
/// same pixel as the one before are left out (no direction there).
fn without_sharp_turns(piece: &[(f64, f64)], px: &Pixels, split: bool) -> Vec<Vec<(f64, f64)>> {
    let mut out: Vec<Vec<(f64, f64)>> = vec![Vec::with_capacity(piece.len())];
    let mut last: Option<(i32, i32)> = None;
    let mut dir: Option<(f64, f64)> = None;
    for &p in piece {
        let at = px.at(p);
        if last == Some(at) {
            continue;
        }
        if let Some(l) = last {
            let d = ((at.0 - l.0) as f64, (at.1 - l.1) as f64);
            let n = d.0.hypot(d.1);
            let d = (d.0 / n, d.1 / n);
            // A turn of more than about 120° ends the piece at its corner.
            if split && dir.is_some_and(|o| o.0 * d.0 + o.1 * d.1 < -0.5) {
                let corner = out.last().and_then(|c| c.last().copied());
                out.push(corner.into_iter().collect());
            }
            dir = Some(d);
        }
        if let Some(cur) = out.last_mut() {
            cur.push(p);
        }
        last = Some(at);
    }
    out.retain(|c| c.len() >= 2);
    out
}

/// Data to backend pixels, from the plot area's corners.
#[derive(Clone, Copy)]
struct Pixels {
    x: (f64, f64),
    y: (f64, f64),
    top_left: (i32, i32),
    bottom_right: (i32, i32),
}

impl Pixels {
    fn at(&self, p: (f64, f64)) -> (i32, i32) {
        let fx = (p.0 - self.x.0) / (self.x.1 - self.x.0);
        let fy = (self.y.1 - p.1) / (self.y.1 - self.y.0);
        (
            self.top_left.0 + (fx * (self.bottom_right.0 - self.top_left.0) as f64).round() as i32,
            self.top_left.1 + (fy * (self.bottom_right.1 - self.top_left.1) as f64).round() as i32,
        )
    }
}

/// Marker lines and points with their labels, placed so that no label
/// overlaps another or the legend.
fn draw_annotations<'a, DB: DrawingBackend + 'a>(
    root: &DrawingArea<DB, Shift>,
    chart: &mut Chart<'a, DB>,
    f: &FigureSpec,
    px: Pixels,
    labels: &mut Labels,
    size: &dyn Fn(&str) -> (i32, i32),
) -> Result<(), String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
    let ((x0, x1), (y0, y1)) = (f.x_range, f.y_range);
    let row = MIN_FONT_PX as i32 + 5;
    for l in f.vlines.iter().filter(|l| l.t >= x0 && l.t <= x1) {
        chart
            .draw_series(DashedLineSeries::new(
                vec![(l.t, y0), (l.t, y1)],
                3,
                4,
                MARK.stroke_width(1),
            ))
            .map_err(e)?;
        let (w, h) = size(&l.label);
        let x = px.at((l.t, y1)).0;
        // Right of the line first, then left of it, row by row from the top.
        let tries: Vec<(i32, i32, bool)> = (0..6)
            .flat_map(|r| {
                let top = labels.plot.1 + 4 + r * row;
                [(x + 4, top, false), (x - 4, top, true)]
            })
            .collect();
        let (left, top, _) = labels.place(w, h, &tries);
        root.draw(&Text::new(
            l.label.clone(),
            (left, top),
            font(MARK).pos(Pos::new(HPos::Left, VPos::Top)),
        ))
        .map_err(e)?;
    }
    for m in f
        .marks
        .iter()
        .filter(|m| m.t >= x0 && m.t <= x1 && m.v.is_finite())
    {
        let v = m.v.clamp(y0, y1);
        chart
            .draw_series(std::iter::once(Circle::new(
                (m.t, v),
                5,
                REQUIRED.stroke_width(2),
            )))
            .map_err(e)?;
        let (w, h) = size(&m.label);
        let (x, y) = px.at((m.t, v));
        // Above and right of the point (off the line through it), else
        // above left, below right, below left, then further away.
        let tries: Vec<(i32, i32, bool)> = [(-1, 0), (1, 0), (-1, 1), (1, 1), (-1, 2), (1, 2)]
            .iter()
            .flat_map(|&(side, far)| {
                let top = if side < 0 {
                    y - h - 6 - far * row
                } else {
                    y + 6 + far * row
                };
                [(x + 7, top, false), (x - 7, top, true)]
            })
            .collect();
        let (left, top, _) = labels.place(w, h, &tries);
        root.draw(&Text::new(
            m.label.clone(),
            (left, top),
            font(REQUIRED).pos(Pos::new(HPos::Left, VPos::Top)),
        ))
        .map_err(e)?;
    }
    Ok(())
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    f: &FigureSpec,
    bitmap: bool,
) -> Result<AxisMap, String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
    root.fill(&WHITE).map_err(e)?;
    let (x0, x1) = f.x_range;
    let (y0, y1) = f.y_range;
    let small = ("sans-serif", MIN_FONT_PX);
    let mut chart = ChartBuilder::on(root)
        .caption(&f.title, ("sans-serif", TITLE_PX))
        .margin(12)
        .x_label_area_size(40)
        .y_label_area_size(58)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(e)?;
    chart
        .configure_mesh()
        .x_desc(&f.x_label)
        .y_desc(&f.y_label)
        .light_line_style(RGBColor(235, 235, 235))
        .label_style(small)
        .axis_desc_style(small)
        .draw()
        .map_err(e)?;
    let px = Pixels {
        x: (x0, x1),
        y: (y0, y1),
        top_left: chart.backend_coord(&(x0, y1)),
        bottom_right: chart.backend_coord(&(x1, y0)),
    };
    let kinds = draw_areas(&mut chart, f)?;
    draw_traces(&mut chart, f, &kinds, px, bitmap)?;
    let mut labels = Labels {
        plot: (
            px.top_left.0,
            px.top_left.1,
            px.bottom_right.0,
            px.bottom_right.1,
        ),
        taken: Vec::new(),
    };
    let size = |text: &str| -> (i32, i32) {
        root.estimate_text_size(text, &font(MARK))
            .map(|(w, h)| (w as i32, h as i32))
            .unwrap_or((text.chars().count() as i32 * 8, MIN_FONT_PX as i32))
    };
    let legend = legend_box(f, &kinds, &labels.plot, &size, &|p| px.at(p));
    labels.taken.push(legend);
    draw_annotations(root, &mut chart, f, px, &mut labels, &size)?;
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::Coordinate(
            legend.0 - labels.plot.0,
            legend.1 - labels.plot.1,
        ))
        .margin(LEGEND_MARGIN as u32)
        .legend_area_size(LEGEND_SAMPLE as u32)
        .border_style(RGBColor(160, 160, 160))
        .background_style(WHITE.mix(0.85))
        .label_font(small)
        .draw()
        .map_err(e)?;
    let bx = |b: &TextBox| [b.0, b.1, b.2, b.3];
    let map = AxisMap {
        data: [(x0, y0), (x1, y1)],
        pixel: [
            chart.backend_coord(&(x0, y0)),
            chart.backend_coord(&(x1, y1)),
        ],
        plot: bx(&labels.plot),
        legend: bx(&legend),
        labels: labels.taken.iter().skip(1).map(bx).collect(),
    };
    root.present().map_err(e)?;
    Ok(map)
}

/// Renders a figure as SVG text.
pub fn svg(f: &FigureSpec) -> Result<(String, AxisMap), String> {
    // Text widths for layout come from the bundled font.
    register_font();
    let mut s = String::new();
    let map = {
        let root = SVGBackend::with_string(&mut s, (WIDTH, HEIGHT)).into_drawing_area();
        draw(&root, f, false)?
    };
    Ok((s, map))
}

/// Renders a figure as a PNG file.
pub fn png(f: &FigureSpec, path: &std::path::Path) -> Result<AxisMap, String> {
    register_font();
    let root = BitMapBackend::new(path, (WIDTH, HEIGHT)).into_drawing_area();
    draw(&root, f, true)
}

/// A y range that shows every value, with a little room.
pub fn y_range(values: impl Iterator<Item = f64>, at_least: (f64, f64)) -> (f64, f64) {
    let (mut lo, mut hi) = at_least;
    for v in values.filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    let pad = ((hi - lo) * 0.06).max(0.02);
    (lo - pad, hi + pad)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn decimation_keeps_a_one_sample_spike() {
        let n = 1_000_000;
        let t: Vec<f64> = (0..n).map(|k| k as f64 * 1e-5).collect();
        let mut v: Vec<f64> = t.iter().map(|x| (x * 314.0).sin() * 0.1 + 1.0).collect();
        v[612_345] = 3.0;
        v[812_345] = -2.0;
        let d = minmax_decimate(&t, &v, 0.0, 10.0, 800);
        assert!(d.len() <= 1600);
        assert!(d.iter().any(|p| p.1 == 3.0 && p.0 == t[612_345]));
        assert!(d.iter().any(|p| p.1 == -2.0));
        assert!(d.windows(2).all(|w| w[0].0 <= w[1].0), "time order kept");
    }
}
