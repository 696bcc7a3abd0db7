//! Rule-set and plan errors through the binary: exit status 2 and a message
//! with the file, line and column.

use crate::common::{holdfast, write};
use predicates::prelude::*;
use std::path::PathBuf;

fn lint(p: &PathBuf) -> assert_cmd::assert::Assert {
    holdfast().args(["rules", "lint"]).arg(p).assert()
}

pub(crate) const GOOD: &str = "id: r\ntitle: t\nsource: s\nchecks:\n  - id: lvrt\n    type: envelope\n    bound: lower\n    points: [[0, 0], [0.15, 0], [1.5, 0.85]]\n  - id: iq\n    type: reactive_current\n    gain: 2\n    rise_time_s: 0.03\n    settling_time_s: 0.06\n    tolerance_pu: [-0.1, 0.2]\n";

#[test]
fn good_rule_set_lints_clean() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(&dir, "good.yaml", GOOD);
    lint(&p).success().stdout(predicate::str::contains("ok"));
}

#[test]
fn unknown_key_wrong_type_and_syntax_name_line_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        &dir,
        "typo.yaml",
        GOOD.replace("    gain: 2", "    gian: 2"),
    );
    lint(&p).code(2).stderr(
        predicate::str::contains("typo.yaml:11:5")
            .and(predicate::str::contains("unknown field `gian`")),
    );
    let p = write(&dir, "type.yaml", GOOD.replace("gain: 2", "gain: high"));
    lint(&p).code(2).stderr(
        predicate::str::contains("type.yaml:11:").and(predicate::str::contains("invalid type")),
    );
    let p = write(
        &dir,
        "syntax.yaml",
        GOOD.replace("points: [[0, 0]", "points: [[0, 0"),
    );
    lint(&p)
        .code(2)
        .stderr(predicate::str::contains("syntax.yaml:"));
    let p = write(
        &dir,
        "kind.yaml",
        GOOD.replace("type: envelope", "type: envelop"),
    );
    lint(&p)
        .code(2)
        .stderr(predicate::str::contains("kind.yaml:6:5").and(predicate::str::contains("envelop")));
}

#[test]
fn value_problems_are_all_reported_with_place() {
    let dir = tempfile::tempdir().unwrap();
    let text = GOOD
        .replace("[1.5, 0.85]", "[1.2, 0.85], [1.0, 0.9]")
        .replace("gain: 2", "gain: 0")
        .replace("tolerance_pu: [-0.1, 0.2]", "tolerance_pu: [0.1, -0.1]");
    let p = write(&dir, "bad.yaml", &text);
    lint(&p).code(2).stderr(
        predicate::str::contains("bad.yaml:8:5: 'checks[0] (lvrt).points'")
            .and(predicate::str::contains("time decreases"))
            .and(predicate::str::contains(
                "bad.yaml:11:5: 'checks[1] (iq).gain'",
            ))
            .and(predicate::str::contains(
                "bad.yaml:14:5: 'checks[1] (iq).tolerance_pu'",
            ))
            .and(predicate::str::contains("(3 problems)")),
    );
}

#[test]
fn empty_and_oversized_files_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(&dir, "empty.yaml", "");
    lint(&p).code(2).stderr(predicate::str::contains("empty"));
    let p = write(&dir, "huge.yaml", "[".repeat(300_000));
    let start = std::time::Instant::now();
    lint(&p).code(2).stderr(predicate::str::contains("limit"));
    assert!(start.elapsed().as_secs_f64() < 2.0);
    // Deep nesting within the size limit stops at the parser's depth limit,
    // at once: 40 000 nested flow maps (160 KB) took about 4 s with the
    // former YAML parser (measured on this project's rule-set type).
    for (name, text) in [
        ("deep.yaml", "[".repeat(100_000)),
        ("maps.yaml", "{a: ".repeat(40_000)),
    ] {
        let p = write(&dir, name, text);
        let start = std::time::Instant::now();
        lint(&p).code(2).stderr(predicate::str::contains(name));
        assert!(start.elapsed().as_secs_f64() < 1.0, "{name}");
    }
    // A billion-laughs alias bomb in a key every struct ignores.
    let mut bomb = String::from("x: &a [1, 1, 1, 1, 1, 1, 1, 1, 1]\n");
    for (i, c) in "bcdefghi".chars().enumerate() {
        let prev = (b'a' + i as u8) as char;
        bomb += &format!("{c}{c}: &{c} [*{prev}, *{prev}, *{prev}, *{prev}, *{prev}, *{prev}, *{prev}, *{prev}, *{prev}]\n");
    }
    let p = write(&dir, "bomb.yaml", format!("{bomb}{GOOD}"));
    let start = std::time::Instant::now();
    lint(&p)
        .code(2)
        .stderr(predicate::str::contains("bomb.yaml"));
    assert!(start.elapsed().as_secs_f64() < 1.0);
}

