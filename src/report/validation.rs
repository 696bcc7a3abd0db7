//! The validation pack: `validation.json` (schema
//! `schemas/validation-results-v1.schema.json`), `validation.csv` (one row
//! per window and quantity), `validation.html` (self-contained, the
//! measured and simulated traces overlaid with the windows shaded),
//! `plots/` and a copy of the validation rule.

use super::html::{class, path_html};
use super::plot::{self, FigureSpec, Shade, Trace};
use crate::analysis::Series;
use crate::rules::result::Verdict;
pub use crate::validation::ValidationResults;
use crate::validation::{Comparison, ValidatedQuantity, WindowName};
use anyhow::Context;
use askama::Template;
use std::io::Write;
use std::path::Path;

pub fn json(r: &ValidationResults) -> anyhow::Result<Vec<u8>> {
    Ok(
        (serde_json::to_string_pretty(r).context("serialising validation results")? + "\n")
            .into_bytes(),
    )
}

use super::csv_number as num;

/// `validation.csv`: text neutralised for spreadsheets, numbers as they are.
pub fn csv(r: &ValidationResults) -> anyhow::Result<Vec<u8>> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "window",
        "quantity",
        "samples",
        "me_pu",
        "mae_pu",
        "mxe_pu",
        "mxe_at_s",
        "me_limit_pu",
        "mae_limit_pu",
        "mxe_limit_pu",
        "verdict",
        "detail",
    ])?;
    for row in &r.comparison.rows {
        w.write_record([
            row.window.name(),
            row.quantity.name(),
            &row.samples.to_string(),
            &num(row.me_pu),
            &num(row.mae_pu),
            &num(row.mxe_pu),
            &num(row.mxe_at_s),
            &num(row.me_limit_pu),
            &num(row.mae_limit_pu),
            &num(row.mxe_limit_pu),
            row.verdict.name(),
            &crate::text::csv_cell(&row.detail),
        ])?;
    }
    w.into_inner().context("writing validation.csv")
}

/// The summary printed after a run.
pub fn summary(r: &ValidationResults, _tty: bool) -> String {
    let c = &r.comparison;
    let mut out = String::new();
    out += &format!("{}\n", crate::text::line(&c.alignment.how));
    out += "window  quantity  samples  ME (pu)   MAE (pu)  MXE (pu)  verdict\n";
    for row in &c.rows {
        let f = |x: Option<f64>| x.map_or("–".to_string(), |v| format!("{v:+.4}"));
        let u = |x: Option<f64>| x.map_or("–".to_string(), |v| format!("{v:.4}"));
        out += &format!(
            "{:<7} {:<9} {:>7}  {:<9} {:<9} {:<9} {}\n",
            row.window.name(),
            row.quantity.name(),
            row.samples,
            f(row.me_pu),
            u(row.mae_pu),
            u(row.mxe_pu),
            row.verdict.name()
        );
    }
    let d = |x: Option<f64>| x.map_or("–".to_string(), |v| format!("{v:.4} s"));
    out += &format!(
        "response times (measured / simulated): Iq rise {} / {}, Iq settling {} / {}, P recovery {} / {}\n",
        d(c.dynamics.measured.iq_rise_s),
        d(c.dynamics.simulated.iq_rise_s),
        d(c.dynamics.measured.iq_settling_s),
        d(c.dynamics.simulated.iq_settling_s),
        d(c.dynamics.measured.p_recovery_s),
        d(c.dynamics.simulated.p_recovery_s)
    );
    for n in &c.notes {
        out += &format!("note: {}\n", crate::text::line(n));
    }
    out += &format!(
        "Validation: {}",
        c.verdict.name().to_uppercase().replace('_', " ")
    );
    out + "\n"
}

