//! The figures: nothing drawn outside the plot area, labels that do not
//! collide, every instant a result names inside the plotted window, shaded
//! windows, and text readable when printed.

use crate::common::sample_run;
use holdfast::analysis::{Quantity, Series};
use holdfast::report::plot::{self, FigureSpec, Mark, Trace, VLine};
use holdfast::rules::engine::{self, detection_settings};
use holdfast::rules::spec::RuleSet;
use std::path::Path;

fn overlap(a: &[i32; 4], b: &[i32; 4]) -> bool {
    a[0] < b[2] && b[0] < a[2] && a[1] < b[3] && b[1] < a[3]
}

fn inside(a: &[i32; 4], area: &[i32; 4]) -> bool {
    a[0] >= area[0] && a[1] >= area[1] && a[2] <= area[2] && a[3] <= area[3]
}

/// A figure that provokes every layout problem: a line far outside the
/// range (through where the title is), a thick line with a one-sample
/// spike (whose mitred corner a bitmap draws far out of the plot), marker
/// lines a few pixels apart, and a point at the right edge with a long
/// label.
fn crowded() -> FigureSpec {
    FigureSpec {
        title: "crowded".into(),
        x_label: "t (s)".into(),
        y_label: "v (pu)".into(),
        x_range: (0.0, 2.0),
        y_range: (0.0, 1.2),
        traces: vec![Trace {
            label: "steep".into(),
            points: vec![
                (0.5, 0.0),
                (0.5, 50.0),
                (0.6, f64::INFINITY),
                (1.0, 0.5),
                (1.2, 0.3),
                (1.201, 1.1),
                (1.202, 0.3),
                (1.5, 0.3),
            ],
            color: plot::BOUNDARY,
            dashed: false,
            width: 3,
        }],
        vlines: [
            "start",
            "rise limit 0.030 s",
            "trip (status)",
            "settled 0.0190 s",
        ]
        .iter()
        .enumerate()
        .map(|(k, l)| VLine {
            t: 0.50 + 0.004 * k as f64,
            label: l.to_string(),
        })
        .collect(),
        marks: vec![Mark {
            t: 1.995,
            v: 0.6,
            label: "lvrt smallest margin -0.500 pu".into(),
        }],
        ..Default::default()
    }
}

#[test]
fn labels_do_not_collide_and_stay_inside_the_plot() {
    let (_, map) = plot::svg(&crowded()).unwrap();
    assert_eq!(map.labels.len(), 5, "four line labels and one point label");
    for (i, a) in map.labels.iter().enumerate() {
        assert!(
            inside(a, &map.plot),
            "label {i} {a:?} outside {:?}",
            map.plot
        );
        assert!(!overlap(a, &map.legend), "label {i} under the legend");
        for (j, b) in map.labels.iter().enumerate().skip(i + 1) {
            assert!(!overlap(a, b), "labels {i} {a:?} and {j} {b:?} overlap");
        }
    }
    // The point at the right edge: its label is left of it, not clipped.
    let point = map.labels.last().unwrap();
    assert!(point[2] <= map.plot[2]);
}

#[test]
fn nothing_is_drawn_outside_the_plot_area_in_either_backend() {
    let f = crowded();
    let (svg, map) = plot::svg(&f).unwrap();
    let color = format!(
        "#{:02X}{:02X}{:02X}",
        plot::BOUNDARY.0,
        plot::BOUNDARY.1,
        plot::BOUNDARY.2
    );
    let [l, t, r, b] = map.plot;
    let mut seen = 0;
    for part in svg.split("<polyline").skip(1) {
        let tag = &part[..part.find("/>").unwrap()];
        if !tag
            .to_ascii_uppercase()
            .contains(&format!("STROKE=\"{color}\""))
        {
            continue;
        }
        let pts = tag.split("points=\"").nth(1).unwrap();
        for xy in pts[..pts.find('"').unwrap()].split_whitespace() {
            let (x, y) = xy.split_once(',').unwrap();
            let (x, y): (f64, f64) = (x.parse().unwrap(), y.parse().unwrap());
            // The legend sample sits inside the plot too.
            assert!(
                x >= l as f64 - 1.0
                    && x <= r as f64 + 1.0
                    && y >= t as f64 - 1.0
                    && y <= b as f64 + 1.0,
                "SVG point ({x}, {y}) outside the plot {:?}",
                map.plot
            );
            seen += 1;
        }
    }
    assert!(seen > 2, "the steep line is drawn");
    // PNG: not one pixel of the line's colour above the plot (the title).
    let dir = tempfile::tempdir().unwrap();
    let png = dir.path().join("f.png");
    let map = plot::png(&f, &png).unwrap();
    let img = image::open(&png).unwrap().to_rgb8();
    let near = |p: &image::Rgb<u8>| {
        let c = plot::BOUNDARY;
        (p.0[0] as i32 - c.0 as i32).abs() < 40
            && (p.0[1] as i32 - c.1 as i32).abs() < 40
            && (p.0[2] as i32 - c.2 as i32).abs() < 40
    };
    let above = (0..img.width())
        .flat_map(|x| (0..(map.plot[1] - 1).max(0) as u32).map(move |y| (x, y)))
        .filter(|&(x, y)| near(img.get_pixel(x, y)))
        .count();
    assert_eq!(above, 0, "line pixels above the plot area (title band)");
    let inside = (map.plot[0] as u32..map.plot[2] as u32)
        .flat_map(|x| (map.plot[1] as u32..map.plot[3] as u32).map(move |y| (x, y)))
        .filter(|&(x, y)| near(img.get_pixel(x, y)))
        .count();
    assert!(inside > 50, "the line is drawn inside ({inside} pixels)");
}

