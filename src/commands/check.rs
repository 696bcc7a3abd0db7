//! `holdfast check`: the main job. Evaluates every test of a plan (or the
//! recordings of a one-off check), in parallel, and writes the evidence pack.

use crate::analysis::{analyse, AnalysisSettings, POINTS_PER_CYCLE};
use crate::cli::{CheckArgs, CAUTION};
use crate::error::{InputError, InputErrors, UsageError};
use crate::import::{self, ImportOptions};
use crate::model::{Ratings, RecordingKind};
use crate::plan::{self, ResolvedTest};
use crate::report;
use crate::report::figures::FigureInput;
use crate::report::html::RenderedFigure;
use crate::rules::engine;
use crate::rules::result::{FileRef, RecordingResult, Results, TestResult, Tool, Verdict};
use crate::rules::{self, LoadedRules};
use anyhow::Context;
use rayon::prelude::*;
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};

/// What a run checks, after the inputs were read and validated.
pub struct Job {
    pub plan: Option<(PathBuf, String)>,
    pub unit_name: Option<String>,
    pub ratings: Ratings,
    pub rules: Vec<LoadedRules>,
    pub tests: Vec<ResolvedTest>,
    pub options: ImportOptions,
}

fn file_ref(r: &LoadedRules) -> FileRef {
    FileRef {
        id: Some(r.rules.id.clone()),
        path: r.path.display().to_string(),
        sha256: r.sha256.clone(),
        title: Some(r.rules.title.clone()),
        source: Some(r.rules.source.clone()),
    }
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
        match rules::load_choosing(p, plan_values, cli) {
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
            let lp = plan::load(&args.inputs[0])?;
            let rules = load_rules(&lp.rule_files, &crate::cli::parse_set(&args.set)?)?;
            options.threads = 0;
            Ok(Job {
                plan: Some((lp.path.clone(), lp.sha256.clone())),
                unit_name: lp.plan.unit.name.clone(),
                ratings: lp.ratings,
                rules,
                tests: lp.tests,
                options,
            })
        }
        Some(rp) => {
            let ratings = args.ratings.ratings()?;
            let frequency = args
                .ratings
                .frequency
                .ok_or_else(|| UsageError("a one-off check needs --frequency (50 or 60)".into()))?;
            let map = args.map.channel_map()?;
            // Per-unit-only recordings need no ratings; the analysis says so otherwise.
            let ratings = ratings.map_or(
                Ratings {
                    rated_kv: f64::NAN,
                    rated_mva: f64::NAN,
                    frequency_hz: frequency,
                },
                |mut r| {
                    r.frequency_hz = frequency;
                    r
                },
            );
            let rules = load_rules(
                &[(rp.clone(), Default::default())],
                &crate::cli::parse_set(&args.set)?,
            )?;
            let mut seen = std::collections::HashMap::new();
            let tests = args
                .inputs
                .iter()
                .map(|f| {
                    let stem = f
                        .file_stem()
                        .map(|s| s.to_string_lossy().to_string())
                        .unwrap_or_else(|| f.display().to_string());
                    let n = seen.entry(stem.clone()).or_insert(0);
                    *n += 1;
                    let id = if *n == 1 { stem } else { format!("{stem}-{n}") };
                    ResolvedTest {
                        id,
                        file: f.clone(),
                        map: map.clone(),
                        expect: None,
                        rules: 0,
                        description: None,
                    }
                })
                .collect();
            Ok(Job {
                plan: None,
                unit_name: None,
                ratings,
                rules,
                tests,
                options,
            })
        }
    }
}

/// Keeps letters, digits, '-' and '_' of a test id for file names.
fn file_safe(id: &str) -> String {
    let s: String = id
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .take(60)
        .collect();
    if s.is_empty() {
        "test".into()
    } else {
        s
    }
}

