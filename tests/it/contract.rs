//! The user-facing contracts: results.json against its shipped JSON Schema
//! and against the field names of the interface document; the sample plan's
//! verdicts end to end through the binary.

use crate::common::{holdfast, root, sample_run};
use holdfast::rules::result::Results;
use serde_json::Value;
use std::collections::BTreeSet;

#[test]
fn committed_schema_matches_the_result_types() {
    // The schema file is generated from the Rust types; regenerate with
    // UPDATE_SCHEMAS=1 cargo test --test contract.
    let generated = serde_json::to_string_pretty(&schemars::schema_for!(Results)).unwrap() + "\n";
    let path = root().join("schemas/results-v1.schema.json");
    if std::env::var_os("UPDATE_SCHEMAS").is_some() {
        std::fs::write(&path, &generated).unwrap();
    }
    let committed = std::fs::read_to_string(&path).unwrap_or_default();
    assert_eq!(
        committed, generated,
        "schemas/results-v1.schema.json is stale: run UPDATE_SCHEMAS=1 cargo test --test contract"
    );
}

#[test]
fn sample_results_validate_against_the_shipped_schema() {
    let results = &sample_run().results;
    let results = results.clone();
    let schema: Value = serde_json::from_str(
        &std::fs::read_to_string(root().join("schemas/results-v1.schema.json")).unwrap(),
    )
    .unwrap();
    // Independent check: the general-purpose `jsonschema` crate.
    let validator = jsonschema::validator_for(&schema).expect("valid schema");
    let errors: Vec<String> = validator
        .iter_errors(&results)
        .map(|e| format!("{e} at {}", e.instance_path))
        .collect();
    assert!(errors.is_empty(), "{errors:#?}");
    // A document with a renamed field must not validate.
    let mut broken = results.clone();
    broken["tests"][0]["checks"][0]
        .as_object_mut()
        .unwrap()
        .remove("margin");
    assert!(!validator.is_valid(&broken));
    // And the typed round trip keeps everything.
    let typed: Results = serde_json::from_value(results.clone()).unwrap();
    assert_eq!(serde_json::to_value(&typed).unwrap(), results);
}

/// The example of `results.json` schema version 1 as the format was agreed,
/// copied verbatim apart from the alternatives in verdict strings: every
/// field it names must be in the results.
const INTERFACE_EXAMPLE: &str = r#"{
  "schema_version": 1,
  "tool": { "name": "holdfast", "version": "0.1.0" },
  "plan": { "path": "...", "sha256": "..." },
  "rules": { "id": "...", "path": "...", "sha256": "..." },
  "verdict": "fail",
  "tests": [
    {
      "id": "T01",
      "recording": { "path": "...", "sha256": "...", "sample_rate_hz": 10000.0, "duration_s": 5.0 },
      "verdict": "pass",
      "disturbances": [
        { "kind": "undervoltage", "start_s": 1.0, "end_s": 1.5,
          "extreme_pu": 0.2, "balance": "symmetrical" }
      ],
      "trip": { "tripped": false, "time_s": null },
      "checks": [
        { "id": "lvrt", "type": "envelope", "disturbance": 0,
          "verdict": "pass",
          "measured": 0.05, "limit": 0.0, "margin": 0.05, "unit": "pu",
          "at_s": 1.12, "detail": "human-readable sentence" }
      ]
    }
  ]
}"#;

fn key_paths(v: &Value, prefix: &str, out: &mut BTreeSet<String>) {
    match v {
        Value::Object(m) => {
            for (k, x) in m {
                let p = format!("{prefix}.{k}");
                out.insert(p.clone());
                key_paths(x, &p, out);
            }
        }
        Value::Array(a) => {
            for x in a {
                key_paths(x, &format!("{prefix}[]"), out);
            }
        }
        _ => {}
    }
}

