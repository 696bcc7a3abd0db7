//! The evidence pack's HTML report and figures.

use crate::common::{holdfast, root, sample_run};
use holdfast::analysis::events::DetectionSettings;
use holdfast::analysis::{Quantity, Series};
use holdfast::report::plot::{self, BOUNDARY};
use holdfast::rules::engine::{self, detection_settings};
use holdfast::rules::spec::{CheckSpec, RuleSet};
use std::path::{Path, PathBuf};

#[test]
fn report_has_every_test_check_and_figure_and_nothing_external() {
    let run = sample_run();
    let (dir, results) = (&run.dir, &run.results);
    let html = std::fs::read_to_string(dir.path().join("report.html")).unwrap();
    for bad in ["http://", "https://", "src=", "<script", "@import", "url("] {
        assert!(!html.contains(bad), "report.html contains {bad}");
    }
    assert!(html.contains("not a certification"));
    assert!(html.contains("SHA-256"));
    let plots = dir.path().join("plots");
    for (k, t) in results["tests"].as_array().unwrap().iter().enumerate() {
        let id = t["id"].as_str().unwrap();
        assert!(
            html.contains(&format!("id=\"test-{}\"", k + 1)),
            "{id} section"
        );
        // The section of this test.
        let start = html.find(&format!("id=\"test-{}\"", k + 1)).unwrap();
        let end = html[start..].find("</section>").unwrap() + start;
        let section = &html[start..end];
        for c in t["checks"].as_array().unwrap() {
            assert!(
                section.contains(&format!("<td>{}</td>", c["id"].as_str().unwrap())),
                "{id} check {}",
                c["id"]
            );
        }
        // One figure per quantity the checks concern.
        let types: Vec<&str> = t["checks"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c["type"].as_str().unwrap())
            .collect();
        let mut want = vec!["voltage"];
        if types.contains(&"reactive_current") {
            want.push("reactive_current");
        }
        if types.contains(&"active_power_recovery") {
            want.push("active_power");
        }
        let svgs = section.matches("<svg").count();
        assert!(svgs >= want.len(), "{id}: {svgs} figures for {want:?}");
        for q in want {
            let f = plots.join(format!("{:03}-{id}-{q}.svg", k + 1));
            assert!(f.exists(), "{}", f.display());
            // PNG copies only with --png.
            assert!(!f.with_extension("png").exists(), "{}", f.display());
        }
    }
}

#[test]
fn user_strings_are_escaped_in_html_and_svg() {
    let dir = tempfile::tempdir().unwrap();
    let rec = dir.path().join("rec.csv");
    let mut spec = holdfast::synth::SynthSpec::example();
    spec.sample_rate_hz = 2000.0;
    spec.duration_s = 1.5;
    spec.fault_start_s = 0.4;
    spec.fault_duration_s = 0.2;
    let mut buf = Vec::new();
    holdfast::synth::write_csv(&spec, &mut buf).unwrap();
    let text = String::from_utf8(buf)
        .unwrap()
        .replacen("t,va,", "t,\"va<script>&'x\",", 1);
    std::fs::write(&rec, text).unwrap();
    let evil = "T<script>alert(1)</script> & \\\"q\\\" 'a'";
    let plan = format!(
        "unit: {{ rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }}\nrules: {}\nchannels:\n  voltage: {{ a: \"va<script>&'x\", b: vb, c: vc, unit: V }}\n  current: {{ a: ia, b: ib, c: ic, unit: A }}\ntests:\n  - id: \"{evil}\"\n    file: rec.csv\n",
        root().join("rules/eu-rfg-ppm-type-d-example.yaml").display()
    );
    std::fs::write(dir.path().join("plan.yaml"), plan).unwrap();
    let out = dir.path().join("out");
    holdfast()
        .arg("check")
        .arg(dir.path().join("plan.yaml"))
        .arg("--out")
        .arg(&out)
        .assert()
        .code(0);
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(!html.contains("<script"), "raw <script> in HTML");
    assert!(
        html.contains("T&#60;script&#62;alert(1)&#60;/script&#62; &#38; &#34;q&#34; &#39;a&#39;")
            || html
                .contains("T&lt;script&gt;alert(1)&lt;/script&gt; &amp; &quot;q&quot; &#39;a&#39;"),
        "escaped test id"
    );
    assert!(
        html.contains("va&#60;script&#62;&#38;&#39;x")
            || html.contains("va&lt;script&gt;&amp;&#39;x"),
        "escaped channel name"
    );
    // SVG files: the title carries the test id, escaped by the SVG writer.
    let mut n = 0;
    for e in std::fs::read_dir(out.join("plots")).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_some_and(|x| x == "svg") {
            let svg = std::fs::read_to_string(&p).unwrap();
            assert!(!svg.contains("<script"), "{}", p.display());
            assert!(
                svg.contains("T&lt;script&gt;alert(1)&lt;/script&gt; &amp;"),
                "{}",
                p.display()
            );
            n += 1;
        }
    }
    assert!(n >= 3);
}

