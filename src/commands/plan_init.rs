//! `holdfast plan init DIR`: a test plan from a folder of recordings. Each
//! recording is opened as `check` would open it (header only, no samples
//! read), and its test entry says what was found: format, sampling, the
//! channel each key comes from. What holdfast cannot know (the unit's
//! ratings, the rule set) is left as a value to fill in, chosen so that
//! `check` refuses the plan until it is filled in.

use super::ExitStatus;
use crate::cli::PlanInitArgs;
use crate::error::{InputError, UsageError};
use crate::import::{self, ChannelMap, ImportOptions};
use crate::model::RecordingInfo;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// Folders deeper than this below DIR are not searched.
const MAX_DEPTH: usize = 8;

/// Recordings below `dir`, in path order: hidden entries, evidence packs
/// and a COMTRADE `.dat` beside its `.cfg` left out.
fn recordings(dir: &Path, depth: usize, out: &mut Vec<PathBuf>) -> std::io::Result<()> {
    let mut entries: Vec<PathBuf> = std::fs::read_dir(dir)?
        .filter_map(|e| e.ok())
        .filter(|e| !e.file_name().to_string_lossy().starts_with('.'))
        .map(|e| e.path())
        .collect();
    entries.sort();
    for p in entries {
        let Ok(meta) = std::fs::symlink_metadata(&p) else {
            continue;
        };
        if meta.is_dir() {
            if depth < MAX_DEPTH && !p.join(crate::report::pack::MARKER).exists() {
                recordings(&p, depth + 1, out)?;
            }
        } else if meta.is_file() && p.extension().is_some() && import::is_own_recording(&p) {
            out.push(p);
        }
    }
    Ok(())
}

/// A YAML string (a JSON string is a valid double-quoted YAML scalar).
fn quoted(s: &str) -> String {
    serde_json::to_string(s).unwrap_or_else(|_| "\"\"".into())
}

/// What opening a recording showed.
enum Found {
    Mapped(RecordingInfo),
    /// Opened only in part: the channels could not all be mapped.
    Partial(RecordingInfo, String),
    Unreadable(String),
}

fn open(path: &Path) -> Found {
    let opts = ImportOptions {
        threads: 1,
        ..Default::default()
    };
    // Each line of the message as its own comment line.
    let msg = |e: &InputError| {
        e.to_string()
            .lines()
            .map(|l| crate::text::line(l.trim()).into_owned())
            .collect::<Vec<_>>()
            .join("\n  #   ")
    };
    match import::open(path, &ChannelMap::default(), &opts) {
        Ok(s) => Found::Mapped(s.info().clone()),
        Err(e) => {
            let partial = ImportOptions {
                partial: true,
                ..opts
            };
            match import::open(path, &ChannelMap::default(), &partial) {
                Ok(s) => Found::Partial(s.info().clone(), msg(&e)),
                Err(_) => Found::Unreadable(msg(&e)),
            }
        }
    }
}

/// The facts of a recording as comment lines of its test entry.
fn describe(info: &RecordingInfo, out: &mut String) {
    // Sample counts of CSV files are known only once they are read.
    let extent = if info.samples > 0 && info.duration_s.is_finite() {
        format!(", {} samples, {:.3} s", info.samples, info.duration_s)
    } else {
        String::new()
    };
    let _ = writeln!(
        out,
        "    # {} {}, {:.3} Hz{extent}",
        info.format.name(),
        info.kind.name().replace('_', "-"),
        info.sample_rate_hz,
    );
    let mapped: Vec<String> = info
        .channels
        .iter()
        .map(|c| format!("{} <- {} ({})", c.key.name(), c.source, c.unit))
        .collect();
    if !mapped.is_empty() {
        let _ = writeln!(
            out,
            "    # channels: {}",
            crate::text::line(&mapped.join(", "))
        );
    }
    if !info.unmapped.is_empty() {
        let _ = writeln!(
            out,
            "    # not used: {}",
            crate::text::line(&info.unmapped.join(", "))
        );
    }
}

/// A path as the plan names it: relative to the plan's folder where the
/// recording is inside it.
fn relative(p: &Path, plan_dir: &Path) -> String {
    let abs = |x: &Path| std::fs::canonicalize(x).unwrap_or_else(|_| x.to_path_buf());
    let (p, base) = (abs(p), abs(plan_dir));
    match p.strip_prefix(&base) {
        Ok(r) => crate::files::normalised(r),
        Err(_) => crate::files::normalised(&p),
    }
}

