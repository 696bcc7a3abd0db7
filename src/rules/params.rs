//! Rule-set parameters: values a grid code leaves to the network operator
//! within published ranges. A rule set declares them in a `parameters` block
//!
//! ```yaml
//! parameters:
//!   - { name: t_clear, unit: s, range: [0.14, 0.25], default: 0.15, description: "..." }
//!   - { name: t_rec1, unit: s, range: ["$t_clear", 0.45], default: 0.15 }
//! ```
//!
//! and refers to them as `"$name"` wherever a number is expected. A plan's
//! `parameters` map or `--set name=value` chooses values; a value outside
//! its range is an error that cites the range and the rule set's source.
//! Range ends may refer to other parameters.

use crate::error::InputError;
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};
use std::collections::{BTreeMap, HashMap};
use std::path::Path;

/// A number, or `"$name"` of a parameter.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(untagged)]
pub enum NumOrRef {
    Num(f64),
    Ref(String),
}

#[cfg(test)]
mod tests {
    use super::*;

    fn r(name: &str, value: f64) -> Resolved {
        Resolved {
            name: name.into(),
            unit: "s".into(),
            value,
            range: (0.0, 1.0),
            origin: "default".into(),
            description: String::new(),
        }
    }

    #[test]
    fn substitution_keeps_lines_and_skips_comments() {
        let v = [r("a", 0.15), r("b", 2.0)];
        let text = "checks:\n  - { x: \"$a\", y: '$b' } # $c stays\n  - [$a, \"$a\"$b\"]\n";
        let out = substitute(Path::new("t.yaml"), text, &v).unwrap();
        // Hostile adjacent tokens must not panic (quotes are consumed once).
        assert_eq!(
            out,
            "checks:\n  - { x: 0.15, y: 2.0 } # $c stays\n  - [0.15, 0.152.0]\n"
        );
        let e = substitute(Path::new("t.yaml"), "x: $nope\n", &v).unwrap_err();
        assert_eq!((e[0].line, e[0].column), (Some(1), Some(4)));
    }
}

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ParameterSpec {
    /// Identifier used as `"$name"` in the checks.
    pub name: String,
    /// Unit, e.g. `pu` or `s`.
    pub unit: String,
    /// Allowed range `[min, max]` as published; ends may be `"$other"`.
    pub range: [NumOrRef; 2],
    /// Value used when neither the plan nor `--set` chooses one.
    pub default: NumOrRef,
    #[serde(default)]
    pub description: String,
}

/// A parameter with its value for this run.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Resolved {
    pub name: String,
    pub unit: String,
    pub value: f64,
    pub range: (f64, f64),
    /// `default`, `plan` or `--set`.
    pub origin: String,
    pub description: String,
}

/// Chosen values and where they came from (`plan`, `--set`).
pub type Choices = BTreeMap<String, (f64, String)>;

fn ident_ok(s: &str) -> bool {
    let mut c = s.chars();
    matches!(c.next(), Some(x) if x.is_ascii_alphabetic() || x == '_')
        && c.all(|x| x.is_ascii_alphanumeric() || x == '_')
}

/// Resolves the declared parameters with the chosen values.
pub fn resolve(
    path: &Path,
    text: &str,
    specs: &[ParameterSpec],
    source: &str,
    choices: &Choices,
) -> Result<Vec<Resolved>, Vec<InputError>> {
    let at = Locator { path, text };
    let errs = declaration_problems(&at, specs, choices);
    if !errs.is_empty() {
        return Err(errs);
    }
    let index: HashMap<&str, usize> = specs
        .iter()
        .enumerate()
        .map(|(i, p)| (p.name.as_str(), i))
        .collect();
    let values = values(&at, specs, choices, &index)?;
    let mut errs = Vec::new();
    let mut out = Vec::new();
    for (i, p) in specs.iter().enumerate() {
        match ranged(&at, i, p, &values, &index, choices, source) {
            Ok(r) => out.push(r),
            Err(e) => errs.push(e),
        }
    }
    if errs.is_empty() {
        Ok(out)
    } else {
        Err(errs)
    }
}

/// Errors located at a key of one parameter declaration.
struct Locator<'a> {
    path: &'a Path,
    text: &'a str,
}

