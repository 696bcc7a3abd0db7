//! Sharded plans: `check --shard K/N` evaluates a deterministic subset and
//! `holdfast merge` rebuilds the pack of a single run (docs/cluster.md).

use crate::common::*;
use std::path::Path;

fn check(args: &[&str], out: &Path) -> std::process::Output {
    holdfast()
        .current_dir(root())
        .args(["check", "sample-data/plan.yaml", "-q", "--out"])
        .arg(out)
        .args(args)
        .output()
        .unwrap()
}

/// results.json without the two lines that differ between runs.
fn stable(p: &Path) -> String {
    std::fs::read_to_string(p)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with("  \"generated_utc\"") && !l.starts_with("  \"command_line\""))
        .collect::<Vec<_>>()
        .join("\n")
}

#[test]
fn shards_merge_into_the_pack_of_a_single_run() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let single = &sample_run().dir;
    // Three shards, the exit status 0 once evaluated (the plan fails on
    // purpose, which would otherwise fail a scheduler's array task).
    for k in 1..=3 {
        let o = check(
            &["--shard", &format!("{k}/3"), "--exit-zero-when-evaluated"],
            &d.join(format!("s{k}")),
        );
        assert_eq!(
            o.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
        let m: serde_json::Value = serde_json::from_str(
            &std::fs::read_to_string(d.join(format!("s{k}/shard.json"))).unwrap(),
        )
        .unwrap();
        // Shard k holds the tests at plan positions i with i mod 3 = k − 1.
        let ids: Vec<&str> = m["tests"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_str().unwrap())
            .collect();
        let want: Vec<String> = (1..=17)
            .filter(|i| (i - 1) % 3 == k - 1)
            .map(|i| format!("T{i:02}"))
            .collect();
        assert_eq!(ids, want);
    }
    // Merged in any order: results.json byte-equal apart from time and
    // command line; every figure byte-equal.
    let out = holdfast()
        .args(["merge", "-q"])
        .arg(d.join("s3"))
        .arg(d.join("s1"))
        .arg(d.join("s2"))
        .arg("--out")
        .arg(d.join("merged"))
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(1),
        "the sample plan fails: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert_eq!(
        stable(&d.join("merged/results.json")),
        stable(&single.path().join("results.json"))
    );
    let names = |p: &Path| {
        let mut v: Vec<String> = std::fs::read_dir(p)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    };
    let plots = names(&single.path().join("plots"));
    assert_eq!(names(&d.join("merged/plots")), plots);
    for f in &plots {
        assert_eq!(
            std::fs::read(d.join("merged/plots").join(f)).unwrap(),
            std::fs::read(single.path().join("plots").join(f)).unwrap(),
            "{f}"
        );
    }
    assert_eq!(names(&d.join("merged/tests")).len(), 17);
}

fn merge(dirs: &[std::path::PathBuf], out: &Path) -> std::process::Output {
    holdfast()
        .arg("merge")
        .args(dirs)
        .arg("--out")
        .arg(out)
        .output()
        .unwrap()
}

#[test]
fn merge_refuses_missing_shards_and_shards_of_another_run() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    // Shards 1 and 3, and a shard 2 whose ROCOF limit was set differently
    // (rules/eu-rfg-2016-631-frequency.yaml's parameter).
    for (k, extra) in [(1, None), (3, None), (2, Some("rocof_limit=1.5"))] {
        let mut args = vec![
            "--shard".to_string(),
            format!("{k}/3"),
            "--exit-zero-when-evaluated".into(),
        ];
        if let Some(set) = extra {
            args.extend(["--set".to_string(), set.to_string()]);
        }
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let o = check(&args, &d.join(format!("s{k}")));
        assert_eq!(
            o.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
    }
    // A missing shard is refused, naming it and its tests.
    let o = merge(&[d.join("s1"), d.join("s3")], &d.join("m1"));
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("missing shard(s) 2/3") && err.contains("T02"),
        "{err}"
    );
    // A shard of a run with other parameter values is refused.
    let o = merge(&[d.join("s1"), d.join("s2"), d.join("s3")], &d.join("m2"));
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("another rule set"), "{err}");
}

#[test]
fn shard_auto_reads_the_scheduler_environment() {
    use holdfast::commands::shard::parse_spec;
    let env = |pairs: &'static [(&'static str, &'static str)]| {
        move |k: &str| pairs.iter().find(|p| p.0 == k).map(|p| p.1.to_string())
    };
    // A Slurm array --array=0-3: task ids 0..3, count 4.
    let slurm = env(&[
        ("SLURM_ARRAY_TASK_ID", "2"),
        ("SLURM_ARRAY_TASK_MIN", "0"),
        ("SLURM_ARRAY_TASK_COUNT", "4"),
    ]);
    assert_eq!(parse_spec("auto", &slurm).unwrap(), (3, 4));
    // --array=1-4.
    let slurm1 = env(&[
        ("SLURM_ARRAY_TASK_ID", "1"),
        ("SLURM_ARRAY_TASK_MIN", "1"),
        ("SLURM_ARRAY_TASK_COUNT", "4"),
    ]);
    assert_eq!(parse_spec("auto", &slurm1).unwrap(), (1, 4));
    // A Kubernetes Indexed Job: JOB_COMPLETION_INDEX from 0, the count set
    // in the manifest.
    let k8s = env(&[("JOB_COMPLETION_INDEX", "3"), ("HOLDFAST_SHARDS", "4")]);
    assert_eq!(parse_spec("auto", &k8s).unwrap(), (4, 4));
    assert!(parse_spec("auto", &env(&[])).is_err());
    assert!(parse_spec("5/4", &env(&[])).is_err());
    assert!(parse_spec("0/4", &env(&[])).is_err());
    assert_eq!(parse_spec("2/8", &env(&[])).unwrap(), (2, 8));
}
