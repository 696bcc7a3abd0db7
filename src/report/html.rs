//! The HTML of an evidence pack: `index.html` (counts, the requirements as
//! applied, one row per test with the failed and inconclusive first),
//! one page per test in `tests/`, and `report.html`, every test in one
//! printable document. Each page is self-contained (inline CSS and SVG, no
//! scripts, no external resources) and rendered from templates that escape
//! every value by default. Inserted as markup are only the figures' SVG,
//! which the plotting backend escapes itself, the rendered test sections,
//! and paths escaped here by [`path_html`] with break points after each `/`.
//! Pages are written one at a time, so a plan of any size is never held in
//! memory as one document.

use super::fmt_value;
use crate::rules::result::{
    CheckResult, DisturbanceResult, Results, TestResult, TripResult, Verdict,
};
use askama::Template;
use std::io::Write;

/// A rendered figure of a test. Its SVG is read back from `svg_path` when a
/// page is written, so a run never holds every figure in memory.
#[derive(Clone, Debug)]
pub struct RenderedFigure {
    pub quantity: String,
    pub title: String,
    /// The SVG inline in a page (filled when the page is written).
    pub svg: String,
    /// The SVG file written by the run.
    pub svg_path: std::path::PathBuf,
    /// File names in `plots/` (SVG, PNG).
    pub files: Vec<String>,
}

pub struct CheckRow {
    pub id: String,
    pub kind: String,
    pub disturbance: String,
    pub verdict: &'static str,
    pub class: &'static str,
    pub reason: String,
    pub measured: String,
    pub limit: String,
    pub margin: String,
    pub at: String,
    pub detail: String,
}

pub struct DistRow {
    pub n: usize,
    pub kind: String,
    pub start: String,
    pub end: String,
    pub duration: String,
    pub extreme: String,
    pub balance: String,
    pub residual: String,
    /// Inception and clearance (waveforms), and where the references come from.
    pub edges: String,
}

pub struct TestView {
    pub anchor: String,
    pub id: String,
    pub verdict: &'static str,
    pub class: &'static str,
    pub file: String,
    pub sha256: String,
    pub format: String,
    pub sample_rate: String,
    pub duration: String,
    pub samples: String,
    pub header: Vec<(String, String)>,
    pub channels: String,
    pub disturbances: Vec<DistRow>,
    pub trip: String,
    pub checks: Vec<CheckRow>,
    pub figures: Vec<RenderedFigure>,
    pub notes: Vec<String>,
    pub rule_set: String,
    pub parameters: String,
    pub analysis: String,
    pub description: Option<String>,
    /// Model validation: verdict, its class, the page inside the pack.
    pub validation: Option<(&'static str, &'static str, String)>,
    pub worst: String,
}

/// A rule set as applied, for the pages.
pub struct RuleSetView {
    pub id: String,
    pub title: String,
    pub source: String,
    pub path: String,
    pub copy: String,
    pub sha256: String,
    pub voltage: String,
    pub detection: String,
    /// Name, value and unit, range, origin, description.
    pub parameters: Vec<(String, String, String, String, String)>,
    pub checks: Vec<RequirementView>,
    pub figures: Vec<RuleFigure>,
}

/// One requirement as applied.
pub struct RequirementView {
    pub id: String,
    pub kind: String,
    pub summary: String,
    pub values: Vec<(String, String)>,
}

/// A rule-set figure, inline, with its file in the pack.
pub struct RuleFigure {
    pub title: String,
    pub svg: String,
    pub file: String,
}

