//! Reporters: render the neutral [`Results`](crate::rules::result::Results)
//! and compute nothing themselves.

pub mod figures;
pub mod html;
pub mod pack;
pub mod plot;
pub mod rule_sets;
pub mod summary_csv;
pub mod table;
pub mod tests_csv;
pub mod validation;

use crate::rules::registry::Unit;
use crate::rules::result::Results;
use anyhow::Context;
use pack::PackWriter;

/// Formats a value of `unit` for people (pu to 3 decimals, seconds to ms).
pub fn fmt_value(v: Option<f64>, unit: Unit) -> String {
    match v {
        None => "–".into(),
        Some(x) if !x.is_finite() => "–".into(),
        Some(x) => match unit {
            Unit::S => format!("{x:.4} s"),
            Unit::Pu => format!("{x:.3} pu"),
            Unit::Deg => format!("{x:.2}°"),
            Unit::Hz => format!("{x:.3} Hz"),
            Unit::HzPerS => format!("{x:.3} Hz/s"),
            Unit::Count => format!("{x:.0}"),
        },
    }
}

/// A number as a CSV cell: as it is, empty when missing or not finite.
pub fn csv_number(v: Option<f64>) -> String {
    v.filter(|x| x.is_finite())
        .map(|x| format!("{x}"))
        .unwrap_or_default()
}

/// The figures of a run, by test id.
pub type FigureSet = std::collections::BTreeMap<String, Vec<html::RenderedFigure>>;

/// Files of the evidence pack, rendered from the results and figures
/// (and computing nothing themselves). Add a report format by adding one
/// here and to [`REPORTERS`].
pub trait Reporter: Sync {
    /// The file, or the first of the files, it writes.
    fn file_name(&self) -> &'static str;
    /// Writes its files into the pack.
    fn write(
        &self,
        results: &Results,
        figures: &FigureSet,
        pack: &PackWriter,
    ) -> anyhow::Result<()>;
}

/// A reporter of one file rendered whole.
trait OneFile: Sync {
    const NAME: &'static str;
    fn render(results: &Results) -> anyhow::Result<Vec<u8>>;
}

impl<T: OneFile> Reporter for T {
    fn file_name(&self) -> &'static str {
        T::NAME
    }
    fn write(&self, results: &Results, _: &FigureSet, pack: &PackWriter) -> anyhow::Result<()> {
        pack.file(T::NAME, &T::render(results)?)
    }
}

struct Json;
struct SummaryCsv;
struct TestsCsv;
struct Html;

impl OneFile for Json {
    const NAME: &'static str = "results.json";
    fn render(results: &Results) -> anyhow::Result<Vec<u8>> {
        json(results)
    }
}

impl OneFile for SummaryCsv {
    const NAME: &'static str = "summary.csv";
    fn render(results: &Results) -> anyhow::Result<Vec<u8>> {
        summary_csv::render(results)
    }
}

impl OneFile for TestsCsv {
    const NAME: &'static str = "tests.csv";
    fn render(results: &Results) -> anyhow::Result<Vec<u8>> {
        tests_csv::render(results)
    }
}

/// `index.html`, `report.html` and `tests/*.html`.
impl Reporter for Html {
    fn file_name(&self) -> &'static str {
        "index.html"
    }
    fn write(
        &self,
        results: &Results,
        figures: &FigureSet,
        pack: &PackWriter,
    ) -> anyhow::Result<()> {
        html::write_pages(results, figures, pack)
    }
}

/// The files of an evidence pack, in the order they are written.
pub const REPORTERS: [&dyn Reporter; 4] = [&Json, &SummaryCsv, &TestsCsv, &Html];

/// `results.json`.
pub fn json(results: &Results) -> anyhow::Result<Vec<u8>> {
    let text = serde_json::to_string_pretty(results).context("serialising results")?;
    Ok((text + "\n").into_bytes())
}