#[test]
fn field_names_follow_the_interface_document() {
    let example: Value = serde_json::from_str(INTERFACE_EXAMPLE).unwrap();
    let mut want = BTreeSet::new();
    key_paths(&example, "", &mut want);
    let results = &sample_run().results;
    let results = results.clone();
    let mut have = BTreeSet::new();
    key_paths(&results, "", &mut have);
    let missing: Vec<_> = want.difference(&have).collect();
    assert!(
        missing.is_empty(),
        "fields of the agreed example missing from results.json: {missing:?}"
    );
    // The interface example itself deserialises into the typed results.
    let typed: Results = serde_json::from_value(example).unwrap();
    assert_eq!(typed.schema_version, 1);
    // Reactive current checks carry the documented extra fields.
    let iq = results["tests"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(|t| t["checks"].as_array().unwrap().iter())
        .find(|c| c["type"] == "reactive_current" && c["verdict"] == "pass")
        .unwrap();
    for k in ["settling_time_s", "required_gain", "measured_gain"] {
        assert!(iq.get(k).is_some(), "reactive_current check lacks {k}");
    }
}

/// Check `cid` of test `t` in results.json.
fn check(t: &Value, cid: &str) -> Value {
    t["checks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["id"] == cid)
        .unwrap_or_else(|| panic!("{} has no check {cid}", t["id"]))
        .clone()
}

/// The answer each sample recording was built to give: (test, verdict,
/// [(check, verdict, reason)]).
type Designed = Vec<(
    &'static str,
    &'static str,
    Vec<(&'static str, &'static str, &'static str)>,
)>;

fn designed() -> Designed {
    vec![
        (
            "T01",
            "pass",
            vec![
                ("connection", "pass", "stayed_connected"),
                ("lvrt", "pass", "no_trip"),
                ("iq-positive", "pass", "within_limits"),
                ("iq-negative", "not_applicable", "not_triggered"),
                ("p-recovery", "pass", "recovered"),
                ("realisation", "pass", "as_planned"),
            ],
        ),
        (
            "T02",
            "pass",
            vec![
                ("iq-positive", "pass", "within_limits"),
                ("iq-negative", "pass", "within_limits"),
                ("realisation", "pass", "as_planned"),
            ],
        ),
        (
            "T03",
            "pass",
            vec![
                ("iq-positive", "not_applicable", "not_triggered"),
                ("lvrt", "pass", "no_trip"),
            ],
        ),
        (
            "T04",
            "fail",
            vec![
                ("connection", "fail", "trip_inside_zone"),
                ("lvrt", "fail", "trip_inside_zone"),
                ("p-recovery", "fail", "tripped_before_recovery"),
            ],
        ),
        (
            "T05",
            "pass",
            vec![
                ("connection", "pass", "permitted_trip"),
                ("lvrt", "pass", "permitted_trip"),
                ("p-recovery", "not_applicable", "trip_permitted"),
            ],
        ),
        (
            "T06",
            "fail",
            vec![
                ("iq-positive", "fail", "rise_too_slow"),
                ("lvrt", "pass", "no_trip"),
            ],
        ),
        (
            "T07",
            "fail",
            vec![("iq-positive", "fail", "never_reached")],
        ),
        (
            "T08",
            "fail",
            vec![
                ("p-recovery", "fail", "recovered_late"),
                ("iq-positive", "pass", "within_limits"),
            ],
        ),
        (
            "T09",
            "pass",
            vec![
                ("hv-table", "pass", "no_trip"),
                ("lv-table", "not_applicable", "not_triggered"),
            ],
        ),
        (
            // 12 ms fault: no trip, so the envelope passes whatever its
            // depth (docs/rules.md, `envelope`, short faults); the reactive current cannot be judged.
            "T10",
            "inconclusive",
            vec![
                ("lvrt", "pass", "no_trip"),
                ("iq-positive", "inconclusive", "insufficient_data"),
            ],
        ),
        (
            "T11",
            "pass",
            vec![("lv-table", "pass", "rode_through_beyond_zone")],
        ),
        (
            "T12",
            "fail",
            vec![
                ("iq-positive", "fail", "rise_too_slow"),
                ("lvrt", "pass", "no_trip"),
            ],
        ),
        (
            "T13",
            "fail",
            vec![
                ("lv-table", "fail", "trip_inside_zone"),
                ("connection", "fail", "trip_inside_zone"),
            ],
        ),
        (
            "T14",
            "pass",
            vec![
                ("iq-negative", "pass", "within_limits"),
                ("realisation", "pass", "as_planned"),
            ],
        ),
    ]
}

/// The sample tests of events other than dips (T15–T17).
fn designed_events() -> Designed {
    vec![
        (
            // 20° phase jump (within 25°), trip 0.3 s later.
            "T15",
            "fail",
            vec![
                ("phase-jump", "fail", "trip_inside_zone"),
                ("connection", "fail", "trip_inside_zone"),
            ],
        ),
        (
            "T16",
            "pass",
            vec![("repeated", "pass", "no_trip"), ("lvrt", "pass", "no_trip")],
        ),
        (
            // 48.8 Hz, trip at 4 s: inside the 30 min range; 0.5 Hz/s.
            "T17",
            "fail",
            vec![
                ("f-low", "fail", "trip_inside_zone"),
                ("f-high", "not_applicable", "not_triggered"),
                ("rocof", "fail", "trip_inside_zone"),
                ("connection", "fail", "trip_inside_zone"),
            ],
        ),
    ]
}

#[test]
fn sample_plan_gives_the_designed_verdicts() {
    // Each sample recording was built to show one verdict path
    // (sample-data/plan.yaml explains how each answer follows). Each
    // expectation is (check, verdict, reason).
    let run = sample_run();
    let (results, code) = (&run.results, run.code);
    assert_eq!(code, 1, "the sample plan contains failing tests by design");
    let mut expected = designed();
    expected.extend(designed_events());
    let tests = results["tests"].as_array().unwrap();
    assert_eq!(tests.len(), expected.len());
    for (id, verdict, checks) in expected {
        let t = tests
            .iter()
            .find(|t| t["id"] == id)
            .unwrap_or_else(|| panic!("{id} missing"));
        assert_eq!(t["verdict"], verdict, "{id}: {:#}", t["checks"]);
        for (cid, cv, reason) in checks {
            let c = check(t, cid);
            assert_eq!(c["verdict"], cv, "{id}/{cid}: {}", c["detail"]);
            assert_eq!(c["reason"], reason, "{id}/{cid}: {}", c["detail"]);
        }
    }
}

#[test]
fn sample_margins_agree_with_the_verdicts() {
    let run = sample_run();
    let (dir, results) = (&run.dir, &run.results);
    let tests = results["tests"].as_array().unwrap();
    // Every recording has a connection check; margins agree with verdicts
    // (docs/rules.md, "Reasons and margins"): ≥ 0 for pass, < 0 for fail, none for
    // inconclusive and not applicable rows (nor a measured value).
    for t in tests {
        check(t, "connection");
        for c in t["checks"].as_array().unwrap() {
            let m = c["margin"].as_f64();
            match c["verdict"].as_str().unwrap() {
                "pass" => assert!(m.is_none_or(|m| m >= 0.0), "{}: {c:#}", t["id"]),
                "fail" => assert!(m.is_none_or(|m| m < 0.0), "{}: {c:#}", t["id"]),
                _ => assert!(m.is_none() && c["measured"].is_null(), "{}: {c:#}", t["id"]),
            }
        }
    }
    let t05 = tests.iter().find(|t| t["id"] == "T05").unwrap();
    let lvrt = check(t05, "lvrt");
    assert_eq!(lvrt["permitted_trip"], true);
    // Permitted trip: the margin is the time from leaving the zone to the
    // trip (s). T05: the envelope rises above 0.3 pu 0.627 s after the start
    // (see tests/it/checks.rs) and the unit trips 0.8 s after it: about 0.17 s.
    assert_eq!(lvrt["unit"], "s");
    let m = lvrt["margin"].as_f64().unwrap();
    assert!((m - 0.173).abs() < 0.01, "{m}");
    // Trip inside the zone: minus the headroom at the trip (T04: 0.5 pu
    // against the 0 pu floor).
    let t04 = tests.iter().find(|t| t["id"] == "T04").unwrap();
    let m = check(t04, "lvrt")["margin"].as_f64().unwrap();
    assert!((m + 0.5).abs() < 0.01, "{m}");
    assert_eq!(
        tests.iter().find(|t| t["id"] == "T11").unwrap()["recording"]["kind"],
        "rms_level"
    );
    // The summary has one row per (test, check) plus the header.
    let summary = std::fs::read_to_string(dir.path().join("summary.csv")).unwrap();
    let rows: usize = tests
        .iter()
        .map(|t| t["checks"].as_array().unwrap().len())
        .sum();
    assert_eq!(summary.lines().count(), rows + 1);
    assert!(summary
        .lines()
        .next()
        .unwrap()
        .ends_with(",reason,rule_set"));
    assert!(summary.contains(",trip_inside_zone"));
    // Traceability: hashes of plan, rule set and recordings.
    assert_eq!(results["plan"]["sha256"].as_str().unwrap().len(), 64);
    assert_eq!(results["rules"]["sha256"].as_str().unwrap().len(), 64);
    assert!(tests
        .iter()
        .all(|t| t["recording"]["sha256"].as_str().unwrap().len() == 64));
    assert!(results["caution"]
        .as_str()
        .unwrap()
        .contains("not a certification"));
}

#[test]
fn inspect_json_is_versioned_and_follows_its_committed_schema() {
    // Decision F.20: `inspect --json` carries schema_version 1 and a
    // committed schema (regenerate with UPDATE_SCHEMAS=1).
    let generated = holdfast::commands::inspect::schema();
    let path = root().join("schemas/inspect-v1.schema.json");
    if std::env::var_os("UPDATE_SCHEMAS").is_some() {
        std::fs::write(&path, &generated).unwrap();
    }
    let committed = std::fs::read_to_string(&path).unwrap_or_default();
    assert_eq!(
        committed, generated,
        "schemas/inspect-v1.schema.json is stale: run UPDATE_SCHEMAS=1 cargo test --test contract"
    );
    let schema: Value = serde_json::from_str(&committed).unwrap();
    let validator = jsonschema::validator_for(&schema).expect("valid schema");
    for (file, extra) in [
        ("sample-data/recordings/t01-deep-symmetrical.csv", vec![]),
        (
            "sample-data/recordings/t14-comtrade-single-phase.cff",
            vec!["--map", "status=status"],
        ),
        // Without ratings: channels and sampling only, no analysis.
        (
            "sample-data/recordings/t04-trip-inside.csv",
            vec!["--no-ratings"],
        ),
    ] {
        let mut cmd = holdfast();
        cmd.current_dir(root()).args(["inspect", file, "--json"]);
        if extra.first() != Some(&"--no-ratings") {
            cmd.args([
                "--rated-kv",
                "0.69",
                "--rated-mva",
                "4.2",
                "--frequency",
                "50",
            ]);
            cmd.args(&extra);
        }
        let out = cmd.output().unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let v: Value = serde_json::from_slice(&out.stdout).unwrap();
        assert_eq!(v["schema_version"], 1);
        let errors: Vec<String> = validator
            .iter_errors(&v)
            .map(|e| format!("{e} at {}", e.instance_path))
            .collect();
        assert!(errors.is_empty(), "{file}: {errors:#?}");
        if extra.is_empty() {
            // Waveforms: the inception of the 0.5 s fault (docs/rules.md, inception and clearance).
            let inc = v["disturbances"][0]["inception_s"].as_f64().unwrap();
            assert!((inc - 0.5).abs() < 1e-3, "{inc}");
        }
    }
}

/// Every number of `value`, with its path, for comparing two runs.
fn numbers(value: &Value, path: String, out: &mut Vec<(String, f64)>) {
    match value {
        Value::Object(m) => {
            for (k, v) in m {
                if !["generated_utc", "command_line", "tool"].contains(&k.as_str()) {
                    numbers(v, format!("{path}.{k}"), out);
                }
            }
        }
        Value::Array(a) => {
            for (i, v) in a.iter().enumerate() {
                numbers(v, format!("{path}[{i}]"), out);
            }
        }
        Value::Number(n) => out.push((path, n.as_f64().unwrap_or(f64::NAN))),
        _ => {}
    }
}

#[test]
fn sample_results_agree_with_the_committed_reference() {
    // Speed work must not change results: every number of the sample plan's
    // results.json agrees with tests/fixtures/sample-results.json within
    // 1e-12 relative (last-digit rounding, e.g. sqrt(x² + y²) for hypot),
    // and every text is equal. Regenerate on purpose with
    // UPDATE_REFERENCE=1 cargo test contract.
    let run = sample_run();
    let path = root().join("tests/fixtures/sample-results.json");
    let mut now = run.results.clone();
    for k in ["generated_utc", "command_line", "tool"] {
        now.as_object_mut().unwrap().remove(k);
    }
    if std::env::var_os("UPDATE_REFERENCE").is_some() {
        std::fs::write(&path, serde_json::to_string_pretty(&now).unwrap() + "\n").unwrap();
    }
    let reference: Value = serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    let strip = |v: &Value| -> Value {
        let mut v = v.clone();
        fn zero(v: &mut Value) {
            match v {
                Value::Number(_) => *v = Value::from(0),
                Value::Array(a) => a.iter_mut().for_each(zero),
                Value::Object(m) => m.values_mut().for_each(zero),
                _ => {}
            }
        }
        zero(&mut v);
        v
    };
    assert_eq!(strip(&now), strip(&reference), "texts or structure changed");
    let (mut a, mut b) = (Vec::new(), Vec::new());
    numbers(&now, String::new(), &mut a);
    numbers(&reference, String::new(), &mut b);
    assert_eq!(a.len(), b.len());
    for ((p, x), (_, y)) in a.iter().zip(&b) {
        let tol = 1e-12 * y.abs().max(1e-3);
        assert!((x - y).abs() <= tol, "{p}: {x} against the reference {y}");
    }
}