/// Evaluates one test; with `plots`, also draws its figures into that directory.
pub fn run_test(
    test: &ResolvedTest,
    index: usize,
    rules: &LoadedRules,
    ratings: &Ratings,
    opts: &ImportOptions,
    plots: Option<&Path>,
) -> Result<(TestResult, Vec<RenderedFigure>), InputError> {
    let source = import::open(&test.file, &test.map, opts)?;
    let settings = AnalysisSettings {
        ratings: ratings.rated_kv.is_finite().then_some(*ratings),
        frequency_hz: ratings.frequency_hz,
        points_per_cycle: POINTS_PER_CYCLE,
        phase_order: test.map.phase_order.unwrap_or_default(),
    };
    let analysed = analyse(source, &settings)?;
    let det = engine::detection_settings(&rules.rules, ratings.frequency_hz);
    let outcome = engine::evaluate(&analysed.series, &rules.rules, &det, test.expect.as_ref());
    // The digest of the bytes the importer read, not of a second reading.
    let sha256 = analysed
        .info
        .files
        .first()
        .map(|f| f.1.clone())
        .ok_or_else(|| InputError::new(&test.file, "the recording's digest is missing"))?;
    let info = &analysed.info;
    let mut figures = Vec::new();
    if let (Some(dir), Some(applicable)) = (plots, outcome.applicable.as_deref()) {
        let input = FigureInput {
            test_id: &test.id,
            series: &analysed.series,
            applicable,
            rules: &rules.rules,
            disturbances: &outcome.disturbances,
            trip: &outcome.trip,
            checks: &outcome.checks,
            frequency_hz: ratings.frequency_hz,
        };
        for fig in report::figures::figures(&input) {
            let stem = format!("{:03}-{}-{}", index + 1, file_safe(&test.id), fig.quantity);
            let (svg, _) = report::plot::svg(&fig.spec)
                .map_err(|e| InputError::new(dir, format!("drawing {stem}: {e}")))?;
            let svg_path = dir.join(format!("{stem}.svg"));
            std::fs::write(&svg_path, &svg)
                .map_err(|e| InputError::new(&svg_path, format!("cannot write figure: {e}")))?;
            let png_path = dir.join(format!("{stem}.png"));
            report::plot::png(&fig.spec, &png_path)
                .map_err(|e| InputError::new(&png_path, format!("cannot write figure: {e}")))?;
            figures.push(RenderedFigure {
                quantity: fig.quantity.to_string(),
                title: fig.spec.title.clone(),
                svg,
                files: vec![format!("{stem}.svg"), format!("{stem}.png")],
            });
        }
    }
    let mut notes = info.notes.clone();
    notes.extend(outcome.notes);
    let result = TestResult {
        id: test.id.clone(),
        recording: RecordingResult {
            path: test.file.display().to_string(),
            sha256,
            sample_rate_hz: info.sample_rate_hz,
            duration_s: info.duration_s,
            format: Some(info.format.clone()),
            kind: Some(
                match info.kind {
                    RecordingKind::Waveform => "waveform",
                    RecordingKind::RmsLevel => "rms_level",
                }
                .into(),
            ),
            samples: Some(info.samples),
            header: info.header.clone(),
            files: info
                .files
                .iter()
                .map(|(path, sha256)| crate::rules::result::HashedFile {
                    path: path.clone(),
                    sha256: sha256.clone(),
                })
                .collect(),
            channels: info
                .channels
                .iter()
                .map(|c| format!("{} ← {} ({})", c.key.name(), c.source, c.unit))
                .collect(),
        },
        verdict: outcome.verdict,
        disturbances: outcome.disturbances.iter().map(Into::into).collect(),
        trip: (&outcome.trip).into(),
        checks: outcome.checks,
        rules: (test.rules != 0).then(|| file_ref(rules)),
        parameters: rules
            .parameters
            .iter()
            .map(|p| (p.name.clone(), p.value))
            .collect(),
        notes,
    };
    Ok((result, figures))
}

