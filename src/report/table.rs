//! The terminal table: one row per (test, check), colour only on a terminal.
//! Every text from the inputs (ids, paths, names, sentences) is escaped:
//! control characters never reach the terminal raw.

use super::fmt_value;
use crate::rules::result::{Results, Verdict};
use crate::text;
use comfy_table::{presets, Cell, Color, ContentArrangement, Table};

fn verdict_colour(v: Verdict) -> Color {
    match v {
        Verdict::Pass => Color::Green,
        Verdict::Fail => Color::Red,
        Verdict::Inconclusive => Color::Yellow,
        Verdict::NotApplicable => Color::Grey,
    }
}

/// Renders the results; `tty` chooses box drawing, `colour` the verdict
/// colours (without it the text has no escape codes at all).
pub fn render(results: &Results, tty: bool, colour: bool) -> String {
    let mut t = Table::new();
    if colour {
        t.enforce_styling();
    }
    if tty {
        t.load_style(presets::UTF8_FULL_CONDENSED);
        t.set_content_arrangement(ContentArrangement::Dynamic);
    } else {
        t.load_style(presets::ASCII_MARKDOWN);
        t.force_no_tty();
        t.set_content_arrangement(ContentArrangement::Disabled);
    }
    t.set_header(vec![
        "test", "check", "dist.", "verdict", "reason", "measured", "limit", "margin",
    ]);
    for test in &results.tests {
        for (k, c) in test.checks.iter().enumerate() {
            let verdict = Cell::new(c.verdict.name());
            let verdict = if colour {
                verdict.fg(verdict_colour(c.verdict))
            } else {
                verdict
            };
            t.add_row(vec![
                Cell::new(if k == 0 {
                    text::line(&test.id)
                } else {
                    "".into()
                }),
                Cell::new(text::line(&c.id)),
                Cell::new(
                    c.disturbance
                        .map(|d| format!("#{d}"))
                        .unwrap_or_else(|| "–".into()),
                ),
                verdict,
                Cell::new(c.reason.map(|r| r.name()).unwrap_or("–")),
                Cell::new(fmt_value(c.measured, c.unit)),
                Cell::new(fmt_value(c.limit, c.unit)),
                Cell::new(fmt_value(c.margin, c.unit)),
            ]);
        }
    }
    let mut out = t.to_string();
    out.push('\n');
    let counts = results.counts();
    out.push_str(&format!(
        "\n{} tests: {} pass, {} fail, {} inconclusive. Overall: {}\n",
        results.tests.len(),
        counts[0].1,
        counts[1].1,
        counts[2].1,
        results.verdict.name().to_uppercase()
    ));
    for test in results.tests.iter().filter(|t| t.verdict != Verdict::Pass) {
        out.push_str(&format!(
            "\n{} ({}): {}\n",
            text::line(&test.id),
            text::line(&test.recording.path),
            test.verdict.name()
        ));
        for c in test
            .checks
            .iter()
            .filter(|c| matches!(c.verdict, Verdict::Fail | Verdict::Inconclusive))
        {
            out.push_str(&format!(
                "  {} {}: {}\n",
                text::line(&c.id),
                c.verdict.name(),
                text::line(&c.detail)
            ));
        }
    }
    let noted: Vec<_> = results
        .tests
        .iter()
        .filter(|t| !t.notes.is_empty())
        .collect();
    if !noted.is_empty() {
        out.push_str("\nNotes:\n");
        for t in noted {
            for n in &t.notes {
                out.push_str(&format!("  {}: {}\n", text::line(&t.id), text::line(n)));
            }
        }
    }
    out
}
