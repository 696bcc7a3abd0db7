//! The validation rule format (YAML, docs/validation.md): windows and the
//! ME/MAE/MXE limits per quantity and window, with parameters as in rule
//! sets (`"$name"` within published ranges).

use crate::analysis::events::{default, DetectionSettings};
use crate::analysis::Quantity;
use crate::error::{InputError, InputErrors};
use crate::rules::{locate, params, yaml};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// A compared quantity (positive sequence unless named otherwise).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum ValidatedQuantity {
    /// Positive-sequence voltage magnitude.
    V1,
    /// Active power.
    P,
    /// Reactive power.
    Q,
    /// Positive-sequence active current.
    Ip,
    /// Positive-sequence reactive current.
    Iq,
    /// Negative-sequence voltage magnitude (waveform recordings).
    V2,
    /// Negative-sequence reactive current (waveform recordings).
    Iq2,
}

impl ValidatedQuantity {
    pub const ALL: [ValidatedQuantity; 7] = [
        ValidatedQuantity::V1,
        ValidatedQuantity::P,
        ValidatedQuantity::Q,
        ValidatedQuantity::Ip,
        ValidatedQuantity::Iq,
        ValidatedQuantity::V2,
        ValidatedQuantity::Iq2,
    ];
    pub fn analysis(self) -> Quantity {
        match self {
            ValidatedQuantity::V1 => Quantity::V1,
            ValidatedQuantity::P => Quantity::P,
            ValidatedQuantity::Q => Quantity::Q,
            ValidatedQuantity::Ip => Quantity::Ip,
            ValidatedQuantity::Iq => Quantity::Iq,
            ValidatedQuantity::V2 => Quantity::V2,
            ValidatedQuantity::Iq2 => Quantity::Iq2,
        }
    }
    pub fn name(self) -> &'static str {
        match self {
            ValidatedQuantity::V1 => "v1",
            ValidatedQuantity::P => "p",
            ValidatedQuantity::Q => "q",
            ValidatedQuantity::Ip => "ip",
            ValidatedQuantity::Iq => "iq",
            ValidatedQuantity::V2 => "v2",
            ValidatedQuantity::Iq2 => "iq2",
        }
    }
    pub fn label(self) -> &'static str {
        match self {
            ValidatedQuantity::V1 => "positive-sequence voltage",
            ValidatedQuantity::P => "active power",
            ValidatedQuantity::Q => "reactive power",
            ValidatedQuantity::Ip => "active current",
            ValidatedQuantity::Iq => "reactive current",
            ValidatedQuantity::V2 => "negative-sequence voltage",
            ValidatedQuantity::Iq2 => "negative-sequence reactive current",
        }
    }
}

/// A comparison window.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum WindowName {
    Pre,
    Fault,
    Post,
}

impl WindowName {
    pub const ALL: [WindowName; 3] = [WindowName::Pre, WindowName::Fault, WindowName::Post];
    pub fn name(self) -> &'static str {
        match self {
            WindowName::Pre => "pre",
            WindowName::Fault => "fault",
            WindowName::Post => "post",
        }
    }
}

/// Which windows a limit applies to.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, JsonSchema, Default)]
#[serde(rename_all = "snake_case")]
pub enum WindowChoice {
    #[default]
    All,
    Pre,
    Fault,
    Post,
}

impl WindowChoice {
    fn covers(self, w: WindowName) -> bool {
        match self {
            WindowChoice::All => true,
            WindowChoice::Pre => w == WindowName::Pre,
            WindowChoice::Fault => w == WindowName::Fault,
            WindowChoice::Post => w == WindowName::Post,
        }
    }
}

/// Window lengths, s.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct WindowSpec {
    /// Pre-fault window before the disturbance start (default 1.0).
    #[serde(default = "d_pre")]
    pub prefault_s: f64,
    /// Excluded transient after the fault start (default 0.14, from memory).
    #[serde(default = "d_fault_tr")]
    pub fault_transient_s: f64,
    /// Excluded transient after the clearance (default 0.5, from memory).
    #[serde(default = "d_post_tr")]
    pub post_transient_s: f64,
    /// Post-fault window after the clearance (default 2.0).
    #[serde(default = "d_post")]
    pub post_s: f64,
}

fn d_pre() -> f64 {
    1.0
}
fn d_fault_tr() -> f64 {
    0.14
}
fn d_post_tr() -> f64 {
    0.5
}
fn d_post() -> f64 {
    2.0
}

impl Default for WindowSpec {
    fn default() -> Self {
        WindowSpec {
            prefault_s: d_pre(),
            fault_transient_s: d_fault_tr(),
            post_transient_s: d_post_tr(),
            post_s: d_post(),
        }
    }
}

/// ME/MAE/MXE limits of one quantity in some windows, pu.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct Limit {
    pub quantity: ValidatedQuantity,
    #[serde(default)]
    pub window: WindowChoice,
    /// Largest |mean error|, pu.
    #[serde(default)]
    pub me_pu: Option<f64>,
    /// Largest mean absolute error, pu.
    #[serde(default)]
    pub mae_pu: Option<f64>,
    /// Largest maximum error, pu.
    #[serde(default)]
    pub mxe_pu: Option<f64>,
}

/// Where a disturbance starts, for the alignment.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct StartSpec {
    /// A disturbance starts below this positive-sequence voltage, pu (default 0.90).
    #[serde(default = "d_below")]
    pub below_pu: f64,
    /// ... or above this one, pu (default 1.10).
    #[serde(default = "d_above")]
    pub above_pu: f64,
}

