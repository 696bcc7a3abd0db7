//! Verdict semantics through the binary (docs/rules.md):
//! each case builds its recording with `holdfast synth`, checks it with a
//! small rule set, and reads results.json. The expected answers follow from
//! how each recording is built (stated beside each case).

use crate::common::{self, holdfast, write, RATINGS};
use serde_json::Value;
use std::path::{Path, PathBuf};

/// Writes a synthetic recording (0.69 kV, 4.2 MVA, 50 Hz, 5 kHz) into `dir`.
fn synth(dir: &Path, name: &str, args: &[&str]) -> PathBuf {
    common::synth(
        dir,
        name,
        &["--sample-rate", "5000", "--iq-tau", "0.005"],
        args,
    )
}

fn rules(dir: &Path, checks: &str, head: &str) -> PathBuf {
    write(
        dir,
        "rules.yaml",
        format!("id: t\ntitle: t\nsource: constructed test\n{head}checks:\n{checks}"),
    )
}

const LVRT: &str =
    "  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0], [0.15, 0], [1.5, 0.85]] }\n";

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
    results: Option<Value>,
}

/// One-off check of `files` against `rules` with the rating flags.
fn check(dir: &Path, rules: &Path, files: &[&Path], extra: &[&str]) -> Run {
    let out_dir = dir.join(format!("pack-{}", rand_suffix()));
    let out = holdfast()
        .arg("check")
        .arg("--rules")
        .arg(rules)
        .args(RATINGS)
        .args(extra)
        .arg("--out")
        .arg(&out_dir)
        .args(files)
        .output()
        .unwrap();
    let results = std::fs::read_to_string(out_dir.join("results.json"))
        .ok()
        .map(|t| serde_json::from_str(&t).unwrap());
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
        results,
    }
}

fn rand_suffix() -> String {
    use std::sync::atomic::{AtomicUsize, Ordering};
    static N: AtomicUsize = AtomicUsize::new(0);
    N.fetch_add(1, Ordering::Relaxed).to_string()
}

fn check_of<'a>(r: &'a Run, test: usize, id: &str) -> &'a Value {
    let res = r.results.as_ref().unwrap_or_else(|| panic!("{}", r.stderr));
    res["tests"][test]["checks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["id"] == id)
        .unwrap_or_else(|| panic!("no check {id}: {:#}", res["tests"][test]["checks"]))
}

#[test]
fn phase_jump_then_trip_fails_the_connection_check() {
    // A1: +25° phase jump at 1.0 s with no magnitude change (|V1| stays
    // above 0.97 pu even inside the one-cycle window), trip at 1.1 s.
    let d = tempfile::tempdir().unwrap();
    let f = synth(
        d.path(),
        "jump.csv",
        &[
            "--duration",
            "2",
            "--residual",
            "1",
            "--phase-jump",
            "25",
            "--fault-start",
            "1.0",
            "--fault-duration",
            "5",
            "--trip-at",
            "1.1",
            "--status",
        ],
    );
    let r = rules(d.path(), LVRT, "");
    let run = check(d.path(), &r, &[&f], &["--map", "status=status"]);
    assert_eq!(run.code, 1, "{}{}", run.stdout, run.stderr);
    let c = check_of(&run, 0, "connection");
    assert_eq!(c["verdict"], "fail");
    assert_eq!(c["reason"], "trip_outside_disturbance");
    assert!((c["at_s"].as_f64().unwrap() - 1.1).abs() < 2e-3);
    assert_eq!(check_of(&run, 0, "lvrt")["verdict"], "not_applicable");
    // The table names the reason too.
    assert!(
        run.stdout.contains("trip_outside_disturbance"),
        "{}",
        run.stdout
    );
}

