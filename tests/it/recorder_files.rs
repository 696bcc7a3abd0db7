//! What real recorders write: committed fixtures (tests/fixtures/quirks,
//! written by make.py there) reproduce each quirk; the real files in
//! ../shared/realworld/files are read when that folder exists (SKIPPED
//! otherwise). Expected values follow from how the fixtures are built: a
//! 100 V RMS set (1 pu at --rated-kv 0.1732) dipping to 30 % from 0.2 s to
//! 0.35 s.

use crate::common::{self, holdfast};
use serde_json::Value;
use std::path::{Path, PathBuf};

fn fixture(name: &str) -> PathBuf {
    common::fixture("quirks").join(name)
}

const RATED: [&str; 4] = ["--rated-kv", "0.1732", "--rated-mva", "0.0052"];

/// `inspect --json` (no --frequency: the file's line frequency is used).
fn inspect(path: &Path, extra: &[&str]) -> Value {
    let out = holdfast()
        .arg("inspect")
        .arg(path)
        .args(RATED)
        .args(extra)
        .arg("--json")
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}: {}",
        path.display(),
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn notes(v: &Value) -> String {
    let mut all: Vec<String> = Vec::new();
    for n in v["notes"].as_array().into_iter().flatten() {
        all.push(n.as_str().unwrap_or("").to_string());
    }
    for n in v["recording"]["notes"].as_array().into_iter().flatten() {
        all.push(n.as_str().unwrap_or("").to_string());
    }
    all.join("\n")
}

/// The one disturbance: the dip from 0.2 to 0.35 s, its inception at 0.2 s
/// within two samples (1 ms at 1 kHz) and its extreme 0.3 pu.
fn assert_the_dip(v: &Value, what: &str) {
    let d = &v["disturbances"];
    assert_eq!(d.as_array().map_or(0, |a| a.len()), 1, "{what}: {d:#}");
    let inc = d[0]["inception_s"].as_f64().unwrap();
    assert!((inc - 0.2).abs() <= 2e-3, "{what}: inception {inc}");
    let ext = d[0]["extreme_pu"].as_f64().unwrap();
    assert!((ext - 0.3).abs() < 0.01, "{what}: extreme {ext}");
}

#[test]
fn revision_labels_2001_and_unknown_years() {
    for (f, said) in [
        ("rev2001.cfg", "IEC 60255-24:2001"),
        ("rev1997.cfg", "1997"),
    ] {
        let v = inspect(&fixture(f), &[]);
        assert!(notes(&v).contains(said), "{f}: {}", notes(&v));
        assert_the_dip(&v, f);
    }
}

#[test]
fn several_sampling_rates() {
    // 1000 Hz (the dip), 50 Hz, 1000 Hz: the high-rate segments are
    // analysed, the 50 Hz one is skipped and said so.
    let v = inspect(&fixture("multirate.cfg"), &[]);
    assert!(
        notes(&v).contains("401–430 at 50 Hz are skipped"),
        "{}",
        notes(&v)
    );
    assert_eq!(v["recording"]["sample_rate_hz"], 1000.0);
    assert_the_dip(&v, "multirate");
    // Frequency tracking: ten rates 995..1005 Hz, one rate, true times.
    let v = inspect(&fixture("tracking.cfg"), &[]);
    assert!(notes(&v).contains("frequency-tracking"), "{}", notes(&v));
    assert_the_dip(&v, "tracking");
}

