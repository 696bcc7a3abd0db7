//! Hostile input and a safe evidence pack, through the binary: no data
//! loss, no crash, no hang. Every case builds its own small input.

use crate::common::{self, holdfast, write, RATINGS};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// A small synthetic recording (2 kHz, 1.5 s).
fn synth(dir: &Path, name: &str, args: &[&str]) -> PathBuf {
    common::synth(
        dir,
        name,
        &["--sample-rate", "2000", "--duration", "1.5"],
        args,
    )
}

const RULES: &str = "id: t\ntitle: t\nsource: constructed test\nchecks:\n  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0], [0.15, 0], [1.5, 0.85]] }\n";

/// A plan over `files` (names relative to `dir`) with the test ids given.
fn plan(dir: &Path, tests: &[(&str, &str)]) -> PathBuf {
    write(dir, "rules.yaml", RULES.as_bytes());
    let mut text = String::from(
        "unit: { name: \"Test unit\", rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }\nrules: rules.yaml\ntests:\n",
    );
    for (id, file) in tests {
        text.push_str(&format!("  - {{ id: {id}, file: {file} }}\n"));
    }
    write(dir, "plan.yaml", text.as_bytes())
}

fn check_plan(plan: &Path, out: &Path) -> std::process::Output {
    holdfast()
        .arg("check")
        .arg(plan)
        .arg("--out")
        .arg(out)
        .output()
        .unwrap()
}

fn stderr(o: &std::process::Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

// ------------------------------------------------------------- data loss

#[test]
fn out_that_holds_an_input_is_refused() {
    let d = tempfile::tempdir().unwrap();
    let rec = d.path().join("rec");
    std::fs::create_dir(&rec).unwrap();
    // A recording called summary.csv in the recordings folder.
    synth(&rec, "summary.csv", &[]);
    let before = std::fs::read(rec.join("summary.csv")).unwrap();
    let p = plan(d.path(), &[("T", "rec/summary.csv")]);
    for out in [rec.clone(), d.path().to_path_buf()] {
        let o = check_plan(&p, &out);
        assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
        assert!(stderr(&o).contains("holds the input"), "{}", stderr(&o));
    }
    assert_eq!(std::fs::read(rec.join("summary.csv")).unwrap(), before);
    // --out naming a recording file itself.
    let o = check_plan(&p, &rec.join("summary.csv"));
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert_eq!(std::fs::read(rec.join("summary.csv")).unwrap(), before);
}

#[test]
fn links_inside_out_are_never_written_through() {
    let d = tempfile::tempdir().unwrap();
    synth(d.path(), "a.csv", &[]);
    let p = plan(d.path(), &[("A", "a.csv")]);
    let out = d.path().join("pack");
    std::fs::create_dir(&out).unwrap();
    let victim = write(d.path(), "victim.txt", b"keep me\n");
    let elsewhere = d.path().join("elsewhere");
    std::fs::create_dir(&elsewhere).unwrap();
    write(&elsewhere, "keep.txt", b"keep\n");
    std::os::unix::fs::symlink(&victim, out.join("summary.csv")).unwrap();
    std::os::unix::fs::symlink(&elsewhere, out.join("plots")).unwrap();
    let o = check_plan(&p, &out);
    assert!(
        matches!(o.status.code(), Some(0) | Some(1)),
        "{}",
        stderr(&o)
    );
    assert_eq!(std::fs::read(&victim).unwrap(), b"keep me\n");
    assert_eq!(
        std::fs::read_dir(&elsewhere).unwrap().count(),
        1,
        "nothing written into the linked folder"
    );
    let m = std::fs::symlink_metadata(out.join("summary.csv")).unwrap();
    assert!(m.file_type().is_file(), "the pack was replaced whole");
    assert!(std::fs::symlink_metadata(out.join("plots"))
        .unwrap()
        .is_dir());
    // --out itself a link: refused.
    let link = d.path().join("link-out");
    std::os::unix::fs::symlink(&elsewhere, &link).unwrap();
    let o = check_plan(&p, &link);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("is a link"), "{}", stderr(&o));
    // A folder that is not a pack is not replaced.
    let foreign = d.path().join("docs");
    std::fs::create_dir(&foreign).unwrap();
    write(&foreign, "thesis.tex", b"precious\n");
    let o = check_plan(&p, &foreign);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("not an evidence pack"),
        "{}",
        stderr(&o)
    );
    assert_eq!(
        std::fs::read(foreign.join("thesis.tex")).unwrap(),
        b"precious\n"
    );
}