#[test]
fn acb_rotation_stops_unless_declared() {
    // A2: the b and c columns hold phases c and b.
    let d = tempfile::tempdir().unwrap();
    let f = synth(
        d.path(),
        "acb.csv",
        &[
            "--duration",
            "2",
            "--residual",
            "0.5",
            "--fault-duration",
            "0.3",
            "--phase-order",
            "acb",
        ],
    );
    let r = rules(d.path(), LVRT, "");
    let run = check(d.path(), &r, &[&f], &[]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("acb.csv") && run.stderr.contains("A-C-B"),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("|V2|/|V1|"), "{}", run.stderr);
    let run = check(d.path(), &r, &[&f], &["--phase-order", "acb"]);
    assert_eq!(run.code, 0, "{}{}", run.stdout, run.stderr);
    let dist = &run.results.as_ref().unwrap()["tests"][0]["disturbances"][0];
    assert!((dist["extreme_pu"].as_f64().unwrap() - 0.5).abs() < 0.02);
    // The same through a plan: phase_order at test level.
    let plan = write(
        d.path(),
        "plan.yaml",
        "unit: { rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }\nrules: rules.yaml\ntests:\n  - { id: A, file: acb.csv, phase_order: acb }\n",
    );
    let out = holdfast()
        .arg("check")
        .arg(&plan)
        .arg("--out")
        .arg(d.path().join("plan-pack"))
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn unusable_samples_never_pass() {
    // A3.
    let d = tempfile::tempdir().unwrap();
    let cfg = synth(
        d.path(),
        "big.cfg",
        &[
            "--duration",
            "1",
            "--comtrade-type",
            "ascii",
            "--revision",
            "1999",
        ],
    );
    let text = std::fs::read_to_string(&cfg).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    // Channel 1's multiplier a (field 6) to 1e308, ratio 1e308/1e-308: the
    // primary values are infinite.
    let mut f: Vec<String> = lines[2].split(',').map(str::to_string).collect();
    f[5] = "1e308".into();
    let mut bad = lines.clone();
    let changed = f.join(",");
    bad[2] = &changed;
    std::fs::write(&cfg, bad.join("\n") + "\n").unwrap();
    let r = rules(d.path(), LVRT, "");
    let run = check(d.path(), &r, &[&cfg], &[]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("finite"), "{}", run.stderr);
    // A NaN sampling rate is an error, not a switch to timestamps.
    let rate_line = lines
        .iter()
        .position(|l| l.starts_with("5000,"))
        .expect("rate line");
    let mut nan = lines.clone();
    let nan_rate = lines[rate_line].replacen("5000", "nan", 1);
    nan[rate_line] = &nan_rate;
    std::fs::write(&cfg, nan.join("\n") + "\n").unwrap();
    let run = check(d.path(), &r, &[&cfg], &[]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("not a finite number"), "{}", run.stderr);
    // Two rows and five samples: readable, but shorter than one analysis
    // window (100 samples at 5 kHz): every check inconclusive, exit 1.
    let two = write(
        d.path(),
        "two.csv",
        "t,va,vb,vc,ia,ib,ic\n0,563,-281,-281,0,0,0\n0.0002,560,-270,-290,0,0,0\n",
    );
    let five = synth(
        d.path(),
        "five.cfg",
        &["--duration", "0.0008", "--comtrade-type", "binary"],
    );
    for f in [&two, &five] {
        let run = check(d.path(), &r, &[f], &[]);
        assert_eq!(run.code, 1, "{}{}", run.stdout, run.stderr);
        let res = run.results.as_ref().unwrap();
        assert_eq!(res["tests"][0]["verdict"], "inconclusive");
        for c in res["tests"][0]["checks"].as_array().unwrap() {
            assert_eq!(c["verdict"], "inconclusive");
            assert_eq!(c["reason"], "insufficient_data");
        }
    }
}

#[test]
fn phase_to_neutral_rules_on_phase_to_phase_recordings() {
    // A4: phase a to 0.2 pu (a single-phase-to-ground fault), b and c at
    // 1 pu. Recorded phase to neutral, a min-phase-to-neutral envelope with
    // a 0.3 pu floor sees the voltage leave the zone; recorded phase to
    // phase, V0 is unobservable: inconclusive, not pass.
    let d = tempfile::tempdir().unwrap();
    let common = [
        "--duration",
        "2.5",
        "--residuals",
        "0.2,1,1",
        "--fault-duration",
        "0.3",
        "--status",
    ];
    let ln = synth(d.path(), "ln.csv", &common);
    let mut ll_args = common.to_vec();
    ll_args.extend(["--voltage-connection", "phase_to_phase"]);
    let ll = synth(d.path(), "ll.csv", &ll_args);
    let env = "  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0.3], [1.0, 0.3], [1.0, 0.85]] }\n";
    let r = rules(d.path(), env, "applicable_voltage: min_phase_to_neutral\n");
    let run = check(d.path(), &r, &[&ln], &["--map", "status=status"]);
    let c = check_of(&run, 0, "lvrt");
    assert_eq!(c["reason"], "rode_through_beyond_zone", "{}", c["detail"]);
    let run = check(
        d.path(),
        &r,
        &[&ll],
        &[
            "--map",
            "status=status",
            "--voltage-connection",
            "phase_to_phase",
        ],
    );
    assert_eq!(run.code, 1);
    let c = check_of(&run, 0, "lvrt");
    assert_eq!(c["verdict"], "inconclusive");
    assert_eq!(c["reason"], "voltage_unobservable");
    // Two phase-to-phase channels only (v_ab, v_bc): the third is derived;
    // the positive sequence is the same as with all three.
    let text = std::fs::read_to_string(&ll).unwrap();
    let two: String = text
        .lines()
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            let mut keep = f.clone();
            keep.remove(3); // vc
            keep.join(",") + "\n"
        })
        .collect();
    let two = write(d.path(), "ll2.csv", &two);
    let pos = rules(d.path(), LVRT, "");
    let a = check(
        d.path(),
        &pos,
        &[&ll],
        &[
            "--map",
            "status=status",
            "--voltage-connection",
            "phase_to_phase",
        ],
    );
    let b = check(
        d.path(),
        &pos,
        &[&two],
        &[
            "--map",
            "status=status",
            "--voltage-connection",
            "phase_to_phase",
        ],
    );
    assert_eq!(b.code, a.code, "{}", b.stderr);
    let ea = a.results.as_ref().unwrap()["tests"][0]["disturbances"][0]["extreme_pu"]
        .as_f64()
        .unwrap();
    let eb = b.results.as_ref().unwrap()["tests"][0]["disturbances"][0]["extreme_pu"]
        .as_f64()
        .unwrap();
    assert!((ea - eb).abs() < 1e-3, "{ea} {eb}");
    assert!(b.results.as_ref().unwrap()["tests"][0]["notes"]
        .as_array()
        .unwrap()
        .iter()
        .any(|n| n.as_str().unwrap().contains("derived")));
}

