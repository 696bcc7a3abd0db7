//! One module per subcommand. Each takes typed arguments from [`crate::cli`]
//! and returns the exit status (0, 1) or an error (exit status 2).

pub mod check;
pub mod inspect;
pub mod rules;
pub mod synth;

use crate::cli::{Cli, Command};

/// Runs a parsed command line; `Ok` carries the exit status.
pub fn run(cli: Cli) -> anyhow::Result<u8> {
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
                Ok(0)
            }
        },
    }
}
