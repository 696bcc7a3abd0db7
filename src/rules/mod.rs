//! Rule sets and the checks that turn an analysed recording into verdicts.
//!
//! * [`spec`] – the rule-set format (serde types) and its validation;
//! * [`zone`] – envelopes and duration tables (ride-through zone);
//! * [`connection`] – did the unit stay connected outside disturbances;
//! * [`checks`] – the check types, one module each (envelope, duration
//!   table, reactive current, active power recovery);
//! * [`realisation`] – did the recording apply the planned test;
//! * [`engine`] – applies a rule set to one recording;
//! * [`result`] – the neutral result type every reporter renders.

pub mod check;
pub mod checks;
pub mod connection;
pub mod engine;
pub mod library;
pub mod locate;
pub mod params;
pub mod realisation;
pub mod registry;
pub mod result;
pub mod schema;
pub mod spec;
pub mod yaml;
pub mod zone;

use crate::error::{InputError, InputErrors};
use spec::RuleSet;
use std::path::{Path, PathBuf};

/// A rule set as loaded from a file, with what traceability needs.
#[derive(Clone, Debug)]
pub struct LoadedRules {
    pub rules: RuleSet,
    pub path: PathBuf,
    pub sha256: String,
    /// Parameter values used for this run.
    pub parameters: Vec<params::Resolved>,
    /// The text as read (the evidence pack keeps a copy).
    pub text: String,
}

/// Loads and validates a rule set with its default parameter values.
pub fn load(path: &Path) -> Result<LoadedRules, InputErrors> {
    load_with(path, &params::Choices::new())
}

/// Loads and validates a rule set with chosen parameter values; all value
/// problems are reported at once.
pub fn load_with(path: &Path, choices: &params::Choices) -> Result<LoadedRules, InputErrors> {
    let (raw, sha256) = yaml::read_text_hashed(path, "rule set")?;
    load_text(path, &raw, sha256, choices)
}

/// Loads a rule set once with parameter values from a plan and from the
/// command line (`--set`, which wins); command-line values apply to the
/// names this rule set declares. Returns the command-line names it used.
pub fn load_choosing(
    path: &Path,
    plan: &std::collections::BTreeMap<String, f64>,
    cli: &std::collections::BTreeMap<String, f64>,
) -> Result<(LoadedRules, Vec<String>), InputErrors> {
    let (raw, sha256) = yaml::read_text_hashed(path, "rule set")?;
    load_text_choosing(path, &raw, sha256, plan, cli)
}

/// [`load_choosing`] from the text (`path` names it in messages).
pub fn load_text_choosing(
    path: &Path,
    raw: &str,
    sha256: String,
    plan: &std::collections::BTreeMap<String, f64>,
    cli: &std::collections::BTreeMap<String, f64>,
) -> Result<(LoadedRules, Vec<String>), InputErrors> {
    let mut used = Vec::new();
    let rules = load_text_with(path, raw, sha256, |declared| {
        let mut choices: params::Choices = plan
            .iter()
            .map(|(k, v)| (k.clone(), (*v, "plan".to_string())))
            .collect();
        for (k, v) in cli {
            if declared.iter().any(|d| d == k) {
                choices.insert(k.clone(), (*v, "--set".to_string()));
                used.push(k.clone());
            }
        }
        choices
    })?;
    Ok((rules, used))
}

/// Loads a rule set from its text (`path` names it in messages).
pub fn load_text(
    path: &Path,
    raw: &str,
    sha256: String,
    choices: &params::Choices,
) -> Result<LoadedRules, InputErrors> {
    load_text_with(path, raw, sha256, |_| choices.clone())
}

