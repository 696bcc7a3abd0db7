//! Helpers shared by the integration tests: the binary, paths, small files,
//! synthetic recordings and one run of the sample plan.

use assert_cmd::Command;
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;
use std::time::Duration;

/// Rating flags of the constructed unit every synthetic case uses
/// (0.69 kV, 4.2 MVA, 50 Hz; invented demo values).
pub const RATINGS: [&str; 6] = [
    "--rated-kv",
    "0.69",
    "--rated-mva",
    "4.2",
    "--frequency",
    "50",
];

/// The repository root.
pub fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// A file or folder under `tests/fixtures`.
pub fn fixture(rel: &str) -> PathBuf {
    root().join("tests/fixtures").join(rel)
}

/// The binary under test; a hang is a failure, not a stuck test run.
pub fn holdfast() -> Command {
    let mut c = Command::cargo_bin("holdfast").unwrap();
    c.timeout(Duration::from_secs(120));
    c
}

/// Writes `content` to `dir/name`.
pub fn write(dir: impl AsRef<Path>, name: &str, content: impl AsRef<[u8]>) -> PathBuf {
    let p = dir.as_ref().join(name);
    std::fs::write(&p, content).unwrap();
    p
}

/// Writes a synthetic recording `dir/name` with `holdfast synth`, the
/// caller's defaults first and the case's arguments after them (the later
/// one wins).
pub fn synth(dir: &Path, name: &str, defaults: &[&str], args: &[&str]) -> PathBuf {
    let p = dir.join(name);
    let out = holdfast()
        .arg("synth")
        .arg("--out")
        .arg(&p)
        .args(defaults)
        .args(args)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    p
}

/// One run of the README's main command on the shipped sample plan.
pub struct SampleRun {
    pub dir: tempfile::TempDir,
    pub results: Value,
    pub code: i32,
    /// The terminal table.
    pub stdout: String,
}

/// Runs the README's main command once (per test binary) into a temporary
/// directory.
pub fn sample_run() -> &'static SampleRun {
    static RUN: OnceLock<SampleRun> = OnceLock::new();
    RUN.get_or_init(|| {
        let dir = tempfile::tempdir().unwrap();
        let out = holdfast()
            .current_dir(root())
            .args(["check", "sample-data/plan.yaml", "--out"])
            .arg(dir.path())
            .output()
            .unwrap();
        let code = out.status.code().unwrap_or(-1);
        assert!(
            code == 0 || code == 1,
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let text = std::fs::read_to_string(dir.path().join("results.json")).unwrap();
        SampleRun {
            results: serde_json::from_str(&text).unwrap(),
            code,
            stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
            dir,
        }
    })
}