impl Locator<'_> {
    fn at(&self, i: usize, key: &str, msg: String) -> InputError {
        let mut e = InputError::new(self.path, msg).field(format!("parameters[{i}].{key}"));
        if let Some((l, c)) = super::locate::locate(self.text, "parameters", Some(i), key) {
            e = e.line(l).column(c);
        }
        e
    }
}

/// Names that are not identifiers or declared twice, and choices of
/// parameters the rule set does not declare.
fn declaration_problems(
    at: &Locator<'_>,
    specs: &[ParameterSpec],
    choices: &Choices,
) -> Vec<InputError> {
    let mut errs = Vec::new();
    let mut seen = std::collections::HashSet::new();
    for (i, p) in specs.iter().enumerate() {
        if !ident_ok(&p.name) {
            errs.push(at.at(
                i,
                "name",
                format!(
                    "parameter name '{}' must be letters, digits and '_'",
                    p.name
                ),
            ));
        } else if !seen.insert(p.name.clone()) {
            errs.push(at.at(
                i,
                "name",
                format!("parameter '{}' is declared twice", p.name),
            ));
        }
    }
    for name in choices.keys() {
        if !specs.iter().any(|p| &p.name == name) {
            let names: Vec<&str> = specs.iter().map(|p| p.name.as_str()).collect();
            errs.push(
                InputError::new(at.path, format!("the rule set has no parameter '{name}'")).hint(
                    if names.is_empty() {
                        "this rule set declares no parameters".to_string()
                    } else {
                        format!("its parameters are: {}", names.join(", "))
                    },
                ),
            );
        }
    }
    errs
}

/// The value of a number or `"$parameter"` (`None` while the parameter has
/// no value yet).
fn lookup(
    v: &NumOrRef,
    index: &HashMap<&str, usize>,
    values: &BTreeMap<String, f64>,
) -> Result<Option<f64>, String> {
    match v {
        NumOrRef::Num(x) => Ok(Some(*x)),
        NumOrRef::Ref(r) => {
            let name = r
                .strip_prefix('$')
                .ok_or_else(|| format!("'{r}' is neither a number nor \"$parameter\""))?;
            if !index.contains_key(name) {
                return Err(format!("'{r}' refers to an undeclared parameter"));
            }
            Ok(values.get(name).copied())
        }
    }
}

/// Values: chosen, else default; a default may refer to one other
/// parameter, so each chain of references is followed once (linear in the
/// number of parameters, cycles detected on the way). Parameters in a cycle
/// stay without a value.
fn values(
    at: &Locator<'_>,
    specs: &[ParameterSpec],
    choices: &Choices,
    index: &HashMap<&str, usize>,
) -> Result<BTreeMap<String, f64>, Vec<InputError>> {
    let mut errs = Vec::new();
    let mut values: BTreeMap<String, f64> = BTreeMap::new();
    for (n, (v, _)) in choices {
        values.insert(n.clone(), *v);
    }
    // 0: not yet seen, 1: on the chain being followed, 2: done.
    let mut state = vec![0u8; specs.len()];
    for start in 0..specs.len() {
        let mut chain = Vec::new();
        let mut i = start;
        let value = loop {
            if let Some(v) = values.get(&specs[i].name) {
                break Some(*v);
            }
            if state[i] != 0 {
                break None; // a cycle, or a chain that already failed
            }
            state[i] = 1;
            chain.push(i);
            match &specs[i].default {
                NumOrRef::Num(x) => break Some(*x),
                NumOrRef::Ref(r) => match r.strip_prefix('$').and_then(|n| index.get(n)) {
                    Some(j) => i = *j,
                    None => {
                        errs.push(
                            at.at(
                                i,
                                "default",
                                lookup(&specs[i].default, index, &values)
                                    .err()
                                    .unwrap_or_default(),
                            ),
                        );
                        break None;
                    }
                },
            }
        };
        for k in chain {
            state[k] = 2;
            if let Some(v) = value {
                values.insert(specs[k].name.clone(), v);
            }
        }
    }
    if errs.is_empty() {
        Ok(values)
    } else {
        Err(errs)
    }
}