/// What the index and the whole report open with.
pub struct Front {
    pub title: String,
    pub caution: String,
    pub overall: &'static str,
    pub overall_class: &'static str,
    pub counts: Vec<(&'static str, usize)>,
    pub n_tests: usize,
    pub project: Vec<(&'static str, String)>,
    pub unit_rows: Vec<(&'static str, String)>,
    pub rule_sets: Vec<RuleSetView>,
}

/// One row of a tests table.
pub struct TestRow {
    pub href: String,
    pub id: String,
    pub verdict: &'static str,
    pub class: &'static str,
    pub file: String,
    pub rule_set: String,
    pub residual: String,
    pub duration: String,
    pub balance: String,
    pub trip: String,
    pub worst: String,
}

/// A recording in the traceability block.
pub struct TraceRecording {
    pub id: String,
    pub file: String,
    pub sha256: String,
}

/// The traceability block.
pub struct Trace {
    pub tool: String,
    pub command_line: String,
    pub generated: String,
    pub plan: Option<(String, String)>,
    pub rules: Vec<(String, String, String)>,
    /// With each recording and its digest (the whole report).
    pub recordings: bool,
    pub tests: Vec<TraceRecording>,
    pub caution: String,
}

#[derive(Template)]
#[template(path = "report.html")]
struct ReportHead<'a> {
    page_title: &'a str,
    front: &'a Front,
    rows: Vec<TestRow>,
}

#[derive(Template)]
#[template(path = "report_tail.html")]
struct ReportTail<'a> {
    trace: &'a Trace,
}

#[derive(Template)]
#[template(path = "index.html")]
struct IndexPage<'a> {
    page_title: &'a str,
    front: &'a Front,
    rows: Vec<TestRow>,
    trace: &'a Trace,
}

#[derive(Template)]
#[template(path = "test.html")]
struct TestSection<'a> {
    t: &'a TestView,
    /// Where the figure files are, from the page.
    plots: &'a str,
    /// The pack's folder, from the page ("" or "../").
    base: &'a str,
}

#[derive(Template)]
#[template(path = "test_page.html")]
struct TestPage<'a> {
    page_title: &'a str,
    title: &'a str,
    caution: &'a str,
    anchor: &'a str,
    prev: Option<String>,
    next: Option<String>,
    section: String,
    tool: &'a str,
    generated: &'a str,
}

/// A path for HTML: escaped, with a break point after each `/`.
pub fn path_html(p: &str) -> String {
    let mut out = String::with_capacity(p.len() + 16);
    for c in p.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            '/' => out.push_str("/<wbr>"),
            c => out.push(c),
        }
    }
    out
}

/// The CSS class of a verdict.
pub fn class(v: Verdict) -> &'static str {
    match v {
        Verdict::Pass => "pass",
        Verdict::Fail => "fail",
        Verdict::Inconclusive => "inconclusive",
        Verdict::NotApplicable => "na",
    }
}

fn label(v: Verdict) -> &'static str {
    match v {
        Verdict::Pass => "PASS",
        Verdict::Fail => "FAIL",
        Verdict::Inconclusive => "INCONCLUSIVE",
        Verdict::NotApplicable => "NOT APPLICABLE",
    }
}

fn s3(x: Option<f64>, unit: &str) -> String {
    x.filter(|v| v.is_finite())
        .map(|v| format!("{v:.3} {unit}"))
        .unwrap_or_else(|| "–".into())
}