/// Pixel points of every polyline drawn in `color`.
fn polylines(svg: &str, color: &str) -> Vec<Vec<(f64, f64)>> {
    let mut out = Vec::new();
    for part in svg.split("<polyline").skip(1) {
        let tag = &part[..part.find("/>").unwrap()];
        if !tag
            .to_ascii_uppercase()
            .contains(&format!("STROKE=\"{}\"", color.to_ascii_uppercase()))
        {
            continue;
        }
        let pts = tag.split("points=\"").nth(1).unwrap();
        let pts = &pts[..pts.find('"').unwrap()];
        out.push(
            pts.split_whitespace()
                .map(|xy| {
                    let (x, y) = xy.split_once(',').unwrap();
                    (x.parse().unwrap(), y.parse().unwrap())
                })
                .collect(),
        );
    }
    out
}

fn dist_to_polyline(p: (f64, f64), line: &[(f64, f64)]) -> f64 {
    line.windows(2)
        .map(|w| {
            let (a, b) = (w[0], w[1]);
            let (dx, dy) = (b.0 - a.0, b.1 - a.1);
            let l2 = dx * dx + dy * dy;
            let u = if l2 == 0.0 {
                0.0
            } else {
                (((p.0 - a.0) * dx + (p.1 - a.1) * dy) / l2).clamp(0.0, 1.0)
            };
            ((a.0 + u * dx - p.0).powi(2) + (a.1 + u * dy - p.1).powi(2)).sqrt()
        })
        .fold(f64::INFINITY, f64::min)
}

#[test]
fn envelope_boundary_passes_through_the_rule_points() {
    // A 0.3 pu dip from 1.0 s for 1 s on an RMS-level series (1 ms steps).
    let n = 3001;
    let t: Vec<f64> = (0..n).map(|k| k as f64 * 1e-3).collect();
    let v: Vec<f64> = t
        .iter()
        .map(|x| if (1.0..2.0).contains(x) { 0.3 } else { 1.0 })
        .collect();
    let series = Series::from_columns(t.clone(), vec![(Quantity::V1, v)]).unwrap();
    let text = "id: r\ntitle: r\nsource: s\nchecks:\n  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0], [0.15, 0], [0.15, 0.2], [0.7, 0.5], [1.2, 0.85]] }\n";
    let rules: RuleSet = holdfast::rules::yaml::parse(Path::new("r.yaml"), text).unwrap();
    let det: DetectionSettings = detection_settings(&rules, 50.0);
    let out = engine::evaluate(&series, &rules, &det, None);
    let figs = holdfast::pipeline::figures_of("E1", &series, &rules, &det, &out);
    let (svg, map) = plot::svg(&figs[0].spec).unwrap();
    let color = format!("#{:02X}{:02X}{:02X}", BOUNDARY.0, BOUNDARY.1, BOUNDARY.2);
    // The boundary, not its two-point legend sample.
    let lines: Vec<Vec<(f64, f64)>> = polylines(&svg, &color)
        .into_iter()
        .filter(|l| l.len() > 2)
        .collect();
    assert_eq!(lines.len(), 1, "one boundary polyline");
    let CheckSpec::Envelope(e) = &rules.checks[0] else {
        unreachable!()
    };
    let t0 = out.disturbances[0].start_s;
    // Data → pixel with the chart's own mapping of two corners.
    let [(x0, y0), (x1, y1)] = map.data;
    let [(p0, q0), (p1, q1)] = map.pixel;
    let to_px = |x: f64, y: f64| {
        (
            p0 as f64 + (x - x0) / (x1 - x0) * (p1 - p0) as f64,
            q0 as f64 + (y - y0) / (y1 - y0) * (q1 - q0) as f64,
        )
    };
    for [tau, val] in &e.points {
        let d = dist_to_polyline(to_px(t0 + tau, *val), &lines[0]);
        assert!(
            d <= 1.5,
            "point [{tau}, {val}] is {d:.2} px from the drawn boundary"
        );
    }
    // And a point off the boundary is not on it.
    assert!(dist_to_polyline(to_px(t0 + 0.4, 0.6), &lines[0]) > 10.0);
    // Mapping back gives data coordinates.
    let (bx, by) = map.to_data(p1 as f64, q1 as f64);
    assert!((bx - x1).abs() < 1e-9 && (by - y1).abs() < 1e-9);
}

