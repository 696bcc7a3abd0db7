//! One module per subcommand. Each takes typed arguments from [`crate::cli`]
//! and returns an [`ExitStatus`], or an error (exit status 2).

pub mod check;
pub mod inspect;
pub mod plan_init;
pub mod rules;
pub mod shard;
pub mod synth;
pub mod validate;

use crate::cli::{Cli, Command};

/// How a command that ran ends (README, "Exit status"); input that
/// cannot be used is an error instead, exit status 2.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ExitStatus {
    /// Done; for `check`: every test passed or was not applicable.
    Success,
    /// `check`: some test failed or was inconclusive.
    NotPassed,
}

impl ExitStatus {
    /// Exit status of input that cannot be used (and of bad arguments).
    pub const BAD_INPUT: u8 = 2;

    pub fn code(self) -> u8 {
        match self {
            ExitStatus::Success => 0,
            ExitStatus::NotPassed => 1,
        }
    }
}

/// Writes `holdfast.1` and `holdfast-<sub>[-<sub>].1` for every
/// subcommand, from the clap definitions.
fn man_pages(out: &std::path::Path) -> anyhow::Result<ExitStatus> {
    use anyhow::Context;
    std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
    let cmd = <crate::cli::Cli as clap::CommandFactory>::command();
    fn write(cmd: &clap::Command, name: &str, out: &std::path::Path) -> anyhow::Result<()> {
        let cmd = cmd.clone().name(name.to_string());
        let mut page = Vec::new();
        clap_mangen::Man::new(cmd.clone()).render(&mut page)?;
        let path = out.join(format!("{name}.1"));
        std::fs::write(&path, page).with_context(|| format!("writing {}", path.display()))?;
        println!("{}", crate::text::line(&path.display().to_string()));
        for sub in cmd.get_subcommands().filter(|s| s.get_name() != "help") {
            write(sub, &format!("{name}-{}", sub.get_name()), out)?;
        }
        Ok(())
    }
    write(
        &cmd.clone().version(env!("CARGO_PKG_VERSION")),
        "holdfast",
        out,
    )?;
    Ok(ExitStatus::Success)
}

/// Runs a parsed command line.
pub fn run(cli: Cli) -> anyhow::Result<ExitStatus> {
    match cli.command {
        Command::Inspect(args) => inspect::run(&args),
        Command::Synth(args) => synth::run(&args),
        Command::Check(args) => check::run(&args),
        Command::Rules(args) => rules::run(&args),
        Command::Plan(args) => match args.command {
            crate::cli::PlanCommand::Schema => {
                use std::io::Write;
                let text = serde_json::to_string_pretty(&crate::plan::plan_schema())?;
                writeln!(std::io::stdout().lock(), "{text}")?;
                Ok(ExitStatus::Success)
            }
            crate::cli::PlanCommand::Init(a) => plan_init::run(&a),
        },
        Command::Validate(args) => validate::run(&args),
        Command::Merge(args) => shard::merge(&args),
        Command::Completions { shell } => {
            let mut cmd = <crate::cli::Cli as clap::CommandFactory>::command();
            clap_complete::generate(shell, &mut cmd, "holdfast", &mut std::io::stdout());
            Ok(ExitStatus::Success)
        }
        Command::Man { out } => man_pages(&out),
    }
}
