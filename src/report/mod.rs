//! Reporters: render the neutral [`Results`](crate::rules::result::Results)
//! and compute nothing themselves.

pub mod figures;
pub mod html;
pub mod plot;
pub mod summary_csv;
pub mod table;

use crate::rules::result::Results;
use anyhow::Context;
use std::path::Path;

/// Formats a value of `unit` for people (pu to 3 decimals, seconds to ms).
pub fn fmt_value(v: Option<f64>, unit: &str) -> String {
    match v {
        None => "–".into(),
        Some(x) if !x.is_finite() => "–".into(),
        Some(x) => match unit {
            "s" => format!("{:.1} ms", x * 1e3),
            _ => format!("{x:.3} {unit}"),
        },
    }
}

/// Writes `results.json`.
pub fn write_json(results: &Results, path: &Path) -> anyhow::Result<()> {
    let text = serde_json::to_string_pretty(results).context("serialising results")?;
    std::fs::write(path, text + "\n").with_context(|| format!("writing {}", path.display()))
}