#[test]
fn a_short_fault_without_trip_passes() {
    // A5: a 20 ms fault against an envelope whose floor is 0 pu for 0.4 s:
    // whatever its true depth, the unit did not trip: pass, no_trip, no margin.
    let d = tempfile::tempdir().unwrap();
    let f = synth(
        d.path(),
        "short.csv",
        &[
            "--duration",
            "2",
            "--residual",
            "0.2",
            "--fault-duration",
            "0.02",
            "--status",
        ],
    );
    let env = "  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0], [0.4, 0], [0.4, 0.8], [1.5, 0.9]] }\n";
    let r = rules(d.path(), env, "");
    let run = check(d.path(), &r, &[&f], &["--map", "status=status"]);
    assert_eq!(run.code, 0, "{}{}", run.stdout, run.stderr);
    let c = check_of(&run, 0, "lvrt");
    assert_eq!(
        (c["verdict"].as_str(), c["reason"].as_str()),
        (Some("pass"), Some("no_trip"))
    );
    assert!(c["margin"].is_null());
}

#[test]
fn recovery_follows_every_zone_check() {
    // C11: 0.3 pu for 1.0 s from 1.0 s, trip at 1.8 s. The envelope is left
    // 0.63 s after the start (permitted trip); the table "below 0.45 pu for
    // up to 0.9 s" is left only at 1.9 s, so for it the trip is inside the
    // zone: recovery is required and fails.
    let d = tempfile::tempdir().unwrap();
    let f = synth(
        d.path(),
        "trip.csv",
        &[
            "--duration",
            "3",
            "--residual",
            "0.3",
            "--fault-duration",
            "1.0",
            "--trip-at",
            "1.8",
            "--status",
        ],
    );
    let checks = format!(
        "{LVRT}  - {{ id: lv, type: duration_table, side: below, rows: [{{ beyond_pu: 0.45, max_s: 0.9 }}] }}\n  - {{ id: p, type: active_power_recovery, fraction: 0.9, within_s: 1.0 }}\n"
    );
    let r = rules(d.path(), &checks, "");
    let run = check(d.path(), &r, &[&f], &["--map", "status=status"]);
    assert_eq!(check_of(&run, 0, "lvrt")["reason"], "permitted_trip");
    assert_eq!(check_of(&run, 0, "lv")["reason"], "trip_inside_zone");
    assert_eq!(check_of(&run, 0, "p")["verdict"], "fail");
}

