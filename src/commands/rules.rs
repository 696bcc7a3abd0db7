//! `holdfast rules ...`: work with rule sets.

use super::ExitStatus;
use crate::cli::{RulesArgs, RulesCommand};
use std::io::Write;

pub fn run(args: &RulesArgs) -> anyhow::Result<ExitStatus> {
    match &args.command {
        RulesCommand::Lint { file, set } => {
            let choices = set_choices(set)?;
            // Read safely (regular files only, capped): it decides which
            // format the file is.
            let text = crate::rules::yaml::read_text(file, "rule set")?;
            if crate::validation::spec::is_validation(&text) {
                return lint_validation(file, &choices);
            }
            let loaded = crate::rules::load_with(file, &choices)?;
            let r = &loaded.rules;
            // Written to a buffer first: ids and titles from the file are
            // escaped before they reach the terminal.
            let mut out: Vec<u8> = Vec::new();
            writeln!(out, "{}: ok", file.display())?;
            writeln!(out, "  id      {}", r.id)?;
            writeln!(out, "  title   {}", r.title)?;
            writeln!(out, "  source  {}", r.source)?;
            writeln!(out, "  voltage {}", r.applicable_voltage.name())?;
            writeln!(
                out,
                "  disturbance below {} pu / above {} pu, hysteresis {} pu",
                r.disturbance.below_pu, r.disturbance.above_pu, r.disturbance.hysteresis_pu
            )?;
            for p in &loaded.parameters {
                writeln!(out, "  param   {}", param_line(p, true))?;
            }
            for c in &r.checks {
                let what = c.check().summary();
                writeln!(out, "  check   {:<14} {what}", c.id())?;
            }
            std::io::stdout()
                .lock()
                .write_all(crate::text::lines(&String::from_utf8_lossy(&out)).as_bytes())?;
            Ok(ExitStatus::Success)
        }
        RulesCommand::Schema { validation } => {
            let schema = if *validation {
                crate::validation::spec::schema()
            } else {
                crate::rules::schema::rules_schema()
            };
            let text = serde_json::to_string_pretty(&schema)?;
            writeln!(std::io::stdout().lock(), "{text}")?;
            Ok(ExitStatus::Success)
        }
        RulesCommand::List { json } => list(*json),
        RulesCommand::Export { id } => {
            let Some((_, text)) = crate::rules::library::find(id) else {
                let names: Vec<&str> = crate::rules::library::SHIPPED
                    .iter()
                    .map(|(n, _)| *n)
                    .collect();
                return Err(crate::error::UsageError(format!(
                    "no shipped rule set '{}'; `holdfast rules list` shows them: {}",
                    crate::text::line(id),
                    names.join(", ")
                ))
                .into());
            };
            std::io::stdout().lock().write_all(text.as_bytes())?;
            Ok(ExitStatus::Success)
        }
        RulesCommand::Plot { file, out, set } => {
            let loaded = crate::rules::load_with(file, &set_choices(set)?)?;
            // The same safe writing as an evidence pack: a fresh folder
            // moved into place, never over the rule set or through a link.
            let pack = crate::report::pack::PackWriter::begin(out, std::slice::from_ref(file))?;
            let mut written = Vec::new();
            for (stem, spec) in crate::report::figures::rule_set_figures(&loaded.rules) {
                let (svg, _) = crate::report::plot::svg(&spec)
                    .map_err(|e| anyhow::anyhow!("drawing {stem}: {e}"))?;
                pack.file(&format!("{stem}.svg"), svg.as_bytes())?;
                let png_path = pack.dir().join(format!("{stem}.png"));
                crate::report::plot::png(&spec, &png_path)
                    .map_err(|e| anyhow::anyhow!("writing {}: {e}", png_path.display()))?;
                written.push(out.join(format!("{stem}.svg")));
                written.push(out.join(format!("{stem}.png")));
            }
            pack.commit()?;
            let mut stdout = std::io::stdout().lock();
            for w in written {
                writeln!(stdout, "{}", crate::text::line(&w.display().to_string()))?;
            }
            Ok(ExitStatus::Success)
        }
    }
}