#[test]
fn a_pack_is_replaced_whole_or_not_at_all() {
    let d = tempfile::tempdir().unwrap();
    for k in 0..3 {
        synth(d.path(), &format!("r{k}.csv"), &[]);
    }
    let out = d.path().join("pack");
    let three = plan(
        d.path(),
        &[("A", "r0.csv"), ("B", "r1.csv"), ("C", "r2.csv")],
    );
    let o = check_plan(&three, &out);
    assert!(o.status.code().is_some_and(|c| c < 2), "{}", stderr(&o));
    let plots_of = |out: &Path| std::fs::read_dir(out.join("plots")).unwrap().count();
    let before_plots = plots_of(&out);
    let before = std::fs::read(out.join("results.json")).unwrap();
    // A run that fails on its input (a recording that is not there) leaves
    // the earlier pack as it was and no temporary folder behind.
    let broken = plan(d.path(), &[("A", "r0.csv"), ("X", "missing.csv")]);
    let o = check_plan(&broken, &out);
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(std::fs::read(out.join("results.json")).unwrap(), before);
    let leftovers: Vec<String> = std::fs::read_dir(d.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains(".holdfast-"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
    // A later run with one test replaces the pack whole: no figure of the
    // earlier three tests stays in plots/.
    let one = plan(d.path(), &[("A", "r0.csv")]);
    let o = check_plan(&one, &out);
    assert!(o.status.code().is_some_and(|c| c < 2));
    assert!(
        plots_of(&out) * 3 == before_plots,
        "{} vs {before_plots}",
        plots_of(&out)
    );
    let r: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
    assert_eq!(r["tests"].as_array().unwrap().len(), 1);
}

#[test]
fn a_killed_run_leaves_the_earlier_pack_whole() {
    // A run killed at some moment: the folder holds either the earlier pack
    // byte for byte, or the complete new one; never a mixture.
    let d = tempfile::tempdir().unwrap();
    let mut tests = Vec::new();
    for k in 0..12 {
        synth(d.path(), &format!("r{k}.csv"), &[]);
        tests.push((format!("T{k}"), format!("r{k}.csv")));
    }
    let refs: Vec<(&str, &str)> = tests
        .iter()
        .map(|(a, b)| (a.as_str(), b.as_str()))
        .collect();
    let out = d.path().join("pack");
    let first = plan(d.path(), &refs[..1]);
    assert!(check_plan(&first, &out)
        .status
        .code()
        .is_some_and(|c| c < 2));
    let before = std::fs::read(out.join("results.json")).unwrap();
    let p = plan(d.path(), &refs);
    for delay_ms in [50, 150, 400] {
        let bin = assert_cmd::cargo::cargo_bin("holdfast");
        let mut child = std::process::Command::new(bin)
            .arg("check")
            .arg(&p)
            .arg("--out")
            .arg(&out)
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(Duration::from_millis(delay_ms));
        let _ = child.kill(); // SIGKILL
        let _ = child.wait();
        let now = std::fs::read(out.join("results.json")).unwrap();
        if now != before {
            let r: Value = serde_json::from_slice(&now).unwrap();
            assert_eq!(r["tests"].as_array().unwrap().len(), 12);
            assert!(out.join("report.html").is_file());
        }
    }
    // The next run cleans what killed runs left and writes a complete pack.
    let o = check_plan(&p, &out);
    assert!(o.status.code().is_some_and(|c| c < 2), "{}", stderr(&o));
    let leftovers = std::fs::read_dir(d.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().contains(".holdfast-"))
        .count();
    assert_eq!(leftovers, 0);
}

#[test]
fn two_runs_do_not_write_one_folder() {
    let d = tempfile::tempdir().unwrap();
    synth(d.path(), "a.csv", &[]);
    let p = plan(d.path(), &[("A", "a.csv")]);
    let out = d.path().join("pack");
    // A live run holds the lock (this test's own process id).
    write(
        d.path(),
        ".pack.holdfast-lock",
        format!("{}\n", std::process::id()).as_bytes(),
    );
    let o = check_plan(&p, &out);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("another holdfast run"),
        "{}",
        stderr(&o)
    );
    // A lock left by a killed run (no such process) is taken over.
    write(d.path(), ".pack.holdfast-lock", b"4194999999\n");
    let o = check_plan(&p, &out);
    assert!(o.status.code().is_some_and(|c| c < 2), "{}", stderr(&o));
    assert!(!d.path().join(".pack.holdfast-lock").exists());
}

// ----------------------------------------------------------------- crashes

/// A minimal COMTRADE 1999 configuration with `lines` after the station line.
fn cfg_with(dir: &Path, name: &str, text: &str, dat: &[u8]) -> PathBuf {
    let p = write(dir, &format!("{name}.cfg"), text.as_bytes());
    write(dir, &format!("{name}.dat"), dat);
    p
}

fn inspect(path: &Path) -> std::process::Output {
    holdfast()
        .arg("inspect")
        .arg(path)
        .args(RATINGS)
        .output()
        .unwrap()
}

/// A one-off check of one recording (inspect tolerates more; a check must
/// refuse what cannot be judged).
fn check_one(path: &Path, extra: &[&str]) -> std::process::Output {
    let d = tempfile::tempdir().unwrap();
    let rules = write(d.path(), "rules.yaml", RULES.as_bytes());
    holdfast()
        .args(["check", "--rules"])
        .arg(&rules)
        .args(RATINGS)
        .args(extra)
        .arg("--out")
        .arg(d.path().join("pack"))
        .arg(path)
        .output()
        .unwrap()
}

#[test]
fn absurd_channel_counts_are_errors_not_crashes() {
    let d = tempfile::tempdir().unwrap();
    for (name, text) in [
        (
            "overflow",
            "S,D,1999\n0,9223372036854775808A,9223372036854775808D\n",
        ),
        ("fuzz", "S,D\n6,6A,18446744073709551615D\n"),
        ("many", "S,D,2013\n99999,99999A,0D\n"),
    ] {
        let p = cfg_with(d.path(), name, text, b"");
        let o = inspect(&p);
        assert_eq!(o.status.code(), Some(2), "{name}: {}", stderr(&o));
        assert!(!stderr(&o).contains("panicked"), "{name}: {}", stderr(&o));
    }
}

/// A one-channel ASCII 1999 configuration with a given rate line and timemult.
fn one_channel(rate: &str, timemult: &str) -> String {
    format!(
        "S,D,1999\n3,3A,0D\n1,va,A,,V,1,0,0,-32767,32767,1,1,P\n2,vb,B,,V,1,0,0,-32767,32767,1,1,P\n3,vc,C,,V,1,0,0,-32767,32767,1,1,P\n50\n1\n{rate}\n01/01/2026,00:00:00.000000\n01/01/2026,00:00:00.000000\nASCII\n{timemult}\n"
    )
}

#[test]
fn absurd_sampling_rates_are_refused_quickly() {
    let d = tempfile::tempdir().unwrap();
    let dat: String = (1..=40)
        .map(|n| format!("{n},{},100,-50,-50\n", n - 1))
        .collect();
    for (name, rate, tm) in [
        ("r1e12", "1e12,40", "1"),
        ("r1e300", "1e300,40", "1"),
        ("tm", "0,40", "1e-300"),
    ] {
        let p = cfg_with(d.path(), name, &one_channel(rate, tm), dat.as_bytes());
        let t = Instant::now();
        let o = check_one(&p, &[]);
        assert_eq!(o.status.code(), Some(2), "{name}: {}", stderr(&o));
        // inspect reports it as a finding, as quickly.
        let o = inspect(&p);
        assert!(o.status.code().is_some_and(|c| c <= 2), "{name}");
        assert!(t.elapsed() < Duration::from_secs(10), "{name}");
        assert!(!stderr(&o).contains("panicked"), "{name}");
    }
    // CSV rows 1 ps apart.
    let rows: String = (0..200)
        .map(|k| format!("{:e},1,-0.5,-0.5\n", k as f64 * 1e-12))
        .collect();
    let p = write(d.path(), "ps.csv", format!("t,va,vb,vc\n{rows}").as_bytes());
    let o = check_one(&p, &["--voltage-unit", "pu"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("samples per"), "{}", stderr(&o));
}

#[test]
fn many_channels_with_little_data_allocate_little() {
    // 9 999 FLOAT32 channels (the most accepted is 10 000) and a 40-byte
    // data file: the record buffer follows the data, not the announcement.
    let d = tempfile::tempdir().unwrap();
    let mut cfg = String::from("S,D,2013\n9999,9999A,0D\n");
    for k in 1..=9999 {
        let ph = ["A", "B", "C"][k % 3];
        cfg.push_str(&format!("{k},ch{k},{ph},,V,1,0,0,-1,1,1,1,P\n"));
    }
    cfg.push_str(
        "50\n1\n1000,1\n01/01/2026,00:00:00.000000\n01/01/2026,00:00:00.000000\nFLOAT32\n1\n",
    );
    let p = cfg_with(d.path(), "wide", &cfg, &[0u8; 40]);
    let o = check_one(
        &p,
        &["--map", "va=ch1", "--map", "vb=ch2", "--map", "vc=ch3"],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("truncated"), "{}", stderr(&o));
}

// ----------------------------------------------------- hangs and devices

#[test]
fn devices_and_fifos_are_refused_without_blocking() {
    let d = tempfile::tempdir().unwrap();
    let zero = Path::new("/dev/zero");
    if !zero.exists() {
        eprintln!("SKIPPED: no /dev/zero");
        return;
    }
    let fifo = d.path().join("fifo.yaml");
    let made = std::process::Command::new("mkfifo").arg(&fifo).status();
    for ext in ["yaml", "cfg", "cff", "csv"] {
        let link = d.path().join(format!("zero.{ext}"));
        std::os::unix::fs::symlink(zero, &link).unwrap();
        let t = Instant::now();
        let o = if ext == "yaml" {
            holdfast()
                .args(["rules", "lint"])
                .arg(&link)
                .output()
                .unwrap()
        } else {
            inspect(&link)
        };
        assert_eq!(o.status.code(), Some(2), "{ext}: {}", stderr(&o));
        assert!(
            stderr(&o).contains("not a regular file"),
            "{ext}: {}",
            stderr(&o)
        );
        assert!(t.elapsed() < Duration::from_secs(5), "{ext}");
    }
    // A plan that is /dev/zero, and a .cfg whose .dat is.
    let plan_link = d.path().join("plan0.yaml");
    std::os::unix::fs::symlink(zero, &plan_link).unwrap();
    let o = holdfast().arg("check").arg(&plan_link).output().unwrap();
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    let cfg = write(d.path(), "z.cfg", one_channel("1000,40", "1").as_bytes());
    std::os::unix::fs::symlink(zero, d.path().join("z.dat")).unwrap();
    let o = inspect(&cfg);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    if made.is_ok_and(|s| s.success()) {
        let t = Instant::now();
        let o = holdfast()
            .args(["rules", "lint"])
            .arg(&fifo)
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
        assert!(t.elapsed() < Duration::from_secs(5));
    } else {
        eprintln!("SKIPPED: mkfifo not available, the FIFO case was not run");
    }
}

#[test]
fn chained_parameters_resolve_in_linear_time() {
    // 4000 parameters, each default referring to the previous one.
    let d = tempfile::tempdir().unwrap();
    let mut text = String::from("id: t\ntitle: t\nsource: s\nparameters:\n  - { name: p0, unit: s, range: [0, 1], default: 0.15 }\n");
    for k in 1..4000 {
        text.push_str(&format!(
            "  - {{ name: p{k}, unit: s, range: [0, 1], default: \"$p{}\" }}\n",
            k - 1
        ));
    }
    text.push_str("checks:\n  - { id: lvrt, type: envelope, bound: lower, points: [[0, 0], [\"$p3999\", 0], [1.5, 0.85]] }\n");
    let p = write(d.path(), "chain.yaml", text.as_bytes());
    let t = Instant::now();
    let o = holdfast().args(["rules", "lint"]).arg(&p).output().unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(t.elapsed() < Duration::from_secs(5), "{:?}", t.elapsed());
}

// --------------------------------------------------------------- injection

#[test]
fn control_characters_never_reach_the_terminal() {
    let d = tempfile::tempdir().unwrap();
    // A CSV whose channel names carry ESC/CSI/OSC, BEL, CR, U+009B, U+202E.
    let f = synth(d.path(), "a.csv", &[]);
    let text = std::fs::read_to_string(&f).unwrap();
    let hostile_col = "x\u{1b}[2J\u{1b}]0;title\u{7}\r\u{9b}31m\u{202e}";
    // One more column with that name, last, holding zeros.
    let text: String = text
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                format!("{l},\"{hostile_col}\"\n")
            } else {
                format!("{l},0\n")
            }
        })
        .collect();
    write(d.path(), "a.csv", text.as_bytes());
    let id = "T\u{1b}[31mRED\u{7}\u{202e}";
    write(d.path(), "rules.yaml", RULES.as_bytes());
    write(
        d.path(),
        "plan.yaml",
        format!(
            "unit: {{ name: \"Unit\\e[5m\\u202e\", rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }}\nrules: rules.yaml\ntests:\n  - {{ id: \"{}\", file: a.csv }}\n",
            id.replace('\u{1b}', "\\e").replace('\u{7}', "\\a").replace('\u{202e}', "\\u202e")
        )
        .as_bytes(),
    );
    let o = check_plan(&d.path().join("plan.yaml"), &d.path().join("pack"));
    assert!(o.status.code().is_some_and(|c| c < 2), "{}", stderr(&o));
    let ins = inspect(&d.path().join("a.csv"));
    for out in [&o.stdout, &o.stderr, &ins.stdout, &ins.stderr] {
        let s = String::from_utf8_lossy(out);
        for bad in ['\u{1b}', '\u{7}', '\r', '\u{9b}', '\u{202e}'] {
            assert!(!s.contains(bad), "{bad:?} reached the terminal: {s}");
        }
    }
    assert!(String::from_utf8_lossy(&ins.stdout).contains("\\u{1b}"));
    // An unknown mapped column with such a name: the error message too.
    let o = holdfast()
        .arg("inspect")
        .arg(d.path().join("a.csv"))
        .args(RATINGS)
        .args(["--map", &format!("status={hostile_col}x")])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(!stderr(&o).contains('\u{1b}'), "{}", stderr(&o));
}

