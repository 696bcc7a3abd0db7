//! Annotated figures (plotters), as SVG text for the HTML report and as SVG
//! and PNG files for word processors. Figures draw what the checks found;
//! they compute no verdict.
//!
//! Long series are reduced for display by keeping the minimum and maximum of
//! each pixel column ([`minmax_decimate`]), so a one-sample spike stays
//! visible while files stay small. Colours are chosen to stay distinct for
//! the common colour-vision deficiencies and every verdict is also written
//! out in text; zone boundaries are solid, requirements in a figure of
//! measured values dashed (the measured traces are solid).

use plotters::coord::Shift;
use plotters::prelude::*;
use std::sync::Once;

pub const WIDTH: u32 = 900;
pub const HEIGHT: u32 = 420;

/// Palette: measured quantity, phases, boundary, zone, requirement.
pub const MEASURED: RGBColor = RGBColor(0, 84, 147);
pub const PHASES: [RGBColor; 3] = [
    RGBColor(214, 110, 0),
    RGBColor(0, 140, 120),
    RGBColor(128, 82, 168),
];
/// The boundary colour is used for nothing else (tests find the boundary by it).
pub const BOUNDARY: RGBColor = RGBColor(176, 0, 88);
pub const ZONE: RGBColor = RGBColor(0, 140, 120);
pub const REQUIRED: RGBColor = RGBColor(20, 20, 20);
pub const MARK: RGBColor = RGBColor(90, 90, 90);

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
    /// Intervals drawn as hatched bands at the bottom (e.g. momentary cessation).
    pub spans: Vec<(f64, f64, String)>,
}

/// Pixel positions of two data points, to map coordinates back (tests).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AxisMap {
    pub data: [(f64, f64); 2],
    pub pixel: [(i32, i32); 2],
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

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    f: &FigureSpec,
) -> Result<AxisMap, String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
    root.fill(&WHITE).map_err(e)?;
    let (x0, x1) = f.x_range;
    let (y0, y1) = f.y_range;
    let mut chart = ChartBuilder::on(root)
        .caption(&f.title, ("sans-serif", 17))
        .margin(12)
        .x_label_area_size(38)
        .y_label_area_size(56)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(e)?;
    chart
        .configure_mesh()
        .x_desc(&f.x_label)
        .y_desc(&f.y_label)
        .light_line_style(RGBColor(235, 235, 235))
        .label_style(("sans-serif", 12))
        .draw()
        .map_err(e)?;
    for s in &f.shades {
        chart
            .draw_series(std::iter::once(Polygon::new(
                s.polygon.clone(),
                s.color.mix(s.opacity).filled(),
            )))
            .map_err(e)?;
    }
    for (a, b, label) in &f.spans {
        let h = (y1 - y0) * 0.04;
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(*a, y0), (*b, y0 + h)],
                MARK.mix(0.5).filled(),
            )))
            .map_err(e)?;
        chart
            .draw_series(std::iter::once(Text::new(
                label.clone(),
                (*a, y0 + 1.6 * h),
                ("sans-serif", 11).into_font().color(&MARK),
            )))
            .map_err(e)?;
    }
    for tr in &f.traces {
        let style = tr.color.stroke_width(tr.width);
        if tr.dashed {
            chart
                .draw_series(DashedLineSeries::new(tr.points.clone(), 8, 5, style))
                .map_err(e)?
                .label(&tr.label)
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 8, y), (x + 12, y), (x + 20, y)], style)
                });
        } else {
            chart
                .draw_series(LineSeries::new(tr.points.clone(), style))
                .map_err(e)?
                .label(&tr.label)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], style));
        }
    }
    for (k, l) in f.vlines.iter().enumerate() {
        if !(l.t >= x0 && l.t <= x1) {
            continue;
        }
        chart
            .draw_series(DashedLineSeries::new(
                vec![(l.t, y0), (l.t, y1)],
                3,
                4,
                MARK.stroke_width(1),
            ))
            .map_err(e)?;
        let y = y1 - (y1 - y0) * (0.06 + 0.06 * (k % 4) as f64);
        chart
            .draw_series(std::iter::once(Text::new(
                format!(" {}", l.label),
                (l.t, y),
                ("sans-serif", 12).into_font().color(&MARK),
            )))
            .map_err(e)?;
    }
    for m in &f.marks {
        if !(m.t >= x0 && m.t <= x1 && m.v.is_finite()) {
            continue;
        }
        let v = m.v.clamp(y0, y1);
        chart
            .draw_series(std::iter::once(Circle::new(
                (m.t, v),
                5,
                REQUIRED.stroke_width(2),
            )))
            .map_err(e)?;
        chart
            .draw_series(std::iter::once(Text::new(
                format!("  {}", m.label),
                (m.t, v),
                ("sans-serif", 12).into_font().color(&REQUIRED),
            )))
            .map_err(e)?;
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::LowerRight)
        .border_style(RGBColor(160, 160, 160))
        .background_style(WHITE.mix(0.85))
        .label_font(("sans-serif", 12))
        .draw()
        .map_err(e)?;
    let map = AxisMap {
        data: [(x0, y0), (x1, y1)],
        pixel: [
            chart.backend_coord(&(x0, y0)),
            chart.backend_coord(&(x1, y1)),
        ],
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
        draw(&root, f)?
    };
    Ok((s, map))
}

/// Renders a figure as a PNG file.
pub fn png(f: &FigureSpec, path: &std::path::Path) -> Result<(), String> {
    register_font();
    let root = BitMapBackend::new(path, (WIDTH, HEIGHT)).into_drawing_area();
    draw(&root, f)?;
    Ok(())
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
