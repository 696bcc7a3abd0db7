//! Model validation against errors derived in closed form: RMS-level
//! recordings at 1 ms whose simulated twin differs by a constant, a ramp or
//! a delayed step, so ME, MAE and MXE per window follow by hand.
//!
//! Both recordings: `v_pos` 1 pu, 0.5 pu from 1.0 s to 1.5 s (the
//! disturbance starts at the first sample below 0.9 pu, 1.000 s, and ends at
//! the first back inside, 1.500 s); `p` 0.8 pu, `q` 0. Rule windows:
//! pre-fault 0.4 s, fault transient 0.14 s, post transient 0.5 s, post 1.0 s:
//! pre [0.6, 0.98) = 380 samples, fault [1.14, 1.5) = 360, post [2.0, 2.5) = 500.

use crate::common::*;
use serde_json::Value;

const RULE: &str = "id: v\ntitle: v\nsource: test\nwindows: { prefault_s: 0.4, fault_transient_s: 0.14, post_transient_s: 0.5, post_s: 1.0 }\nlimits:\n  - { quantity: v1, mxe_pu: 0.01 }\n  - { quantity: p, me_pu: 0.03, mae_pu: 0.03, mxe_pu: 0.05 }\n";

/// An RMS-level CSV: `p(t)` as given, the dip from `dip_at` for 0.5 s.
fn rms(
    dir: &std::path::Path,
    name: &str,
    dip_at: f64,
    p: impl Fn(f64) -> f64,
) -> std::path::PathBuf {
    let mut s = String::from("t,v_pos,p,q\n");
    for k in 0..=3000 {
        let t = k as f64 * 1e-3;
        let v = if (dip_at..dip_at + 0.5).contains(&(t + 1e-12)) {
            0.5
        } else {
            1.0
        };
        s += &format!("{t:.6},{v},{},0\n", p(t));
    }
    write(dir, name, s)
}

fn validate(dir: &std::path::Path, sim: &std::path::Path, extra: &[&str]) -> (i32, Value) {
    let meas = rms(dir, "meas.csv", 1.0, |_| 0.8);
    let rule = write(dir, "rule.yaml", RULE);
    let out = holdfast()
        .arg("validate")
        .arg(&meas)
        .arg(sim)
        .arg("--rules")
        .arg(&rule)
        .args(["--frequency", "50", "--json", "--out"])
        .arg(dir.join("pack"))
        .args(extra)
        .output()
        .unwrap();
    let code = out.status.code().unwrap();
    assert!(code < 2, "{}", String::from_utf8_lossy(&out.stderr));
    (code, serde_json::from_slice(&out.stdout).unwrap())
}

fn row<'a>(v: &'a Value, window: &str, q: &str) -> &'a Value {
    v["rows"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["window"] == window && r["quantity"] == q)
        .unwrap_or_else(|| panic!("{window}/{q}: {v:#}"))
}

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap()
}

#[test]
fn a_constant_offset_gives_equal_errors_in_every_window() {
    let dir = tempfile::tempdir().unwrap();
    let sim = rms(dir.path(), "sim.csv", 1.0, |_| 0.82);
    let (code, v) = validate(dir.path(), &sim, &[]);
    for (w, n) in [("pre", 380), ("fault", 360), ("post", 500)] {
        let r = row(&v, w, "p");
        assert_eq!(r["samples"], n, "{w}");
        for key in ["me_pu", "mae_pu", "mxe_pu"] {
            assert!((f(&r[key]) - 0.02).abs() < 1e-12, "{w} {key}: {r}");
        }
        assert_eq!(r["verdict"], "pass");
        // The voltage is the same in both: no error.
        assert_eq!(f(&row(&v, w, "v1")["mxe_pu"]), 0.0);
    }
    assert_eq!(code, 0);
    assert_eq!(v["verdict"], "pass");
    assert!((f(&v["alignment"]["shift_s"])).abs() < 1e-12);
}

#[test]
fn a_ramp_and_a_delayed_step_give_their_closed_form_errors() {
    let dir = tempfile::tempdir().unwrap();
    // Ramp of 0.1 pu/s from the fault window's compared start 1.14 s:
    // errors r·(t − 1.14) at t = 1.140 … 1.499 (N = 360, dt = 1 ms), so
    // ME = MAE = r·(N − 1)·dt/2 = 0.01795 pu, MXE = r·(N − 1)·dt = 0.0359 pu.
    let sim = rms(dir.path(), "ramp.csv", 1.0, |t| {
        if (1.14..1.5).contains(&(t + 1e-12)) {
            0.8 + 0.1 * (t - 1.14)
        } else {
            0.8
        }
    });
    let (_, v) = validate(dir.path(), &sim, &[]);
    let r = row(&v, "fault", "p");
    assert!((f(&r["me_pu"]) - 0.01795).abs() < 1e-9, "{r}");
    assert!((f(&r["mae_pu"]) - 0.01795).abs() < 1e-9, "{r}");
    assert!((f(&r["mxe_pu"]) - 0.0359).abs() < 1e-9, "{r}");
    assert!((f(&r["mxe_at_s"]) - 1.499).abs() < 1e-9, "{r}");
    // Pre- and post-fault untouched.
    assert_eq!(f(&row(&v, "post", "p")["mxe_pu"]), 0.0);
    // A step of p from 0.8 to 0.4 pu at 1.20 s in the measurement would be
    // compared with one at 1.25 s: the measured recording is the plain one
    // here, so the simulated twin dips 0.4 pu for 50 ms: 50 of 360 samples
    // with error −0.4: ME = −0.4·50/360 = −0.05556, MAE = 0.05556, MXE = 0.4.
    let sim = rms(dir.path(), "step.csv", 1.0, |t| {
        if (1.20..1.25).contains(&(t + 1e-12)) {
            0.4
        } else {
            0.8
        }
    });
    let (code, v) = validate(dir.path(), &sim, &[]);
    let r = row(&v, "fault", "p");
    assert!((f(&r["me_pu"]) + 0.4 * 50.0 / 360.0).abs() < 1e-9, "{r}");
    assert!((f(&r["mae_pu"]) - 0.4 * 50.0 / 360.0).abs() < 1e-9, "{r}");
    assert!((f(&r["mxe_pu"]) - 0.4).abs() < 1e-9, "{r}");
    assert_eq!(r["verdict"], "fail", "{r}");
    assert_eq!(code, 1);
}