#[test]
fn formula_cells_are_neutralised_in_summary_csv() {
    let d = tempfile::tempdir().unwrap();
    synth(d.path(), "a.csv", &[]);
    synth(d.path(), "b.csv", &[]);
    synth(d.path(), "c.csv", &[]);
    write(d.path(), "rules.yaml", RULES.as_bytes());
    write(
        d.path(),
        "plan.yaml",
        b"unit: { rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }\nrules: rules.yaml\ntests:\n  - { id: \"=cmd|' /C calc'!A0\", file: a.csv }\n  - { id: \"+1+1\", file: b.csv }\n  - { id: \"@SUM(1+1)\", file: c.csv }\n",
    );
    let out = d.path().join("pack");
    let o = check_plan(&d.path().join("plan.yaml"), &out);
    assert!(o.status.code().is_some_and(|c| c < 2), "{}", stderr(&o));
    let csv = std::fs::read_to_string(out.join("summary.csv")).unwrap();
    let mut rdr = csv::Reader::from_reader(csv.as_bytes());
    let firsts: Vec<String> = rdr.records().map(|r| r.unwrap()[0].to_string()).collect();
    for id in ["=cmd|' /C calc'!A0", "+1+1", "@SUM(1+1)"] {
        assert!(firsts.contains(&format!("'{id}")), "{firsts:?}");
        assert!(!firsts.contains(&id.to_string()));
    }
    // results.json keeps the ids as they are.
    let r: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
    assert_eq!(r["tests"][1]["id"], "+1+1");
}

