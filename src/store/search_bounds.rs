//! The numeric bounds people search by, queued beside the lab by reads. `find` must not take
//! the write lock (a search is a read, and a read never changes a lab), so it appends its bounds
//! to a small file beside the database; the next write of any kind folds them into the
//! `search_threshold` table inside its own transaction and empties the file after commit. The
//! queue is bookkeeping, not lab data: it is size-capped, and a queue that cannot be written
//! (a read-only folder) is skipped without a word.

use crate::error::Result;
use rusqlite::{Connection, params};
use std::io::Write;
use std::path::{Path, PathBuf};

/// Beyond this size the queue takes no more bounds until a write empties it.
const QUEUE_LIMIT_BYTES: u64 = 64 * 1024;

/// The queue file beside a lab: `lab.db` queues in `lab.db.searched`.
pub fn queue_path(db: &Path) -> PathBuf {
    let mut name = db.as_os_str().to_os_string();
    name.push(".searched");
    PathBuf::from(name)
}

/// Appends (field, value) bounds to the queue; best effort.
pub fn queue(db: &Path, bounds: &[(String, f64)]) {
    if bounds.is_empty() {
        return;
    }
    let q = queue_path(db);
    if std::fs::metadata(&q).map(|m| m.len()).unwrap_or(0) > QUEUE_LIMIT_BYTES {
        return;
    }
    let mut text = String::new();
    let at = super::now();
    for (field, value) in bounds {
        if value.is_finite() && field.chars().all(|c| c.is_ascii_alphanumeric() || c == '_') {
            text.push_str(&format!("{field}\t{value}\t{at}\n"));
        }
    }
    if let Ok(mut f) = std::fs::OpenOptions::new().create(true).append(true).open(&q) {
        let _ = f.write_all(text.as_bytes());
    }
}

/// Folds the queued bounds into the table inside the caller's transaction. Returns the queue's
/// path when there was anything to fold, for [`clear`] after the commit.
pub fn fold(tx: &Connection, db: &Path) -> Result<Option<PathBuf>> {
    let q = queue_path(db);
    let Ok(meta) = std::fs::metadata(&q) else {
        return Ok(None);
    };
    if meta.len() == 0 || meta.len() > 4 * QUEUE_LIMIT_BYTES {
        return Ok(if meta.len() == 0 { None } else { Some(q) });
    }
    let Ok(text) = std::fs::read_to_string(&q) else {
        return Ok(None);
    };
    for line in text.lines() {
        let mut parts = line.split('\t');
        let (Some(field), Some(value), Some(at)) = (parts.next(), parts.next(), parts.next()) else {
            continue;
        };
        let Ok(value) = value.parse::<f64>() else { continue };
        if !value.is_finite() {
            continue;
        }
        tx.execute(
            "INSERT INTO search_threshold (field, value, last_used) VALUES (?1, ?2, ?3)
             ON CONFLICT(field, value) DO UPDATE SET uses = uses + 1, last_used = max(last_used, excluded.last_used)",
            params![field, value, at],
        )?;
    }
    Ok(Some(q))
}

/// Empties the queue after its bounds were committed.
pub fn clear(q: &Path) {
    let _ = std::fs::remove_file(q);
}
