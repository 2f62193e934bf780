//! The command line: argument parsing (clap) and dispatch. Each command opens the store once,
//! does its work in one transaction through the library, and prints human text or, with
//! `--json`, stable JSON documented in README. Exit codes: 0 success, 1 bad input or a failed
//! check, 2 a usage error (clap's own).

mod args;
mod commands;
mod identity;
mod output;

pub use args::Cli;

use clap::Parser;
use std::process::ExitCode;

/// Parses the process arguments and runs the command; prints errors on stderr in one line.
pub fn run() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match commands::dispatch(cli) {
        Ok(code) => code,
        Err(e) => {
            let msg = format!("{e:#}");
            if !msg.contains("Broken pipe") {
                output::warn(&msg.replace('\n', " "));
            }
            ExitCode::from(1)
        }
    }
}