#[test]
fn rules_plot_draws_every_boundary_and_the_reactive_current_characteristic() {
    let dir = tempfile::tempdir().unwrap();
    holdfast()
        .args(["rules", "plot"])
        .arg(root().join("rules/eu-rfg-ppm-type-d-example.yaml"))
        .arg("--out")
        .arg(dir.path())
        .assert()
        .success();
    let names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    for want in ["lvrt.svg", "lvrt.png", "iq-positive.svg", "iq-negative.png"] {
        assert!(
            names.iter().any(|n| n.ends_with(want)),
            "{want} in {names:?}"
        );
    }
}

fn browser() -> Option<PathBuf> {
    for name in ["chromium", "chromium-browser", "google-chrome", "chrome"] {
        for dir in std::env::var("PATH").unwrap_or_default().split(':') {
            let p = Path::new(dir).join(name);
            if p.is_file() {
                return Some(p);
            }
        }
    }
    None
}

/// A screenshot of a page beside it; fails on any console message or
/// resource the page could not load.
fn screenshot(chrome: &Path, page: &Path, size: &str) -> PathBuf {
    let shot = page.with_extension("screenshot.png");
    let out = std::process::Command::new(chrome)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--no-first-run",
            "--enable-logging=stderr",
            "--v=0",
            "--virtual-time-budget=3000",
        ])
        .arg(format!("--window-size={size}"))
        .arg(format!("--screenshot={}", shot.display()))
        .arg(format!("file://{}", page.display()))
        .output()
        .unwrap();
    let log = String::from_utf8_lossy(&out.stderr);
    assert!(
        shot.exists(),
        "{}: no screenshot; browser said:\n{log}",
        page.display()
    );
    for line in log.lines() {
        assert!(
            !line.contains(":CONSOLE"),
            "{}: console message: {line}",
            page.display()
        );
        assert!(
            !line.contains("Failed to load resource"),
            "{}: {line}",
            page.display()
        );
    }
    shot
}

