//! The rule sets of a run inside the evidence pack: a copy of each text as
//! read and its requirement figures in `rules/`, and the description of
//! each as applied (parameters resolved) for `results.json`.

use super::pack::PackWriter;
use crate::rules::result::{AppliedParameter, AppliedRuleSet};
use crate::rules::LoadedRules;

/// The pack's name for rule set `k` of `all`: `rules/<file name>`, with
/// the position in front when two rule sets share a file name.
fn copy_name(k: usize, all: &[LoadedRules]) -> String {
    let name = |r: &LoadedRules| {
        r.path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| format!("{}.yaml", r.rules.id))
    };
    let own = name(&all[k]);
    let shared = all.iter().filter(|r| name(r) == own).count() > 1;
    let safe = crate::text::file_safe(own.trim_end_matches(".yaml").trim_end_matches(".yml"));
    if shared {
        format!("rules/{}-{safe}.yaml", k + 1)
    } else {
        format!("rules/{safe}.yaml")
    }
}

/// The figure stems of rule set `k`, inside the pack.
fn figure_names(k: usize, all: &[LoadedRules]) -> Vec<(String, super::plot::FigureSpec)> {
    let copy = copy_name(k, all);
    let base = copy.trim_end_matches(".yaml");
    super::figures::rule_set_figures(&all[k].rules)
        .into_iter()
        .map(|(stem, spec)| (format!("{base}.{stem}.svg"), spec))
        .collect()
}

/// Each rule set as applied, for `results.json`.
pub fn applied(all: &[LoadedRules]) -> Vec<AppliedRuleSet> {
    (0..all.len())
        .map(|k| {
            let l = &all[k];
            AppliedRuleSet {
                id: l.rules.id.clone(),
                title: l.rules.title.clone(),
                source: l.rules.source.clone(),
                path: crate::files::normalised(&l.path),
                sha256: l.sha256.clone(),
                copy: copy_name(k, all),
                figures: figure_names(k, all).into_iter().map(|f| f.0).collect(),
                parameters: l
                    .parameters
                    .iter()
                    .map(|p| AppliedParameter {
                        name: p.name.clone(),
                        value: p.value,
                        unit: p.unit.clone(),
                        range: [p.range.0, p.range.1],
                        origin: p.origin.clone(),
                        description: p.description.clone(),
                    })
                    .collect(),
                applicable_voltage: l.rules.applicable_voltage,
                disturbance: l.rules.disturbance.clone(),
                checks: l.rules.checks.clone(),
            }
        })
        .collect()
}

/// Writes each rule set's text and figures into the pack's `rules/`.
pub fn write(pack: &PackWriter, all: &[LoadedRules]) -> anyhow::Result<()> {
    if all.is_empty() {
        return Ok(());
    }
    pack.subdir("rules")?;
    for k in 0..all.len() {
        pack.file(&copy_name(k, all), all[k].text.as_bytes())?;
        for (name, spec) in figure_names(k, all) {
            let (svg, _) =
                super::plot::svg(&spec).map_err(|e| anyhow::anyhow!("drawing {name}: {e}"))?;
            pack.file(&name, svg.as_bytes())?;
        }
    }
    Ok(())
}
