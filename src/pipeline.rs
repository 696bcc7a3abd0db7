//! The test pipeline: one test from its recording to its evidence
//! (import → analysis → evaluation → figures), and a whole job in parallel.
//! Commands call this; reporters render what it returns.

use crate::analysis::{analyse, AnalysisSettings, POINTS_PER_CYCLE};
use crate::cli::CAUTION;
use crate::error::{InputError, InputErrors};
use crate::import::{self, ImportOptions};
use crate::model::Ratings;
use crate::plan::ResolvedTest;
use crate::report;
use crate::report::figures::FigureInput;
use crate::report::html::RenderedFigure;
use crate::report::FigureSet;
use crate::rules::engine;
use crate::rules::result::{
    FileRef, HashedFile, RecordingResult, Results, TestResult, Tool, Verdict,
};
use crate::rules::LoadedRules;
use anyhow::Context;
use rayon::prelude::*;
use std::path::{Path, PathBuf};

/// What a run checks, after the inputs were read and validated.
pub struct Job {
    pub plan: Option<(PathBuf, String)>,
    pub unit_name: Option<String>,
    /// The unit's ratings; `None` when every channel is in per unit.
    pub ratings: Option<Ratings>,
    /// Nominal frequency; `None`: each recording's own (COMTRADE `lf`).
    pub frequency_hz: Option<f64>,
    pub rules: Vec<LoadedRules>,
    pub tests: Vec<ResolvedTest>,
    pub options: ImportOptions,
    /// The plan's description and project fields.
    pub project: Option<crate::rules::result::ProjectInfo>,
    /// Validation rules of the tests that name a simulation.
    pub validations: Vec<crate::validation::spec::LoadedValidation>,
}

/// Where a test's figures go: SVG always, PNG copies when asked; and
/// where its validation files go (a folder per test).
#[derive(Clone, Copy, Debug)]
pub struct FigureOutput<'a> {
    pub dir: &'a Path,
    pub png: bool,
    pub validation_dir: Option<&'a Path>,
}

/// What one test gives: its result and its figures.
pub struct Evidence {
    pub result: TestResult,
    pub figures: Vec<RenderedFigure>,
}

/// A test that could not be evaluated: its input, or writing its figures.
pub enum TestError {
    Input(InputError),
    Output(anyhow::Error),
}

impl From<InputError> for TestError {
    fn from(e: InputError) -> Self {
        TestError::Input(e)
    }
}

/// The phasor method, in words, for the results.
const ANALYSIS_METHOD: &str = "fundamental phasors by a sliding one-cycle DFT of each phase (nominal frequency), symmetrical components from them; per unit on the unit's ratings; active and reactive current against the positive-sequence voltage";

pub fn file_ref(r: &LoadedRules) -> FileRef {
    FileRef {
        id: Some(r.rules.id.clone()),
        path: crate::files::normalised(&r.path),
        sha256: r.sha256.clone(),
        title: Some(r.rules.title.clone()),
        source: Some(r.rules.source.clone()),
    }
}

/// Evaluates one test; with `plots`, also draws its figures there.
pub fn run_test(
    test: &ResolvedTest,
    index: usize,
    rules: &LoadedRules,
    job: &Job,
    opts: &ImportOptions,
    plots: Option<FigureOutput<'_>>,
) -> Result<Evidence, TestError> {
    let source = import::open(&test.file, &test.map, opts)?;
    let frequency_hz = job
        .frequency_hz
        .or(source.info().line_frequency_hz)
        .ok_or_else(|| {
            InputError::new(&test.file, "the nominal frequency is not known")
                .hint("give --frequency 50 or 60 (the recording states no line frequency)")
        })?;
    let settings = AnalysisSettings {
        ratings: job.ratings,
        frequency_hz,
        points_per_cycle: POINTS_PER_CYCLE,
        phase_order: test.map.phase_order.unwrap_or_default(),
    };
    let analysed = analyse(source, &settings)?;
    let det = engine::detection_settings(&rules.rules, frequency_hz);
    let outcome = engine::evaluate(&analysed.series, &rules.rules, &det, test.expect.as_ref());
    let figures = match plots {
        Some(out) => draw(test, index, rules, &analysed.series, &det, &outcome, out)
            .map_err(TestError::Output)?,
        None => Vec::new(),
    };
    let mut notes = analysed.info.notes.clone();
    if let (Some(f), Some(lf)) = (job.frequency_hz, analysed.info.line_frequency_hz) {
        if (f - lf).abs() > 1e-6 {
            notes.push(format!(
                "the nominal frequency {f} Hz is used; the recording states a line frequency of {lf} Hz"
            ));
        }
    }
    notes.extend(outcome.notes.iter().cloned());
    let validation = match &test.simulation {
        Some(sim) => Some(validate_test(
            test,
            index,
            job,
            opts,
            &analysed,
            frequency_hz,
            sim,
            plots,
        )?),
        None => None,
    };
    let analysis = crate::rules::result::TestAnalysis {
        frequency_hz,
        window_s: 1.0 / frequency_hz,
        detection: det,
    };
    let mut result = test_result(test, rules, &analysed.info, outcome, notes)?;
    result.analysis = Some(analysis);
    result.validation = validation;
    Ok(Evidence { result, figures })
}

