//! `summary.csv`: one row per (test, check).

use crate::rules::result::Results;
use crate::text;
use anyhow::Context;

/// Columns; later versions add columns at the end only.
pub const HEADER: [&str; 16] = [
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
    "rule_set",
];

/// `summary.csv`: text cells are neutralised for spreadsheets
/// ([`text::csv_cell`]); numbers are written as they are.
pub fn render(results: &Results) -> anyhow::Result<Vec<u8>> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(HEADER)?;
    let num = super::csv_number;
    let plan_rules = results.rules.id.clone().unwrap_or_default();
    for t in &results.tests {
        let rule_set = text::csv_cell(t.rule_set.as_deref().unwrap_or(&plan_rules));
        for c in &t.checks {
            w.write_record([
                &*text::csv_cell(&t.id),
                &*text::csv_cell(&t.recording.path),
                t.verdict.name(),
                &*text::csv_cell(&c.id),
                c.check_type.name(),
                &c.disturbance.map(|d| d.to_string()).unwrap_or_default(),
                c.verdict.name(),
                &num(c.measured),
                &num(c.limit),
                &num(c.margin),
                c.unit.name(),
                &num(c.at_s),
                &num(c.settling_time_s),
                &*text::csv_cell(&c.detail),
                c.reason.map(|r| r.name()).unwrap_or(""),
                &rule_set,
            ])?;
        }
    }
    w.into_inner().context("writing summary.csv")
}