fn set_choices(set: &[String]) -> anyhow::Result<crate::rules::params::Choices> {
    Ok(crate::cli::parse_set(set)?
        .into_iter()
        .map(|(k, v)| (k, (v, "--set".to_string())))
        .collect())
}

/// One parameter for people: name, value, unit, (origin,) range, description.
fn param_line(p: &crate::rules::params::Resolved, origin: bool) -> String {
    format!(
        "{:<14} = {} {} ({}allowed {} to {}){}",
        p.name,
        p.value,
        p.unit,
        if origin {
            format!("{}; ", p.origin)
        } else {
            String::new()
        },
        p.range.0,
        p.range.1,
        if p.description.is_empty() {
            String::new()
        } else {
            format!(" – {}", p.description)
        }
    )
}

/// `rules list`: every shipped rule set with title, source, checks and
/// parameters, as text or JSON.
fn list(json: bool) -> anyhow::Result<ExitStatus> {
    let mut out = std::io::stdout().lock();
    let mut all = Vec::new();
    for (name, text) in crate::rules::library::SHIPPED {
        let path = std::path::Path::new("rules").join(name);
        let sha = crate::digest::sha256_bytes(text.as_bytes());
        let loaded = crate::rules::load_text(&path, text, sha, &Default::default())?;
        let r = &loaded.rules;
        if json {
            all.push(serde_json::json!({
                "file": format!("rules/{name}"),
                "id": r.id,
                "title": r.title,
                "source": r.source,
                "checks": r.checks.iter().map(|c| serde_json::json!({
                    "id": c.id(),
                    "type": c.type_name(),
                })).collect::<Vec<_>>(),
                "parameters": loaded.parameters,
            }));
            continue;
        }
        writeln!(out, "rules/{name}  (id {})", r.id)?;
        writeln!(out, "  title   {}", r.title)?;
        writeln!(out, "  source  {}", r.source)?;
        writeln!(
            out,
            "  checks  {}",
            r.checks
                .iter()
                .map(|c| format!("{} ({})", c.id(), c.type_name()))
                .collect::<Vec<_>>()
                .join(", ")
        )?;
        for p in &loaded.parameters {
            writeln!(out, "  param   {}", param_line(p, false))?;
        }
        writeln!(out)?;
    }
    if json {
        serde_json::to_writer_pretty(&mut out, &all)?;
        writeln!(out)?;
    } else {
        writeln!(out, "{}", crate::cli::CAUTION)?;
    }
    Ok(ExitStatus::Success)
}

/// `rules lint` of a validation rule.
fn lint_validation(
    file: &std::path::Path,
    choices: &crate::rules::params::Choices,
) -> anyhow::Result<ExitStatus> {
    let v = crate::validation::spec::load(file, choices)?;
    let r = &v.rules;
    let mut out: Vec<u8> = Vec::new();
    writeln!(out, "{}: ok (validation rule)", file.display())?;
    writeln!(out, "  id      {}", r.id)?;
    writeln!(out, "  title   {}", r.title)?;
    writeln!(out, "  source  {}", r.source)?;
    let w = &r.windows;
    writeln!(
        out,
        "  windows pre-fault {} s; fault without its first {} s; post-fault {} s without its first {} s",
        w.prefault_s, w.fault_transient_s, w.post_s, w.post_transient_s
    )?;
    for p in &v.parameters {
        writeln!(out, "  param   {}", param_line(p, true))?;
    }
    for l in &r.limits {
        let f = |x: Option<f64>| x.map_or("–".to_string(), |v| format!("{v} pu"));
        writeln!(
            out,
            "  limit   {:<4} {:<6} |ME| {}, MAE {}, MXE {}",
            l.quantity.name(),
            format!("{:?}", l.window).to_lowercase(),
            f(l.me_pu),
            f(l.mae_pu),
            f(l.mxe_pu)
        )?;
    }
    std::io::stdout()
        .lock()
        .write_all(crate::text::lines(&String::from_utf8_lossy(&out)).as_bytes())?;
    Ok(ExitStatus::Success)
}