#[test]
fn two_faults_three_hundred_ms_apart() {
    // C9–C10: faults 1.0–1.2 s and 1.5–1.7 s to 0.3 pu; active current
    // ramps back at 0.5 pu/s. The second fault's references are inherited
    // from the first (P0 = 0.8 pu, not the ~0.38 pu in between).
    let d = tempfile::tempdir().unwrap();
    let f = synth(
        d.path(),
        "two.csv",
        &[
            "--duration",
            "4",
            "--steps",
            "1.0:0.3,1.2:1.0,1.5:0.3,1.7:1.0",
            "--p-ramp",
            "0.5",
            "--status",
        ],
    );
    let checks = "  - { id: p, type: active_power_recovery, fraction: 0.9, within_s: 1.5 }\n";
    let r = rules(d.path(), checks, "");
    let run = check(d.path(), &r, &[&f], &["--map", "status=status"]);
    let res = run.results.as_ref().unwrap();
    let dist = res["tests"][0]["disturbances"].as_array().unwrap();
    assert_eq!(dist.len(), 2, "{dist:#?}");
    assert_eq!(dist[1]["prefault_from"], 0);
    assert!((dist[1]["prefault_p_pu"].as_f64().unwrap() - 0.8).abs() < 0.01);
    // The first fault's recovery cannot finish before the second starts.
    let p: Vec<&Value> = res["tests"][0]["checks"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|c| c["id"] == "p")
        .collect();
    assert_eq!(p[0]["reason"], "next_disturbance", "{}", p[0]["detail"]);
}

#[test]
fn a_unit_following_a_two_step_recovery_passes() {
    // D12: 0.2 pu for 250 ms, then 0.75 pu for 150 ms, then 1.0 pu. With
    // k = 2 and a 0.1 pu dead band the requirement is min(1.4, 1.1) then
    // 0.3 pu; a unit that follows k·ΔV (τ = 5 ms) passes with the settled
    // requirement per segment and with follow: instantaneous.
    let d = tempfile::tempdir().unwrap();
    let f = synth(
        d.path(),
        "steps.csv",
        &[
            "--duration",
            "2.5",
            "--steps",
            "1.0:0.2,1.25:0.75,1.4:1.0",
            "--current-limit",
            "1.1",
            "--status",
        ],
    );
    let iq = "  - { id: iq, type: reactive_current, gain: 2, dead_band_pu: 0.1, rise_time_s: 0.03, settling_time_s: 0.06, tolerance_pu: [-0.1, 0.2], limit_pu: 1.1 FOLLOW }\n";
    for follow in ["", ", follow: instantaneous"] {
        let r = rules(d.path(), &iq.replace(" FOLLOW", follow), "");
        let run = check(d.path(), &r, &[&f], &["--map", "status=status"]);
        let c = check_of(&run, 0, "iq");
        assert_eq!(c["verdict"], "pass", "{follow}: {}", c["detail"]);
        if follow.is_empty() {
            assert_eq!(c["segments"].as_array().unwrap().len(), 2, "{c:#}");
        }
    }
}