fn test_view(k: usize, t: &TestResult, figures: Vec<RenderedFigure>, plan_rules: &str) -> TestView {
    let worst = t
        .worst_check()
        .filter(|c| matches!(c.verdict, Verdict::Fail | Verdict::Inconclusive))
        .map(|c| format!("{}: {}", c.id, c.detail))
        .unwrap_or_default();
    TestView {
        anchor: format!("test-{}", k + 1),
        id: t.id.clone(),
        verdict: label(t.verdict),
        class: class(t.verdict),
        file: path_html(&t.recording.path),
        sha256: t.recording.sha256.clone(),
        format: format!(
            "{} ({})",
            t.recording.format.map(|f| f.name()).unwrap_or_default(),
            t.recording
                .kind
                .map(|k| k.name())
                .unwrap_or_default()
                .replace('_', "-")
        ),
        sample_rate: format!("{:.3} Hz", t.recording.sample_rate_hz),
        duration: format!("{:.4} s", t.recording.duration_s),
        samples: t
            .recording
            .samples
            .map(|n| n.to_string())
            .unwrap_or_default(),
        header: t.recording.header.clone(),
        channels: t.recording.channels.join("; "),
        disturbances: t
            .disturbances
            .iter()
            .enumerate()
            .map(|(n, d)| dist_row(n, d))
            .collect(),
        trip: trip_text(&t.trip),
        checks: t.checks.iter().map(check_row).collect(),
        figures,
        notes: t.notes.clone(),
        rule_set: t.rule_set.clone().unwrap_or_else(|| plan_rules.to_string()),
        parameters: t
            .parameters
            .iter()
            .map(|(k, v)| format!("{k} = {v}"))
            .collect::<Vec<_>>()
            .join("; "),
        analysis: t.analysis.as_ref().map(analysis_text).unwrap_or_default(),
        description: t.description.clone(),
        validation: t
            .validation
            .as_ref()
            .map(|v| (label(v.verdict), class(v.verdict), v.report.clone())),
        worst,
    }
}

/// How a test was analysed, in words.
fn analysis_text(a: &crate::rules::result::TestAnalysis) -> String {
    let d = &a.detection;
    format!(
        "{} Hz; one-cycle phasor window {:.4} s; disturbance below {} pu or above {} pu of the {} voltage, ended {} pu inside the band for {} s; pre-fault window {} s ending {:.4} s before the start; trip below {} pu current for {} s",
        a.frequency_hz,
        a.window_s,
        d.below_pu,
        d.above_pu,
        d.applicable.name().replace('_', " "),
        d.hysteresis_pu,
        d.min_return_s,
        d.prefault_window_s,
        d.prefault_guard_s,
        d.trip_current_pu,
        d.trip_min_s
    )
}

/// One row of the disturbance table.
fn dist_row(n: usize, d: &DisturbanceResult) -> DistRow {
    DistRow {
        n,
        kind: d.kind.to_string(),
        start: format!("{:.4} s", d.start_s),
        end: d
            .end_s
            .map(|e| format!("{e:.4} s"))
            .unwrap_or_else(|| "not before the end".into()),
        duration: s3(d.duration_s, "s"),
        extreme: s3(Some(d.extreme_pu), "pu"),
        balance: match d.unbalance_ratio {
            Some(u) => format!("{} (|V2|/|V1| {:.3})", d.balance, u),
            None => d.balance.to_string(),
        },
        residual: match (d.residual_v1_pu, d.residual_phase_pu) {
            (Some(v1), Some(p)) => {
                format!("V1 {v1:.3}; a/b/c {:.3}/{:.3}/{:.3} pu", p[0], p[1], p[2])
            }
            (Some(v1), None) => format!("V1 {v1:.3} pu"),
            _ => "–".into(),
        },
        edges: {
            let mut e = Vec::new();
            if let Some(i) = d.inception_s {
                e.push(format!("inception {i:.4} s"));
            }
            if let Some(c) = d.clearance_s {
                e.push(format!("clearance {c:.4} s"));
            }
            match (d.prefault_from, d.prefault_window_s) {
                (Some(k), _) => e.push(format!("references of disturbance #{k}")),
                (None, Some([a, b])) => e.push(format!("pre-fault {a:.3}–{b:.3} s")),
                _ => e.push("no pre-fault window".into()),
            }
            e.join("; ")
        },
    }
}

/// The trip and any momentary cessation, in words.
fn trip_text(trip: &TripResult) -> String {
    let what = match (trip.tripped, trip.time_s) {
        (true, Some(ts)) => format!(
            "tripped at {ts:.4} s (from {})",
            trip.method.map(|m| m.name()).unwrap_or_default()
        ),
        _ => format!(
            "no trip{}",
            trip.method
                .map(|m| format!(" (seen from: {m})"))
                .unwrap_or_default()
        ),
    };
    if trip.cessations.is_empty() {
        what
    } else {
        format!(
            "{what}; momentary cessation {}",
            trip.cessations
                .iter()
                .map(|c| format!("{:.3}–{:.3} s", c[0], c[1]))
                .collect::<Vec<_>>()
                .join(", ")
        )
    }
}