/// Parameter `i` with its value checked against its range.
fn ranged(
    at: &Locator<'_>,
    i: usize,
    p: &ParameterSpec,
    values: &BTreeMap<String, f64>,
    index: &HashMap<&str, usize>,
    choices: &Choices,
    source: &str,
) -> Result<Resolved, InputError> {
    let Some(value) = values.get(&p.name).copied() else {
        return Err(at.at(
            i,
            "default",
            format!(
                "the default of '{}' refers to parameters in a cycle",
                p.name
            ),
        ));
    };
    let lo = lookup(&p.range[0], index, values);
    let hi = lookup(&p.range[1], index, values);
    let (lo, hi) = match (lo, hi) {
        (Ok(Some(a)), Ok(Some(b))) => (a, b),
        (Err(m), _) | (_, Err(m)) => return Err(at.at(i, "range", m)),
        _ => {
            return Err(at.at(
                i,
                "range",
                "the range refers to a parameter without a value".into(),
            ))
        }
    };
    if !(lo <= hi) {
        return Err(at.at(
            i,
            "range",
            format!("range [{lo}, {hi}] of '{}' is empty", p.name),
        ));
    }
    let origin = choices
        .get(&p.name)
        .map_or("default".to_string(), |c| c.1.clone());
    let eps = 1e-9 * (1.0 + lo.abs().max(hi.abs()));
    if !(value >= lo - eps && value <= hi + eps) {
        let mut e = InputError::new(
            at.path,
            format!(
                "parameter '{}' = {value} {} ({origin}) is outside its allowed range {lo} to {hi} {}",
                p.name, p.unit, p.unit
            ),
        )
        .field(format!("parameters[{i}] ({})", p.name))
        .hint(format!("the range follows the rule set's source: {source}"));
        if origin == "default" {
            if let Some((l, c)) = super::locate::locate(at.text, "parameters", Some(i), "default") {
                e = e.line(l).column(c);
            }
        }
        return Err(e);
    }
    Ok(Resolved {
        name: p.name.clone(),
        unit: p.unit.clone(),
        value,
        range: (lo, hi),
        origin,
        description: p.description.clone(),
    })
}

/// Replaces every `"$name"` / `'$name'` / `$name` of a declared parameter in
/// the rule-set text by its value, outside the `parameters` block and
/// comments. Line numbers stay the same; an unknown `$name` is an error.
pub fn substitute(path: &Path, text: &str, values: &[Resolved]) -> Result<String, Vec<InputError>> {
    let mut out = String::with_capacity(text.len());
    let mut errs = Vec::new();
    let mut in_params = false;
    for (ln, line) in text.split_inclusive('\n').enumerate() {
        if !line.starts_with(' ')
            && !line.starts_with('-')
            && !line.starts_with('#')
            && !line.trim().is_empty()
        {
            in_params = line.starts_with("parameters:");
        }
        if in_params {
            out.push_str(line);
            continue;
        }
        let bytes = line.as_bytes();
        let mut i = 0;
        let mut last = 0;
        let mut in_comment = false;
        while i < bytes.len() {
            let c = bytes[i];
            if c == b'#' && (i == 0 || bytes[i - 1] == b' ' || bytes[i - 1] == b'\t') {
                in_comment = true;
            }
            if !in_comment && c == b'$' {
                let start = i + 1;
                let mut end = start;
                while end < bytes.len()
                    && (bytes[end].is_ascii_alphanumeric() || bytes[end] == b'_')
                {
                    end += 1;
                }
                let name = &line[start..end];
                if !name.is_empty() && ident_ok(name) {
                    // Include surrounding quotes, if any.
                    let q0 = i > 0 && (bytes[i - 1] == b'"' || bytes[i - 1] == b'\'');
                    let q1 = end < bytes.len() && (bytes[end] == b'"' || bytes[end] == b'\'');
                    let (a, b) = if q0 && q1 && bytes[i - 1] == bytes[end] {
                        (i - 1, end + 1)
                    } else {
                        (i, end)
                    };
                    // A quote already consumed by the previous token stays consumed.
                    let a = a.max(last);
                    match values.iter().find(|v| v.name == name) {
                        Some(v) => {
                            out.push_str(&line[last..a]);
                            out.push_str(&format!("{:?}", v.value));
                            last = b;
                        }
                        None => {
                            errs.push(
                                InputError::new(
                                    path,
                                    format!("'${name}' is not a declared parameter"),
                                )
                                .line(ln as u64 + 1)
                                .column(i as u64 + 1)
                                .hint("declare it in the parameters block, or write a number"),
                            );
                        }
                    }
                    i = end;
                    continue;
                }
            }
            i += 1;
        }
        out.push_str(&line[last..]);
    }
    if errs.is_empty() {
        Ok(out)
    } else {
        Err(errs)
    }
}
