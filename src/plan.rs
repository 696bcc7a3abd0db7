//! Test plans (`PLAN.yaml`): the unit, the rule set, channel mapping and the
//! tests. Paths are relative to the plan file.

use crate::error::{InputError, InputErrors};
use crate::import::ChannelMap;
use crate::model::{ChannelKey, Connection, CurrentUnit, Ratings, VoltageUnit};
use crate::rules::locate::locate;
use crate::rules::realisation::Expect;
use crate::rules::yaml;
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct Plan {
    /// What this plan tests, in a sentence or two (shown in the report).
    #[serde(default)]
    pub description: Option<String>,
    /// Who the evidence is for (shown on the report's first page).
    #[serde(default)]
    pub project: Option<ProjectSpec>,
    pub unit: UnitSpec,
    /// Rule set file, relative to the plan.
    pub rules: String,
    /// Default channel mapping for every recording.
    #[serde(default)]
    pub channels: Option<ChannelsSpec>,
    /// Values of the rule set's parameters (within their published ranges).
    #[serde(default)]
    pub parameters: BTreeMap<String, f64>,
    /// Phase rotation of every recording's channels: `abc` (default) or
    /// `acb` (b and c are swapped for voltages and currents).
    #[serde(default)]
    pub phase_order: Option<crate::model::PhaseOrder>,
    /// Validation rule for the tests that name a `simulation` (relative to
    /// the plan).
    #[serde(default)]
    pub validation: Option<String>,
    pub tests: Vec<TestSpec>,
}

/// Project fields of a plan, each optional free text.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Default)]
#[serde(deny_unknown_fields)]
pub struct ProjectSpec {
    /// Project name.
    #[serde(default)]
    pub name: Option<String>,
    /// Who applies for the connection.
    #[serde(default)]
    pub applicant: Option<String>,
    /// The network operator the evidence goes to.
    #[serde(default)]
    pub network_operator: Option<String>,
    #[serde(default)]
    pub test_campaign: Option<String>,
    #[serde(default)]
    pub report_revision: Option<String>,
    #[serde(default)]
    pub author: Option<String>,
    #[serde(default)]
    pub reviewer: Option<String>,
}

impl Plan {
    /// The description and project fields for the results.
    pub fn project_info(&self) -> Option<crate::rules::result::ProjectInfo> {
        let p = self.project.clone().unwrap_or_default();
        let info = crate::rules::result::ProjectInfo {
            description: self.description.clone(),
            project: p.name,
            applicant: p.applicant,
            network_operator: p.network_operator,
            test_campaign: p.test_campaign,
            report_revision: p.report_revision,
            author: p.author,
            reviewer: p.reviewer,
        };
        (info != Default::default()).then_some(info)
    }
}

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct UnitSpec {
    /// Free text.
    #[serde(default)]
    pub name: Option<String>,
    /// Rated line-to-line RMS voltage, kV.
    pub rated_voltage_kv: f64,
    /// Rated apparent power, MVA.
    pub rated_power_mva: f64,
    /// Nominal frequency, Hz.
    pub frequency_hz: f64,
}

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Default)]
#[serde(deny_unknown_fields)]
pub struct PhaseColumns {
    #[serde(default)]
    pub a: Option<String>,
    #[serde(default)]
    pub b: Option<String>,
    #[serde(default)]
    pub c: Option<String>,
    /// V, kV or pu (voltage); A, kA or pu (current).
    #[serde(default)]
    pub unit: Option<String>,
    /// phase_to_neutral or phase_to_phase (voltage only).
    #[serde(default)]
    pub connection: Option<String>,
}