/// One row of the check table.
fn check_row(c: &CheckResult) -> CheckRow {
    CheckRow {
        id: c.id.clone(),
        kind: c.check_type.name().replace('_', " "),
        disturbance: c
            .disturbance
            .map(|d| format!("#{d}"))
            .unwrap_or_else(|| "–".into()),
        verdict: label(c.verdict),
        class: class(c.verdict),
        reason: c
            .reason
            .map(|r| r.name().replace('_', " "))
            .unwrap_or_default(),
        measured: fmt_value(c.measured, c.unit),
        limit: fmt_value(c.limit, c.unit),
        margin: fmt_value(c.margin, c.unit),
        at: c
            .at_s
            .map(|a| format!("{a:.4} s"))
            .unwrap_or_else(|| "–".into()),
        detail: c.detail.clone(),
    }
}

/// Inline SVG inside HTML needs no namespace declaration; dropping it keeps
/// the page free of any URL.
pub fn inline_svg(svg: &str) -> String {
    svg.replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1)
}

/// The file of test `k`'s page, inside the pack.
pub fn test_page_name(k: usize, id: &str) -> String {
    format!("tests/{:03}-{}.html", k + 1, crate::text::file_safe(id))
}

fn front(results: &Results) -> Front {
    let counts = results.counts();
    Front {
        title: match &results.unit {
            Some(u) => format!("Fault ride-through evidence: {u}"),
            None => "Fault ride-through evidence".into(),
        },
        caution: results.caution.clone().unwrap_or_default(),
        overall: label(results.verdict),
        overall_class: class(results.verdict),
        counts: vec![
            ("pass", counts[0].1),
            ("fail", counts[1].1),
            ("inconclusive", counts[2].1),
        ],
        n_tests: results.tests.len(),
        project: results
            .project
            .as_ref()
            .map(|p| {
                p.rows()
                    .into_iter()
                    .map(|(k, v)| (k, v.to_string()))
                    .collect()
            })
            .unwrap_or_default(),
        unit_rows: unit_rows(results),
        rule_sets: results.rule_sets.iter().map(rule_set_view).collect(),
    }
}

fn unit_rows(results: &Results) -> Vec<(&'static str, String)> {
    let mut v = Vec::new();
    if let Some(u) = &results.unit {
        v.push(("unit", u.clone()));
    }
    match &results.ratings {
        Some(r) => {
            v.push((
                "ratings",
                format!(
                    "Un = {} kV (line to line), Sn = {} MVA, {}",
                    r.rated_voltage_kv,
                    r.rated_power_mva,
                    r.frequency_hz
                        .map(|f| format!("fn = {f} Hz"))
                        .unwrap_or_else(|| "each recording's own line frequency".into())
                ),
            ));
            v.push((
                "per-unit bases",
                format!(
                    "voltage {:.3} V phase to neutral (Un/√3), {:.3} V phase to phase; current {:.3} A (Sn/(√3·Un)); power {} MVA (Sn)",
                    r.voltage_base_phase_to_neutral_v,
                    r.voltage_base_phase_to_phase_v,
                    r.current_base_a,
                    r.power_base_mva
                ),
            ));
        }
        None => v.push(("ratings", "none given: every channel is in per unit".into())),
    }
    if let Some(a) = &results.analysis {
        v.push((
            "analysis",
            format!(
                "{}; window {} nominal cycle(s), {} points per cycle kept",
                a.method, a.window_cycles, a.points_per_cycle
            ),
        ));
    }
    v
}