/// The overlay figure of one quantity: measured and simulated (shifted),
/// compared parts and excluded transients shaded.
fn figure(
    r: &ValidationResults,
    q: ValidatedQuantity,
    meas: &Series,
    sim: &Series,
) -> Option<FigureSpec> {
    let (m, s) = (meas.get(q.analysis())?, sim.get(q.analysis())?);
    let c = &r.comparison;
    let shift = c.alignment.shift_s;
    let lo = c
        .windows
        .iter()
        .map(|w| w.from_s)
        .fold(f64::INFINITY, f64::min);
    let hi = c
        .windows
        .iter()
        .map(|w| w.to_s)
        .fold(f64::NEG_INFINITY, f64::max);
    if !(hi > lo) {
        return None;
    }
    let buckets = plot::WIDTH as usize;
    let mt = plot::minmax_decimate(&meas.t, m, lo, hi, buckets);
    let shifted: Vec<f64> = sim.t.iter().map(|t| t + shift).collect();
    let st = plot::minmax_decimate(&shifted, s, lo, hi, buckets);
    let ys = mt.iter().chain(&st).map(|p| p.1);
    let (y0, y1) = plot::y_range(ys, (0.0, 0.1));
    let mut f = FigureSpec {
        title: format!(
            "{} – {} – validation {}",
            r.measured.path.rsplit('/').next().unwrap_or(""),
            q.label(),
            verdict_of(c, q)
        ),
        x_label: "time, measured axis (s)".into(),
        y_label: format!("{} (pu)", q.label()),
        x_range: (lo, hi),
        y_range: (y0, y1),
        ..Default::default()
    };
    for w in &c.windows {
        let rect = |a: f64, b: f64| vec![(a, y0), (b, y0), (b, y1), (a, y1)];
        if w.compared_to_s > w.compared_from_s {
            f.shades.push(Shade {
                polygon: rect(w.compared_from_s, w.compared_to_s),
                color: plot::ZONE,
                opacity: 0.10,
                label: Some("compared (quasi-steady)".into()),
            });
        }
        if w.compared_from_s > w.from_s {
            f.shades.push(Shade {
                polygon: rect(w.from_s, w.compared_from_s),
                color: plot::MARK,
                opacity: 0.22,
                label: Some("excluded transient".into()),
            });
        }
    }
    f.traces.push(Trace {
        label: "measured".into(),
        points: mt,
        color: plot::MEASURED,
        dashed: false,
        width: 2,
    });
    f.traces.push(Trace {
        label: format!("simulated (shifted {shift:+.4} s)"),
        points: st,
        color: plot::BOUNDARY,
        dashed: true,
        width: 2,
    });
    Some(f)
}

fn verdict_of(c: &Comparison, q: ValidatedQuantity) -> String {
    let v = Verdict::combine(c.rows.iter().filter(|r| r.quantity == q).map(|r| r.verdict));
    v.name().to_uppercase().replace('_', " ")
}

struct FigureView {
    title: String,
    svg: String,
    file: String,
}

struct RowView {
    window: &'static str,
    quantity: String,
    samples: usize,
    me: String,
    mae: String,
    mxe: String,
    limits: String,
    verdict: &'static str,
    class: &'static str,
    detail: String,
}

#[derive(Template)]
#[template(path = "validation.html")]
struct Page<'a> {
    page_title: &'a str,
    r: &'a ValidationResults,
    overall: &'static str,
    overall_class: &'static str,
    measured: String,
    simulated: String,
    rules_path: String,
    rows: Vec<RowView>,
    windows: Vec<(&'static str, String, String)>,
    dynamics: Vec<(&'static str, String, String)>,
    figures: Vec<FigureView>,
}

fn view_rows(c: &Comparison) -> Vec<RowView> {
    let f = |x: Option<f64>| x.map_or("–".to_string(), |v| format!("{v:+.4}"));
    let u = |x: Option<f64>| x.map_or("–".to_string(), |v| format!("{v:.4}"));
    let l = |x: Option<f64>| x.map_or("–".to_string(), |v| format!("{v}"));
    c.rows
        .iter()
        .map(|row| RowView {
            window: row.window.name(),
            quantity: row.quantity.label().into(),
            samples: row.samples,
            me: f(row.me_pu),
            mae: u(row.mae_pu),
            mxe: u(row.mxe_pu),
            limits: format!(
                "{} / {} / {}",
                l(row.me_limit_pu),
                l(row.mae_limit_pu),
                l(row.mxe_limit_pu)
            ),
            verdict: row.verdict.name(),
            class: class(row.verdict),
            detail: row.detail.clone(),
        })
        .collect()
}

/// Writes a new file into `dir` (never over an existing one).
fn put(dir: &Path, rel: &str, bytes: &[u8]) -> anyhow::Result<()> {
    let p = dir.join(rel);
    let mut f = std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&p)
        .with_context(|| format!("creating {}", p.display()))?;
    f.write_all(bytes)
        .with_context(|| format!("writing {}", p.display()))
}

