//! Snapshots of what people read (insta): the terminal table of the sample
//! plan, the error messages of bad recordings, rule sets and plans, and the
//! `inspect` text of the recorder fixtures. A change to any of them shows up
//! as a diff to review; accept it with `INSTA_UPDATE=always cargo test
//! views` (or `cargo insta review`) once the new text is right.
//!
//! Temporary folders are replaced by `[TMP]` so the snapshots do not depend
//! on where the test runs.

use crate::cli_inputs::cases;
use crate::cli_rules::GOOD;
use crate::common::{self, holdfast, root, sample_run, write, RATINGS};
use std::path::Path;

/// The command's stderr with the temporary folder `dir` replaced.
fn stderr_of(cmd: &mut assert_cmd::Command, dir: &Path) -> String {
    let out = cmd.output().unwrap();
    let text = String::from_utf8_lossy(&out.stderr).into_owned();
    format!(
        "exit {}\n{}",
        out.status.code().unwrap_or(-1),
        text.replace(&dir.display().to_string(), "[TMP]")
    )
}

#[test]
fn terminal_table_of_the_sample_plan() {
    let run = sample_run();
    let text = run
        .stdout
        .replace(&run.dir.path().display().to_string(), "[TMP]");
    insta::assert_snapshot!("sample_plan_table", text);
}

#[test]
fn error_messages_of_bad_recordings() {
    let dir = tempfile::tempdir().unwrap();
    let rules = write(
        &dir,
        "r.yaml",
        "id: t\ntitle: t\nsource: s\nchecks:\n  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0], [1, 0.85]] }\n",
    );
    let mut all = String::new();
    for (name, content, _) in cases() {
        let p = write(&dir, name, content);
        all += &format!("== check {name}\n");
        all += &stderr_of(
            holdfast()
                .args(["check", "--rules"])
                .arg(&rules)
                .args(RATINGS)
                .arg("--out")
                .arg(dir.path().join("pack"))
                .arg(&p),
            dir.path(),
        );
    }
    insta::assert_snapshot!("bad_recordings", all);
}

#[test]
fn error_messages_of_bad_rule_sets_and_plans() {
    let dir = tempfile::tempdir().unwrap();
    let mut all = String::new();
    let rule_sets = [
        ("typo.yaml", GOOD.replace("    gain: 2", "    gian: 2")),
        ("type.yaml", GOOD.replace("gain: 2", "gain: high")),
        (
            "syntax.yaml",
            GOOD.replace("points: [[0, 0]", "points: [[0, 0"),
        ),
        ("kind.yaml", GOOD.replace("type: envelope", "type: envelop")),
        (
            "values.yaml",
            GOOD.replace("[1.5, 0.85]", "[1.2, 0.85], [1.0, 0.9]")
                .replace("gain: 2", "gain: 0")
                .replace("tolerance_pu: [-0.1, 0.2]", "tolerance_pu: [0.1, -0.1]"),
        ),
        ("empty.yaml", String::new()),
        (
            "tabs.yaml",
            GOOD.replace("    bound: lower", "\tbound: lower"),
        ),
        (
            "alias.yaml",
            "a: &a [1, 2]\nb: [*a, *a, *a]\nid: r\ntitle: t\nsource: s\nchecks: []\n".into(),
        ),
    ];
    for (name, text) in &rule_sets {
        let p = write(&dir, name, text);
        all += &format!("== rules lint {name}\n");
        all += &stderr_of(holdfast().args(["rules", "lint"]).arg(&p), dir.path());
    }
    write(&dir, "rules.yaml", GOOD);
    let plan = "unit: { rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }\nrules: rules.yaml\ntests:\n  - id: A\n    file: a.csv\n  - id: A\n    file: b.csv\n";
    let plans = [
        ("dup.yaml", plan.to_string()),
        (
            "unknown.yaml",
            plan.replace("rules: rules.yaml", "rules: rules.yaml\nrulez: x"),
        ),
        (
            "norec.yaml",
            plan.replace("id: A\n    file: b", "id: B\n    file: b"),
        ),
        (
            "unit.yaml",
            plan.replace("frequency_hz: 50", "frequency_hz: -50"),
        ),
    ];
    for (name, text) in &plans {
        let p = write(&dir, name, text);
        all += &format!("== check {name}\n");
        all += &stderr_of(
            holdfast()
                .arg("check")
                .arg(&p)
                .arg("--out")
                .arg(dir.path().join("out")),
            dir.path(),
        );
    }
    insta::assert_snapshot!("bad_rule_sets_and_plans", all);
}

#[test]
fn inspect_text_of_the_recorder_fixtures() {
    let quirks = common::fixture("quirks");
    let mut names: Vec<String> = std::fs::read_dir(&quirks)
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".cfg") || n.ends_with(".cff") || n.ends_with(".csv"))
        .collect();
    names.sort();
    assert!(names.len() >= 10, "{names:?}");
    for name in names {
        let out = holdfast()
            .current_dir(root())
            .arg("inspect")
            .arg(format!("tests/fixtures/quirks/{name}"))
            .args(["--rated-kv", "0.1732", "--rated-mva", "0.0052"])
            .output()
            .unwrap();
        let text = format!(
            "exit {}\n{}{}",
            out.status.code().unwrap_or(-1),
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        );
        insta::assert_snapshot!(format!("inspect_{name}"), text);
    }
}

#[test]
fn inspect_text_of_sample_recordings() {
    for name in ["t01-deep-symmetrical.csv", "t11-rms-level.csv"] {
        let out = holdfast()
            .current_dir(root())
            .arg("inspect")
            .arg(format!("sample-data/recordings/{name}"))
            .args(RATINGS)
            .output()
            .unwrap();
        assert!(out.status.success());
        insta::assert_snapshot!(
            format!("inspect_{name}"),
            String::from_utf8_lossy(&out.stdout)
        );
    }
}
