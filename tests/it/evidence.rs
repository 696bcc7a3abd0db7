//! A self-describing evidence pack: the unit, the per-unit bases, the
//! requirements as applied, the analysis settings, a copy of every rule set
//! and its figures, the project fields and a per-test table.

use crate::common::*;

fn f(v: &serde_json::Value) -> f64 {
    v.as_f64().unwrap()
}

#[test]
fn the_pack_states_ratings_bases_requirements_and_settings() {
    let run = sample_run();
    let r = &run.results;
    // Per-unit bases of a 0.69 kV, 4.2 MVA unit. The textbook per-unit
    // relations (common practice): voltage base Un/√3 phase to neutral,
    // current base Sn/(√3·Un); the numbers by hand: 690/1.7320508 =
    // 398.372 V, 4.2e6/(1.7320508·690) = 3514.31 A.
    let b = &r["ratings"];
    assert_eq!(f(&b["rated_voltage_kv"]), 0.69);
    assert_eq!(f(&b["rated_power_mva"]), 4.2);
    assert_eq!(f(&b["frequency_hz"]), 50.0);
    assert!((f(&b["voltage_base_phase_to_neutral_v"]) - 398.372).abs() < 1e-3);
    assert!((f(&b["voltage_base_phase_to_phase_v"]) - 690.0).abs() < 1e-9);
    assert!((f(&b["current_base_a"]) - 3514.31).abs() < 1e-2);
    assert_eq!(f(&b["power_base_mva"]), 4.2);
    // The project fields and description of the plan.
    let p = &r["project"];
    assert!(p["name"].is_null(), "the plan's project name is `project`");
    assert!(p["project"].as_str().unwrap().contains("Saltmarsh Ridge"));
    for key in [
        "applicant",
        "network_operator",
        "test_campaign",
        "report_revision",
        "author",
        "reviewer",
        "description",
    ] {
        assert!(p[key].is_string(), "{key}");
    }
    // The version with the commit it was built from (a git checkout).
    if let Some(c) = r["tool"]["commit"].as_str() {
        assert!(
            c.len() >= 7 && c.chars().all(|c| c.is_ascii_hexdigit()),
            "{c}"
        );
    }
    // Normalised paths: no `..` or `./` anywhere.
    let text = r.to_string();
    assert!(!text.contains("/../") && !text.contains("\"./"), "{text}");
    assert_eq!(r["rules"]["path"], "rules/eu-rfg-ppm-type-d-example.yaml");
    // Every rule set as applied, with a copy and its figures in the pack.
    let sets = r["rule_sets"].as_array().unwrap();
    // The plan's rule set and the per-test ones (duration tables, phase
    // jump, repeated faults, frequency): sample-data/plan.yaml.
    assert_eq!(sets.len(), 5);
    for s in sets {
        let copy = run.dir.path().join(s["copy"].as_str().unwrap());
        let bytes = std::fs::read(&copy).unwrap();
        let original = std::fs::read(root().join(s["path"].as_str().unwrap())).unwrap();
        assert_eq!(bytes, original, "{}", copy.display());
        // Zone boundaries and current characteristics are drawn (phase-jump,
        // sequence and frequency rules have no figure of their own).
        let figures = s["figures"].as_array().unwrap();
        let drawable = s["checks"].as_array().unwrap().iter().any(|c| {
            ["envelope", "duration_table", "reactive_current"]
                .contains(&c["type"].as_str().unwrap())
        });
        assert_eq!(!figures.is_empty(), drawable, "{}", s["id"]);
        for fig in figures {
            let svg = std::fs::read_to_string(run.dir.path().join(fig.as_str().unwrap())).unwrap();
            assert!(svg.starts_with("<svg"), "{fig}");
        }
    }
    let eu = &sets[0];
    let lvrt = eu["checks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["id"] == "lvrt")
        .unwrap();
    // The envelope as the rule set gives it (rules/eu-rfg-ppm-type-d-example.yaml).
    assert_eq!(lvrt["points"][2], serde_json::json!([1.5, 0.85]));
    let iq = eu["checks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["id"] == "iq-positive")
        .unwrap();
    assert_eq!(f(&iq["gain"]), 2.0);
    assert_eq!(f(&iq["dead_band_pu"]), 0.1);
    assert_eq!(iq["dead_band_mode"], "offset");
    assert_eq!(f(&eu["disturbance"]["below_pu"]), 0.9);
    // Analysis settings, overall and per test (one cycle at 50 Hz).
    assert_eq!(r["analysis"]["window_cycles"], 1);
    for t in r["tests"].as_array().unwrap() {
        let a = &t["analysis"];
        assert!((f(&a["window_s"]) - 0.02).abs() < 1e-12);
        assert!((f(&a["detection"]["prefault_guard_s"]) - 0.02).abs() < 1e-12);
        assert!(f(&a["detection"]["hysteresis_pu"]) > 0.0);
        assert!(t["rule_set"].is_string());
    }
}

#[test]
fn tests_csv_has_one_row_per_test_and_summary_names_the_rule_set() {
    let run = sample_run();
    let dir = run.dir.path();
    let mut rd = csv::Reader::from_path(dir.join("tests.csv")).unwrap();
    let header: Vec<String> = rd.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(&header[..4], ["test", "recording", "rule_set", "verdict"]);
    let rows: Vec<csv::StringRecord> = rd.records().map(|r| r.unwrap()).collect();
    let tests = run.results["tests"].as_array().unwrap();
    assert_eq!(rows.len(), tests.len());
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    for (row, t) in rows.iter().zip(tests) {
        assert_eq!(row[0], *t["id"].as_str().unwrap());
        assert_eq!(row[col("verdict")], *t["verdict"].as_str().unwrap());
        assert_eq!(row[col("rule_set")], *t["rule_set"].as_str().unwrap());
    }
    // T04 trips 150 ms into a fault that starts at 0.5 s (sample-data/plan.yaml);
    // its worst check is the envelope it broke.
    let t04 = rows.iter().find(|r| &r[0] == "T04").unwrap();
    assert!((t04[col("trip_s")].parse::<f64>().unwrap() - 0.65).abs() < 0.005);
    assert_eq!(&t04[col("worst_check")], "lvrt");
    assert_eq!(&t04[col("worst_reason")], "trip_inside_zone");
    let t09 = rows.iter().find(|r| &r[0] == "T09").unwrap();
    assert_eq!(&t09[col("rule_set")], "nerc-prc-024-2-example");
    assert_eq!(&t09[col("kind")], "overvoltage");
    // Times in seconds in every column that holds one.
    assert!(header
        .iter()
        .filter(|h| h.contains("time") || h.ends_with("_ms"))
        .all(|h| h.ends_with("_s")));
    let summary = std::fs::read_to_string(dir.join("summary.csv")).unwrap();
    let first = summary.lines().next().unwrap();
    assert!(first.ends_with(",rule_set"), "{first}");
    assert!(summary
        .lines()
        .skip(1)
        .any(|l| l.starts_with("T09,") && l.ends_with(",nerc-prc-024-2-example")));
}

#[test]
fn a_plan_of_800_tests_gets_a_small_index_and_small_pages() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    // Two short recordings (a pass and a trip), each used by 400 tests.
    synth(
        d,
        "a.csv",
        &["--sample-rate", "2000", "--duration", "2.5"],
        &[],
    );
    synth(
        d,
        "b.csv",
        &["--sample-rate", "2000", "--duration", "1.5"],
        &["--residual", "0.5", "--trip-at", "0.8"],
    );
    let mut plan = format!(
        "unit: {{ rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }}\nrules: {}\ntests:\n",
        root().join("rules/eu-rfg-ppm-type-d-example.yaml").display()
    );
    for k in 0..800 {
        plan += &format!(
            "  - {{ id: case-{k:04}, file: {}.csv }}\n",
            if k % 2 == 1 { "a" } else { "b" }
        );
    }
    let plan = write(d, "plan.yaml", plan);
    let out = d.join("pack");
    holdfast()
        .args(["check", "-q"])
        .arg(&plan)
        .arg("--out")
        .arg(&out)
        .assert()
        .code(1);
    let index = std::fs::metadata(out.join("index.html")).unwrap().len();
    assert!(index < 2_000_000, "index.html {index} bytes");
    let pages: Vec<_> = std::fs::read_dir(out.join("tests"))
        .unwrap()
        .map(|e| e.unwrap())
        .collect();
    assert_eq!(pages.len(), 800);
    for p in &pages {
        let n = p.metadata().unwrap().len();
        assert!(n < 1_000_000, "{:?}: {n} bytes", p.file_name());
    }
    // The index lists the failed tests first and links every test page.
    let html = std::fs::read_to_string(out.join("index.html")).unwrap();
    let first_pass = html.find("verdict pass\">PASS").unwrap();
    let last_fail = html.rfind("verdict fail\">FAIL").unwrap();
    assert!(last_fail < first_pass, "failed tests first");
    assert_eq!(html.matches("href=\"tests/").count(), 800);
    assert!(!html.contains("<script"));
    // The whole report is still there, every test in it.
    let report = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert_eq!(report.matches("<section class=\"test\"").count(), 800);
}

#[test]
fn the_sample_plan_validates_its_paired_simulations() {
    // sample-data/plan.yaml pairs T01 and T02 with simulations
    // (sample-data/simulations) under sample-data/validation-rule.yaml.
    let run = sample_run();
    let tests = run.results["tests"].as_array().unwrap();
    for id in ["T01", "T02"] {
        let t = tests.iter().find(|t| t["id"] == id).unwrap();
        let v = &t["validation"];
        assert_eq!(v["verdict"], "pass", "{id}: {v}");
        assert_eq!(v["rules"], "demo-model-validation");
        let page = run.dir.path().join(v["report"].as_str().unwrap());
        assert!(page.exists(), "{}", page.display());
        let json = page.with_file_name("validation.json");
        let r: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(json).unwrap()).unwrap();
        assert_eq!(r["measured"]["sha256"], t["recording"]["sha256"]);
    }
    assert!(tests.iter().filter(|t| t["validation"].is_object()).count() == 2);
    assert!(run.stdout.contains("Model validation T01: PASS"));
}
