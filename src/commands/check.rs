//! `holdfast check`: the main job. Evaluates every test of a plan (or the
//! recordings of a one-off check), in parallel, and writes the evidence pack.

use super::ExitStatus;
use crate::cli::{CheckArgs, CAUTION};
use crate::error::{InputError, InputErrors, UsageError};
use crate::pipeline::{self, Job};
use crate::plan::{self, ResolvedTest};
use crate::report;
use crate::rules::result::Verdict;
use crate::rules::{self, LoadedRules};
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};

/// A rule set from its file, or, when no such file exists and the name has
/// no folder, the shipped rule set of that id or file name.
fn load_one(
    p: &Path,
    plan_values: &std::collections::BTreeMap<String, f64>,
    cli: &std::collections::BTreeMap<String, f64>,
) -> Result<(LoadedRules, Vec<String>), InputErrors> {
    let bare = p.components().count() == 1;
    if !p.exists() && bare {
        if let Some((name, text)) = p.to_str().and_then(rules::library::find) {
            let label = Path::new("rules").join(name);
            let sha = crate::digest::sha256_bytes(text.as_bytes());
            return rules::load_text_choosing(&label, text, sha, plan_values, cli);
        }
    }
    rules::load_choosing(p, plan_values, cli)
}

/// Loads each rule set with its parameter values (from the plan), with the
/// `--set` values over them for every rule set that declares the name.
fn load_rules(
    sets: &[(PathBuf, std::collections::BTreeMap<String, f64>)],
    cli: &std::collections::BTreeMap<String, f64>,
) -> Result<Vec<LoadedRules>, InputErrors> {
    let mut out = Vec::new();
    let mut errs = Vec::new();
    let mut used = std::collections::BTreeSet::new();
    for (p, plan_values) in sets {
        match load_one(p, plan_values, cli) {
            Ok((r, names)) => {
                used.extend(names);
                out.push(r)
            }
            Err(e) => errs.extend(e.0),
        }
    }
    for k in cli.keys().filter(|k| !used.contains(*k)) {
        errs.push(InputError::new(
            sets.first().map_or(Path::new(""), |s| s.0.as_path()),
            format!("--set {k}: no rule set of this run declares a parameter '{k}'"),
        ));
    }
    if errs.is_empty() {
        Ok(out)
    } else {
        Err(InputErrors(errs))
    }
}

/// Loads every validation rule a plan names; all problems at once.
fn load_validations(
    files: &[PathBuf],
) -> Result<Vec<crate::validation::spec::LoadedValidation>, InputErrors> {
    let mut out = Vec::new();
    let mut errs = Vec::new();
    for f in files {
        match crate::validation::spec::load(f, &Default::default()) {
            Ok(v) => out.push(v),
            Err(e) => errs.extend(e.0),
        }
    }
    if errs.is_empty() {
        Ok(out)
    } else {
        Err(InputErrors(errs))
    }
}

/// Builds the job from the command line.
pub fn job_from_args(args: &CheckArgs) -> anyhow::Result<Job> {
    let mut options = args.map.import_options()?;
    match &args.rules {
        None => {
            if args.inputs.len() != 1 {
                return Err(UsageError(
                    "give one test plan, or recordings together with --rules R.yaml".into(),
                )
                .into());
            }
            let a = &args.ratings;
            let m = &args.map;
            if a.rated_kv.is_some()
                || a.rated_mva.is_some()
                || a.frequency.is_some()
                || !m.map.is_empty()
                || m.voltage_unit.is_some()
                || m.current_unit.is_some()
                || m.voltage_connection.is_some()
                || m.phase_order.is_some()
                || m.encoding.is_some()
                || m.sample_rate.is_some()
            {
                return Err(UsageError(
                    "rating, --map and --phase-order flags belong to the one-off form (--rules); a plan has its own unit, channels and phase_order keys"
                        .into(),
                )
                .into());
            }
            let input = &args.inputs[0];
            if input.extension().is_some() && crate::import::is_recording(input) {
                return Err(UsageError(format!(
                    "{} is a recording, not a test plan: check recordings with --rules RULES.yaml (and the unit's ratings), or give a plan (.yaml)",
                    crate::text::line(&input.display().to_string())
                ))
                .into());
            }
            let lp = plan::load(input)?;
            let rules = load_rules(&lp.rule_files, &crate::cli::parse_set(&args.set)?)?;
            let validations = load_validations(&lp.validation_files)?;
            options.threads = 0;
            Ok(Job {
                plan: Some((lp.path.clone(), lp.sha256.clone())),
                unit_name: lp.plan.unit.name.clone(),
                ratings: Some(lp.ratings),
                frequency_hz: Some(lp.plan.unit.frequency_hz),
                rules,
                project: lp.plan.project_info(),
                tests: lp.tests,
                options,
                validations,
            })
        }
        Some(rp) => {
            // Per-unit-only recordings need no ratings; the analysis says
            // so otherwise. Without --frequency each recording's own line
            // frequency is used (COMTRADE `lf`).
            let ratings = args.ratings.ratings()?;
            let frequency_hz = args.ratings.frequency;
            let map = args.map.channel_map()?;
            let rules = load_rules(
                &[(rp.clone(), Default::default())],
                &crate::cli::parse_set(&args.set)?,
            )?;
            let mut seen = std::collections::HashMap::new();
            let tests = args
                .inputs
                .iter()
                .enumerate()
                .map(|(index, f)| {
                    let stem = f
                        .file_stem()
                        .map(|s| s.to_string_lossy().to_string())
                        .unwrap_or_else(|| f.display().to_string());
                    let n = seen.entry(stem.clone()).or_insert(0);
                    *n += 1;
                    let id = if *n == 1 { stem } else { format!("{stem}-{n}") };
                    ResolvedTest {
                        index,
                        id,
                        file: f.clone(),
                        map: map.clone(),
                        expect: None,
                        rules: 0,
                        description: None,
                        simulation: None,
                    }
                })
                .collect();
            Ok(Job {
                plan: None,
                unit_name: None,
                ratings,
                frequency_hz,
                rules,
                tests,
                options,
                project: None,
                validations: Vec::new(),
            })
        }
    }
}