fn rule_set_view(r: &crate::rules::result::AppliedRuleSet) -> RuleSetView {
    let d = &r.disturbance;
    let checks: Vec<RequirementView> = r
        .checks
        .iter()
        .map(|c| RequirementView {
            id: c.id().to_string(),
            kind: c.check().kind().name().replace('_', " "),
            summary: c.check().summary(),
            values: match serde_json::to_value(c) {
                Ok(serde_json::Value::Object(m)) => m
                    .into_iter()
                    .filter(|(k, _)| k != "id" && k != "type")
                    .map(|(k, v)| (k, v.to_string().replace('"', "")))
                    .collect(),
                _ => Vec::new(),
            },
        })
        .collect();
    let figures = super::figures::rule_set_figures_of(&r.id, r.applicable_voltage, &r.checks)
        .into_iter()
        .zip(&r.figures)
        .filter_map(|((_, spec), file)| {
            let (svg, _) = super::plot::svg(&spec).ok()?;
            Some(RuleFigure {
                title: spec.title.clone(),
                svg: inline_svg(&svg),
                file: path_html(file),
            })
        })
        .collect();
    RuleSetView {
        id: r.id.clone(),
        title: r.title.clone(),
        source: r.source.clone(),
        path: path_html(&r.path),
        copy: path_html(&r.copy),
        sha256: r.sha256.clone(),
        voltage: r.applicable_voltage.name().replace('_', " "),
        detection: format!(
            "starts below {} pu or above {} pu; ends {} pu back inside the band for {} s; pre-fault mean over {} s; unbalanced above |V2|/|V1| = {}; trip below {} pu current",
            d.below_pu, d.above_pu, d.hysteresis_pu, d.min_return_s, d.prefault_window_s, d.unbalance_ratio, d.trip_current_pu
        ),
        parameters: r
            .parameters
            .iter()
            .map(|p| {
                (
                    p.name.clone(),
                    format!("{} {}", p.value, p.unit),
                    format!("{} to {}", p.range[0], p.range[1]),
                    p.origin.clone(),
                    p.description.clone(),
                )
            })
            .collect(),
        checks,
        figures,
    }
}

fn test_row(t: &TestResult, href: String, plan_rules: &str) -> TestRow {
    let d = t.main_disturbance().map(|d| d.1);
    TestRow {
        href,
        id: t.id.clone(),
        verdict: label(t.verdict),
        class: class(t.verdict),
        file: path_html(&t.recording.path),
        rule_set: t.rule_set.clone().unwrap_or_else(|| plan_rules.to_string()),
        residual: s3(d.map(|d| d.extreme_pu), "pu"),
        duration: s3(d.and_then(|d| d.duration_s), "s"),
        balance: d
            .map(|d| d.balance.to_string())
            .unwrap_or_else(|| "–".into()),
        trip: match (t.trip.tripped, t.trip.time_s) {
            (true, Some(ts)) => format!("{ts:.3} s"),
            _ => "–".into(),
        },
        worst: t
            .worst_check()
            .map(|c| {
                format!(
                    "{} ({}): {}",
                    c.id,
                    c.reason.map(|r| r.name()).unwrap_or(c.verdict.name()),
                    c.detail
                )
            })
            .unwrap_or_else(|| "–".into()),
    }
}

fn trace(results: &Results, recordings: bool) -> Trace {
    let mut rules: Vec<(String, String, String)> = results
        .rule_sets
        .iter()
        .map(|r| (r.id.clone(), path_html(&r.path), r.sha256.clone()))
        .collect();
    if rules.is_empty() {
        let r = &results.rules;
        rules.push((
            r.id.clone().unwrap_or_default(),
            path_html(&r.path),
            r.sha256.clone(),
        ));
    }
    Trace {
        tool: match &results.tool.commit {
            Some(c) => format!(
                "{} {} (commit {c})",
                results.tool.name, results.tool.version
            ),
            None => format!("{} {}", results.tool.name, results.tool.version),
        },
        command_line: results.command_line.clone().unwrap_or_default(),
        generated: results.generated_utc.clone().unwrap_or_default(),
        plan: results
            .plan
            .as_ref()
            .map(|p| (path_html(&p.path), p.sha256.clone())),
        rules,
        recordings,
        tests: results
            .tests
            .iter()
            .map(|t| TraceRecording {
                id: t.id.clone(),
                file: path_html(&t.recording.path),
                sha256: t.recording.sha256.clone(),
            })
            .collect(),
        caution: results.caution.clone().unwrap_or_default(),
    }
}

