//! Shards of a plan (`check --shard K/N`) and their merge (`holdfast merge`)
//! into one evidence pack with the content of a single run (docs/cluster.md).
//!
//! Shard K of N evaluates the plan's tests whose position `i` (from 0, in
//! plan order) has `i mod N = K − 1`, names figures by the position in the
//! whole plan, and writes `shard.json` beside its pack: what the merge needs
//! to refuse shards that do not belong together and to find every figure.

use super::ExitStatus;
use crate::cli::{MergeArgs, CAUTION};
use crate::error::UsageError;
use crate::report::html::RenderedFigure;
use crate::report::FigureSet;
use crate::rules::result::{Results, Tool, Verdict};
use anyhow::Context;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::path::Path;

/// The manifest's file name in a shard pack.
pub const MANIFEST: &str = "shard.json";

/// A figure of a test as the merge rebuilds it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FigureEntry {
    pub quantity: String,
    pub title: String,
    pub files: Vec<String>,
}

/// `shard.json`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    pub schema_version: u32,
    pub tool: Tool,
    /// The plan's SHA-256.
    pub plan_sha256: String,
    /// Every rule set and validation rule of the run: (path, SHA-256).
    pub inputs: Vec<(String, String)>,
    /// K and N.
    pub shard: [usize; 2],
    /// Every test of the plan, in plan order.
    pub plan_tests: Vec<String>,
    /// The tests of this shard.
    pub tests: Vec<String>,
    pub figures: BTreeMap<String, Vec<FigureEntry>>,
}

/// `K/N` from the option, or from the scheduler's environment for `auto`.
pub fn parse_spec(
    spec: &str,
    env: &dyn Fn(&str) -> Option<String>,
) -> Result<(usize, usize), UsageError> {
    let bad = |why: &str| {
        UsageError(format!(
            "--shard {}: {why}; give K/N with 1 ≤ K ≤ N (e.g. 2/8) or auto",
            crate::text::line(spec)
        ))
    };
    let num = |s: &str| s.trim().parse::<usize>().ok();
    let (k, n) = if spec == "auto" {
        if let (Some(id), Some(count)) = (env("SLURM_ARRAY_TASK_ID"), env("SLURM_ARRAY_TASK_COUNT"))
        {
            let min = env("SLURM_ARRAY_TASK_MIN")
                .and_then(|m| num(&m))
                .unwrap_or(0);
            let id = num(&id).ok_or_else(|| bad("SLURM_ARRAY_TASK_ID is not a number"))?;
            let count = num(&count).ok_or_else(|| bad("SLURM_ARRAY_TASK_COUNT is not a number"))?;
            (
                id.checked_sub(min)
                    .ok_or_else(|| bad("SLURM_ARRAY_TASK_ID is below SLURM_ARRAY_TASK_MIN"))?
                    + 1,
                count,
            )
        } else if let (Some(i), Some(count)) = (env("JOB_COMPLETION_INDEX"), env("HOLDFAST_SHARDS"))
        {
            let i = num(&i).ok_or_else(|| bad("JOB_COMPLETION_INDEX is not a number"))?;
            let count = num(&count).ok_or_else(|| bad("HOLDFAST_SHARDS is not a number"))?;
            (i + 1, count)
        } else {
            return Err(bad(
                "no array index in the environment (SLURM_ARRAY_TASK_ID and SLURM_ARRAY_TASK_COUNT, or JOB_COMPLETION_INDEX and HOLDFAST_SHARDS)",
            ));
        }
    } else {
        let (k, n) = spec.split_once('/').ok_or_else(|| bad("expected K/N"))?;
        (
            num(k).ok_or_else(|| bad("K is not a number"))?,
            num(n).ok_or_else(|| bad("N is not a number"))?,
        )
    };
    if !(n >= 1 && (1..=n).contains(&k)) {
        return Err(bad("K must be from 1 to N"));
    }
    Ok((k, n))
}

/// Whether the test at plan position `index` belongs to shard `k` of `n`.
pub fn in_shard(index: usize, (k, n): (usize, usize)) -> bool {
    index % n == k - 1
}

/// The manifest of a shard run.
pub fn manifest(
    results: &Results,
    inputs: Vec<(String, String)>,
    shard: (usize, usize),
    plan_tests: Vec<String>,
    figures: &FigureSet,
) -> Manifest {
    Manifest {
        schema_version: 1,
        tool: results.tool.clone(),
        plan_sha256: results
            .plan
            .as_ref()
            .map(|p| p.sha256.clone())
            .unwrap_or_default(),
        inputs,
        shard: [shard.0, shard.1],
        plan_tests,
        tests: results.tests.iter().map(|t| t.id.clone()).collect(),
        figures: figures
            .iter()
            .map(|(id, f)| {
                (
                    id.clone(),
                    f.iter()
                        .map(|x| FigureEntry {
                            quantity: x.quantity.clone(),
                            title: x.title.clone(),
                            files: x.files.clone(),
                        })
                        .collect(),
                )
            })
            .collect(),
    }
}

fn read_json<T: serde::de::DeserializeOwned>(path: &Path) -> anyhow::Result<T> {
    let text = std::fs::read_to_string(path).with_context(|| {
        format!(
            "reading {} (is this a shard pack of `check --shard`?)",
            path.display()
        )
    })?;
    serde_json::from_str(&text).with_context(|| format!("reading {}", path.display()))
}

