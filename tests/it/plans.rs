//! Test plans for batches: `plan init` from a folder of recordings, and
//! patterns in a test's `file`.

use crate::common::*;

const SHORT: [&str; 4] = ["--sample-rate", "2000", "--duration", "2.5"];

/// Runs `check --json` on a plan and returns the test ids in the results.
fn check_ids(plan: &std::path::Path, out: &std::path::Path) -> Vec<String> {
    let ran = holdfast()
        .arg("check")
        .arg(plan)
        .args(["--json", "--out"])
        .arg(out)
        .output()
        .unwrap();
    assert!(
        matches!(ran.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&ran.stderr)
    );
    let res: serde_json::Value = serde_json::from_slice(&ran.stdout).unwrap();
    res["tests"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t["id"].as_str().unwrap().to_string())
        .collect()
}

#[test]
fn plan_init_writes_a_plan_that_checks_once_filled_in() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::create_dir_all(d.join("field/day2")).unwrap();
    synth(&d.join("field"), "a.csv", &SHORT, &[]);
    synth(
        &d.join("field/day2"),
        "b.cfg",
        &SHORT,
        &["--residual", "0.5"],
    );
    // Not recordings: notes, a hidden file, an earlier evidence pack.
    write(d.join("field"), "notes.md", "bench notes");
    write(d.join("field"), ".hidden.csv", "t,va\n");
    std::fs::create_dir_all(d.join("field/old-pack")).unwrap();
    write(
        d.join("field/old-pack"),
        ".holdfast-pack",
        "holdfast evidence pack\n",
    );
    write(d.join("field/old-pack"), "summary.csv", "test\n");
    // One file whose channels cannot be found.
    write(d.join("field"), "odd.csv", "x,y\n0,1\n");
    let out = holdfast()
        .args(["plan", "init"])
        .arg(d.join("field"))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let said = String::from_utf8_lossy(&out.stdout);
    assert!(said.contains("2 tests from 3 recordings"), "{said}");
    let plan_path = d.join("field/plan.yaml");
    let text = std::fs::read_to_string(&plan_path).unwrap();
    assert!(text.contains("file: \"a.csv\""), "{text}");
    assert!(text.contains("file: \"day2/b.cfg\""), "{text}");
    assert!(text.contains("va <- va (V)"), "the channels found: {text}");
    assert!(
        text.contains("# - id: \"odd\""),
        "unreadable kept as a comment"
    );
    assert!(!text.contains("summary.csv") && !text.contains("hidden"));
    assert!(!text.contains("b.dat"), "the .dat of a .cfg is not a test");
    // As written, check refuses it and names what to fill in.
    let refused = holdfast()
        .arg("check")
        .arg(&plan_path)
        .arg("--out")
        .arg(d.join("pack"))
        .output()
        .unwrap();
    assert_eq!(refused.status.code(), Some(2));
    let err = String::from_utf8_lossy(&refused.stderr);
    assert!(err.contains("rated_voltage_kv 0 must be positive"), "{err}");
    // Filled in, it runs every test.
    let rules = root().join("rules/eu-rfg-ppm-type-d-example.yaml");
    let filled = text
        .replace("rated_voltage_kv: 0 ", "rated_voltage_kv: 0.69 ")
        .replace("rated_power_mva: 0 ", "rated_power_mva: 4.2 ")
        .replace("FILL-IN.yaml", &rules.display().to_string());
    std::fs::write(&plan_path, filled).unwrap();
    let ids = check_ids(&plan_path, &d.join("pack"));
    assert_eq!(ids, ["a", "b"]);
    // An existing plan is kept unless --force.
    let again = holdfast()
        .args(["plan", "init"])
        .arg(d.join("field"))
        .output()
        .unwrap();
    assert_eq!(again.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&again.stderr).contains("--force"));
}

#[test]
fn a_pattern_in_file_makes_one_test_per_recording() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::create_dir_all(d.join("rec")).unwrap();
    for (name, res) in [
        ("dip-a.csv", "0.3"),
        ("dip-b.csv", "0.5"),
        ("dip-c.cfg", "0.7"),
    ] {
        synth(&d.join("rec"), name, &SHORT, &["--residual", res]);
    }
    let plan = format!(
        "unit: {{ rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }}\nrules: {}\ntests:\n  - {{ id: S, file: \"rec/dip-*\" }}\n  - {{ id: one, file: rec/dip-a.csv }}\n",
        root().join("rules/eu-rfg-ppm-type-d-example.yaml").display()
    );
    let plan = write(d, "plan.yaml", plan);
    let ids = check_ids(&plan, &d.join("pack"));
    // In path order; the .dat beside dip-c.cfg is not a recording of its own.
    assert_eq!(ids, ["S-dip-a", "S-dip-b", "S-dip-c", "one"]);
    // A pattern that matches nothing is an input error at its line.
    let bad = write(
        d,
        "bad.yaml",
        format!(
            "unit: {{ rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }}\nrules: {}\ntests:\n  - id: X\n    file: \"rec/none-*.csv\"\n",
            root().join("rules/eu-rfg-ppm-type-d-example.yaml").display()
        ),
    );
    let out = holdfast()
        .arg("check")
        .arg(&bad)
        .arg("--out")
        .arg(d.join("p2"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("bad.yaml:5:5") && err.contains("matches no recording"),
        "{err}"
    );
}