// --------------------------------------------------------------- integrity

#[test]
fn digests_are_of_the_bytes_read_and_wide_files_are_read() {
    use sha2::{Digest, Sha256};
    let d = tempfile::tempdir().unwrap();
    // A wide CSV: 3 507 columns of short values (t, va, vb, vc and 3 503
    // more), about 7 kB a row and 7 MB in all: the step estimate stops at
    // the last complete line of its first read instead of cutting one.
    let extra = 3503;
    let mut text = String::from("t,va,vb,vc");
    for k in 0..extra {
        text.push_str(&format!(",x{k}"));
    }
    text.push('\n');
    let pad = ",0".repeat(extra);
    let fs = 5000.0;
    for n in 0..1000 {
        let t = n as f64 / fs;
        let w = 2.0 * std::f64::consts::PI * 50.0 * t;
        let v = |p: f64| 1.414 * (w - p).cos();
        text.push_str(&format!(
            "{t:.4},{:.4},{:.4},{:.4}{pad}\n",
            v(0.0),
            v(2.094),
            v(-2.094)
        ));
    }
    let p = write(d.path(), "wide.csv", text.as_bytes());
    let o = holdfast()
        .arg("inspect")
        .arg(&p)
        .args(RATINGS)
        .args(["--voltage-unit", "pu"])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    // The recording's digest in results.json is SHA-256 of its bytes, and a
    // .cfg/.dat pair lists both files.
    let cfg = synth(d.path(), "c.cfg", &["--comtrade-type", "ascii"]);
    write(d.path(), "rules.yaml", RULES.as_bytes());
    let o = holdfast()
        .arg("check")
        .args(["--rules"])
        .arg(d.path().join("rules.yaml"))
        .args(RATINGS)
        .arg("--out")
        .arg(d.path().join("pack"))
        .arg(&cfg)
        .output()
        .unwrap();
    assert!(o.status.code().is_some_and(|c| c < 2), "{}", stderr(&o));
    let r: Value =
        serde_json::from_str(&std::fs::read_to_string(d.path().join("pack/results.json")).unwrap())
            .unwrap();
    let rec = &r["tests"][0]["recording"];
    let sha = |p: &Path| -> String {
        Sha256::digest(std::fs::read(p).unwrap())
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect()
    };
    assert_eq!(rec["sha256"], sha(&cfg));
    assert_eq!(rec["files"][1]["sha256"], sha(&d.path().join("c.dat")));
}

#[test]
fn errors_quote_file_content_only_briefly() {
    // A "rule set" that is some other text file: the message must not
    // echo its content at length.
    let d = tempfile::tempdir().unwrap();
    let secret = "root:x:0:0:root:/root:/bin/bash:".repeat(20);
    let p = write(d.path(), "passwd.yaml", format!("{secret}\n").as_bytes());
    let o = holdfast().args(["rules", "lint"]).arg(&p).output().unwrap();
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(!e.contains(&secret[..120]), "{e}");
    assert!(e.len() < 600, "{e}");
    // A CSV field: the same.
    let long = "y".repeat(5000);
    let p = write(
        d.path(),
        "bad.csv",
        format!("t,va,vb,vc\n0,1,2,3\n0.0002,{long},2,3\n").as_bytes(),
    );
    let o = inspect(&p);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).len() < 600, "{}", stderr(&o));
}