/// Copies every file of `from` (one level of folders) into `to`, never over
/// an existing file.
fn copy_tree(from: &Path, to: &Path) -> anyhow::Result<()> {
    if !from.is_dir() {
        return Ok(());
    }
    std::fs::create_dir_all(to).with_context(|| format!("creating {}", to.display()))?;
    for e in std::fs::read_dir(from).with_context(|| format!("reading {}", from.display()))? {
        let e = e?;
        let (src, dst) = (e.path(), to.join(e.file_name()));
        let meta = std::fs::symlink_metadata(&src)?;
        if meta.is_dir() {
            copy_tree(&src, &dst)?;
        } else if meta.is_file() && !dst.exists() {
            std::fs::copy(&src, &dst).with_context(|| format!("copying {}", src.display()))?;
        }
    }
    Ok(())
}

/// Checks that the shards belong together and are complete.
fn check_shards(shards: &[(std::path::PathBuf, Manifest)]) -> Result<(), UsageError> {
    let (p0, m0) = &shards[0];
    let mut problems = Vec::new();
    for (p, m) in &shards[1..] {
        let other =
            |what: &str| format!("{} is a shard of {what} than {}", p.display(), p0.display());
        if m.plan_sha256 != m0.plan_sha256 || m.plan_tests != m0.plan_tests {
            problems.push(other("another plan"));
        }
        if m.inputs != m0.inputs {
            problems.push(other("another rule set or validation rule"));
        }
        if m.tool != m0.tool {
            problems.push(other("another holdfast version"));
        }
        if m.shard[1] != m0.shard[1] {
            problems.push(other(&format!(
                "{} shards, not {}",
                m.shard[1], m0.shard[1]
            )));
        }
    }
    let n = m0.shard[1];
    let mut seen = vec![0usize; n + 1];
    for (_, m) in shards {
        if m.shard[0] <= n {
            seen[m.shard[0]] += 1;
        }
    }
    let missing: Vec<String> = (1..=n)
        .filter(|k| seen[*k] == 0)
        .map(|k| format!("{k}/{n}"))
        .collect();
    let twice: Vec<String> = (1..=n)
        .filter(|k| seen[*k] > 1)
        .map(|k| format!("{k}/{n}"))
        .collect();
    if !missing.is_empty() {
        let tests: Vec<&str> = m0
            .plan_tests
            .iter()
            .enumerate()
            .filter(|(i, _)| {
                missing
                    .iter()
                    .any(|s| s.starts_with(&format!("{}/", i % n + 1)))
            })
            .map(|(_, id)| id.as_str())
            .collect();
        problems.push(format!(
            "missing shard(s) {} (their tests: {})",
            missing.join(", "),
            crate::text::excerpt(&tests.join(", "), 300)
        ));
    }
    if !twice.is_empty() {
        problems.push(format!("shard(s) given twice: {}", twice.join(", ")));
    }
    if problems.is_empty() {
        Ok(())
    } else {
        Err(UsageError(problems.join("; ")))
    }
}

pub fn merge(args: &MergeArgs) -> anyhow::Result<ExitStatus> {
    let mut shards = Vec::new();
    for d in &args.shards {
        let m: Manifest = read_json(&d.join(MANIFEST))?;
        shards.push((d.clone(), m));
    }
    check_shards(&shards)?;
    let mut parts: Vec<Results> = Vec::new();
    for (d, _) in &shards {
        parts.push(read_json(&d.join("results.json"))?);
    }
    let plan_tests = shards[0].1.plan_tests.clone();
    let mut merged = parts[0].clone();
    let all: Vec<&crate::rules::result::TestResult> = parts.iter().flat_map(|r| &r.tests).collect();
    let mut tests = Vec::new();
    for id in &plan_tests {
        let t = all.iter().find(|t| t.id == *id).ok_or_else(|| {
            UsageError(format!(
                "test {} is in no shard's results",
                crate::text::line(id)
            ))
        })?;
        tests.push((*t).clone());
    }
    merged.tests = tests;
    merged.verdict = Verdict::combine(merged.tests.iter().map(|t| t.verdict));
    merged.generated_utc =
        Some(chrono::Utc::now().to_rfc3339_opts(chrono::SecondsFormat::Secs, true));
    merged.command_line = Some(crate::cli::command_line());
    let pack = crate::report::pack::PackWriter::begin(&args.out, &args.shards)?;
    for (d, _) in &shards {
        for sub in ["plots", "validation", "rules"] {
            copy_tree(&d.join(sub), &pack.dir().join(sub))?;
        }
    }
    let plots = pack.dir().join("plots");
    let mut figures = FigureSet::new();
    for (_, m) in &shards {
        for (id, fs) in &m.figures {
            figures.insert(
                id.clone(),
                fs.iter()
                    .map(|f| RenderedFigure {
                        quantity: f.quantity.clone(),
                        title: f.title.clone(),
                        svg: String::new(),
                        svg_path: plots.join(f.files.first().map(String::as_str).unwrap_or("")),
                        files: f.files.clone(),
                    })
                    .collect(),
            );
        }
    }
    for r in crate::report::REPORTERS {
        r.write(&merged, &figures, &pack)?;
    }
    pack.commit()?;
    if !args.quiet {
        use std::io::Write;
        let stdout = std::io::stdout();
        let mut out = stdout.lock();
        write!(
            out,
            "{}",
            crate::report::table::render(&merged, false, false)
        )?;
        writeln!(
            out,
            "\nMerged {} shards into {}\n{CAUTION}",
            shards.len(),
            crate::text::line(&args.out.display().to_string())
        )?;
    }
    Ok(if merged.verdict == Verdict::Pass {
        ExitStatus::Success
    } else {
        ExitStatus::NotPassed
    })
}
