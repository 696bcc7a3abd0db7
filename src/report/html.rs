//! `report.html`: one self-contained file (inline CSS and SVG, no scripts,
//! no external resources), from a template that escapes every value by
//! default. Only the figures' SVG, which the plotting backend escapes
//! itself, is inserted as markup.

use super::fmt_value;
use crate::rules::result::{
    CheckResult, DisturbanceResult, Results, TestResult, TripResult, Verdict,
};
use askama::Template;

/// A rendered figure of a test.
#[derive(Clone, Debug)]
pub struct RenderedFigure {
    pub quantity: String,
    pub title: String,
    pub svg: String,
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
    pub rules: Option<String>,
    pub worst: String,
}

#[derive(Template)]
#[template(path = "report.html")]
pub struct ReportPage {
    pub title: String,
    pub unit: String,
    pub overall: &'static str,
    pub overall_class: &'static str,
    pub counts: Vec<(&'static str, usize)>,
    pub tests: Vec<TestView>,
    pub tool: String,
    pub command_line: String,
    pub generated: String,
    pub plan: Option<(String, String)>,
    pub rules: Vec<(String, String, String, String, String)>,
    pub caution: String,
}

fn class(v: Verdict) -> &'static str {
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

fn test_view(k: usize, t: &TestResult, figures: Vec<RenderedFigure>) -> TestView {
    let worst = t
        .checks
        .iter()
        .filter(|c| matches!(c.verdict, Verdict::Fail | Verdict::Inconclusive))
        .map(|c| format!("{}: {}", c.id, c.detail))
        .next()
        .unwrap_or_default();
    TestView {
        anchor: format!("test-{}", k + 1),
        id: t.id.clone(),
        verdict: label(t.verdict),
        class: class(t.verdict),
        file: t.recording.path.clone(),
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
        rules: t
            .rules
            .as_ref()
            .map(|r| format!("{} ({})", r.title.clone().unwrap_or_default(), r.path)),
        worst,
    }
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

/// Renders the report page.
pub fn render(results: &Results, figures: &super::FigureSet) -> Result<String, askama::Error> {
    let counts = results.counts();
    let mut rules = vec![(
        results.rules.id.clone().unwrap_or_default(),
        results.rules.title.clone().unwrap_or_default(),
        results.rules.source.clone().unwrap_or_default(),
        results.rules.path.clone(),
        results.rules.sha256.clone(),
    )];
    for t in &results.tests {
        if let Some(r) = &t.rules {
            if !rules.iter().any(|x| x.3 == r.path) {
                rules.push((
                    r.id.clone().unwrap_or_default(),
                    r.title.clone().unwrap_or_default(),
                    r.source.clone().unwrap_or_default(),
                    r.path.clone(),
                    r.sha256.clone(),
                ));
            }
        }
    }
    let page = ReportPage {
        title: match &results.unit {
            Some(u) => format!("Fault ride-through evidence: {u}"),
            None => "Fault ride-through evidence".into(),
        },
        unit: results.unit.clone().unwrap_or_default(),
        overall: label(results.verdict),
        overall_class: class(results.verdict),
        counts: vec![
            ("pass", counts[0].1),
            ("fail", counts[1].1),
            ("inconclusive", counts[2].1),
        ],
        tests: results
            .tests
            .iter()
            .enumerate()
            .map(|(k, t)| {
                let f = figures
                    .get(&t.id)
                    .cloned()
                    .unwrap_or_default()
                    .into_iter()
                    .map(|mut x| {
                        x.svg = inline_svg(&x.svg);
                        x
                    })
                    .collect();
                test_view(k, t, f)
            })
            .collect(),
        tool: format!("{} {}", results.tool.name, results.tool.version),
        command_line: results.command_line.clone().unwrap_or_default(),
        generated: results.generated_utc.clone().unwrap_or_default(),
        plan: results
            .plan
            .as_ref()
            .map(|p| (p.path.clone(), p.sha256.clone())),
        rules,
        caution: results.caution.clone().unwrap_or_default(),
    };
    page.render()
}
