//! Reporters: render the neutral [`Results`](crate::rules::result::Results)
//! and compute nothing themselves.

pub mod figures;
pub mod html;
pub mod pack;
pub mod plot;
pub mod summary_csv;
pub mod table;

use crate::rules::registry::Unit;
use crate::rules::result::Results;
use anyhow::Context;

/// Formats a value of `unit` for people (pu to 3 decimals, seconds to ms).
pub fn fmt_value(v: Option<f64>, unit: Unit) -> String {
    match v {
        None => "–".into(),
        Some(x) if !x.is_finite() => "–".into(),
        Some(x) => match unit {
            Unit::S => format!("{:.1} ms", x * 1e3),
            Unit::Pu => format!("{x:.3} pu"),
        },
    }
}

/// The figures of a run, by test id.
pub type FigureSet = std::collections::BTreeMap<String, Vec<html::RenderedFigure>>;

/// A file of the evidence pack, rendered from the results and figures
/// (and computing nothing itself). Add a report format by adding one here.
pub trait Reporter: Sync {
    fn file_name(&self) -> &'static str;
    fn render(&self, results: &Results, figures: &FigureSet) -> anyhow::Result<Vec<u8>>;
}

struct Json;
struct SummaryCsv;
struct Html;

impl Reporter for Json {
    fn file_name(&self) -> &'static str {
        "results.json"
    }
    fn render(&self, results: &Results, _: &FigureSet) -> anyhow::Result<Vec<u8>> {
        json(results)
    }
}

impl Reporter for SummaryCsv {
    fn file_name(&self) -> &'static str {
        "summary.csv"
    }
    fn render(&self, results: &Results, _: &FigureSet) -> anyhow::Result<Vec<u8>> {
        summary_csv::render(results)
    }
}

impl Reporter for Html {
    fn file_name(&self) -> &'static str {
        "report.html"
    }
    fn render(&self, results: &Results, figures: &FigureSet) -> anyhow::Result<Vec<u8>> {
        Ok(html::render(results, figures)
            .context("rendering report.html")?
            .into_bytes())
    }
}

/// The files of an evidence pack, in the order they are written.
pub const REPORTERS: [&dyn Reporter; 3] = [&Json, &SummaryCsv, &Html];

/// `results.json`.
pub fn json(results: &Results) -> anyhow::Result<Vec<u8>> {
    let text = serde_json::to_string_pretty(results).context("serialising results")?;
    Ok((text + "\n").into_bytes())
}
