//! Thin entry point: parse arguments, run, map the outcome to an exit status.
//! 0: every test passed or was not applicable; 1: some test failed or was
//! inconclusive; 2: the input could not be used.

use clap::Parser;
use holdfast::commands::ExitStatus;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = match holdfast::cli::Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let _ = e.print();
            return ExitCode::from(if e.use_stderr() {
                ExitStatus::BAD_INPUT
            } else {
                ExitStatus::Success.code()
            });
        }
    };
    match holdfast::commands::run(cli) {
        Ok(status) => ExitCode::from(status.code()),
        Err(e) => {
            // A closed pipe (`holdfast ... | head`) is not an error.
            if e.chain().any(|c| {
                c.downcast_ref::<std::io::Error>()
                    .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
            }) {
                return ExitCode::SUCCESS;
            }
            // Messages may carry text from the input files: escaped.
            eprintln!("error: {}", holdfast::text::lines(&e.to_string()));
            for cause in e.chain().skip(1) {
                eprintln!("  caused by: {}", holdfast::text::lines(&cause.to_string()));
            }
            ExitCode::from(ExitStatus::BAD_INPUT)
        }
    }
}