/// Loads a rule set from its text; `choose` gets the declared parameter
/// names and returns the chosen values.
fn load_text_with(
    path: &Path,
    raw: &str,
    sha256: String,
    choose: impl FnOnce(&[String]) -> params::Choices,
) -> Result<LoadedRules, InputErrors> {
    let raw = raw.strip_prefix('\u{feff}').unwrap_or(raw);
    // Parameters first: their values replace "$name" in the checks.
    #[derive(serde::Deserialize)]
    struct Head {
        #[serde(default)]
        parameters: Vec<params::ParameterSpec>,
        #[serde(default)]
        source: String,
    }
    let head: Head = yaml::parse(path, raw)?;
    let declared: Vec<String> = head.parameters.iter().map(|p| p.name.clone()).collect();
    let choices = choose(&declared);
    let resolved = params::resolve(path, raw, &head.parameters, &head.source, &choices)
        .map_err(InputErrors)?;
    let text = params::substitute(path, raw, &resolved).map_err(InputErrors)?;
    let rules: RuleSet = match yaml::parse(path, &text) {
        Ok(r) => r,
        Err(first) => {
            // The parser stops at the first problem; look at each check on
            // its own to report every broken check at once, each placed at
            // its key.
            let per_check = check_errors(path, &text);
            return Err(InputErrors(if per_check.is_empty() {
                vec![first]
            } else {
                per_check
            }));
        }
    };
    let problems = rules.problems();
    if !problems.is_empty() {
        return Err(InputErrors(
            problems
                .into_iter()
                .map(|p| {
                    let mut e = InputError::new(path, p.message).field(match p.check {
                        Some(i) => format!("checks[{i}] ({}).{}", rules.checks[i].id(), p.key),
                        None => p.key.to_string(),
                    });
                    if let Some((l, c)) = locate::locate(&text, "checks", p.check, p.key) {
                        e = e.line(l).column(c);
                    }
                    e
                })
                .collect(),
        ));
    }
    Ok(LoadedRules {
        rules,
        parameters: resolved,
        path: path.to_path_buf(),
        sha256,
        text: raw.to_string(),
    })
}

/// Problems of individual checks, each placed at its key where the message names one.
fn check_errors(path: &Path, text: &str) -> Vec<InputError> {
    #[derive(serde::Deserialize)]
    struct Loose {
        #[serde(default)]
        checks: Vec<serde_json::Value>,
    }
    let Some(loose) = yaml::parse_tree::<Loose>(text) else {
        return Vec::new();
    };
    let quoted = |msg: &str, after: &str| -> Option<String> {
        let i = msg.find(after)? + after.len();
        let rest = &msg[i..];
        let end = rest.find('`')?;
        Some(rest[..end].to_string())
    };
    let mut out = Vec::new();
    for (i, v) in loose.checks.into_iter().enumerate() {
        let id = v
            .get("id")
            .and_then(|x| x.as_str())
            .unwrap_or("?")
            .to_string();
        if let Err(e) = serde_json::from_value::<spec::CheckSpec>(v.clone()) {
            let msg = e.to_string();
            let key = quoted(&msg, "unknown field `")
                .or_else(|| msg.contains("unknown variant").then(|| "type".to_string()))
                .or_else(|| culprit(&v, &msg));
            let mut err = InputError::new(path, msg.clone())
                .field(format!("checks[{i}] ({id})"))
                .hint("see docs/rules.md for the fields of each check type");
            let place = key
                .as_deref()
                .and_then(|k| locate::locate(text, "checks", Some(i), k))
                .or_else(|| locate::locate(text, "checks", Some(i), "\u{0}"));
            if let Some((l, c)) = place {
                err = err.line(l).column(c);
            }
            out.push(err);
        }
    }
    out
}

/// The key whose value causes `msg`: without it the error changes.
fn culprit(v: &serde_json::Value, msg: &str) -> Option<String> {
    let map = v.as_object()?;
    for key in map.keys() {
        if key == "type" || key == "id" {
            continue;
        }
        let mut m = map.clone();
        m.remove(key);
        match serde_json::from_value::<spec::CheckSpec>(serde_json::Value::Object(m)) {
            Ok(_) => return Some(key.to_string()),
            Err(e) if e.to_string() != msg => return Some(key.to_string()),
            Err(_) => {}
        }
    }
    None
}