/// Runs every test of the job in parallel; all input errors are collected.
/// With `plots`, figures are drawn into that directory and returned per test.
pub fn run_job(
    job: &Job,
    jobs: usize,
    progress: bool,
    plots: Option<&Path>,
) -> Result<(Results, Vec<Vec<RenderedFigure>>), InputErrors> {
    let mut opts = job.options;
    if job.tests.len() > 1 {
        opts.threads = 1; // files in parallel, one parsing thread each
    }
    let bar = if progress {
        indicatif::ProgressBar::new(job.tests.len() as u64)
    } else {
        indicatif::ProgressBar::hidden()
    };
    bar.set_style(
        indicatif::ProgressStyle::with_template("{bar:40} {pos}/{len} tests {msg}")
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    let work = || {
        job.tests
            .par_iter()
            .enumerate()
            .map(|(k, t)| {
                let r = run_test(t, k, &job.rules[t.rules], &job.ratings, &opts, plots);
                bar.inc(1);
                r
            })
            .collect::<Vec<_>>()
    };
    let outcomes = if jobs > 0 {
        match rayon::ThreadPoolBuilder::new().num_threads(jobs).build() {
            Ok(pool) => pool.install(work),
            Err(_) => work(),
        }
    } else {
        work()
    };
    bar.finish_and_clear();
    let mut tests = Vec::new();
    let mut errs = Vec::new();
    let mut figures = Vec::new();
    for o in outcomes {
        match o {
            Ok((t, f)) => {
                tests.push(t);
                figures.push(f);
            }
            Err(e) => errs.push(e),
        }
    }
    if !errs.is_empty() {
        return Err(InputErrors(errs));
    }
    let verdict = Verdict::combine(tests.iter().map(|t| t.verdict));
    let results = Results {
        schema_version: 1,
        tool: Tool {
            name: "holdfast".into(),
            version: env!("CARGO_PKG_VERSION").into(),
        },
        plan: job.plan.as_ref().map(|(p, sha)| FileRef {
            id: None,
            path: p.display().to_string(),
            sha256: sha.clone(),
            title: None,
            source: None,
        }),
        rules: file_ref(&job.rules[0]),
        verdict,
        tests,
        unit: job.unit_name.clone(),
        generated_utc: Some(chrono::Utc::now().to_rfc3339_opts(chrono::SecondsFormat::Secs, true)),
        command_line: Some(command_line()),
        caution: Some(CAUTION.into()),
    };
    Ok((results, figures))
}

fn command_line() -> String {
    std::env::args()
        .map(|a| {
            if a.is_empty() || a.contains(|c: char| c.is_whitespace() || "'\"$`\\".contains(c)) {
                format!("'{}'", a.replace('\'', "'\\''"))
            } else {
                a
            }
        })
        .collect::<Vec<_>>()
        .join(" ")
}

/// Every file a job reads: plan, rule sets, recordings and their COMTRADE
/// data files (an `--out` that holds one is refused).
fn inputs_of(job: &Job) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = job.plan.iter().map(|(p, _)| p.clone()).collect();
    v.extend(job.rules.iter().map(|r| r.path.clone()));
    for t in &job.tests {
        v.push(t.file.clone());
        if t.file
            .extension()
            .is_some_and(|e| e.eq_ignore_ascii_case("cfg"))
        {
            v.push(t.file.with_extension("dat"));
            v.push(t.file.with_extension("DAT"));
        }
    }
    v
}

/// Writes the evidence pack's files into the pack being built.
pub fn write_pack(
    results: &Results,
    figures: Vec<Vec<RenderedFigure>>,
    pack: &report::pack::PackWriter,
) -> anyhow::Result<()> {
    pack.file("results.json", &report::json(results)?)?;
    pack.file("summary.csv", &report::summary_csv::render(results)?)?;
    let html = report::html::render(results, figures).context("rendering report.html")?;
    pack.file("report.html", html.as_bytes())?;
    Ok(())
}

pub fn run(args: &CheckArgs) -> anyhow::Result<u8> {
    let job = job_from_args(args)?;
    let pack = report::pack::PackWriter::begin(&args.out, &inputs_of(&job))?;
    let plots = pack.subdir("plots")?;
    let (results, figures) = run_job(
        &job,
        args.jobs,
        std::io::stderr().is_terminal(),
        Some(&plots),
    )?;
    write_pack(&results, figures, &pack)?;
    pack.commit()?;
    let stdout = std::io::stdout();
    let tty = stdout.is_terminal();
    let mut out = stdout.lock();
    write!(out, "{}", report::table::render(&results, tty))?;
    writeln!(
        out,
        "\nEvidence pack: {}",
        crate::text::line(&args.out.display().to_string())
    )?;
    writeln!(out, "{CAUTION}")?;
    Ok(if results.verdict == Verdict::Pass {
        0
    } else {
        1
    })
}