#[test]
fn gain_and_realisation_read_what_the_unit_did() {
    // B8 and D16: a 0.25 s dip to 0.6 pu with a unit injecting k = 2 outside
    // a 0.1 pu dead band: measured gain 2 (the requirement 0.6 pu is not
    // limited), and the realised duration inception to clearance 0.25 s
    // (not the smeared phasor duration of about 0.265 s).
    let d = tempfile::tempdir().unwrap();
    synth(
        d.path(),
        "dip.csv",
        &[
            "--duration",
            "2.5",
            "--residual",
            "0.6",
            "--fault-duration",
            "0.25",
            "--status",
        ],
    );
    write(
        d.path(),
        "rules.yaml",
        "id: t\ntitle: t\nsource: constructed test\nchecks:\n  - { id: iq, type: reactive_current, gain: 2, dead_band_pu: 0.1, rise_time_s: 0.03, settling_time_s: 0.06, tolerance_pu: [-0.1, 0.2] }\n",
    );
    let plan = write(
        d.path(),
        "plan.yaml",
        "unit: { rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }\nrules: rules.yaml\nchannels: { status: status }\ntests:\n  - { id: D, file: dip.csv, expect: { duration_s: 0.25 } }\n",
    );
    let pack = d.path().join("pack");
    let out = holdfast()
        .arg("check")
        .arg(&plan)
        .arg("--out")
        .arg(&pack)
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stdout)
    );
    let res: Value =
        serde_json::from_str(&std::fs::read_to_string(pack.join("results.json")).unwrap()).unwrap();
    let checks = res["tests"][0]["checks"].as_array().unwrap();
    let iq = checks.iter().find(|c| c["id"] == "iq").unwrap();
    let g = iq["measured_gain"].as_f64().unwrap();
    assert!((g - 2.0).abs() < 0.05, "{g}");
    assert_eq!(iq["limited"], false);
    let real = checks.iter().find(|c| c["id"] == "realisation").unwrap();
    let dur = real["measured"].as_f64().unwrap();
    assert!((dur - 0.25).abs() < 1e-3, "{dur}");
    let dist = &res["tests"][0]["disturbances"][0];
    assert!((dist["inception_s"].as_f64().unwrap() - 1.0).abs() < 1e-3);
    assert!(
        dist["duration_s"].as_f64().unwrap() > 0.255,
        "phasor duration is smeared"
    );
    // summary.csv carries the reason column.
    let csv = std::fs::read_to_string(pack.join("summary.csv")).unwrap();
    assert!(csv.lines().next().unwrap().ends_with(",reason,rule_set"));
    assert!(csv.contains(",as_planned"), "{csv}");
}

#[test]
fn negative_sequence_band_time_reference_and_short_faults() {
    // D13: a two-phase dip (a, b to 0.5 pu): V2 = 0.167 pu. With k2 = 3 the
    // unit injects −3·(0.167 − 0.1) = −0.2 pu; a rule asking k = 2 requires
    // r = −0.133 pu. With tolerance [−0.05, +0.1] the mirrored band
    // [r + s·lo, r + s·hi], s = −1, runs from −0.083 to −0.233 pu and holds
    // −0.2 pu; the unmirrored [r + lo, r + hi] = [−0.183, −0.033] would not.
    let d = tempfile::tempdir().unwrap();
    let f = synth(
        d.path(),
        "unb.csv",
        &[
            "--duration",
            "2.5",
            "--residuals",
            "0.5,0.5,1",
            "--fault-duration",
            "0.3",
            "--k2-gain",
            "3",
            "--status",
        ],
    );
    let neg = "  - { id: iq2, type: reactive_current, sequence: negative, gain: 2, dead_band_pu: 0.1, rise_time_s: 0.04, settling_time_s: 0.08, tolerance_pu: [-0.05, 0.1] TF }\n";
    let r = rules(d.path(), &neg.replace(" TF", ""), "");
    let run = check(d.path(), &r, &[&f], &["--map", "status=status"]);
    let c = check_of(&run, 0, "iq2");
    assert_eq!(c["verdict"], "pass", "{}", c["detail"]);
    assert!(c["required_pu"].as_f64().unwrap() < 0.0);
    // D14: time_from: inception counts from the waveform inception (1.0 s),
    // before the phasor start, so the rise time is longer by their gap.
    let r2 = rules(d.path(), &neg.replace(" TF", ", time_from: inception"), "");
    let run2 = check(d.path(), &r2, &[&f], &["--map", "status=status"]);
    let c2 = check_of(&run2, 0, "iq2");
    let res = run2.results.as_ref().unwrap();
    let dist = &res["tests"][0]["disturbances"][0];
    let gap = dist["start_s"].as_f64().unwrap() - dist["inception_s"].as_f64().unwrap();
    assert!(gap > 0.0);
    let (a, b) = (
        c["measured"].as_f64().unwrap(),
        c2["measured"].as_f64().unwrap(),
    );
    assert!((b - a - gap).abs() < 1e-3, "{a} {b} {gap}");
    assert!((c2["time_from_s"].as_f64().unwrap() - 1.0).abs() < 1e-3);
    // D15: a 60 ms fault is shorter than the settling time plus a cycle:
    // judged on the rise time only.
    let short = synth(
        d.path(),
        "short.csv",
        &[
            "--duration",
            "2",
            "--residual",
            "0.5",
            "--fault-duration",
            "0.06",
            "--status",
        ],
    );
    let iq = "  - { id: iq, type: reactive_current, gain: 2, dead_band_pu: 0.1, rise_time_s: 0.03, settling_time_s: 0.06, tolerance_pu: [-0.1, 0.2] }\n";
    let r3 = rules(d.path(), iq, "");
    let run3 = check(d.path(), &r3, &[&short], &["--map", "status=status"]);
    let c3 = check_of(&run3, 0, "iq");
    assert!(
        c3["detail"]
            .as_str()
            .unwrap()
            .contains("too short for the settling time"),
        "{}",
        c3["detail"]
    );
}

