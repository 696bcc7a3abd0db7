//! A 40-test plan as a 4-task Slurm job array plus a merge job on a
//! one-node cluster started for the test (tests/slurm/cluster.sh): the
//! merged pack equals a single run. SKIPPED with a message where Slurm and
//! munge are not installed or the test does not run as root; `.ci/run`
//! installs them and sets HOLDFAST_REQUIRE_SLURM, so there it must run.

use crate::common::root;

#[test]
fn a_slurm_job_array_merges_into_the_single_run_pack() {
    let out = std::process::Command::new("bash")
        .arg(root().join("tests/slurm/cluster.sh"))
        .arg(env!("CARGO_BIN_EXE_holdfast"))
        .output()
        .unwrap();
    let said = format!(
        "{}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    match out.status.code() {
        Some(0) => assert!(said.contains("equal to a single run"), "{said}"),
        Some(3) if std::env::var_os("HOLDFAST_REQUIRE_SLURM").is_none() => {
            eprintln!(
                "SKIPPED a_slurm_job_array_merges_into_the_single_run_pack: {}",
                said.trim()
            );
        }
        _ => panic!("the Slurm test failed: {said}"),
    }
}