#[test]
fn legacy_encodings_are_decoded_and_names_can_be_mapped() {
    for (f, enc, names) in [
        (
            "names-cp1251.cfg",
            "windows-1251",
            ["Ua_шина", "Ub_шина", "Uc_шина"],
        ),
        (
            "names-cp866.cfg",
            "IBM866",
            ["Uа_ввод", "Ub_ввод", "Uc_ввод"],
        ),
        ("names-gbk.cfg", "GBK", ["母线Ua", "母线Ub", "母线Uc"]),
    ] {
        let args = [
            "--map".to_string(),
            format!("va={}", names[0]),
            "--map".to_string(),
            format!("vb={}", names[1]),
            "--map".to_string(),
            format!("vc={}", names[2]),
        ];
        let a: Vec<&str> = args.iter().map(|s| s.as_str()).collect();
        let v = inspect(&fixture(f), &a);
        let header = v["recording"]["header"].to_string();
        assert!(header.contains(enc), "{f}: {header}");
        let chans: Vec<&str> = v["recording"]["channels"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c["source"].as_str().unwrap())
            .collect();
        for n in names {
            assert!(chans.contains(&n), "{f}: {chans:?}");
        }
        assert_the_dip(&v, f);
        // Mapping by channel number does the same.
        let v = inspect(
            &fixture(f),
            &["--map", "va=#1", "--map", "vb=#2", "--map", "vc=#3"],
        );
        assert_the_dip(&v, f);
    }
    // An encoding can be given.
    let v = inspect(&fixture("names-cp1251.cfg"), &["--encoding", "cp1251"]);
    assert!(v["recording"]["header"].to_string().contains("as given"));
}

#[test]
fn a_file_without_voltages_is_listed_and_its_currents_analysed() {
    let v = inspect(&fixture("currents-only.cfg"), &[]);
    let all = v["recording"]["source_channels"].as_array().unwrap();
    assert_eq!(all.len(), 4, "three currents and a digital channel");
    assert!(all
        .iter()
        .any(|c| c["kind"] == "digital" && c["name"] == "CB"));
    assert!(notes(&v).contains("no voltage channel is mapped"));
    assert!(v["analysis"]["points"].as_u64().unwrap() > 0);
    assert_eq!(v["trip"]["method"], "current");
}

#[test]
fn two_phase_to_phase_voltages_named_u21_u32() {
    // U21 = v2 − v1 = −v_ab, U32 = −v_bc: mapped by name with the sign,
    // the third derived; the dip and the positive power are as for the
    // phase voltages.
    let v = inspect(&fixture("two-line-voltages.cfg"), &[]);
    let n = notes(&v);
    assert!(n.contains("minus 'U21'") && n.contains("derived"), "{n}");
    assert_eq!(v["recording"]["connection"], "phase_to_phase");
    assert_the_dip(&v, "two line voltages");
    let p = v["disturbances"][0]["prefault"]["p_pu"].as_f64().unwrap();
    assert!(
        p > 0.5,
        "currents in phase with the voltages give P > 0: {p}"
    );
}

#[test]
fn line_frequency_units_status_and_tolerated_quirks() {
    // 60 Hz from the configuration; units 'volt' and 'ampere'.
    let v = inspect(&fixture("lf60-units.cfg"), &[]);
    assert_eq!(v["analysis"]["frequency_hz"], 60.0);
    assert!(notes(&v).contains("60 Hz taken from the file"));
    assert_the_dip(&v, "lf60");
    // A .cff whose digital channel 'status' opens at 0.3 s.
    let v = inspect(&fixture("status-digital.cff"), &[]);
    assert_eq!(v["trip"]["method"], "status");
    assert!((v["trip"]["time_s"].as_f64().unwrap() - 0.3).abs() < 2e-3);
    // SUB padding, 4-field digital lines, a blank line between records,
    // one record more than endsamp, space-padded fields, CRLF.
    let v = inspect(&fixture("tolerated.cfg"), &[]);
    let n = notes(&v);
    for said in ["4 fields", "one record more", "blank lines"] {
        assert!(n.contains(said), "{said}: {n}");
    }
    assert_eq!(v["recording"]["samples"], 500);
    assert_the_dip(&v, "tolerated");
}

