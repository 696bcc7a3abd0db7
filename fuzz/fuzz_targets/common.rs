#![allow(dead_code)]
//! Shared by the fuzz targets: a per-process scratch folder on which the
//! importers read their input, and the whole import-and-analyse path.

use holdfast::analysis::{analyse, AnalysisSettings};
use holdfast::import::{open, ChannelMap, ImportOptions};
use holdfast::model::{ChannelKey, Ratings};
use std::path::PathBuf;

pub fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("holdfast-fuzz-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    dir.join(name)
}

/// Opens, streams and analyses a recording; any outcome but a panic, an
/// abort or a hang is fine.
pub fn import_and_analyse(path: &std::path::Path) {
    let map = ChannelMap {
        keys: vec![(ChannelKey::Status, "status".into())],
        ..Default::default()
    };
    let settings = AnalysisSettings {
        ratings: Some(Ratings {
            rated_kv: 0.69,
            rated_mva: 4.2,
            frequency_hz: 50.0,
        }),
        frequency_hz: 50.0,
        points_per_cycle: 64,
        phase_order: Default::default(),
    };
    if let Ok(src) = open(path, &map, &ImportOptions::default()) {
        if let Ok(a) = analyse(src, &settings) {
            // And the disturbance detection on what came out.
            let det = holdfast::analysis::events::DetectionSettings::defaults(50.0);
            let _ = holdfast::analysis::events::detect_disturbances(&a.series, &det);
        }
    }
}