/// Column (CSV) or channel (COMTRADE) names for the model's channels.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Default)]
#[serde(deny_unknown_fields)]
pub struct ChannelsSpec {
    #[serde(default)]
    pub time: Option<String>,
    #[serde(default)]
    pub voltage: Option<PhaseColumns>,
    #[serde(default)]
    pub current: Option<PhaseColumns>,
    /// Status (breaker) channel: 1 = connected.
    #[serde(default)]
    pub status: Option<String>,
    #[serde(default)]
    pub v_pos: Option<String>,
    #[serde(default)]
    pub p: Option<String>,
    #[serde(default)]
    pub q: Option<String>,
    #[serde(default)]
    pub ip: Option<String>,
    #[serde(default)]
    pub iq: Option<String>,
    /// Text encoding of channel names (e.g. windows-1251, cp866, gbk,
    /// latin1); detected when not given.
    #[serde(default)]
    pub encoding: Option<String>,
    /// Sampling rate, Hz, for CSV recordings without a time column.
    #[serde(default)]
    pub sample_rate_hz: Option<f64>,
}

#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct TestSpec {
    /// Test id; with a pattern in `file`, the start of each test's id
    /// (`<id>-<file stem>`).
    pub id: String,
    /// Recording, relative to the plan; or a pattern (`recordings/*.cfg`)
    /// that makes one test of every matching recording.
    pub file: String,
    /// Overrides of the plan's channel mapping, key by key.
    #[serde(default)]
    pub channels: Option<ChannelsSpec>,
    #[serde(default)]
    pub expect: Option<Expect>,
    /// A rule set for this test instead of the plan's.
    #[serde(default)]
    pub rules: Option<String>,
    /// Parameter values for this test (over the plan's, for the plan's rule set).
    #[serde(default)]
    pub parameters: BTreeMap<String, f64>,
    /// Free-text description.
    #[serde(default)]
    pub description: Option<String>,
    /// Phase rotation of this recording's channels (over the plan's).
    #[serde(default)]
    pub phase_order: Option<crate::model::PhaseOrder>,
    /// A simulation of this test to validate against the recording
    /// (relative to the plan; same channel mapping).
    #[serde(default)]
    pub simulation: Option<String>,
    /// Seconds added to the automatic alignment of the simulation.
    #[serde(default)]
    pub simulation_offset_s: Option<f64>,
    /// Channel mapping of the simulation (default: the columns it names
    /// are recognised as for a recording without a mapping).
    #[serde(default)]
    pub simulation_channels: Option<ChannelsSpec>,
    /// A validation rule for this test instead of the plan's.
    #[serde(default)]
    pub validation: Option<String>,
}

impl ChannelsSpec {
    /// `other`'s keys replace this one's.
    pub fn merged(&self, other: Option<&ChannelsSpec>) -> ChannelsSpec {
        let Some(o) = other else { return self.clone() };
        let phase = |a: &Option<PhaseColumns>, b: &Option<PhaseColumns>| match (a, b) {
            (Some(a), Some(b)) => Some(PhaseColumns {
                a: b.a.clone().or(a.a.clone()),
                b: b.b.clone().or(a.b.clone()),
                c: b.c.clone().or(a.c.clone()),
                unit: b.unit.clone().or(a.unit.clone()),
                connection: b.connection.clone().or(a.connection.clone()),
            }),
            (a, b) => b.clone().or(a.clone()),
        };
        let rms_given = o.v_pos.is_some();
        ChannelsSpec {
            time: o.time.clone().or(self.time.clone()),
            // An RMS-level override drops the plan's phase mapping.
            voltage: if rms_given {
                o.voltage.clone()
            } else {
                phase(&self.voltage, &o.voltage)
            },
            current: if rms_given {
                o.current.clone()
            } else {
                phase(&self.current, &o.current)
            },
            status: o.status.clone().or(self.status.clone()),
            v_pos: o.v_pos.clone().or(self.v_pos.clone()),
            p: o.p.clone().or(self.p.clone()),
            q: o.q.clone().or(self.q.clone()),
            ip: o.ip.clone().or(self.ip.clone()),
            iq: o.iq.clone().or(self.iq.clone()),
            encoding: o.encoding.clone().or(self.encoding.clone()),
            sample_rate_hz: o.sample_rate_hz.or(self.sample_rate_hz),
        }
    }