#[test]
fn report_renders_in_a_headless_browser() {
    let Some(chrome) = browser() else {
        if std::env::var_os("HOLDFAST_REQUIRE_BROWSER").is_some() {
            panic!("HOLDFAST_REQUIRE_BROWSER is set but no chromium was found");
        }
        eprintln!("SKIPPED report_renders_in_a_headless_browser: no chromium on PATH (.ci/run installs Debian's chromium)");
        return;
    };
    let dir = &sample_run().dir;
    let shot = screenshot(&chrome, &dir.path().join("report.html"), "1200,1800");
    let img = image::open(&shot).unwrap().to_rgb8();
    let (w, h) = img.dimensions();
    assert!(w >= 800 && h >= 800);
    let mut colours = std::collections::HashSet::new();
    let mut dark = 0usize;
    for p in img.pixels() {
        colours.insert(p.0);
        if p.0.iter().map(|c| *c as u32).sum::<u32>() < 200 {
            dark += 1;
        }
    }
    assert!(
        colours.len() > 20,
        "screenshot looks blank ({} colours)",
        colours.len()
    );
    assert!(
        dark > 1000,
        "hardly any text or lines drawn ({dark} dark pixels)"
    );
    // The index and a test page load without errors too.
    for page in ["index.html", "tests/004-T04.html"] {
        screenshot(&chrome, &dir.path().join(page), "1200,1600");
    }
    // Printed on Letter (the browser's default; the page sets no size) and
    // on A4 (a copy that asks for it): every test starts a page and takes
    // at most three (its tables and up to four figures across the page).
    let run = sample_run();
    let (dir, results) = (&run.dir, &run.results);
    let html = std::fs::read_to_string(dir.path().join("report.html")).unwrap();
    let a4 = dir.path().join("report-a4.html");
    std::fs::write(
        &a4,
        html.replacen("</head>", "<style>@page { size: A4; }</style></head>", 1),
    )
    .unwrap();
    let tests = results["tests"].as_array().unwrap().len();
    for (paper, file) in [("Letter", dir.path().join("report.html")), ("A4", a4)] {
        let pdf = dir.path().join(format!("report-{paper}.pdf"));
        let printed = std::process::Command::new(&chrome)
            .args([
                "--headless",
                "--no-sandbox",
                "--disable-gpu",
                "--no-pdf-header-footer",
            ])
            .arg(format!("--print-to-pdf={}", pdf.display()))
            .arg(format!("file://{}", file.display()))
            .output()
            .unwrap();
        assert!(
            pdf.exists(),
            "no PDF: {}",
            String::from_utf8_lossy(&printed.stderr)
        );
        let bytes = std::fs::read(&pdf).unwrap();
        let text = String::from_utf8_lossy(&bytes);
        let pages = text.matches("/Type /Page").count() - text.matches("/Type /Pages").count();
        // The opening pages (requirements with their figures) and the
        // traceability block take a few more.
        assert!(
            pages > tests && pages <= 3 * tests + 8,
            "{paper}: {pages} printed pages for {tests} tests"
        );
        // The page size in the PDF: Letter 612 × 792 pt, A4 595 × 842 pt
        // (written 594.96 × 841.92).
        let want = if paper == "A4" { "594.9" } else { "612 " };
        assert!(
            text.contains(&format!("/MediaBox [0 0 {want}")),
            "{paper}: page size"
        );
    }
}

#[test]
fn png_copies_only_when_asked() {
    let dir = tempfile::tempdir().unwrap();
    let rec = crate::common::synth(
        dir.path(),
        "rec.csv",
        &["--sample-rate", "2000", "--duration", "1.5"],
        &[],
    );
    let rules = root().join("rules/eu-rfg-ppm-type-d-example.yaml");
    let count = |out: &std::path::Path, ext: &str| {
        std::fs::read_dir(out.join("plots"))
            .unwrap()
            .filter(|e| {
                e.as_ref()
                    .unwrap()
                    .path()
                    .extension()
                    .is_some_and(|x| x == ext)
            })
            .count()
    };
    for (png, out) in [(false, dir.path().join("a")), (true, dir.path().join("b"))] {
        let mut cmd = holdfast();
        cmd.args(["check", "--rules"])
            .arg(&rules)
            .args(crate::common::RATINGS)
            .arg("--out")
            .arg(&out)
            .arg(&rec);
        if png {
            cmd.arg("--png");
        }
        let o = cmd.output().unwrap();
        assert!(
            matches!(o.status.code(), Some(0 | 1)),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
        let svgs = count(&out, "svg");
        assert!(svgs >= 2, "{svgs}");
        assert_eq!(count(&out, "png"), if png { svgs } else { 0 });
        let html = std::fs::read_to_string(out.join("report.html")).unwrap();
        assert_eq!(html.contains(".png</code>"), png);
    }
}
