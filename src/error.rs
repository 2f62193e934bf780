//! The library's typed errors. Every error a user can cause is one of these, with a message
//! that names what was wrong in one line; the binary turns them into exit codes.

use thiserror::Error;

/// Everything that can go wrong inside the library.
#[derive(Debug, Error)]
pub enum Error {
    /// The user gave something that cannot be accepted (a missing batch, a bad unit, ...).
    #[error("{0}")]
    Invalid(String),
    /// A named thing does not exist.
    #[error("{kind} {what} not found")]
    NotFound { kind: &'static str, what: String },
    /// A spectrum file could not be read; `line` is 1-based where it applies.
    #[error("{file}{}: {reason}", line.map(|l| format!(" line {l}")).unwrap_or_default())]
    Spectrum {
        file: String,
        line: Option<usize>,
        reason: String,
    },
    /// The database file was written by a newer cuvette.
    #[error("database schema version {found} is newer than this cuvette understands ({supported}); upgrade cuvette")]
    NewerSchema { found: i64, supported: i64 },
    /// The file is not a cuvette/SQLite database.
    #[error("{path} is not a cuvette database ({reason})")]
    NotADatabase { path: String, reason: String },
    /// A search query did not parse; `column` is 1-based.
    #[error("query error at column {column}: {reason}")]
    Query { column: usize, reason: String },
    /// Any other error the database gave (the store turns those a person can act on, a full
    /// disk or a busy lab, into `Storage` as it converts them).
    #[error("database: {0}")]
    Sqlite(crate::store::DbError),
    /// The disk or the file refused a write; nothing was written.
    #[error("{0}")]
    Storage(String),
    /// The lab was restored or its file replaced while this process had it open; `how` says
    /// which, so no caller reads it from the message.
    #[error("{message}")]
    Replaced { how: Replacement, message: String },
    #[error("{0}")]
    Io(#[from] std::io::Error),
    #[error("json: {0}")]
    Json(#[from] serde_json::Error),
}

/// What happened to the lab a process had open, as [`Error::Replaced`] names it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Replacement {
    /// Restored from a backup (the lab has a new generation) while open.
    Restored,
    /// The file at the lab's path is no longer the one opened: moved or replaced.
    FileReplaced,
}

pub type Result<T> = std::result::Result<T, Error>;

/// Shorthand for an [`Error::Invalid`].
pub fn invalid<T>(msg: impl Into<String>) -> Result<T> {
    Err(Error::Invalid(msg.into()))
}