    /// The importer's channel map, or what is wrong (key, message).
    pub fn to_map(&self) -> Result<ChannelMap, (&'static str, String)> {
        let mut m = ChannelMap {
            time: self.time.clone(),
            ..Default::default()
        };
        if let Some(v) = &self.voltage {
            for (k, c) in [
                (ChannelKey::Va, &v.a),
                (ChannelKey::Vb, &v.b),
                (ChannelKey::Vc, &v.c),
            ] {
                if let Some(c) = c {
                    m.keys.push((k, c.clone()));
                }
            }
            if let Some(u) = &v.unit {
                m.voltage_unit = Some(
                    VoltageUnit::parse(u)
                        .ok_or(("unit", format!("voltage unit '{u}': use V, kV or pu")))?,
                );
            }
            if let Some(c) = &v.connection {
                m.connection = Some(Connection::parse(c).ok_or((
                    "connection",
                    format!("connection '{c}': use phase_to_neutral or phase_to_phase"),
                ))?);
            }
        }
        if let Some(i) = &self.current {
            for (k, c) in [
                (ChannelKey::Ia, &i.a),
                (ChannelKey::Ib, &i.b),
                (ChannelKey::Ic, &i.c),
            ] {
                if let Some(c) = c {
                    m.keys.push((k, c.clone()));
                }
            }
            if let Some(u) = &i.unit {
                m.current_unit = Some(
                    CurrentUnit::parse(u)
                        .ok_or(("unit", format!("current unit '{u}': use A, kA or pu")))?,
                );
            }
            if i.connection.is_some() {
                return Err((
                    "connection",
                    "a connection is only given for voltages".into(),
                ));
            }
        }
        for (k, c) in [
            (ChannelKey::Status, &self.status),
            (ChannelKey::VPos, &self.v_pos),
            (ChannelKey::P, &self.p),
            (ChannelKey::Q, &self.q),
            (ChannelKey::Ip, &self.ip),
            (ChannelKey::Iq, &self.iq),
        ] {
            if let Some(c) = c {
                m.keys.push((k, c.clone()));
            }
        }
        if let Some(e) = &self.encoding {
            m.encoding = Some(crate::import::encoding_for(e).ok_or((
                "encoding",
                format!(
                    "encoding '{e}' is not known; use e.g. utf-8, windows-1251, cp866, gbk, latin1"
                ),
            ))?);
        }
        if let Some(r) = self.sample_rate_hz {
            if !(r > 0.0 && r.is_finite()) {
                return Err((
                    "sample_rate_hz",
                    format!("sample_rate_hz {r} must be positive"),
                ));
            }
            m.sample_rate_hz = Some(r);
        }
        Ok(m)
    }
}

/// A test's simulation, resolved.
#[derive(Clone, Debug)]
pub struct Simulation {
    pub file: PathBuf,
    pub map: ChannelMap,
    /// Seconds added to the automatic alignment.
    pub offset_s: f64,
    /// Index into [`LoadedPlan::validation_files`].
    pub rules: usize,
}

/// One test, resolved: paths absolute-or-relative to the working directory.
#[derive(Clone, Debug)]
pub struct ResolvedTest {
    /// Position in the whole plan (figure and page names use it, so that a
    /// shard of the plan names them as the whole run does).
    pub index: usize,
    pub id: String,
    pub file: PathBuf,
    pub map: ChannelMap,
    pub expect: Option<Expect>,
    /// Index into [`LoadedPlan::rule_files`].
    pub rules: usize,
    pub description: Option<String>,
    /// A simulation to validate against this recording.
    pub simulation: Option<Simulation>,
}

#[derive(Clone, Debug)]
pub struct LoadedPlan {
    pub plan: Plan,
    pub path: PathBuf,
    pub sha256: String,
    pub ratings: Ratings,
    /// Rule sets with their parameter values: the plan's first, then per-test ones.
    pub rule_files: Vec<(PathBuf, BTreeMap<String, f64>)>,
    /// Validation rules named by the plan and its tests.
    pub validation_files: Vec<PathBuf>,
    pub tests: Vec<ResolvedTest>,
}

