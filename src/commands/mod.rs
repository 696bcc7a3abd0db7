//! One module per subcommand. Each takes typed arguments from [`crate::cli`]
//! and returns an [`ExitStatus`], or an error (exit status 2).

pub mod check;
pub mod inspect;
pub mod plan_init;
pub mod rules;
pub mod synth;

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
    }
}
