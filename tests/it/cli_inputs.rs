//! Bad input through the binary: exit status 2 and a message naming the place.

use crate::common::{holdfast, write, RATINGS};
use predicates::prelude::*;
use std::path::PathBuf;

fn inspect(path: &PathBuf, extra: &[&str]) -> assert_cmd::assert::Assert {
    holdfast()
        .arg("inspect")
        .arg(path)
        .args(RATINGS)
        .args(extra)
        .assert()
}

/// (file name, content, expected fragments of the message)
pub(crate) fn cases() -> Vec<(&'static str, &'static [u8], Vec<&'static str>)> {
    vec![
        (
            "text.csv",
            b"t,va,vb,vc\n0,1,2,3\n0.0001,1,x,3\n",
            vec!["text.csv:3:3", "'vb'", "not a number"],
        ),
        (
            "nan.csv",
            b"t,va,vb,vc\n0,1,2,3\n0.0001,1,NaN,3\n",
            vec!["nan.csv:3:3", "not finite"],
        ),
        (
            "inf.csv",
            b"t,va,vb,vc\n0,1,2,3\n0.0001,inf,2,3\n",
            vec!["inf.csv:3:2", "not finite"],
        ),
        ("empty.csv", b"", vec!["empty.csv", "empty"]),
        (
            "header_only.csv",
            b"t,va,vb,vc\n",
            vec!["header_only.csv", "no data rows"],
        ),
        (
            "missing_col.csv",
            b"t,va,vb\n0,1,2\n0.0001,1,2\n",
            vec!["missing_col.csv", "missing: vc"],
        ),
        (
            "no_time.csv",
            b"x,va,vb,vc\n0,1,2,3\n",
            vec!["no_time.csv", "time"],
        ),
        (
            "dup.csv",
            b"t,va,vb,vc\n0,1,2,3\n0.0001,1,2,3\n0.0001,1,2,3\n",
            vec!["dup.csv:4", "repeats"],
        ),
        (
            "back.csv",
            b"t,va,vb,vc\n0,1,2,3\n0.0002,1,2,3\n0.0001,1,2,3\n",
            vec!["back.csv:4", "goes back"],
        ),
        (
            "uneven.csv",
            b"t,va,vb,vc\n0,1,2,3\n0.0001,1,2,3\n0.0002,1,2,3\n0.0005,1,2,3\n0.0006,1,2,3\n",
            vec!["uneven.csv:5", "uneven sampling"],
        ),
        (
            "short_row.csv",
            b"t,va,vb,vc\n0,1,2,3\n0.0001,1,2\n",
            vec!["short_row.csv:3", "fields"],
        ),
        (
            "long_row.csv",
            b"t,va,vb,vc\n0,1,2,3\n0.0001,1,2,3,4\n",
            vec!["long_row.csv:3", "more fields"],
        ),
        (
            "blank.csv",
            b"t,va,vb,vc\n0,1,2,3\n\n0.0001,1,2,3\n0.0002,1,2,3\n",
            vec!["blank.csv:3", "blank line"],
        ),
        (
            "bad_iso.csv",
            b"t,va,vb,vc\n2026-03-14T10:00:00.000,1,2,3\n2026-03-14T10:00:0x.001,1,2,3\n",
            vec!["bad_iso.csv:3:1", "timestamp"],
        ),
    ]
}

#[test]
fn every_bad_input_exits_2_and_names_the_place() {
    let dir = tempfile::tempdir().unwrap();
    for (name, content, fragments) in cases() {
        let p = write(&dir, name, content);
        let mut pred = predicate::str::contains("error:").boxed();
        for f in fragments {
            pred = pred.and(predicate::str::contains(f)).boxed();
        }
        // A check must refuse every one of them; inspect shows what it
        // can of a file with incomplete channels, so it is checked below
        // for the rest.
        let d = tempfile::tempdir().unwrap();
        let rules = write(
            &d,
            "r.yaml",
            b"id: t\ntitle: t\nsource: s\nchecks:\n  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0], [1, 0.85]] }\n",
        );
        holdfast()
            .args(["check", "--rules"])
            .arg(&rules)
            .args(RATINGS)
            .arg("--out")
            .arg(d.path().join("pack"))
            .arg(&p)
            .assert()
            .code(2)
            .stderr(pred);
        if name != "missing_col.csv" {
            inspect(&p, &[]).code(2);
        }
    }
}