/// Validates the test's simulation against its recording and writes the
/// validation files into `validation/NNN-ID/` of the pack.
#[allow(clippy::too_many_arguments)]
fn validate_test(
    test: &ResolvedTest,
    index: usize,
    job: &Job,
    opts: &ImportOptions,
    analysed: &crate::analysis::Analysed,
    frequency_hz: f64,
    sim: &crate::plan::Simulation,
    plots: Option<FigureOutput<'_>>,
) -> Result<crate::rules::result::ValidationBrief, TestError> {
    use crate::validation::run::{analyse_one, disturbances_of, results_of, Rec};
    let rules = &job.validations[sim.rules];
    let offset = sim.offset_s;
    let sim = analyse_one(
        &sim.file,
        &sim.map,
        opts,
        job.ratings,
        Some(frequency_hz),
        rules,
    )?;
    let dist = disturbances_of(&test.file, &analysed.series, rules, frequency_hz)?;
    let meas = Rec {
        series: &analysed.series,
        disturbances: &dist,
        frequency_hz,
        path: &test.file,
        sha256: analysed
            .info
            .files
            .first()
            .map(|f| f.1.as_str())
            .unwrap_or(""),
    };
    let results = results_of(rules, &meas, &sim.rec(), offset)?;
    let folder = format!(
        "validation/{:03}-{}",
        index + 1,
        crate::text::file_safe(&test.id)
    );
    if let Some(dir) = plots.and_then(|p| p.validation_dir) {
        let out = dir.join(folder.trim_start_matches("validation/"));
        report::validation::write_files(
            &out,
            &results,
            &analysed.series,
            &sim.analysed.series,
            &rules.text,
        )
        .map_err(TestError::Output)?;
    }
    Ok(crate::rules::result::ValidationBrief {
        verdict: results.comparison.verdict,
        rules: results.rules.id.clone().unwrap_or_default(),
        simulated: results.simulated.clone(),
        shift_s: results.comparison.alignment.shift_s,
        report: format!("{folder}/validation.html"),
        failed: results
            .comparison
            .rows
            .iter()
            .filter(|r| r.verdict != crate::rules::result::Verdict::Pass)
            .map(|r| format!("{} {}", r.window.name(), r.quantity.name()))
            .collect(),
    })
}

/// Draws the figures of one test (SVG, and PNG when asked).
fn draw(
    test: &ResolvedTest,
    index: usize,
    rules: &LoadedRules,
    series: &crate::analysis::Series,
    det: &crate::analysis::events::DetectionSettings,
    outcome: &engine::Outcome,
    out: FigureOutput<'_>,
) -> anyhow::Result<Vec<RenderedFigure>> {
    let dir = out.dir;
    let mut figures = Vec::new();
    for fig in figures_of(&test.id, series, &rules.rules, det, outcome) {
        let stem = format!(
            "{:03}-{}-{}",
            index + 1,
            crate::text::file_safe(&test.id),
            fig.quantity
        );
        let (svg, _) = report::plot::svg(&fig.spec)
            .map_err(|e| anyhow::anyhow!("drawing figure {stem}: {e}"))?;
        let svg_path = dir.join(format!("{stem}.svg"));
        std::fs::write(&svg_path, &svg)
            .with_context(|| format!("writing figure {}", svg_path.display()))?;
        let mut files = vec![format!("{stem}.svg")];
        if out.png {
            let png_path = dir.join(format!("{stem}.png"));
            report::plot::png(&fig.spec, &png_path)
                .map_err(|e| anyhow::anyhow!("writing figure {}: {e}", png_path.display()))?;
            files.push(format!("{stem}.png"));
        }
        figures.push(RenderedFigure {
            quantity: fig.quantity.to_string(),
            title: fig.spec.title.clone(),
            svg: String::new(),
            svg_path,
            files,
        });
    }
    Ok(figures)
}