#[test]
fn the_simulation_is_aligned_on_the_disturbance_start_and_the_offset_adds() {
    let dir = tempfile::tempdir().unwrap();
    // The same test simulated 0.1 s later (its clock starts earlier): after
    // the alignment the errors are those of the constant offset.
    let sim = rms(dir.path(), "late.csv", 1.1, |_| 0.82);
    let (_, v) = validate(dir.path(), &sim, &[]);
    assert!(
        (f(&v["alignment"]["shift_s"]) + 0.1).abs() < 1e-9,
        "{}",
        v["alignment"]
    );
    assert!((f(&row(&v, "fault", "p")["mxe_pu"]) - 0.02).abs() < 1e-12);
    assert!(v["alignment"]["how"]
        .as_str()
        .unwrap()
        .contains("-0.1000 s"));
    // A manual offset of 10 ms adds to the automatic shift of −0.1 s, and
    // the report states it.
    let (_, v) = validate(dir.path(), &sim, &["--offset", "0.01"]);
    assert!((f(&v["alignment"]["shift_s"]) + 0.09).abs() < 1e-9);
    assert_eq!(f(&v["alignment"]["manual_offset_s"]), 0.01);
    assert!(v["alignment"]["how"]
        .as_str()
        .unwrap()
        .contains("manual offset"));
}

#[test]
fn waveform_measurement_against_an_rms_simulation_of_the_sample() {
    // sample-data/simulations: T01 simulated at RMS level with a slightly
    // different controller (sample-data/make-recordings.sh); within the
    // demo rule's limits.
    let dir = tempfile::tempdir().unwrap();
    let out = holdfast()
        .current_dir(root())
        .args([
            "validate",
            "sample-data/recordings/t01-deep-symmetrical.csv",
            "sample-data/simulations/t01-deep-symmetrical-sim.csv",
            "--rules",
            "sample-data/validation-rule.yaml",
        ])
        .args(RATINGS)
        .arg("--out")
        .arg(dir.path().join("pack"))
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let pack = dir.path().join("pack");
    for f in [
        "validation.json",
        "validation.csv",
        "validation.html",
        "plots/validation-p.svg",
    ] {
        assert!(pack.join(f).exists(), "{f}");
    }
    let html = std::fs::read_to_string(pack.join("validation.html")).unwrap();
    assert!(html.contains("not a certification") && !html.contains("<script"));
    // The results follow their committed schema (jsonschema crate).
    let results: Value =
        serde_json::from_str(&std::fs::read_to_string(pack.join("validation.json")).unwrap())
            .unwrap();
    let schema: Value = serde_json::from_str(
        &std::fs::read_to_string(root().join("schemas/validation-results-v1.schema.json")).unwrap(),
    )
    .unwrap();
    let v = jsonschema::validator_for(&schema).unwrap();
    let errs: Vec<String> = v.iter_errors(&results).map(|e| e.to_string()).collect();
    assert!(errs.is_empty(), "{errs:?}");
    // Response times side by side: both recordings show a reactive current rise.
    for side in ["measured", "simulated"] {
        let d = &results["dynamics"][side];
        assert!(d["iq_rise_s"].as_f64().unwrap() < 0.03, "{d}");
        assert!(d["p_recovery_s"].as_f64().unwrap() < 1.0, "{d}");
    }
}

#[test]
fn committed_validation_schemas_match_the_types() {
    // Regenerate with UPDATE_SCHEMAS=1 cargo test validation.
    let results = serde_json::to_string_pretty(&schemars::schema_for!(
        holdfast::report::validation::ValidationResults
    ))
    .unwrap()
        + "\n";
    let rule = serde_json::to_string_pretty(&holdfast::validation::spec::schema()).unwrap() + "\n";
    for (file, text) in [
        ("schemas/validation-results-v1.schema.json", results),
        ("schemas/validation.schema.json", rule),
    ] {
        let path = root().join(file);
        if std::env::var_os("UPDATE_SCHEMAS").is_some() {
            std::fs::write(&path, &text).unwrap();
        }
        assert_eq!(
            std::fs::read_to_string(&path).unwrap_or_default(),
            text,
            "{file} is stale"
        );
    }
}
