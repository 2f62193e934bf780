//! What a file is, told through SQLite alone (its application id, user_version and tables):
//! another application's file, a plain SQLite file without cuvette's tables and a newer
//! cuvette's lab are refused untouched; and the check of a file's header before SQLite gets
//! to touch it.

use super::{SCHEMA_VERSION, Store};
use crate::error::{Error, Result};
use std::path::Path;

const SQLITE_MAGIC: &[u8] = b"SQLite format 3\0";

/// The application id cuvette writes into the SQLite header ("CUVT"), so a file of another
/// application is told apart whatever its user_version says.
pub const APPLICATION_ID: i64 = 0x4355_5654;

/// The tables every cuvette lab has had since schema version 1: a file without an application
/// id is taken as a lab only when it has all of them.
const CUVETTE_TABLES: &[&str] = &[
    "aliquot",
    "audit_log",
    "batch",
    "calibration",
    "derived_value",
    "spectrum",
    "vial",
];

impl Store {
    /// Reads what the file is, through SQLite only: refuses a non-SQLite file, another
    /// application's file and a newer cuvette's; returns the schema version.
    pub(super) fn identify(&self, existed: bool) -> Result<i64> {
        let path_text = self
            .path
            .as_ref()
            .map(|p| p.display().to_string())
            .unwrap_or_else(|| ":memory:".into());
        let not_db = |e: rusqlite::Error| match e.sqlite_error_code() {
            Some(rusqlite::ErrorCode::NotADatabase) => Error::NotADatabase {
                path: path_text.clone(),
                reason: "it is not an SQLite file".into(),
            },
            _ => Error::from(e),
        };
        let version: i64 = self
            .conn
            .query_row("PRAGMA user_version", [], |r| r.get(0))
            .map_err(not_db)?;
        let app_id: i64 = self
            .conn
            .query_row("PRAGMA application_id", [], |r| r.get(0))
            .map_err(not_db)?;
        if !existed {
            return Ok(version);
        }
        let foreign = |reason: String| Error::NotADatabase {
            path: path_text.clone(),
            reason,
        };
        if app_id != 0 && app_id != APPLICATION_ID {
            return Err(foreign(format!(
                "an SQLite file of another application (application id {app_id:#x}); nothing was changed"
            )));
        }
        if app_id == 0 {
            let tables: Vec<String> = {
                let mut st = self
                    .conn
                    .prepare("SELECT name FROM sqlite_master WHERE type = 'table'")?;
                let rows = st.query_map([], |r| r.get::<_, String>(0))?;
                rows.collect::<rusqlite::Result<_>>()?
            };
            let is_lab = CUVETTE_TABLES.iter().all(|t| tables.iter().any(|n| n == t));
            if version == 0 && !tables.is_empty() || version > 0 && !is_lab {
                return Err(foreign(format!(
                    "an SQLite file without cuvette's tables (user_version {version}); nothing was changed"
                )));
            }
        }
        if version > SCHEMA_VERSION {
            return Err(Error::NewerSchema {
                found: version,
                supported: SCHEMA_VERSION,
            });
        }
        Ok(version)
    }
}

/// Refuses a file that is not SQLite before SQLite gets to touch it.
pub fn check_is_sqlite(path: &Path) -> Result<()> {
    use std::io::Read;
    let mut head = [0u8; 16];
    let mut f = std::fs::File::open(path).map_err(|e| Error::NotADatabase {
        path: path.display().to_string(),
        reason: e.to_string(),
    })?;
    let n = f.read(&mut head)?;
    if n < 16 || head != SQLITE_MAGIC {
        return Err(Error::NotADatabase {
            path: path.display().to_string(),
            reason: "it is not an SQLite file".into(),
        });
    }
    Ok(())
}
