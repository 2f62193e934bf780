//! The lab store: one SQLite file holding everything a lab logged. This module owns the
//! connection, the migrations in `schema/` (applied at open through `PRAGMA user_version`),
//! transactions and the audit log. It promises: a database is always migrated before use, a file
//! from a newer cuvette is refused untouched, an existing file is copied aside before it is
//! migrated, and every write goes through one transaction together with its audit row.

pub mod check;
pub mod model;

use crate::error::{Error, Result};
use rusqlite::{Connection, OpenFlags, Transaction, TransactionBehavior, params};
use std::path::{Path, PathBuf};
use std::time::Duration;

/// The migrations, embedded at compile time, in order. Append only.
pub const MIGRATIONS: &[(&str, &str)] = &[
    ("0001_initial", include_str!("../../schema/0001_initial.sql")),
    ("0002_lab_meta", include_str!("../../schema/0002_lab_meta.sql")),
    (
        "0003_search_threshold",
        include_str!("../../schema/0003_search_threshold.sql"),
    ),
    (
        "0004_spectrum_meta_index",
        include_str!("../../schema/0004_spectrum_meta_index.sql"),
    ),
];

/// The schema version this build writes.
pub const SCHEMA_VERSION: i64 = MIGRATIONS.len() as i64;

/// How long a writer waits for another process's transaction before giving up.
pub const BUSY_TIMEOUT: Duration = Duration::from_secs(30);

/// An open lab database.
pub struct Store {
    pub conn: Connection,
    pub path: Option<PathBuf>,
    /// Who the writes are attributed to in the audit log.
    pub actor: String,
    /// Set when opening migrated an existing file: where its backup copy went.
    pub migrated_backup: Option<PathBuf>,
}

const SQLITE_MAGIC: &[u8] = b"SQLite format 3\0";

impl Store {
    /// Opens (creating if needed) the database at `path` and migrates it.
    pub fn open(path: &Path, actor: &str) -> Result<Store> {
        let existed = path.exists() && std::fs::metadata(path)?.len() > 0;
        if existed {
            check_is_sqlite(path)?;
        }
        let conn = Connection::open_with_flags(
            path,
            OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_CREATE | OpenFlags::SQLITE_OPEN_NO_MUTEX,
        )
        .map_err(|e| Error::NotADatabase {
            path: path.display().to_string(),
            reason: e.to_string(),
        })?;
        if conn.is_readonly(rusqlite::DatabaseName::Main).unwrap_or(false) {
            return Err(Error::Storage(
                "the file is read-only: cuvette needs to write to it and to its folder (it keeps a write-ahead journal beside it); nothing was changed".into(),
            ));
        }
        let mut store = Store {
            conn,
            path: Some(path.to_path_buf()),
            actor: actor.to_string(),
            migrated_backup: None,
        };
        store.setup(existed)?;
        Ok(store)
    }

    /// An in-memory database, set up exactly as a file would be (for tests and benchmarks).
    pub fn in_memory(actor: &str) -> Result<Store> {
        let conn = Connection::open_in_memory()?;
        let mut store = Store {
            conn,
            path: None,
            actor: actor.to_string(),
            migrated_backup: None,
        };
        store.setup(false)?;
        Ok(store)
    }

    fn setup(&mut self, existed: bool) -> Result<()> {
        let path_text = self
            .path
            .as_ref()
            .map(|p| p.display().to_string())
            .unwrap_or_else(|| ":memory:".into());
        let version: i64 = self
            .conn
            .query_row("PRAGMA user_version", [], |r| r.get(0))
            .map_err(|e| match e.sqlite_error_code() {
                Some(rusqlite::ErrorCode::NotADatabase) => Error::NotADatabase {
                    path: path_text.clone(),
                    reason: e.to_string(),
                },
                _ => Error::from(e),
            })?;
        if version > SCHEMA_VERSION {
            return Err(Error::NewerSchema {
                found: version,
                supported: SCHEMA_VERSION,
            });
        }
        if existed && version == 0 {
            let tables: i64 =
                self.conn
                    .query_row("SELECT count(*) FROM sqlite_master WHERE type='table'", [], |r| {
                        r.get(0)
                    })?;
            if tables > 0 {
                return Err(Error::NotADatabase {
                    path: path_text,
                    reason: "an SQLite file with tables but no cuvette schema version".into(),
                });
            }
        }
        self.conn.busy_timeout(BUSY_TIMEOUT)?;
        self.conn.pragma_update(None, "foreign_keys", "ON")?;
        if self.path.is_some() {
            let mode: String = self.conn.query_row("PRAGMA journal_mode=WAL", [], |r| r.get(0))?;
            if !mode.eq_ignore_ascii_case("wal") {
                return Err(Error::Invalid(format!(
                    "could not switch {path_text} to WAL journal (got {mode})"
                )));
            }
            self.conn.pragma_update(None, "synchronous", "NORMAL")?;
        }
        if version < SCHEMA_VERSION {
            if existed && version > 0 {
                self.migrated_backup = Some(self.backup_before_migration(version)?);
            }
            self.migrate(version)?;
        }
        crate::derive::calibration::ensure_initial(self)?;
        Ok(())
    }

