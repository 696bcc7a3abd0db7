//! `summary.csv`: one row per (test, check).

use crate::rules::result::Results;
use anyhow::Context;
use std::path::Path;

/// Columns; later versions add columns at the end only.
pub const HEADER: [&str; 15] = [
    "test",
    "recording",
    "test_verdict",
    "check",
    "type",
    "disturbance",
    "verdict",
    "measured",
    "limit",
    "margin",
    "unit",
    "at_s",
    "settling_time_s",
    "detail",
    "reason",
];

pub fn write(results: &Results, path: &Path) -> anyhow::Result<()> {
    let mut w =
        csv::Writer::from_path(path).with_context(|| format!("creating {}", path.display()))?;
    w.write_record(HEADER)?;
    let num = |v: Option<f64>| {
        v.filter(|x| x.is_finite())
            .map(|x| format!("{x}"))
            .unwrap_or_default()
    };
    for t in &results.tests {
        for c in &t.checks {
            w.write_record([
                t.id.as_str(),
                t.recording.path.as_str(),
                t.verdict.name(),
                c.id.as_str(),
                c.check_type.as_str(),
                &c.disturbance.map(|d| d.to_string()).unwrap_or_default(),
                c.verdict.name(),
                &num(c.measured),
                &num(c.limit),
                &num(c.margin),
                c.unit.as_str(),
                &num(c.at_s),
                &num(c.settling_time_s),
                c.detail.as_str(),
                c.reason.map(|r| r.name()).unwrap_or(""),
            ])?;
        }
    }
    w.flush()
        .with_context(|| format!("writing {}", path.display()))?;
    Ok(())
}