#[test]
fn report_and_table_show_reasons() {
    // B6: the reason reads in the terminal table, summary.csv and the report.
    let d = tempfile::tempdir().unwrap();
    let f = synth(
        d.path(),
        "trip.csv",
        &[
            "--duration",
            "2.5",
            "--residual",
            "0.5",
            "--fault-duration",
            "0.3",
            "--trip-at",
            "1.15",
            "--status",
        ],
    );
    let r = rules(d.path(), LVRT, "");
    let run = check(d.path(), &r, &[&f], &["--map", "status=status"]);
    assert_eq!(run.code, 1);
    assert!(run.stdout.contains("| reason "), "{}", run.stdout);
    assert!(run.stdout.contains("trip_inside_zone"), "{}", run.stdout);
    let pack = std::fs::read_dir(d.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .find(|e| e.file_name().to_string_lossy().starts_with("pack-"))
        .unwrap()
        .path();
    let html = std::fs::read_to_string(pack.join("report.html")).unwrap();
    assert!(html.contains("<th>reason</th>") && html.contains("trip inside zone"));
    let c = check_of(&run, 0, "lvrt");
    assert!(c["margin"].as_f64().unwrap() < 0.0);
}

#[test]
fn json_quiet_and_colour_of_the_check_output() {
    let d = tempfile::tempdir().unwrap();
    let rec = synth(d.path(), "a.csv", &["--duration", "2"]);
    let r = rules(d.path(), LVRT, "");
    let run = |extra: &[&str]| {
        let out = d.path().join(format!("pack-{}", extra.join("")));
        let o = holdfast()
            .arg("check")
            .arg("--rules")
            .arg(&r)
            .args(RATINGS)
            .args(extra)
            .arg("--out")
            .arg(&out)
            .arg(&rec)
            .output()
            .unwrap();
        (o, out)
    };
    // --json: stdout is the pack's results.json, byte for byte.
    let (o, out) = run(&["--json"]);
    assert!(matches!(o.status.code(), Some(0 | 1)));
    assert_eq!(o.stdout, std::fs::read(out.join("results.json")).unwrap());
    // --quiet: nothing on stdout, the verdict in the exit status.
    let (q, _) = run(&["--quiet"]);
    assert!(q.stdout.is_empty());
    assert_eq!(q.status.code(), o.status.code());
    // Colour: none when stdout is not a terminal, unless asked for.
    let esc = |o: &std::process::Output| o.stdout.windows(2).any(|w| w == b"\x1b[");
    assert!(!esc(&run(&[]).0));
    assert!(!esc(&run(&["--color", "never"]).0));
    assert!(esc(&run(&["--color", "always"]).0));
}

#[test]
fn colour_follows_no_color_and_dumb_terminals() {
    use holdfast::cli::ColorChoice;
    // The NO_COLOR convention (no-color.org): set and not empty means no colour.
    assert!(ColorChoice::Auto.decide(true, None, Some("xterm")));
    assert!(ColorChoice::Auto.decide(true, Some(""), Some("xterm")));
    assert!(!ColorChoice::Auto.decide(true, Some("1"), Some("xterm")));
    assert!(!ColorChoice::Auto.decide(true, None, Some("dumb")));
    assert!(!ColorChoice::Auto.decide(false, None, Some("xterm")));
    assert!(ColorChoice::Always.decide(false, Some("1"), Some("dumb")));
    assert!(!ColorChoice::Never.decide(true, None, None));
}