#[test]
fn clipping_follows_liang_barsky() {
    // A segment from (-1, 0.5) to (3, 0.5) across [0, 2] × [0, 1] is cut at
    // x = 0 and x = 2; one from (1, -1) to (1, 3) at y = 0 and y = 1
    // (worked by hand from the parametric form).
    let r = plot::clip_polyline(&[(-1.0, 0.5), (3.0, 0.5)], (0.0, 2.0), (0.0, 1.0));
    assert_eq!(r, vec![vec![(0.0, 0.5), (2.0, 0.5)]]);
    let r = plot::clip_polyline(&[(1.0, -1.0), (1.0, 3.0)], (0.0, 2.0), (0.0, 1.0));
    assert_eq!(r, vec![vec![(1.0, 0.0), (1.0, 1.0)]]);
    // Out and back in: two pieces.
    let r = plot::clip_polyline(
        &[(0.5, 0.5), (1.0, 5.0), (1.5, 0.5)],
        (0.0, 2.0),
        (0.0, 1.0),
    );
    assert_eq!(r.len(), 2);
    // A polygon reaching to infinity is cut to the rectangle.
    let p = plot::clip_polygon(
        &[
            (0.5, 0.2),
            (1.5, 0.2),
            (1.5, f64::INFINITY),
            (0.5, f64::INFINITY),
        ],
        (0.0, 2.0),
        (0.0, 1.0),
    );
    assert!(p.iter().all(|q| q.1 <= 1.0 && q.1 >= 0.2), "{p:?}");
    assert_eq!(p.len(), 4);
}

#[test]
fn the_failing_instant_is_inside_the_plotted_window() {
    // RMS-level series: a dip from 1.0 s to 1.2 s; active power recovers
    // only at 2.9 s, far past the 0.2 s the rule allows (recovery fails
    // at the late instant, which must be in the figure).
    let n = 3001;
    let t: Vec<f64> = (0..n).map(|k| k as f64 * 1e-3).collect();
    let v: Vec<f64> = t
        .iter()
        .map(|x| if (1.0..1.2).contains(x) { 0.5 } else { 1.0 })
        .collect();
    let p: Vec<f64> = t
        .iter()
        .map(|x| {
            if *x < 1.0 {
                0.8
            } else if *x < 2.9 {
                0.3
            } else {
                0.8
            }
        })
        .collect();
    let series = Series::from_columns(t, vec![(Quantity::V1, v), (Quantity::P, p)]).unwrap();
    let text = "id: r\ntitle: r\nsource: s\nchecks:\n  - { id: p-rec, type: active_power_recovery, fraction: 0.9, within_s: 0.2 }\n";
    let rules: RuleSet = holdfast::rules::yaml::parse(Path::new("r.yaml"), text).unwrap();
    let det = detection_settings(&rules, 50.0);
    let out = engine::evaluate(&series, &rules, &det, None);
    let c = out.checks.iter().find(|c| c.id == "p-rec").unwrap();
    let at = c.at_s.expect("the check names an instant");
    assert!(at > 2.5, "{at}");
    let figs = holdfast::pipeline::figures_of("E1", &series, &rules, &det, &out);
    let power = figs.iter().find(|f| f.quantity == "active_power").unwrap();
    let (x0, x1) = power.spec.x_range;
    assert!(at >= x0 && at <= x1, "{at} outside [{x0}, {x1}]");
}

