//! Bad input never panics: random corruptions of valid CSV and COMTRADE
//! files either import or give an input error (property tests).

use holdfast::analysis::{analyse, AnalysisSettings};
use holdfast::import::comtrade::cfg::{DataType, Revision};
use holdfast::import::{open, ChannelMap, ImportOptions};
use holdfast::model::{ChannelKey, CurrentUnit, Ratings, VoltageUnit};
use holdfast::synth::{write_csv, SynthSpec};
use proptest::prelude::*;
use std::path::Path;

fn small_spec() -> SynthSpec {
    let mut s = SynthSpec::example();
    s.sample_rate_hz = 1000.0;
    s.duration_s = 0.3;
    s.fault_start_s = 0.1;
    s.fault_duration_s = 0.1;
    s.status_column = true;
    s
}

/// Imports and analyses; any outcome but a panic is fine.
fn try_all(path: &Path) {
    let map = ChannelMap {
        keys: vec![(ChannelKey::Status, "status".into())],
        voltage_unit: Some(VoltageUnit::V),
        current_unit: Some(CurrentUnit::A),
        ..Default::default()
    };
    let settings = AnalysisSettings {
        ratings: Some(Ratings {
            rated_kv: 0.69,
            rated_mva: 4.2,
        }),
        frequency_hz: 50.0,
        points_per_cycle: 64,
        phase_order: Default::default(),
    };
    if let Ok(src) = open(path, &map, &ImportOptions::default()) {
        let _ = analyse(src, &settings);
    }
}

/// Applies `edits` (position fraction, byte, kind) to `data`.
fn corrupt(mut data: Vec<u8>, edits: &[(f64, u8, u8)]) -> Vec<u8> {
    for (at, byte, kind) in edits {
        if data.is_empty() {
            break;
        }
        let i = ((*at * data.len() as f64) as usize).min(data.len() - 1);
        match kind % 4 {
            0 => data[i] = *byte,
            1 => {
                data.insert(i, *byte);
            }
            2 => {
                data.remove(i);
            }
            _ => data.truncate(i),
        }
    }
    data
}

fn edits() -> impl Strategy<Value = Vec<(f64, u8, u8)>> {
    prop::collection::vec((0.0f64..1.0, any::<u8>(), any::<u8>()), 1..6)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    #[test]
    fn corrupted_csv_never_panics(e in edits()) {
        let mut buf = Vec::new();
        write_csv(&small_spec(), &mut buf).unwrap();
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("r.csv");
        std::fs::write(&p, corrupt(buf, &e)).unwrap();
        try_all(&p);
    }

    #[test]
    fn corrupted_comtrade_never_panics(e in edits(), which in 0usize..3, ty in 0usize..4) {
        let dir = tempfile::tempdir().unwrap();
        let dt = [DataType::Ascii, DataType::Binary, DataType::Binary32, DataType::Float32][ty];
        let (name, target) = match which {
            0 => ("r.cfg", "r.cfg"),
            1 => ("r.cfg", "r.dat"),
            _ => ("r.cff", "r.cff"),
        };
        let p = dir.path().join(name);
        holdfast::synth::comtrade::write_comtrade(&small_spec(), &p, dt, Revision::R2013).unwrap();
        let t = dir.path().join(target);
        let data = std::fs::read(&t).unwrap();
        std::fs::write(&t, corrupt(data, &e)).unwrap();
        try_all(&p);
    }

    #[test]
    fn corrupted_rule_sets_never_panic(e in edits(), k in 0usize..14) {
        let (_, text) = holdfast::rules::library::SHIPPED[k % holdfast::rules::library::SHIPPED.len()];
        let bytes = corrupt(text.as_bytes().to_vec(), &e);
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("r.yaml");
        std::fs::write(&p, bytes).unwrap();
        let _ = holdfast::rules::load(&p);
    }
}