#[test]
fn missing_file_and_unknown_format_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("nope.csv");
    inspect(&p, &[])
        .code(2)
        .stderr(predicate::str::contains("nope.csv").and(predicate::str::contains("cannot open")));
    let q = write(&dir, "rec.xyz", b"t,va,vb,vc\n");
    inspect(&q, &[])
        .code(2)
        .stderr(predicate::str::contains("rec.xyz"));
}

#[test]
fn mapped_column_that_does_not_exist_names_it() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(&dir, "m.csv", b"t,U1,U2,U3\n0,1,2,3\n0.0001,1,2,3\n");
    inspect(&p, &["--map", "va=U1", "--map", "vb=U2", "--map", "vc=U9"])
        .code(2)
        .stderr(predicate::str::contains("U9"));
}

#[test]
fn bad_arguments_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(&dir, "ok.csv", b"t,va,vb,vc\n0,1,2,3\n0.0001,1,2,3\n");
    inspect(&p, &["--map", "zz=U1"])
        .code(2)
        .stderr(predicate::str::contains("unknown key"));
    inspect(&p, &["--voltage-unit", "MV"])
        .code(2)
        .stderr(predicate::str::contains("--voltage-unit"));
    holdfast()
        .args(["inspect", "--no-such-flag"])
        .assert()
        .code(2);
}

#[test]
fn decimal_comma_semicolon_bom_crlf_and_iso_time_are_read() {
    let dir = tempfile::tempdir().unwrap();
    let mut content = Vec::from(&b"\xef\xbb\xbfTime;VA;VB;VC\r\n"[..]);
    for m in 0..400 {
        let t = chrono::NaiveDate::from_ymd_opt(2026, 3, 14)
            .unwrap()
            .and_hms_opt(10, 0, 0)
            .unwrap()
            + chrono::Duration::microseconds(100 * m);
        let th = 2.0 * std::f64::consts::PI * 50.0 * m as f64 * 1e-4;
        let v = |k: f64| format!("{:.6}", 2f64.sqrt() * (th - k * 2.0944).cos()).replace('.', ",");
        content.extend(
            format!(
                "{};{};{};{}\r\n",
                t.format("%Y-%m-%dT%H:%M:%S%.6f"),
                v(0.0),
                v(1.0),
                v(2.0)
            )
            .bytes(),
        );
    }
    let p = write(&dir, "eu.csv", &content);
    let out = holdfast()
        .args([
            "inspect",
            "--voltage-unit",
            "pu",
            "--frequency",
            "50",
            "--json",
        ])
        .arg(&p)
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["recording"]["samples"], 400);
    assert!((v["recording"]["sample_rate_hz"].as_f64().unwrap() - 10_000.0).abs() < 1e-6);
    assert_eq!(v["disturbances"].as_array().unwrap().len(), 0);
}

#[test]
fn iso_timestamps_with_a_decimal_comma_are_read() {
    // ISO 8601 allows a comma as the decimal sign of the seconds.
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        &dir,
        "isocomma.csv",
        b"t;va;vb;vc\n2026-03-14T10:00:00,000;1;2;3\n2026-03-14T10:00:00,001;1;2;3\n2026-03-14T10:00:00,002;1;2;3\n",
    );
    let out = holdfast()
        .args(["inspect", "--voltage-unit", "pu", "--json"])
        .arg(&p)
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert!((v["recording"]["sample_rate_hz"].as_f64().unwrap() - 1000.0).abs() < 1e-6);
}

#[test]
fn a_recording_given_as_a_plan_says_to_use_rules() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(&dir, "rec.csv", b"t,va,vb,vc\n0,1,2,3\n0.0001,1,2,3\n");
    holdfast()
        .arg("check")
        .arg(&p)
        .arg("--out")
        .arg(dir.path().join("out"))
        .assert()
        .code(2)
        .stderr(
            predicate::str::contains("rec.csv is a recording, not a test plan")
                .and(predicate::str::contains("--rules")),
        );
}

#[test]
fn negative_numbers_are_option_values() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("jump.csv");
    holdfast()
        .args(["synth", "--duration", "1", "--phase-jump", "-12", "--out"])
        .arg(&p)
        .assert()
        .success();
    // A negative value reaches the option's own check, not the parser.
    holdfast()
        .arg("inspect")
        .arg(&p)
        .args(RATINGS)
        .args(["--below-pu", "-0.5"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--below-pu must be in (0, 1)"));
}
