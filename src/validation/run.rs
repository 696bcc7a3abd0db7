//! One validation from files: each recording opened and analysed as for
//! `check`, its disturbances found with the rule's thresholds, then the
//! comparison as results.

use super::spec::LoadedValidation;
use super::{compare, Side, ValidationResults};
use crate::analysis::events::{detect_disturbances, Disturbance};
use crate::analysis::{analyse, Analysed, AnalysisSettings, Series, POINTS_PER_CYCLE};
use crate::cli::CAUTION;
use crate::error::InputError;
use crate::import::{self, ChannelMap, ImportOptions};
use crate::model::Ratings;
use crate::rules::result::{FileRef, HashedFile, Tool};
use std::path::{Path, PathBuf};

/// One side as the comparison reads it.
pub struct Rec<'a> {
    pub series: &'a Series,
    pub disturbances: &'a [Disturbance],
    pub frequency_hz: f64,
    pub path: &'a Path,
    pub sha256: &'a str,
}

/// One recording, analysed, with the disturbances of the rule.
pub struct Analysed1 {
    pub analysed: Analysed,
    pub disturbances: Vec<Disturbance>,
    pub frequency_hz: f64,
    pub path: PathBuf,
}

impl Analysed1 {
    pub fn rec(&self) -> Rec<'_> {
        Rec {
            series: &self.analysed.series,
            disturbances: &self.disturbances,
            frequency_hz: self.frequency_hz,
            path: &self.path,
            sha256: self
                .analysed
                .info
                .files
                .first()
                .map(|f| f.1.as_str())
                .unwrap_or(""),
        }
    }
}

/// The disturbances of an analysed series by the rule's thresholds.
pub fn disturbances_of(
    path: &Path,
    series: &Series,
    rules: &LoadedValidation,
    frequency_hz: f64,
) -> Result<Vec<Disturbance>, InputError> {
    detect_disturbances(series, &rules.rules.detection(frequency_hz))
        .map_err(|why| InputError::new(path, format!("no disturbance detection: {why}")))
}

/// Opens and analyses one recording for validation.
pub fn analyse_one(
    path: &Path,
    map: &ChannelMap,
    opts: &ImportOptions,
    ratings: Option<Ratings>,
    frequency: Option<f64>,
    rules: &LoadedValidation,
) -> Result<Analysed1, InputError> {
    let source = import::open(path, map, opts)?;
    let f = frequency
        .or(source.info().line_frequency_hz)
        .ok_or_else(|| {
            InputError::new(path, "the nominal frequency is not known")
                .hint("give --frequency 50 or 60 (the recording states no line frequency)")
        })?;
    let settings = AnalysisSettings {
        ratings,
        frequency_hz: f,
        points_per_cycle: POINTS_PER_CYCLE,
        phase_order: map.phase_order.unwrap_or_default(),
    };
    let analysed = analyse(source, &settings)?;
    let disturbances = disturbances_of(path, &analysed.series, rules, f)?;
    Ok(Analysed1 {
        analysed,
        disturbances,
        frequency_hz: f,
        path: path.to_path_buf(),
    })
}

/// The comparison of two analysed recordings as results.
pub fn results_of(
    rules: &LoadedValidation,
    meas: &Rec<'_>,
    sim: &Rec<'_>,
    offset: f64,
) -> Result<ValidationResults, InputError> {
    let side = |a: &Rec<'_>| -> (f64, Option<Disturbance>) {
        (a.frequency_hz, a.disturbances.first().cloned())
    };
    let (fm, dm) = side(meas);
    let (fs, ds) = side(sim);
    let comparison = compare(
        &rules.rules,
        &Side {
            series: meas.series,
            disturbance: dm.as_ref(),
            cycle_s: 1.0 / fm,
        },
        &Side {
            series: sim.series,
            disturbance: ds.as_ref(),
            cycle_s: 1.0 / fs,
        },
        offset,
    )
    .map_err(|m| {
        InputError::new(sim.path, m).hint("check that both recordings show the same test")
    })?;
    let file = |a: &Rec<'_>| HashedFile {
        path: crate::files::normalised(a.path),
        sha256: a.sha256.to_string(),
    };
    Ok(ValidationResults {
        schema_version: 1,
        tool: Tool::this(),
        rules: FileRef {
            id: Some(rules.rules.id.clone()),
            path: crate::files::normalised(&rules.path),
            sha256: rules.sha256.clone(),
            title: Some(rules.rules.title.clone()),
            source: Some(rules.rules.source.clone()),
        },
        parameters: rules
            .parameters
            .iter()
            .map(|p| (p.name.clone(), p.value))
            .collect(),
        measured: file(meas),
        simulated: file(sim),
        frequency_hz: meas.frequency_hz,
        comparison,
        generated_utc: Some(chrono::Utc::now().to_rfc3339_opts(chrono::SecondsFormat::Secs, true)),
        command_line: Some(crate::cli::command_line()),
        caution: CAUTION.into(),
    })
}
