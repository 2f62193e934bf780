//! The command line: argument parsing (clap) and dispatch. Each command opens the store once,
//! does its work in one transaction through the library, and prints human text or, with
//! `--json`, stable JSON documented in README. Exit codes come from one table,
//! [`exit::EXIT_CODES`] (0 success or stdout closed early, 1 bad input, a refused action or a
//! finding, 2 a usage error); every failure, a closed stdout included, reaches [`run`] as an
//! error and is sorted there by its type.

mod args;
mod commands;
pub mod exit;
mod generate;
mod identity;
mod output;

pub use args::Cli;
pub use output::StdoutClosed;

use clap::Parser;
use exit::Outcome;
use std::process::ExitCode;

/// Parses the process arguments and runs the command; prints errors on stderr in one line.
pub fn run() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let outcome = if e.use_stderr() {
                Outcome::Usage
            } else {
                Outcome::Success
            };
            // Help or version text to a reader that went away is not worth a word either.
            let _ = e.print();
            return outcome.exit_code();
        }
    };
    match commands::dispatch(cli) {
        Ok(code) => code,
        Err(e) => {
            let outcome = Outcome::of(&e);
            if outcome.is_reported() {
                output::warn(&format!("{e:#}").replace('\n', " "));
            }
            outcome.exit_code()
        }
    }
}