/// The order of the index: failed, then inconclusive, then passed tests,
/// each in plan order.
fn fails_first(results: &Results) -> Vec<usize> {
    // Verdicts are ordered pass < … < fail (a test is never not applicable).
    let mut order: Vec<usize> = (0..results.tests.len()).collect();
    order.sort_by_key(|&k| (std::cmp::Reverse(results.tests[k].verdict), k));
    order
}

/// The figures of a test with their SVG read back for inlining.
fn figures_of(figures: &super::FigureSet, id: &str) -> anyhow::Result<Vec<RenderedFigure>> {
    use anyhow::Context;
    figures
        .get(id)
        .cloned()
        .unwrap_or_default()
        .into_iter()
        .map(|mut x| {
            let svg = std::fs::read_to_string(&x.svg_path)
                .with_context(|| format!("reading figure {}", x.svg_path.display()))?;
            x.svg = inline_svg(&svg);
            Ok(x)
        })
        .collect()
}

/// Writes `index.html`, `report.html` and one page per test into the pack,
/// one page at a time.
pub fn write_pages(
    results: &Results,
    figures: &super::FigureSet,
    pack: &super::pack::PackWriter,
) -> anyhow::Result<()> {
    use anyhow::Context;
    let front = front(results);
    let plan_rules = results.rules.id.clone().unwrap_or_default();
    let rows = |href: &dyn Fn(usize) -> String, order: &[usize]| -> Vec<TestRow> {
        order
            .iter()
            .map(|&k| test_row(&results.tests[k], href(k), &plan_rules))
            .collect()
    };
    let order = fails_first(results);
    let in_pack = |k: usize| test_page_name(k, &results.tests[k].id);
    let index = IndexPage {
        page_title: &front.title,
        front: &front,
        rows: rows(&in_pack, &order),
        trace: &trace(results, false),
    };
    pack.file(
        "index.html",
        index.render().context("rendering index.html")?.as_bytes(),
    )?;
    let plan_order: Vec<usize> = (0..results.tests.len()).collect();
    let mut report = pack.create("report.html")?;
    let head = ReportHead {
        page_title: &front.title,
        front: &front,
        rows: rows(&|k| format!("#test-{}", k + 1), &plan_order),
    };
    head.write_into(&mut report)
        .context("rendering report.html")?;
    pack.subdir("tests")?;
    let tool = trace(results, false).tool;
    for (k, t) in results.tests.iter().enumerate() {
        let view = test_view(k, t, figures_of(figures, &t.id)?, &plan_rules);
        let section = |plots: &str| {
            TestSection {
                t: &view,
                plots,
                base: plots.trim_end_matches("plots/"),
            }
            .render()
            .with_context(|| format!("rendering the section of test {}", t.id))
        };
        report.write_all(section("plots/")?.as_bytes())?;
        let page_name = in_pack(k);
        let rel = |j: usize| in_pack(j).trim_start_matches("tests/").to_string();
        let page_title = format!("{} – {}", t.id, front.title);
        let page = TestPage {
            page_title: &page_title,
            title: &front.title,
            caution: &front.caution,
            anchor: &view.anchor,
            prev: k.checked_sub(1).map(rel),
            next: (k + 1 < results.tests.len()).then(|| rel(k + 1)),
            section: section("../plots/")?,
            tool: &tool,
            generated: results.generated_utc.as_deref().unwrap_or(""),
        };
        pack.file_unsynced(
            &page_name,
            page.render().context("rendering a test page")?.as_bytes(),
        )?;
    }
    ReportTail {
        trace: &trace(results, true),
    }
    .write_into(&mut report)
    .context("rendering report.html")?;
    report.finish()
}
