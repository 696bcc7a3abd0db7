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
pub mod ride;
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
            // The parser stops at the first problem; look at each part on
            // its own to report every problem at once, each placed at its key.
            let all = every_problem(path, &text, head.parameters);
            return Err(InputErrors(if all.is_empty() { vec![first] } else { all }));
        }
    };
    let problems = value_problems(
        path,
        &text,
        &rules,
        &(0..rules.checks.len()).collect::<Vec<_>>(),
    );
    if !problems.is_empty() {
        return Err(InputErrors(problems));
    }
    Ok(LoadedRules {
        rules,
        parameters: resolved,
        path: path.to_path_buf(),
        sha256,
        text: raw.to_string(),
    })
}

/// The value problems of a rule set that parsed, placed at their keys;
/// `index[k]` is the position in the file of `rules.checks[k]`.
fn value_problems(path: &Path, text: &str, rules: &RuleSet, index: &[usize]) -> Vec<InputError> {
    rules
        .problems()
        .into_iter()
        .map(|p| {
            let at = p.check.map(|k| index[k]);
            let mut e = InputError::new(path, p.message).field(match p.check {
                Some(k) => format!("checks[{}] ({}).{}", index[k], rules.checks[k].id(), p.key),
                None => p.key.to_string(),
            });
            if let Some((l, c)) = locate::locate(text, "checks", at, p.key) {
                e = e.line(l).column(c);
            }
            e
        })
        .collect()
}

/// The field names of a schema object (the keys a format accepts).
fn known_keys(schema: &schemars::Schema) -> Vec<String> {
    schema
        .get("properties")
        .and_then(|p| p.as_object())
        .map(|m| m.keys().cloned().collect())
        .unwrap_or_default()
}

/// Keys of `map` that the format does not know, as errors at their place.
fn unknown_keys(
    path: &Path,
    text: &str,
    map: &serde_json::Map<String, serde_json::Value>,
    known: &[String],
    within: &str,
) -> Vec<InputError> {
    let expected = known
        .iter()
        .map(|k| format!("`{k}`"))
        .collect::<Vec<_>>()
        .join(", ");
    map.keys()
        .filter(|k| !known.contains(k))
        .map(|k| {
            let msg = crate::text::with_suggestion(format!(
                "unknown field `{k}`, expected one of {expected}"
            ));
            let mut e = InputError::new(path, msg)
                .hint("see docs/rules.md for the format, or run `holdfast rules schema`");
            if !within.is_empty() {
                e = e.field(within.to_string());
            }
            if let Some((l, c)) = locate::locate(text, "checks", None, k) {
                e = e.line(l).column(c);
            }
            e
        })
        .collect()
}

/// Every problem of a rule set that does not parse as a whole: unknown
/// top-level and `disturbance` keys, each check that does not parse, and
/// the value problems of all that does (the checks that parse, with the
/// top-level values as far as they parse).
fn every_problem(
    path: &Path,
    text: &str,
    parameters: Vec<params::ParameterSpec>,
) -> Vec<InputError> {
    let Some(serde_json::Value::Object(top)) = yaml::parse_tree::<serde_json::Value>(text) else {
        return Vec::new();
    };
    let mut out = unknown_keys(
        path,
        text,
        &top,
        &known_keys(&schemars::schema_for!(RuleSet)),
        "",
    );
    let disturbance = match top.get("disturbance") {
        Some(serde_json::Value::Object(d)) => {
            out.extend(unknown_keys(
                path,
                text,
                d,
                &known_keys(&schemars::schema_for!(spec::DisturbanceSpec)),
                "disturbance",
            ));
            let known = known_keys(&schemars::schema_for!(spec::DisturbanceSpec));
            let kept: serde_json::Map<_, _> = d
                .iter()
                .filter(|(k, _)| known.contains(k))
                .map(|(k, v)| (k.clone(), v.clone()))
                .collect();
            serde_json::from_value(serde_json::Value::Object(kept)).ok()
        }
        _ => None,
    };
    let (broken, parsed) = check_errors(path, text);
    let any_broken = !broken.is_empty();
    out.extend(broken);
    let text_of = |k: &str| {
        top.get(k)
            .and_then(|v| v.as_str())
            .unwrap_or("?")
            .to_string()
    };
    let rules = RuleSet {
        id: text_of("id"),
        title: text_of("title"),
        source: text_of("source"),
        parameters,
        applicable_voltage: top
            .get("applicable_voltage")
            .and_then(|v| serde_json::from_value(v.clone()).ok())
            .unwrap_or_default(),
        disturbance: disturbance.unwrap_or_default(),
        checks: parsed.iter().map(|(_, c)| c.clone()).collect(),
    };
    let index: Vec<usize> = parsed.iter().map(|(i, _)| *i).collect();
    out.extend(
        value_problems(path, text, &rules, &index)
            .into_iter()
            // Not "no checks" when the checks are there but broken.
            .filter(|e| !(any_broken && e.message.contains("has no checks"))),
    );
    // In the order of the file.
    out.sort_by_key(|e| (e.line.unwrap_or(u64::MAX), e.column.unwrap_or(0)));
    out
}

/// Problems of individual checks, each placed at its key where the message names one.
/// Also returns the checks that parse, with their position in the file.
fn check_errors(path: &Path, text: &str) -> (Vec<InputError>, Vec<(usize, spec::CheckSpec)>) {
    #[derive(serde::Deserialize)]
    struct Loose {
        #[serde(default)]
        checks: Vec<serde_json::Value>,
    }
    let Some(loose) = yaml::parse_tree::<Loose>(text) else {
        return (Vec::new(), Vec::new());
    };
    let quoted = |msg: &str, after: &str| -> Option<String> {
        let i = msg.find(after)? + after.len();
        let rest = &msg[i..];
        let end = rest.find('`')?;
        Some(rest[..end].to_string())
    };
    let mut out = Vec::new();
    let mut parsed = Vec::new();
    for (i, v) in loose.checks.into_iter().enumerate() {
        let id = v
            .get("id")
            .and_then(|x| x.as_str())
            .unwrap_or("?")
            .to_string();
        match serde_json::from_value::<spec::CheckSpec>(v.clone()) {
            Ok(c) => parsed.push((i, c)),
            Err(e) => {
                let msg = crate::text::with_suggestion(e.to_string());
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
    }
    (out, parsed)
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
