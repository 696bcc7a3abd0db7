//! Records the source commit the tool is built from (`tool.commit` in
//! results.json): `HOLDFAST_COMMIT` when set, else `git rev-parse HEAD`
//! where the source is a git checkout; nothing otherwise.

use std::process::Command;

fn git(args: &[&str]) -> Option<String> {
    let out = Command::new("git").args(args).output().ok()?;
    if !out.status.success() {
        return None;
    }
    let s = String::from_utf8(out.stdout).ok()?.trim().to_string();
    (!s.is_empty()).then_some(s)
}

fn main() {
    println!("cargo:rerun-if-env-changed=HOLDFAST_COMMIT");
    let commit = std::env::var("HOLDFAST_COMMIT")
        .ok()
        .filter(|s| !s.trim().is_empty())
        .or_else(|| git(&["rev-parse", "HEAD"]));
    if let Some(dir) = git(&["rev-parse", "--absolute-git-dir"]) {
        // A new commit moves HEAD or the branch it names. Only files that
        // exist are named: a missing one would rebuild every time.
        let mut watch = vec![format!("{dir}/HEAD"), format!("{dir}/packed-refs")];
        if let Some(r) = git(&["symbolic-ref", "-q", "HEAD"]) {
            watch.push(format!("{dir}/{r}"));
        }
        for w in watch.iter().filter(|w| std::path::Path::new(w).exists()) {
            println!("cargo:rerun-if-changed={w}");
        }
    }
    if let Some(c) = commit {
        println!("cargo:rustc-env=HOLDFAST_COMMIT={c}");
    }
}
