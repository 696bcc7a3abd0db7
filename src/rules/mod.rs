//! Rule sets and the checks that turn an analysed recording into verdicts.
//!
//! * [`spec`] – the rule-set format (serde types) and its validation;
//! * [`zone`] – envelopes and duration tables (ride-through zone);
//! * [`reactive`] – reactive current injection;
//! * [`recovery`] – active power recovery;
//! * [`realisation`] – did the recording apply the planned test;
//! * [`engine`] – applies a rule set to one recording;
//! * [`result`] – the neutral result type every reporter renders.

pub mod engine;
pub mod locate;
pub mod reactive;
pub mod realisation;
pub mod recovery;
pub mod result;
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
}

/// Loads and validates a rule set; all value problems are reported at once.
pub fn load(path: &Path) -> Result<LoadedRules, InputErrors> {
    let text = yaml::read_text(path, "rule set")?;
    let rules: RuleSet = yaml::parse(path, &text)?;
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
        path: path.to_path_buf(),
        sha256: crate::digest::sha256_file(path)
            .map_err(|e| InputError::new(path, format!("cannot read rule set: {e}")))?,
    })
}
