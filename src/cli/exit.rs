//! The exit codes of the command line, in one table. [`EXIT_CODES`] is what `cuvette --help`,
//! the man page and README's table show (a test holds README to it), and [`Outcome::of`] is
//! the one place an error is sorted into a row: by its type, never by its message.
//!
//! The codes are the ones cuvette has always used, which scripts and the tests rely on: 0 for
//! success, 2 for a usage error (clap's own), and 1 for everything a command refuses or fails
//! at, whatever the kind. The kinds are kept apart here so that the table says what each one
//! means, and so that giving one its own code later is a one-line change made in one place.

use super::output::StdoutClosed;
use crate::Error;
use std::process::ExitCode;

/// How a run ended, as far as its exit code goes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// The command did what it was asked.
    Success,
    /// The reader of stdout went away early (`cuvette log --json | head`); nothing is said.
    StdoutClosed,
    /// The command line did not parse: an unknown command or option, a missing argument, a word
    /// outside its vocabulary (a batch status, a relation, a location kind).
    Usage,
    /// Input that cannot be accepted, or an action refused (a bad unit, an empty reason, a
    /// file in the way without `--force`).
    Invalid,
    /// A named batch, aliquot, vial, person, ... does not exist.
    NotFound,
    /// A spectrum file could not be read.
    Spectrum,
    /// A search query did not parse.
    Query,
    /// The disk or the file refused a write, or the lab stayed busy past the wait.
    Storage,
    /// The lab file was written by a newer cuvette.
    NewerSchema,
    /// The file is not a cuvette lab.
    NotADatabase,
    /// The lab was restored or its file replaced while the command had it open.
    Replaced,
    /// The command ran and reports a finding: `check` found problems, `analyze` or
    /// `import-manifest` refused some of its files, `whoami` knows nobody.
    Findings,
    /// Any other failure (SQLite, the file system, JSON).
    Other,
}

/// One row of the table: the outcome, its code, and what it means in README's words.
#[derive(Debug, Clone, Copy)]
pub struct ExitRow {
    pub outcome: Outcome,
    pub code: u8,
    pub meaning: &'static str,
}

/// Every outcome with its exit code, in the order README lists them.
pub const EXIT_CODES: &[ExitRow] = &[
    ExitRow {
        outcome: Outcome::Success,
        code: 0,
        meaning: "success",
    },
    ExitRow {
        outcome: Outcome::StdoutClosed,
        code: 0,
        meaning: "stdout closed early by its reader (piped into `head`, say): the command stops, quietly",
    },
    ExitRow {
        outcome: Outcome::Findings,
        code: 1,
        meaning: "a finding: `check` found problems, `analyze` or `import-manifest` refused a file, `whoami` knows nobody",
    },
    ExitRow {
        outcome: Outcome::Invalid,
        code: 1,
        meaning: "bad input or a refused action (nothing was written)",
    },
    ExitRow {
        outcome: Outcome::NotFound,
        code: 1,
        meaning: "a named batch, aliquot, vial, person, ... does not exist",
    },
    ExitRow {
        outcome: Outcome::Spectrum,
        code: 1,
        meaning: "a spectrum file could not be read",
    },
    ExitRow {
        outcome: Outcome::Query,
        code: 1,
        meaning: "a search query did not parse",
    },
    ExitRow {
        outcome: Outcome::Storage,
        code: 1,
        meaning: "the disk or file refused a write, or the lab stayed busy past `$CUVETTE_BUSY_SECONDS`",
    },
    ExitRow {
        outcome: Outcome::NewerSchema,
        code: 1,
        meaning: "the lab was written by a newer cuvette",
    },
    ExitRow {
        outcome: Outcome::NotADatabase,
        code: 1,
        meaning: "the file is not a cuvette lab",
    },
    ExitRow {
        outcome: Outcome::Replaced,
        code: 1,
        meaning: "the lab was restored or replaced while the command had it open",
    },
    ExitRow {
        outcome: Outcome::Other,
        code: 1,
        meaning: "any other failure (SQLite, the file system)",
    },
    ExitRow {
        outcome: Outcome::Usage,
        code: 2,
        meaning: "a usage error: unknown command or option, missing argument, a word not in its list (status, relation, location kind)",
    },
];

impl Outcome {
    /// Every outcome, so that a test can hold the table to the enum.
    pub const ALL: &[Outcome] = &[
        Outcome::Success,
        Outcome::StdoutClosed,
        Outcome::Usage,
        Outcome::Invalid,
        Outcome::NotFound,
        Outcome::Spectrum,
        Outcome::Query,
        Outcome::Storage,
        Outcome::NewerSchema,
        Outcome::NotADatabase,
        Outcome::Replaced,
        Outcome::Findings,
        Outcome::Other,
    ];

    /// The outcome's code, from [`EXIT_CODES`].
    pub fn code(self) -> u8 {
        EXIT_CODES
            .iter()
            .find(|r| r.outcome == self)
            .map(|r| r.code)
            // Unreachable while the table holds every outcome (a test checks it); 1 is what
            // any failure has always been.
            .unwrap_or(1)
    }

    pub fn exit_code(self) -> ExitCode {
        ExitCode::from(self.code())
    }

    /// Whether the outcome is said on stderr: a closed stdout is not an error to report.
    pub fn is_reported(self) -> bool {
        self != Outcome::StdoutClosed
    }

    /// Sorts a failed command's error by the types in its chain: the first cause that is one
    /// of ours decides, whatever context was added on the way up.
    pub fn of(e: &anyhow::Error) -> Outcome {
        for cause in e.chain() {
            if cause.is::<StdoutClosed>() {
                return Outcome::StdoutClosed;
            }
            if let Some(c) = cause.downcast_ref::<clap::Error>() {
                return if c.use_stderr() {
                    Outcome::Usage
                } else {
                    Outcome::Success
                };
            }
            if let Some(err) = cause.downcast_ref::<Error>() {
                return Outcome::of_library(err);
            }
        }
        Outcome::Other
    }

    /// The row of a library error.
    pub fn of_library(e: &Error) -> Outcome {
        match e {
            Error::Invalid(_) => Outcome::Invalid,
            Error::NotFound { .. } => Outcome::NotFound,
            Error::Spectrum { .. } => Outcome::Spectrum,
            Error::Query { .. } => Outcome::Query,
            Error::Storage(_) => Outcome::Storage,
            Error::NewerSchema { .. } => Outcome::NewerSchema,
            Error::NotADatabase { .. } => Outcome::NotADatabase,
            Error::Replaced { .. } => Outcome::Replaced,
            Error::Sqlite(_) | Error::Io(_) | Error::Json(_) => Outcome::Other,
        }
    }
}

/// The table as README shows it: markdown, one row per outcome.
pub fn markdown_table() -> String {
    let mut s = String::from("| code | meaning |\n|---|---|\n");
    for row in EXIT_CODES {
        s.push_str(&format!("| {} | {} |\n", row.code, row.meaning));
    }
    s
}

/// The table as `cuvette --help` and the man page show it.
pub fn help_text() -> String {
    let mut s = String::from("Exit status:\n");
    for row in EXIT_CODES {
        s.push_str(&format!("  {}  {}\n", row.code, row.meaning));
    }
    s
}