/// Whether a plan's `file` is a pattern (`*`, `?`, `[...]`).
fn is_pattern(file: &str) -> bool {
    file.contains(['*', '?', '['])
}

/// The recordings a test's `file` names, with their test ids: the file
/// itself, or for a pattern every matching recording in path order, each
/// test named `<id>-<file stem>` (`<id>-<file name>` where two share a
/// stem). A COMTRADE `.dat` beside its `.cfg` is not a recording of its own.
fn expand(dir: &Path, id: &str, file: &str) -> Result<Vec<(String, PathBuf)>, String> {
    if !is_pattern(file) {
        return Ok(vec![(id.to_string(), dir.join(file))]);
    }
    let pattern = dir.join(file);
    let pattern = pattern.to_string_lossy();
    let paths = glob::glob(&pattern).map_err(|e| {
        format!("the pattern '{file}' is not valid ({e}); use *, ? and [abc] in file names")
    })?;
    let mut found: Vec<PathBuf> = paths
        .filter_map(|p| p.ok())
        .filter(|p| p.is_file() && crate::import::is_own_recording(p))
        .collect();
    found.sort();
    if found.is_empty() {
        return Err(format!(
            "the pattern '{file}' matches no recording (relative to the plan's folder {}); check the folder and the extension",
            if dir.as_os_str().is_empty() { Path::new(".") } else { dir }.display()
        ));
    }
    let stem = |p: &Path| {
        p.file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default()
    };
    Ok(found
        .iter()
        .map(|p| {
            let shared = found.iter().filter(|q| stem(q) == stem(p)).count() > 1;
            let name = if shared {
                p.file_name()
                    .map(|n| n.to_string_lossy().replace('.', "_"))
                    .unwrap_or_default()
            } else {
                stem(p)
            };
            (format!("{id}-{name}"), p.clone())
        })
        .collect())
}

/// Value problems of the unit's ratings, as (key, message).
fn unit_problems(u: &UnitSpec) -> Vec<(&'static str, String)> {
    let mut out = Vec::new();
    if !(u.rated_voltage_kv > 0.0 && u.rated_voltage_kv.is_finite()) {
        out.push((
            "rated_voltage_kv",
            format!("rated_voltage_kv {} must be positive", u.rated_voltage_kv),
        ));
    }
    if !(u.rated_power_mva > 0.0 && u.rated_power_mva.is_finite()) {
        out.push((
            "rated_power_mva",
            format!("rated_power_mva {} must be positive", u.rated_power_mva),
        ));
    }
    if !(u.frequency_hz > 0.0 && u.frequency_hz <= 1000.0) {
        out.push((
            "frequency_hz",
            format!(
                "frequency_hz {} must be a nominal frequency such as 50 or 60",
                u.frequency_hz
            ),
        ));
    }
    out
}

/// A test's simulation with its mapping and validation rule (added to
/// `validation_files` once); a problem as (key, message).
fn simulation_of(
    t: &TestSpec,
    plan: &Plan,
    dir: &Path,
    validation_files: &mut Vec<PathBuf>,
) -> Result<Option<Simulation>, (&'static str, String)> {
    let Some(sim) = &t.simulation else {
        return Ok(None);
    };
    let Some(v) = t.validation.as_ref().or(plan.validation.as_ref()) else {
        return Err((
            "simulation",
            "a simulation needs a validation rule: give `validation:` in the plan or the test"
                .into(),
        ));
    };
    let v = dir.join(v);
    let rules = match validation_files.iter().position(|x| *x == v) {
        Some(k) => k,
        None => {
            validation_files.push(v);
            validation_files.len() - 1
        }
    };
    let mut map = match &t.simulation_channels {
        Some(c) => c
            .to_map()
            .map_err(|(key, m)| (key, format!("simulation_channels: {m}")))?,
        None => ChannelMap::default(),
    };
    map.phase_order = t.phase_order.or(plan.phase_order);
    Ok(Some(Simulation {
        file: dir.join(sim),
        map,
        offset_s: t.simulation_offset_s.unwrap_or(0.0),
        rules,
    }))
}