#[test]
fn truncated_data_is_named_before_anything_else() {
    let f = fixture("near-miss-truncated.cff");
    // inspect shows what is there and says why.
    let v = inspect(&f, &[]);
    let n = notes(&v);
    assert!(
        n.contains("section markers") && n.contains("truncated"),
        "{n}"
    );
    // check refuses, naming the truncation.
    let out = holdfast()
        .args(["check", "--rules"])
        .arg(Path::new(env!("CARGO_MANIFEST_DIR")).join("rules/eu-rfg-ppm-type-d-example.yaml"))
        .args(RATED)
        .args(["--frequency", "50", "--out"])
        .arg(tempfile::tempdir().unwrap().path().join("p"))
        .arg(&f)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let e = String::from_utf8_lossy(&out.stderr);
    assert!(e.contains("truncated"), "{e}");
    // The data file named instead of its configuration.
    let out = holdfast()
        .arg("inspect")
        .arg(fixture("rev2001.dat"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("rev2001.cfg"));
}

#[test]
fn csv_without_a_time_column() {
    let f = fixture("no-time.csv");
    let out = holdfast()
        .arg("inspect")
        .arg(&f)
        .args(RATED)
        .args(["--frequency", "50"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--sample-rate"));
    // Names with unit suffixes (Ua(V), Ia(A)) are found.
    let v = inspect(&f, &["--frequency", "50", "--sample-rate", "1000"]);
    assert_the_dip(&v, "no time column");
}

/// Every real file of the corpus: inspect reads it (exit 0), and where its
/// data cannot be used for a check, the check says the real problem.
#[test]
fn real_recorders_files() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/realworld/files");
    if !root.is_dir() {
        eprintln!("SKIPPED: {} is not here", root.display());
        return;
    }
    let mut files = Vec::new();
    for d in std::fs::read_dir(&root).unwrap().filter_map(|e| e.ok()) {
        for f in std::fs::read_dir(d.path()).unwrap().filter_map(|e| e.ok()) {
            let p = f.path();
            let ext = p
                .extension()
                .and_then(|e| e.to_str())
                .unwrap_or("")
                .to_ascii_lowercase();
            if matches!(ext.as_str(), "cfg" | "cff" | "csv") {
                files.push(p);
            }
        }
    }
    files.sort();
    assert!(files.len() >= 33, "{}", files.len());
    for f in &files {
        let extra: &[&str] = if f.extension().is_some_and(|e| e == "csv") {
            &["--frequency", "50", "--sample-rate", "10000"]
        } else {
            &[]
        };
        let v = inspect(f, extra);
        assert!(
            !v["recording"]["source_channels"]
                .as_array()
                .unwrap()
                .is_empty(),
            "{}",
            f.display()
        );
    }
    let find = |part: &str| {
        files
            .iter()
            .find(|f| f.to_string_lossy().contains(part))
            .unwrap()
            .clone()
    };
    // Names decoded from Windows-1251, code page 866 and GBK.
    for (part, name) in [
        ("cs-1999-binary-167ch-cp1251", "Ua_1СШ-110_ТН_110кВ"),
        ("naz-1991-ascii-cp866", "СИРИУС"),
        ("zh-1999-binary-multirate-a", "220kV母线I_Ua"),
    ] {
        let v = inspect(&find(part), &[]);
        let text = v["recording"].to_string();
        assert!(text.contains(name), "{part}: {name}");
    }
    // Several rates and frequency tracking.
    let v = inspect(
        &find("zh-1999-binary-multirate-a"),
        &["--map", "va=#1", "--map", "vb=#2", "--map", "vc=#3"],
    );
    assert!(notes(&v).contains("are skipped"), "{}", notes(&v));
    let v = inspect(&find("cs-rev2000-multirate-cp1251"), &[]);
    assert!(notes(&v).contains("frequency-tracking"), "{}", notes(&v));
    // U21/U32 only: phase-to-phase with the third derived.
    let v = inspect(&find("cs-rev1997-phase-to-phase"), &[]);
    assert_eq!(v["recording"]["connection"], "phase_to_phase");
    // A-C-B rotation is a finding of inspect.
    let v = inspect(&find("jl-1999-ascii-pq-7678hz"), &[]);
    assert!(notes(&v).contains("A-C-B"), "{}", notes(&v));
    // Truncated data: named by check.
    for part in ["toy-norev-binary-short", "zh-2013-cff-ascii-288ch"] {
        let out = holdfast()
            .args(["check", "--rules"])
            .arg(Path::new(env!("CARGO_MANIFEST_DIR")).join("rules/eu-rfg-ppm-type-d-example.yaml"))
            .args([
                "--rated-kv",
                "110",
                "--rated-mva",
                "100",
                "--frequency",
                "50",
                "--out",
            ])
            .arg(tempfile::tempdir().unwrap().path().join("p"))
            .arg(find(part))
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(2), "{part}");
        assert!(
            String::from_utf8_lossy(&out.stderr).contains("truncated"),
            "{part}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
}