/// The figures of one test from its outcome: each check's overlay and the
/// figure its result belongs to.
pub fn figures_of(
    test_id: &str,
    series: &crate::analysis::Series,
    rules: &crate::rules::spec::RuleSet,
    det: &crate::analysis::events::DetectionSettings,
    outcome: &engine::Outcome,
) -> Vec<report::figures::Figure> {
    let Some(applicable) = outcome.applicable.as_deref() else {
        return Vec::new();
    };
    let overlays = engine::overlays(series, rules, det, outcome);
    let results = outcome
        .checks
        .iter()
        .filter_map(|c| {
            let spec = rules.checks.iter().find(|s| s.id() == c.id)?;
            Some((c, spec.check().figure()))
        })
        .collect();
    report::figures::figures(&FigureInput {
        test_id,
        series,
        applicable,
        applicable_name: rules.applicable_voltage.name().replace('_', " "),
        disturbances: &outcome.disturbances,
        trip: &outcome.trip,
        results,
        overlays: &overlays,
        extent_s: rules
            .checks
            .iter()
            .map(|c| c.check().extent_s())
            .fold(0.0, f64::max),
        cycle_s: 1.0 / det.frequency_hz,
    })
}

/// The neutral result of one test.
fn test_result(
    test: &ResolvedTest,
    rules: &LoadedRules,
    info: &crate::model::RecordingInfo,
    outcome: engine::Outcome,
    notes: Vec<String>,
) -> Result<TestResult, InputError> {
    // The digest of the bytes the importer read, not of a second reading.
    let sha256 = info
        .files
        .first()
        .map(|f| f.1.clone())
        .ok_or_else(|| InputError::new(&test.file, "the recording's digest is missing"))?;
    Ok(TestResult {
        id: test.id.clone(),
        recording: RecordingResult {
            path: crate::files::normalised(&test.file),
            sha256,
            sample_rate_hz: info.sample_rate_hz,
            duration_s: info.duration_s,
            format: Some(info.format),
            kind: Some(info.kind),
            samples: Some(info.samples),
            header: info.header.clone(),
            files: info
                .files
                .iter()
                .map(|(path, sha256)| HashedFile {
                    path: crate::files::normalised(Path::new(path)),
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
        rule_set: Some(rules.rules.id.clone()),
        description: test.description.clone(),
        analysis: None,
        phase_jumps: outcome
            .angle
            .as_ref()
            .map(|a| a.0.clone())
            .unwrap_or_default(),
        frequency: outcome.angle.as_ref().map(|a| a.1),
        validation: None,
    })
}

/// What a whole run gives.
pub struct Run {
    pub results: Results,
    /// Figures of each test, by test id.
    pub figures: FigureSet,
}

/// Runs every test of the job in parallel; all input errors are collected.
/// With `plots`, figures are drawn into that directory and returned per test.
pub fn run_job(
    job: &Job,
    jobs: usize,
    progress: bool,
    plots: Option<FigureOutput<'_>>,
) -> anyhow::Result<Run> {
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
            .map(|t| {
                let r = run_test(t, t.index, &job.rules[t.rules], job, &opts, plots);
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
    let mut figures = FigureSet::new();
    for o in outcomes {
        match o {
            Ok(e) => {
                figures.insert(e.result.id.clone(), e.figures);
                tests.push(e.result);
            }
            Err(TestError::Input(e)) => errs.push(e),
            Err(TestError::Output(e)) => return Err(e),
        }
    }
    if !errs.is_empty() {
        return Err(InputErrors(errs).into());
    }
    let verdict = Verdict::combine(tests.iter().map(|t| t.verdict));
    let results = Results {
        schema_version: 1,
        tool: Tool::this(),
        plan: job.plan.as_ref().map(|(p, sha)| FileRef {
            id: None,
            path: crate::files::normalised(p),
            sha256: sha.clone(),
            title: None,
            source: None,
        }),
        rules: file_ref(&job.rules[0]),
        verdict,
        tests,
        unit: job.unit_name.clone(),
        generated_utc: Some(chrono::Utc::now().to_rfc3339_opts(chrono::SecondsFormat::Secs, true)),
        command_line: Some(crate::cli::command_line()),
        caution: Some(CAUTION.into()),
        project: job.project.clone(),
        ratings: job
            .ratings
            .as_ref()
            .map(|r| crate::rules::result::RatingsReport::new(r, job.frequency_hz)),
        analysis: Some(crate::rules::result::AnalysisReport {
            method: ANALYSIS_METHOD.into(),
            window_cycles: 1,
            points_per_cycle: POINTS_PER_CYCLE,
        }),
        rule_sets: report::rule_sets::applied(&job.rules),
    };
    Ok(Run { results, figures })
}

/// Every file a job reads: plan, rule sets, recordings and their COMTRADE
/// data files (an `--out` that holds one is refused).
pub fn inputs_of(job: &Job) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = job.plan.iter().map(|(p, _)| p.clone()).collect();
    v.extend(job.rules.iter().map(|r| r.path.clone()));
    v.extend(job.validations.iter().map(|r| r.path.clone()));
    for t in &job.tests {
        v.push(t.file.clone());
        if let Some(s) = &t.simulation {
            v.push(s.file.clone());
        }
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
