//! Reporters: render the neutral [`Results`](crate::rules::result::Results)
//! and compute nothing themselves.

pub mod figures;
pub mod html;
pub mod pack;
pub mod plot;
pub mod summary_csv;
pub mod table;

use crate::rules::result::Results;
use anyhow::Context;

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

/// `results.json`.
pub fn json(results: &Results) -> anyhow::Result<Vec<u8>> {
    let text = serde_json::to_string_pretty(results).context("serialising results")?;
    Ok((text + "\n").into_bytes())
}