/// The plan's text.
fn plan_text(dir: &Path, out: &Path, files: &[PathBuf]) -> (String, usize) {
    let plan_dir = out
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let found: Vec<Found> = files.iter().map(|f| open(f)).collect();
    let freqs: Vec<f64> = found
        .iter()
        .filter_map(|f| match f {
            Found::Mapped(i) | Found::Partial(i, _) => i.line_frequency_hz,
            Found::Unreadable(_) => None,
        })
        .collect();
    let frequency = match freqs.first() {
        Some(f) if freqs.len() == found.len() && freqs.iter().all(|g| g == f) => {
            format!("{f}            # the line frequency the recordings state")
        }
        _ => "50             # FILL IN: nominal frequency, Hz (50 or 60)".into(),
    };
    let mut t = String::new();
    let _ = writeln!(
        t,
        "# Test plan written by `holdfast plan init` from {} ({} recordings).\n\
         # Fill in every value marked FILL IN (check refuses the plan until then),\n\
         # then run: holdfast check {}",
        crate::text::line(&dir.display().to_string()),
        files.len(),
        crate::text::line(&out.display().to_string())
    );
    let _ = writeln!(
        t,
        "unit:\n  name: \"FILL IN: unit name\"\n  rated_voltage_kv: 0     # FILL IN: rated line-to-line RMS voltage, kV\n  rated_power_mva: 0      # FILL IN: rated apparent power, MVA\n  frequency_hz: {frequency}\n\
         rules: FILL-IN.yaml       # FILL IN: a rule set file, relative to this plan (`holdfast rules list`, `holdfast rules export ID`)"
    );
    let any = found
        .iter()
        .any(|f| matches!(f, Found::Mapped(_) | Found::Partial(..)));
    let _ = writeln!(
        t,
        "{}",
        if any {
            "tests:"
        } else {
            "tests: []                 # FILL IN: no recording could be opened as it is (see below)"
        }
    );
    let mut ids = std::collections::HashSet::new();
    let mut ready = 0;
    for (path, f) in files.iter().zip(&found) {
        let stem = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "test".into());
        let mut id = stem.clone();
        let mut n = 1;
        while !ids.insert(id.clone()) {
            n += 1;
            id = format!("{stem}-{n}");
        }
        let file = quoted(&relative(path, plan_dir));
        match f {
            Found::Mapped(info) => {
                ready += 1;
                let _ = writeln!(t, "  - id: {}\n    file: {file}", quoted(&id));
                describe(info, &mut t);
            }
            Found::Partial(info, why) => {
                let _ = writeln!(
                    t,
                    "  - id: {}\n    file: {file}\n    # FILL IN: map the channels (a `channels:` block; docs/rules.md, Test plan):\n  #   {}",
                    quoted(&id),
                    why
                );
                describe(info, &mut t);
            }
            Found::Unreadable(why) => {
                let _ = writeln!(
                    t,
                    "  # {} could not be read:\n  #   {}\n  # - id: {}\n  #   file: {file}",
                    crate::text::line(&path.display().to_string()),
                    why,
                    quoted(&id)
                );
            }
        }
    }
    (t, ready)
}

pub fn run(args: &PlanInitArgs) -> anyhow::Result<ExitStatus> {
    let dir = &args.dir;
    if !dir.is_dir() {
        return Err(UsageError(format!(
            "{} is not a folder; give the folder that holds the recordings",
            crate::text::line(&dir.display().to_string())
        ))
        .into());
    }
    let out = args.out.clone().unwrap_or_else(|| dir.join("plan.yaml"));
    if out.exists() && !args.force {
        return Err(UsageError(format!(
            "{} exists; give another --out, or --force to replace it",
            crate::text::line(&out.display().to_string())
        ))
        .into());
    }
    let mut files = Vec::new();
    recordings(dir, 0, &mut files)
        .map_err(|e| UsageError(format!("reading {}: {e}", dir.display())))?;
    files.retain(|f| f != &out);
    if files.is_empty() {
        return Err(UsageError(format!(
            "{} holds no recordings (.csv, .txt, .tsv, .cfg, .cff)",
            crate::text::line(&dir.display().to_string())
        ))
        .into());
    }
    let (text, ready) = plan_text(dir, &out, &files);
    // The plan must parse as a plan (its ratings are checked when it is used).
    crate::rules::yaml::parse::<crate::plan::Plan>(&out, &text)
        .map_err(|e| anyhow::anyhow!("internal error: the written plan does not parse: {e}"))?;
    std::fs::write(&out, &text)
        .map_err(|e| UsageError(format!("writing {}: {e}", out.display())))?;
    println!(
        "wrote {}: {} tests from {} recordings{}; fill in the values marked FILL IN, then run holdfast check {}",
        crate::text::line(&out.display().to_string()),
        ready,
        files.len(),
        if ready < files.len() {
            format!(" ({} need their channels mapped or could not be read: see the comments)", files.len() - ready)
        } else {
            String::new()
        },
        crate::text::line(&out.display().to_string())
    );
    Ok(ExitStatus::Success)
}