/// Writes the validation files into `dir` (a fresh folder inside a pack
/// being written): validation.json, validation.csv, validation.html, the
/// rule's text in rules/ and the figures in plots/.
pub fn write_files(
    dir: &Path,
    r: &ValidationResults,
    meas: &Series,
    sim: &Series,
    rule_text: &str,
) -> anyhow::Result<()> {
    std::fs::create_dir_all(dir.join("rules"))
        .and_then(|_| std::fs::create_dir_all(dir.join("plots")))
        .with_context(|| format!("creating {}", dir.display()))?;
    put(dir, "validation.json", &json(r)?)?;
    put(dir, "validation.csv", &csv(r)?)?;
    let name = r.rules.path.rsplit('/').next().unwrap_or("validation.yaml");
    put(
        dir,
        &format!(
            "rules/{}.yaml",
            crate::text::file_safe(name.trim_end_matches(".yaml"))
        ),
        rule_text.as_bytes(),
    )?;
    let mut figures = Vec::new();
    let mut seen = Vec::new();
    for row in &r.comparison.rows {
        if seen.contains(&row.quantity) {
            continue;
        }
        seen.push(row.quantity);
        let Some(spec) = figure(r, row.quantity, meas, sim) else {
            continue;
        };
        let (svg, _) = plot::svg(&spec)
            .map_err(|e| anyhow::anyhow!("drawing {}: {e}", row.quantity.name()))?;
        let file = format!("plots/validation-{}.svg", row.quantity.name());
        put(dir, &file, svg.as_bytes())?;
        figures.push(FigureView {
            title: spec.title.clone(),
            svg: super::html::inline_svg(&svg),
            file,
        });
    }
    let c = &r.comparison;
    let d = |x: Option<f64>| x.map_or("–".to_string(), |v| format!("{v:.4} s"));
    let title = format!(
        "Model validation: {}",
        r.rules.title.clone().unwrap_or_default()
    );
    let page = Page {
        page_title: &title,
        r,
        overall: match c.verdict {
            Verdict::Pass => "PASS",
            Verdict::Fail => "FAIL",
            _ => "INCONCLUSIVE",
        },
        overall_class: class(c.verdict),
        measured: path_html(&r.measured.path),
        simulated: path_html(&r.simulated.path),
        rules_path: path_html(&r.rules.path),
        rows: view_rows(c),
        windows: c
            .windows
            .iter()
            .map(|w| {
                (
                    w.name.name(),
                    format!("{:.4}–{:.4} s", w.from_s, w.to_s),
                    format!("{:.4}–{:.4} s", w.compared_from_s, w.compared_to_s),
                )
            })
            .collect(),
        dynamics: vec![
            (
                "reactive current rise (90 %)",
                d(c.dynamics.measured.iq_rise_s),
                d(c.dynamics.simulated.iq_rise_s),
            ),
            (
                "reactive current settling (±10 %)",
                d(c.dynamics.measured.iq_settling_s),
                d(c.dynamics.simulated.iq_settling_s),
            ),
            (
                "active power recovery (90 % of pre-fault)",
                d(c.dynamics.measured.p_recovery_s),
                d(c.dynamics.simulated.p_recovery_s),
            ),
        ],
        figures,
    };
    put(
        dir,
        "validation.html",
        page.render()
            .context("rendering validation.html")?
            .as_bytes(),
    )?;
    let _ = WindowName::ALL;
    Ok(())
}
