//! `tests.csv`: one row per test (the per-check rows are in `summary.csv`).
//! Times in seconds, voltages in per unit, like every file of the pack.

use crate::rules::result::{Results, TestResult};
use crate::text;
use anyhow::Context;

/// Columns; later versions add columns at the end only.
pub const HEADER: [&str; 18] = [
    "test",
    "recording",
    "rule_set",
    "verdict",
    "disturbances",
    "disturbance",
    "kind",
    "residual_pu",
    "residual_v1_pu",
    "duration_s",
    "balance",
    "start_s",
    "inception_s",
    "trip_s",
    "worst_check",
    "worst_verdict",
    "worst_reason",
    "worst_detail",
];

use super::csv_number as num;

fn row(t: &TestResult, plan_rules: &str) -> Vec<String> {
    let d = t.main_disturbance();
    let w = t.worst_check();
    vec![
        text::csv_cell(&t.id).into_owned(),
        text::csv_cell(&t.recording.path).into_owned(),
        text::csv_cell(t.rule_set.as_deref().unwrap_or(plan_rules)).into_owned(),
        t.verdict.name().into(),
        t.disturbances.len().to_string(),
        d.map(|d| d.0.to_string()).unwrap_or_default(),
        d.map(|d| d.1.kind.name().to_string()).unwrap_or_default(),
        num(d.map(|d| d.1.extreme_pu)),
        num(d.and_then(|d| d.1.residual_v1_pu)),
        num(d.and_then(|d| d.1.duration_s)),
        d.map(|d| d.1.balance.name().to_string())
            .unwrap_or_default(),
        num(d.map(|d| d.1.start_s)),
        num(d.and_then(|d| d.1.inception_s)),
        num(t.trip.time_s.filter(|_| t.trip.tripped)),
        w.map(|c| text::csv_cell(&c.id).into_owned())
            .unwrap_or_default(),
        w.map(|c| c.verdict.name().to_string()).unwrap_or_default(),
        w.and_then(|c| c.reason)
            .map(|r| r.name().to_string())
            .unwrap_or_default(),
        w.map(|c| text::csv_cell(&c.detail).into_owned())
            .unwrap_or_default(),
    ]
}

/// `tests.csv`: text cells are neutralised for spreadsheets
/// ([`text::csv_cell`]); numbers are written as they are.
pub fn render(results: &Results) -> anyhow::Result<Vec<u8>> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(HEADER)?;
    let plan_rules = results.rules.id.clone().unwrap_or_default();
    for t in &results.tests {
        w.write_record(row(t, &plan_rules))?;
    }
    w.into_inner().context("writing tests.csv")
}