fn sample_svg(name: &str) -> String {
    let dir = sample_run().dir.path().join("plots");
    let file = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .find(|n| n.ends_with(name))
        .unwrap_or_else(|| panic!("no figure {name}"));
    std::fs::read_to_string(dir.join(file)).unwrap()
}

#[test]
fn cessation_trip_and_phasor_transitions_are_shaded_and_named() {
    // T12 ceases current for a while, T04 trips (sample-data/plan.yaml);
    // every waveform recording has transition windows, the RMS-level T11 none.
    assert!(sample_svg("T12-voltage.svg").contains("momentary cessation"));
    assert!(sample_svg("T04-voltage.svg").contains("after the trip (disconnected)"));
    for f in ["T01-voltage.svg", "T02-negative_sequence_current.svg"] {
        assert!(
            sample_svg(f).contains("phasor transition (one cycle)"),
            "{f}"
        );
    }
    assert!(!sample_svg("T11-voltage.svg").contains("phasor transition"));
    assert!(!sample_svg("T01-voltage.svg").contains("momentary cessation"));
    // The palette is named in every legend.
    assert!(sample_svg("T01-voltage.svg").contains(plot::PALETTE_NOTE));
}

#[test]
fn figure_text_prints_at_seven_points_or_more() {
    // Printed one figure across the page: A4 (210 mm) and Letter (215.9 mm)
    // less the report's 12 mm margins leave at least 186 mm = 527.2 pt
    // (1 in = 25.4 mm = 72 pt) for the SVG's width in user units.
    let pt_per_unit = 186.0 / 25.4 * 72.0 / plot::WIDTH as f64;
    let dir = sample_run().dir.path().join("plots");
    let mut smallest = f64::INFINITY;
    for e in std::fs::read_dir(dir).unwrap() {
        let svg = std::fs::read_to_string(e.unwrap().path()).unwrap();
        assert!(svg.contains(&format!("width=\"{}\"", plot::WIDTH)));
        for part in svg.split("font-size=\"").skip(1) {
            let size: f64 = part[..part.find('"').unwrap()].parse().unwrap();
            smallest = smallest.min(size);
        }
    }
    let printed = smallest * pt_per_unit;
    assert!(
        printed >= 7.0,
        "smallest figure text prints at {printed:.2} pt"
    );
    // And the report prints each figure across the page.
    let html = std::fs::read_to_string(sample_run().dir.path().join("report.html")).unwrap();
    let print = &html[html.find("@media print").unwrap()..];
    assert!(
        print.contains("figure { width: 100%"),
        "figures full width in print"
    );
    // Code text no larger than the text around it.
    assert!(html.contains("code, .hash { font-family: ui-monospace, \"DejaVu Sans Mono\", monospace; font-size: .9em; }"));
}

#[test]
fn no_spike_through_the_title_in_png_figures() {
    // The sample's T01 and T11: a thick trace with one-sample spikes (the
    // negative-sequence current at the fault edges) and an RMS-level step.
    // Every pixel of the title band above the plot is white or title text
    // (dark grey/black), never the colour of a trace.
    let dir = tempfile::tempdir().unwrap();
    crate::common::holdfast()
        .current_dir(crate::common::root())
        .args(["check", "sample-data/plan.yaml", "--png", "-q", "--out"])
        .arg(dir.path().join("pack"))
        .assert()
        .code(1);
    let plots = dir.path().join("pack/plots");
    let mut checked = 0;
    for e in std::fs::read_dir(&plots).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_none_or(|x| x != "png") {
            continue;
        }
        let img = image::open(&p).unwrap().to_rgb8();
        // The plot area starts below 30 px in every figure (title 19 px, margin 12 px).
        for y in 0..30 {
            for x in 0..img.width() {
                let [r, g, b] = img.get_pixel(x, y).0;
                let grey = r.abs_diff(g) < 30 && g.abs_diff(b) < 30 && r.abs_diff(b) < 30;
                assert!(
                    grey,
                    "{}: coloured pixel ({r},{g},{b}) at ({x},{y}) in the title band",
                    p.display()
                );
            }
        }
        checked += 1;
    }
    assert!(checked >= 40, "{checked} PNG figures");
}