/// Loads and validates a plan; all problems are reported at once.
pub fn load(path: &Path) -> Result<LoadedPlan, InputErrors> {
    let (text, sha256) = yaml::read_text_hashed(path, "test plan")?;
    let plan: Plan = yaml::parse(path, &text)?;
    let dir = path.parent().unwrap_or(Path::new(""));
    let mut errs = Vec::new();
    let mut err = |item: Option<usize>, key: &'static str, msg: String| {
        let mut e = InputError::new(path, msg).field(match item {
            Some(i) => format!("tests[{i}] ({}).{key}", plan.tests[i].id),
            None => key.to_string(),
        });
        if let Some((l, c)) = locate(&text, "tests", item, key) {
            e = e.line(l).column(c);
        }
        errs.push(e);
    };
    for (key, m) in unit_problems(&plan.unit) {
        err(None, key, m);
    }
    if plan.tests.is_empty() {
        err(None, "tests", "the plan has no tests".into());
    }
    let defaults = plan.channels.clone().unwrap_or_default();
    if let Err((key, m)) = defaults.to_map() {
        err(None, key, m);
    }
    let mut rule_files = vec![(dir.join(&plan.rules), plan.parameters.clone())];
    let mut validation_files: Vec<PathBuf> = Vec::new();
    let mut tests = Vec::new();
    let mut seen = std::collections::HashSet::new();
    for (i, t) in plan.tests.iter().enumerate() {
        if t.file.trim().is_empty() {
            err(Some(i), "file", "file is empty".into());
        }
        let files = match expand(dir, &t.id, &t.file) {
            Ok(f) => f,
            Err(m) => {
                err(Some(i), "file", m);
                continue;
            }
        };
        for (id, _) in &files {
            if id.trim().is_empty() {
                err(Some(i), "id", "test id is empty".into());
            } else if !seen.insert(id.clone()) {
                err(Some(i), "id", format!("test id '{id}' is used twice"));
            }
        }
        if let Some(e) = &t.expect {
            for (key, m) in e.problems() {
                err(Some(i), key, m);
            }
        }
        let key = match &t.rules {
            Some(r) => (dir.join(r), t.parameters.clone()),
            None => {
                let mut p = plan.parameters.clone();
                p.extend(t.parameters.clone());
                (dir.join(&plan.rules), p)
            }
        };
        let rules = match rule_files.iter().position(|x| *x == key) {
            Some(k) => k,
            None => {
                rule_files.push(key);
                rule_files.len() - 1
            }
        };
        match defaults.merged(t.channels.as_ref()).to_map() {
            Ok(mut map) => {
                map.phase_order = t.phase_order.or(plan.phase_order);
                let simulation = match simulation_of(t, &plan, dir, &mut validation_files) {
                    Ok(sim) => sim,
                    Err((key, m)) => {
                        err(Some(i), key, m);
                        None
                    }
                };
                for (id, file) in files {
                    tests.push(ResolvedTest {
                        index: tests.len(),
                        map: map.clone(),
                        id,
                        file,
                        expect: t.expect.clone(),
                        rules,
                        description: t.description.clone(),
                        simulation: simulation.clone(),
                    });
                }
            }
            Err((key, m)) => err(Some(i), key, m),
        }
    }
    if !errs.is_empty() {
        return Err(InputErrors(errs));
    }
    Ok(LoadedPlan {
        ratings: Ratings {
            rated_kv: plan.unit.rated_voltage_kv,
            rated_mva: plan.unit.rated_power_mva,
        },
        plan,
        path: path.to_path_buf(),
        sha256,
        rule_files,
        validation_files,
        tests,
    })
}

/// The test-plan schema.
pub fn plan_schema() -> serde_json::Value {
    let mut v =
        serde_json::to_value(schemars::schema_for!(Plan)).unwrap_or(serde_json::Value::Null);
    if let serde_json::Value::Object(m) = &mut v {
        m.insert("title".into(), serde_json::json!("holdfast test plan"));
    }
    v
}