pub fn run(args: &CheckArgs) -> anyhow::Result<ExitStatus> {
    let mut job = job_from_args(args)?;
    let shard = match &args.shard {
        Some(spec) => {
            if job.plan.is_none() {
                return Err(UsageError("--shard shards a test plan; give a plan".into()).into());
            }
            let s = super::shard::parse_spec(spec, &|k| std::env::var(k).ok())?;
            let plan_tests: Vec<String> = job.tests.iter().map(|t| t.id.clone()).collect();
            job.tests.retain(|t| super::shard::in_shard(t.index, s));
            Some((s, plan_tests))
        }
        None => None,
    };
    let pack = report::pack::PackWriter::begin(&args.out, &pipeline::inputs_of(&job))?;
    let plots = pack.subdir("plots")?;
    let validation_dir = if job.validations.is_empty() {
        None
    } else {
        Some(pack.subdir("validation")?)
    };
    let run = pipeline::run_job(
        &job,
        args.jobs,
        std::io::stderr().is_terminal(),
        Some(pipeline::FigureOutput {
            dir: &plots,
            png: args.png,
            validation_dir: validation_dir.as_deref(),
        }),
    )?;
    report::rule_sets::write(&pack, &job.rules)?;
    for r in report::REPORTERS {
        r.write(&run.results, &run.figures, &pack)?;
    }
    if let Some((s, plan_tests)) = shard {
        // Each rule set with its parameter values: shards of runs with other
        // values do not belong together.
        let mut inputs: Vec<(String, String)> = job
            .rules
            .iter()
            .map(|r| {
                let values: Vec<String> = r
                    .parameters
                    .iter()
                    .map(|p| format!("{}={}", p.name, p.value))
                    .collect();
                (
                    crate::files::normalised(&r.path),
                    format!("{} {}", r.sha256, values.join(",")),
                )
            })
            .collect();
        inputs.extend(
            job.validations
                .iter()
                .map(|v| (crate::files::normalised(&v.path), v.sha256.clone())),
        );
        let m = super::shard::manifest(&run.results, inputs, s, plan_tests, &run.figures);
        pack.file(
            super::shard::MANIFEST,
            (serde_json::to_string_pretty(&m)? + "\n").as_bytes(),
        )?;
    }
    pack.commit()?;
    let stdout = std::io::stdout();
    let tty = stdout.is_terminal();
    let mut out = stdout.lock();
    let results = &run.results;
    if args.json {
        out.write_all(&report::json(results)?)?;
    } else if !args.quiet {
        let colour = args.color.decide(
            tty,
            std::env::var("NO_COLOR").ok().as_deref(),
            std::env::var("TERM").ok().as_deref(),
        );
        write!(out, "{}", report::table::render(results, tty, colour))?;
        for t in results.tests.iter().filter(|t| t.validation.is_some()) {
            if let Some(v) = &t.validation {
                writeln!(
                    out,
                    "Model validation {}: {}{} ({})",
                    crate::text::line(&t.id),
                    v.verdict.name().to_uppercase(),
                    if v.failed.is_empty() {
                        String::new()
                    } else {
                        format!(": {}", v.failed.join(", "))
                    },
                    v.report
                )?;
            }
        }
        writeln!(
            out,
            "\nEvidence pack: {}",
            crate::text::line(&args.out.display().to_string())
        )?;
        writeln!(out, "{CAUTION}")?;
    }
    let validated = results
        .tests
        .iter()
        .filter_map(|t| t.validation.as_ref())
        .all(|v| v.verdict == Verdict::Pass);
    Ok(
        if (results.verdict == Verdict::Pass && validated) || args.exit_zero_when_evaluated {
            ExitStatus::Success
        } else {
            ExitStatus::NotPassed
        },
    )
}