    fn backup_before_migration(&self, version: i64) -> Result<PathBuf> {
        let path = self.path.clone().unwrap_or_default();
        let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%S");
        let mut name = path.file_name().unwrap_or_default().to_os_string();
        name.push(format!(".v{version}-{stamp}.bak"));
        let dest = path.with_file_name(name);
        self.conn
            .backup(rusqlite::DatabaseName::Main, &dest, None)
            .map_err(|e| Error::Invalid(format!("could not back up before migrating: {e}")))?;
        Ok(dest)
    }

    fn migrate(&mut self, from: i64) -> Result<()> {
        let tx = self.conn.transaction_with_behavior(TransactionBehavior::Exclusive)?;
        for (i, (_name, sql)) in MIGRATIONS.iter().enumerate().skip(from as usize) {
            tx.execute_batch(sql)?;
            tx.pragma_update(None, "user_version", (i + 1) as i64)?;
        }
        tx.commit()?;
        Ok(())
    }

    /// Runs `f` inside one IMMEDIATE transaction: it commits only if `f` returns Ok, so a
    /// failed command leaves the database exactly as it was. IMMEDIATE takes the write lock at
    /// the start, so two writers queue on the busy timeout instead of failing on upgrade.
    pub fn write<T>(&mut self, f: impl FnOnce(&Transaction, &str) -> Result<T>) -> Result<T> {
        let actor = self.actor.clone();
        let tx = self.conn.transaction_with_behavior(TransactionBehavior::Immediate)?;
        let out = f(&tx, &actor)?;
        tx.commit()?;
        Ok(out)
    }

    /// A read-only view in one deferred transaction, so a long read sees one snapshot.
    pub fn read<T>(&mut self, f: impl FnOnce(&Transaction) -> Result<T>) -> Result<T> {
        let tx = self.conn.transaction()?;
        let out = f(&tx)?;
        tx.finish()?;
        Ok(out)
    }

    /// Copies the whole database to `dest` through SQLite's online backup, consistent even
    /// while another process writes.
    pub fn backup_to(&self, dest: &Path) -> Result<()> {
        if dest.exists() {
            return Err(Error::Invalid(format!(
                "{} already exists; choose a new file",
                dest.display()
            )));
        }
        self.conn
            .backup(rusqlite::DatabaseName::Main, dest, None)
            .map_err(|e| Error::Invalid(format!("backup to {} failed: {e}", dest.display())))
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

/// Appends one row to the audit log. `before`/`after` are JSON snapshots of the entity.
pub fn audit(
    tx: &Connection,
    who: &str,
    entity: &str,
    entity_id: Option<i64>,
    action: &str,
    before: Option<&serde_json::Value>,
    after: Option<&serde_json::Value>,
) -> Result<()> {
    tx.execute(
        "INSERT INTO audit_log (at, who, entity, entity_id, action, before, after)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
        params![
            now(),
            who,
            entity,
            entity_id,
            action,
            before.map(|v| v.to_string()),
            after.map(|v| v.to_string())
        ],
    )?;
    Ok(())
}

/// The current time as stored: RFC 3339 in UTC, to the second.
pub fn now() -> String {
    chrono::Utc::now().format("%Y-%m-%dT%H:%M:%SZ").to_string()
}

/// Encodes (x, y) pairs as little-endian f64 pairs: 16 bytes a point, exact round trip.
pub fn encode_xy(x: &[f64], y: &[f64]) -> Vec<u8> {
    let mut out = Vec::with_capacity(x.len() * 16);
    for (a, b) in x.iter().zip(y) {
        out.extend_from_slice(&a.to_le_bytes());
        out.extend_from_slice(&b.to_le_bytes());
    }
    out
}

/// Decodes what [`encode_xy`] wrote.
pub fn decode_xy(blob: &[u8]) -> Result<(Vec<f64>, Vec<f64>)> {
    if !blob.len().is_multiple_of(16) {
        return Err(Error::Invalid(format!(
            "spectrum data of {} bytes is not a whole number of points",
            blob.len()
        )));
    }
    let n = blob.len() / 16;
    let mut x = Vec::with_capacity(n);
    let mut y = Vec::with_capacity(n);
    for c in blob.chunks_exact(16) {
        let mut a = [0u8; 8];
        let mut b = [0u8; 8];
        a.copy_from_slice(&c[..8]);
        b.copy_from_slice(&c[8..]);
        x.push(f64::from_le_bytes(a));
        y.push(f64::from_le_bytes(b));
    }
    Ok((x, y))
}

/// Counts of the main tables, for tests that assert a failed command changed nothing.
pub fn row_counts(conn: &Connection) -> Result<Vec<(String, i64)>> {
    let mut out = Vec::new();
    for t in [
        "person",
        "material",
        "reagent",
        "recipe",
        "recipe_version",
        "batch",
        "aliquot",
        "spectrum",
        "location",
        "vial",
        "vial_event",
        "calibration",
        "derived_value",
        "audit_log",
    ] {
        let n: i64 = conn.query_row(&format!("SELECT count(*) FROM {t}"), [], |r| r.get(0))?;
        out.push((t.to_string(), n));
    }
    Ok(out)
}