#[test]
fn plan_errors_name_the_place() {
    let dir = tempfile::tempdir().unwrap();
    write(&dir, "rules.yaml", GOOD);
    let check = |p: &PathBuf| {
        holdfast()
            .arg("check")
            .arg(p)
            .arg("--out")
            .arg(dir.path().join("out"))
            .assert()
    };
    let plan = "unit: { rated_voltage_kv: 0.69, rated_power_mva: 4.2, frequency_hz: 50 }\nrules: rules.yaml\ntests:\n  - id: A\n    file: a.csv\n  - id: A\n    file: b.csv\n";
    let p = write(&dir, "dup.yaml", plan);
    check(&p).code(2).stderr(
        predicate::str::contains("dup.yaml:6:").and(predicate::str::contains("used twice")),
    );
    let p = write(
        &dir,
        "unknown.yaml",
        plan.replace("rules: rules.yaml", "rules: rules.yaml\nrulez: x"),
    );
    check(&p).code(2).stderr(
        predicate::str::contains("unknown.yaml:3:1").and(predicate::str::contains("rulez")),
    );
    let p = write(
        &dir,
        "norules.yaml",
        plan.replace("rules: rules.yaml", "rules: missing.yaml")
            .replace("id: A\n    file: b", "id: B\n    file: b"),
    );
    check(&p)
        .code(2)
        .stderr(predicate::str::contains("missing.yaml"));
    // Missing recordings: every one is named.
    let p = write(
        &dir,
        "norec.yaml",
        plan.replace("id: A\n    file: b", "id: B\n    file: b"),
    );
    check(&p)
        .code(2)
        .stderr(predicate::str::contains("a.csv").and(predicate::str::contains("b.csv")));
    let p = write(
        &dir,
        "unit.yaml",
        plan.replace("frequency_hz: 50", "frequency_hz: -50"),
    );
    check(&p)
        .code(2)
        .stderr(predicate::str::contains("frequency_hz"));
}