fn d_below() -> f64 {
    default::BELOW_PU
}
fn d_above() -> f64 {
    default::ABOVE_PU
}

impl Default for StartSpec {
    fn default() -> Self {
        StartSpec {
            below_pu: d_below(),
            above_pu: d_above(),
        }
    }
}

/// A validation rule: how a simulation must reproduce the measured test.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ValidationRules {
    pub id: String,
    pub title: String,
    /// Which document, edition and clause the numbers follow.
    pub source: String,
    #[serde(default)]
    pub parameters: Vec<params::ParameterSpec>,
    #[serde(default)]
    pub disturbance: StartSpec,
    #[serde(default)]
    pub windows: WindowSpec,
    /// The limits.
    pub limits: Vec<Limit>,
}

impl ValidationRules {
    /// The limit of `q` in window `w` (the last entry that covers it wins).
    pub fn limit(&self, q: ValidatedQuantity, w: WindowName) -> Option<&Limit> {
        self.limits
            .iter()
            .rev()
            .find(|l| l.quantity == q && l.window.covers(w))
    }
    /// The quantities limited in window `w`, in the format's order.
    pub fn quantities_for(&self, w: WindowName) -> Vec<ValidatedQuantity> {
        ValidatedQuantity::ALL
            .into_iter()
            .filter(|q| self.limit(*q, w).is_some())
            .collect()
    }
    /// Detection settings for the alignment.
    pub fn detection(&self, frequency_hz: f64) -> DetectionSettings {
        let mut d = DetectionSettings::defaults(frequency_hz);
        d.below_pu = self.disturbance.below_pu;
        d.above_pu = self.disturbance.above_pu;
        d
    }
    /// Value problems, as (limit index or none, key, message).
    pub fn problems(&self) -> Vec<(Option<usize>, &'static str, String)> {
        let mut out = Vec::new();
        let w = &self.windows;
        for (key, v, hi) in [
            ("prefault_s", w.prefault_s, 60.0),
            ("fault_transient_s", w.fault_transient_s, 10.0),
            ("post_transient_s", w.post_transient_s, 10.0),
            ("post_s", w.post_s, 600.0),
        ] {
            if !(v >= 0.0 && v <= hi) {
                out.push((None, key, format!("{key} {v} must be in [0, {hi}] s")));
            }
        }
        if self.limits.is_empty() {
            out.push((None, "limits", "the validation rule has no limits".into()));
        }
        for (i, l) in self.limits.iter().enumerate() {
            if l.me_pu.is_none() && l.mae_pu.is_none() && l.mxe_pu.is_none() {
                out.push((
                    Some(i),
                    "quantity",
                    format!(
                        "limit of {}: give me_pu, mae_pu or mxe_pu",
                        l.quantity.name()
                    ),
                ));
            }
            for (key, v) in [
                ("me_pu", l.me_pu),
                ("mae_pu", l.mae_pu),
                ("mxe_pu", l.mxe_pu),
            ] {
                if let Some(v) = v.filter(|v| !(*v > 0.0 && *v <= 10.0)) {
                    out.push((Some(i), key, format!("{key} {v} must be in (0, 10] pu")));
                }
            }
        }
        out
    }
}

/// A validation rule as read, with its parameter values.
pub struct LoadedValidation {
    pub rules: ValidationRules,
    pub path: PathBuf,
    pub sha256: String,
    pub parameters: Vec<params::Resolved>,
    pub text: String,
}

/// Whether YAML text is a validation rule rather than a rule set.
pub fn is_validation(text: &str) -> bool {
    text.lines()
        .any(|l| l.starts_with("limits:") || l.starts_with("windows:"))
}

/// Loads and checks a validation rule; every problem is reported at once.
pub fn load(path: &Path, choices: &params::Choices) -> Result<LoadedValidation, InputErrors> {
    let (raw, sha256) = yaml::read_text_hashed(path, "validation rule")?;
    let raw = raw.strip_prefix('\u{feff}').unwrap_or(&raw).to_string();
    #[derive(Deserialize)]
    struct Head {
        #[serde(default)]
        parameters: Vec<params::ParameterSpec>,
        #[serde(default)]
        source: String,
    }
    let head: Head = yaml::parse(path, &raw)?;
    let resolved = params::resolve(path, &raw, &head.parameters, &head.source, choices)
        .map_err(InputErrors)?;
    let text = params::substitute(path, &raw, &resolved).map_err(InputErrors)?;
    let rules: ValidationRules = yaml::parse(path, &text)?;
    let problems: Vec<InputError> = rules
        .problems()
        .into_iter()
        .map(|(i, key, msg)| {
            let mut e = InputError::new(path, msg).field(match i {
                Some(i) => format!("limits[{i}].{key}"),
                None => key.to_string(),
            });
            if let Some((l, c)) = locate::locate(&text, "limits", i, key) {
                e = e.line(l).column(c);
            }
            e
        })
        .collect();
    if !problems.is_empty() {
        return Err(InputErrors(problems));
    }
    Ok(LoadedValidation {
        rules,
        path: path.to_path_buf(),
        sha256,
        parameters: resolved,
        text: raw,
    })
}

/// The JSON Schema of the validation rule format.
pub fn schema() -> serde_json::Value {
    let mut v = serde_json::to_value(schemars::schema_for!(ValidationRules))
        .unwrap_or(serde_json::Value::Null);
    crate::rules::schema::allow_refs(&mut v);
    if let serde_json::Value::Object(m) = &mut v {
        m.insert(
            "title".into(),
            serde_json::json!("holdfast validation rule"),
        );
    }
    v
}
