//! What rebuilding the demo lab must know of a file before it replaces it: whether the file is
//! a demo lab at all, and whether anyone has logged work in it since the demo was built (an
//! audited change after the build's last one). Read through a read-only connection of its own,
//! closed before the file is replaced.

use crate::error::Result;
use rusqlite::{Connection, OpenFlags};
use std::path::Path;

/// The demo marks of the lab file at `path`, read without writing to it.
pub struct DemoMarks {
    conn: Connection,
}

impl DemoMarks {
    /// Opens `path` read-only; None when it cannot be opened as a database.
    pub fn open(path: &Path) -> Option<DemoMarks> {
        Connection::open_with_flags(path, OpenFlags::SQLITE_OPEN_READ_ONLY)
            .ok()
            .map(|conn| DemoMarks { conn })
    }

    /// The value of a lab_meta key, None when absent or unreadable.
    pub fn meta(&self, key: &str) -> Option<String> {
        self.conn
            .query_row("SELECT value FROM lab_meta WHERE key = ?1", [key], |r| {
                r.get::<_, String>(0)
            })
            .ok()
    }

    /// Audited changes after audit row `through`, leaving out lab_meta settings (the
    /// remembered bits a read may leave): how many, and the first one in words.
    pub fn work_after(&self, through: i64) -> Result<(i64, Option<String>)> {
        Ok(self.conn.query_row(
            "SELECT COUNT(*), (SELECT action || ' ' || entity || COALESCE(' ' || entity_id, '') || ' by ' || who || ' at ' || at
                               FROM audit_log WHERE id > ?1 AND entity <> 'lab_meta' ORDER BY id LIMIT 1)
             FROM audit_log WHERE id > ?1 AND entity <> 'lab_meta'",
            [through],
            |r| Ok((r.get(0)?, r.get(1)?)),
        )?)
    }
}

/// The id of the newest audit row (0 on an empty log): the mark a demo build leaves.
pub fn last_audit_id(conn: &Connection) -> Result<i64> {
    Ok(conn.query_row("SELECT COALESCE(MAX(id), 0) FROM audit_log", [], |r| r.get(0))?)
}