#[test]
fn shipped_rule_sets_are_listed_as_json_and_exported_by_id() {
    let out = holdfast()
        .args(["rules", "list", "--json"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let list: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let list = list.as_array().unwrap();
    assert_eq!(list.len(), holdfast::rules::library::SHIPPED.len());
    for r in list {
        let file = r["file"].as_str().unwrap();
        let id = r["id"].as_str().unwrap();
        assert!(!r["checks"].as_array().unwrap().is_empty(), "{file}");
        // Export by id and by file name gives the file's bytes.
        let want = std::fs::read(crate::common::root().join(file)).unwrap();
        let name = file.trim_start_matches("rules/");
        for key in [id, name] {
            let e = holdfast().args(["rules", "export", key]).output().unwrap();
            assert!(e.status.success(), "{key}");
            assert_eq!(e.stdout, want, "{key}");
        }
    }
    holdfast()
        .args(["rules", "export", "no-such-rules"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "no shipped rule set 'no-such-rules'",
        ));
}

#[test]
fn check_takes_a_shipped_rule_set_by_id() {
    let dir = tempfile::tempdir().unwrap();
    let rec = crate::common::synth(
        dir.path(),
        "rec.csv",
        &["--duration", "1.5", "--sample-rate", "2000"],
        &[],
    );
    let out = dir.path().join("pack");
    let o = holdfast()
        .current_dir(dir.path())
        .args(["check", "--rules", "nerc-prc-024-3"])
        .args(crate::common::RATINGS)
        .arg("--out")
        .arg(&out)
        .arg(&rec)
        .output()
        .unwrap();
    assert!(
        matches!(o.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let r: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.join("results.json")).unwrap()).unwrap();
    assert_eq!(r["rules"]["id"], "nerc-prc-024-3");
    assert_eq!(r["rules"]["path"], "rules/nerc-prc-024-3.yaml");
    // The hash is of the shipped text, the same as the file in rules/.
    let text = std::fs::read(crate::common::root().join("rules/nerc-prc-024-3.yaml")).unwrap();
    assert_eq!(r["rules"]["sha256"], holdfast::digest::sha256_bytes(&text));
    // A name with a folder is a path, never a library id.
    holdfast()
        .current_dir(dir.path())
        .args(["check", "--rules", "x/nerc-prc-024-3"])
        .args(crate::common::RATINGS)
        .arg("--out")
        .arg(dir.path().join("pack2"))
        .arg(&rec)
        .assert()
        .code(2);
}

#[test]
fn lint_reports_every_problem_in_one_run_with_suggestions() {
    let dir = tempfile::tempdir().unwrap();
    // Six independent mistakes: two misspelt top-level and disturbance
    // keys, a misspelt check field, a misspelt check type, and two values
    // out of range in checks that parse.
    let f = crate::common::write(
        dir.path(),
        "many.yaml",
        "id: x\ntitle: t\nsource: s\ntitel: oops\n\
         disturbance: { below_pu: 0.9, hysterisis_pu: 0.01 }\n\
         checks:\n\
         \x20 - { id: lvrt, type: envelope, bound: lower, pionts: [[0, 0], [1, 0.9]] }\n\
         \x20 - { id: iq, type: reactive_current, gain: -2, rise_time_s: 0.03, settling_time_s: 0.06, tolerance_pu: [-0.1, 0.2], dead_band_pu: 0.1 }\n\
         \x20 - { id: p, type: active_power_recovery, fraction: 1.5, within_s: 1 }\n\
         \x20 - { id: q, type: envelop, bound: lower, points: [[0, 0]] }\n",
    );
    let out = crate::common::holdfast()
        .args(["rules", "lint"])
        .arg(&f)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    for (place, what) in [
        ("many.yaml:4:1", "did you mean `title`?"),
        ("many.yaml:5:31", "did you mean `hysteresis_pu`?"),
        ("many.yaml:7:47", "did you mean `points`?"),
        ("many.yaml:8:39", "gain -2 must be in (0, 20]"),
        ("many.yaml:9:43", "fraction 1.5 must be in (0, 1]"),
        ("many.yaml:10:14", "did you mean `envelope`?"),
    ] {
        let line = err
            .lines()
            .find(|l| l.contains(place))
            .unwrap_or_else(|| panic!("{place} missing:\n{err}"));
        assert!(line.contains(what), "{place}: {line}");
    }
    assert!(err.contains("(6 problems)"), "{err}");
}

#[test]
fn completions_and_man_pages_come_from_the_command_definitions() {
    let cmd = <holdfast::cli::Cli as clap::CommandFactory>::command();
    let subs: Vec<String> = cmd
        .get_subcommands()
        .map(|s| s.get_name().to_string())
        .collect();
    for shell in ["bash", "zsh", "fish", "elvish", "powershell"] {
        let out = holdfast().args(["completions", shell]).output().unwrap();
        assert!(out.status.success(), "{shell}");
        let text = String::from_utf8_lossy(&out.stdout);
        for s in &subs {
            assert!(text.contains(s.as_str()), "{shell} completion lacks {s}");
        }
        assert!(text.contains("rated-kv"), "{shell}: options of check");
    }
    let dir = tempfile::tempdir().unwrap();
    holdfast()
        .args(["man", "--out"])
        .arg(dir.path())
        .assert()
        .success();
    let top = std::fs::read_to_string(dir.path().join("holdfast.1")).unwrap();
    assert!(
        top.starts_with(".ie") || top.contains(".TH holdfast"),
        "{}",
        &top[..200.min(top.len())]
    );
    // One page per subcommand (and per sub-subcommand), each with its options.
    for s in cmd.get_subcommands() {
        let page = dir.path().join(format!("holdfast-{}.1", s.get_name()));
        let text = std::fs::read_to_string(&page).unwrap_or_else(|_| panic!("{}", page.display()));
        for a in s.get_arguments().filter_map(|a| a.get_long()) {
            assert!(
                text.contains(&a.replace('-', "\\-")),
                "{}: --{a}",
                page.display()
            );
        }
        for sub in s.get_subcommands() {
            let p = dir
                .path()
                .join(format!("holdfast-{}-{}.1", s.get_name(), sub.get_name()));
            assert!(p.exists(), "{}", p.display());
        }
    }
}
