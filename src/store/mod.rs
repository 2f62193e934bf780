//! The lab store: one SQLite file holding everything a lab logged. This module owns the
//! connection, the migrations in `schema/` (applied when a write opens the lab, through `PRAGMA
//! user_version`), transactions and the audit log. It promises:
//! - an open lab is never touched by plain file I/O (closing any handle on a database file drops
//!   the process's SQLite locks); the file is identified through SQLite alone, and another
//!   application's file (by its application id or missing tables) or a newer cuvette's is
//!   refused untouched;
//! - reads never create, migrate or change a lab (`open_read`); only `open` creates one;
//! - an existing file is copied aside before it is migrated;
//! - every write goes through one transaction with its audit row, and first checks, under the
//!   write lock, that the file at its path is still the lab it opened (same inode, same
//!   generation: a restore gives the lab a new one), refusing otherwise.
//!
//! This file opens the lab (for create, write or read), holds the transactions, the still-ours
//! check and the audit; `identify.rs` tells what a file is through SQLite alone, `migrate.rs`
//! holds the migrations and applies them, `blob.rs` encodes a spectrum's points.

pub mod backup;
mod blob;
pub mod calibrations;
pub mod check;
pub mod demo_marks;
pub mod facts;
pub mod handover;
mod identify;
mod migrate;
pub mod model;
pub mod search_bounds;
pub mod values;
mod vocab;

/// The open database (a connection or a transaction) as the layers above the store hold it: they pass it to store functions and never run SQL on it.
pub type Db = rusqlite::Connection;

/// An error of the database engine, as the library's error type carries it.
pub type DbError = rusqlite::Error;

/// The store's errors become the library's here, where the engine is known: the ones a person
/// can act on (a full disk, a read-only file, a lab busy past the wait) say so in words.
impl From<rusqlite::Error> for Error {
    fn from(e: rusqlite::Error) -> Self {
        use rusqlite::ErrorCode;
        match e.sqlite_error_code() {
            Some(ErrorCode::DiskFull) => {
                Error::Storage("the disk holding the database is full: nothing was written".into())
            }
            Some(ErrorCode::ReadOnly) => Error::Storage("the database file is read-only: nothing was written".into()),
            Some(ErrorCode::DatabaseBusy) | Some(ErrorCode::DatabaseLocked) => Error::Storage(
                "the database stayed busy with another process past the wait ($CUVETTE_BUSY_SECONDS, 30 s by default): nothing was written; try again".into(),
            ),
            Some(ErrorCode::SystemIoFailure) => Error::Storage(
                "disk I/O error on the database (is the disk full or failing?): nothing was written".into(),
            ),
            Some(ErrorCode::NotADatabase) => Error::Storage("the file is not a database (or it is corrupt)".into()),
            Some(ErrorCode::CannotOpen) => Error::Storage(format!("cannot open the database: {e}")),
            _ => Error::Sqlite(e),
        }
    }
}

use crate::error::{Error, Replacement, Result};
use rusqlite::{Connection, OpenFlags, Transaction, TransactionBehavior, params};
use std::path::{Path, PathBuf};
use std::time::Duration;

pub use blob::{decode_xy, encode_xy};
pub use identify::{APPLICATION_ID, check_is_sqlite};
pub use migrate::{MIGRATIONS, SCHEMA_VERSION};

/// How long a connection waits for another process's lock before giving up, unless
/// `$CUVETTE_BUSY_SECONDS` says otherwise (a lab whose spectrometer computer holds long
/// transactions may want more; a test of a stuck lock, less).
pub const BUSY_TIMEOUT: Duration = Duration::from_secs(30);

/// Per-connection settings: room in the statement cache for every statement one walk over the
/// lab prepares (a recompute, a check), so none is parsed again per aliquot.
fn tune(conn: &Connection) -> rusqlite::Result<()> {
    conn.set_prepared_statement_cache_capacity(64);
    Ok(())
}

fn busy_timeout() -> Duration {
    std::env::var("CUVETTE_BUSY_SECONDS")
        .ok()
        .and_then(|v| v.trim().parse::<f64>().ok())
        .filter(|s| s.is_finite() && *s >= 0.0 && *s <= 3600.0)
        .map(Duration::from_secs_f64)
        .unwrap_or(BUSY_TIMEOUT)
}

/// An open lab database.
pub struct Store {
    pub conn: Connection,
    pub path: Option<PathBuf>,
    /// Who the writes are attributed to in the audit log.
    pub actor: String,
    /// Set when opening migrated an existing file: where its backup copy went.
    pub migrated_backup: Option<PathBuf>,
    /// Opened for reading only: writes are refused before they start.
    pub read_only: bool,
    /// The file's identity when it was opened (device, inode), to notice a file swapped under us.
    file_id: Option<(u64, u64)>,
    /// The lab's generation when it was opened; a restore gives the lab a new one.
    generation: Option<String>,
}

/// The lab_meta key holding the lab's generation; `restore` sets a new one.
pub const GENERATION_KEY: &str = "lab_generation";

/// How a database is opened.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Access {
    /// Create the file when missing (init, demo, library callers).
    Create,
    /// The file must exist; open it for writing.
    Write,
    /// The file must exist; open it for reading only, never changing it.
    Read,
}

/// The (device, inode) of a file, read from its metadata: no file handle is opened, so no lock
/// SQLite holds on it can be dropped (closing any handle on a database file drops the
/// process's POSIX locks on it: SQLite's documented pitfall).
pub fn file_identity(path: &Path) -> Option<(u64, u64)> {
    crate::open_labs::identity(path)
}

fn missing_lab(path: &Path) -> Error {
    Error::Invalid(format!(
        "no lab at {}: create one with `cuvette init` (or give the right --db)",
        path.display()
    ))
}

impl Store {
    /// Opens (creating if needed) the database at `path` and migrates it. A new lab's shipped
    /// calibration and reagents are not the store's to know: `lab::open` seeds them.
    pub fn open(path: &Path, actor: &str) -> Result<Store> {
        Store::open_with(path, actor, Access::Create)
    }

    /// Opens an existing lab for writing; a missing file is refused, not created.
    pub fn open_existing(path: &Path, actor: &str) -> Result<Store> {
        Store::open_with(path, actor, Access::Write)
    }

    /// Opens an existing lab for reading: nothing in the file or beside it is changed (no
    /// migration, no journal-mode change). A file that cannot be written (permissions, an
    /// immutable flag, read-only media) reads as well as any other. A lab of an older schema is
    /// copied into memory and migrated there, so the file stays as it is.
    pub fn open_read(path: &Path, actor: &str) -> Result<Store> {
        Store::open_with(path, actor, Access::Read)
    }

    fn open_with(path: &Path, actor: &str, access: Access) -> Result<Store> {
        let path_text = path.display().to_string();
        let meta = std::fs::metadata(path);
        let existed = matches!(&meta, Ok(m) if m.len() > 0);
        if let Ok(m) = &meta
            && m.is_dir()
        {
            return Err(Error::Invalid(format!(
                "{path_text} is a folder; give the database file (for example {path_text}/lab.db)"
            )));
        }
        if access != Access::Create && meta.is_err() {
            return Err(missing_lab(path));
        }
        if access != Access::Create && !existed {
            return Err(Error::NotADatabase {
                path: path_text,
                reason: "the file is empty".into(),
            });
        }
        let conn = match access {
            Access::Read => open_read_only(path)?,
            _ => {
                let flags = if access == Access::Create {
                    OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_CREATE
                } else {
                    OpenFlags::SQLITE_OPEN_READ_WRITE
                };
                Connection::open_with_flags(path, flags | OpenFlags::SQLITE_OPEN_NO_MUTEX).map_err(|e| {
                    Error::NotADatabase {
                        path: path_text.clone(),
                        reason: e.to_string(),
                    }
                })?
            }
        };
        if access != Access::Read && conn.is_readonly(rusqlite::MAIN_DB).unwrap_or(false) {
            return Err(Error::Storage(
                "the file is read-only: cuvette needs to write to it and to its folder (it keeps a write-ahead journal beside it); nothing was changed".into(),
            ));
        }
        let mut store = Store {
            conn,
            path: Some(path.to_path_buf()),
            actor: actor.to_string(),
            migrated_backup: None,
            read_only: access == Access::Read,
            file_id: file_identity(path),
            generation: None,
        };
        let version = store.identify(existed)?;
        tune(&store.conn)?;
        // From here this process holds SQLite locks on the file: nothing else in it may open it.
        crate::open_labs::register(path);
        if access == Access::Read {
            store.conn.busy_timeout(busy_timeout())?;
            if version < SCHEMA_VERSION {
                store.migrate_in_memory(version)?;
            }
            store.generation = model::meta_get(&store.conn, GENERATION_KEY)?;
        } else {
            store.setup(existed, version)?;
            store.generation = model::meta_get(&store.conn, GENERATION_KEY)?;
        }
        Ok(store)
    }

    /// An in-memory database, set up exactly as a file would be, unseeded (`lab::in_memory`
    /// seeds it as a new lab is).
    pub fn in_memory(actor: &str) -> Result<Store> {
        let conn = Connection::open_in_memory()?;
        let mut store = Store {
            conn,
            path: None,
            actor: actor.to_string(),
            migrated_backup: None,
            read_only: false,
            file_id: None,
            generation: None,
        };
        let version = store.identify(false)?;
        store.setup(false, version)?;
        Ok(store)
    }

    /// Another connection to the same lab for a background job of this process: same file,
    /// same access, same actor and generation; no file is touched outside SQLite and nothing is
    /// migrated (SQLite keeps its locks right between connections of one process).
    pub fn sibling(&self) -> Result<Store> {
        let path = self
            .path
            .clone()
            .ok_or_else(|| Error::Invalid("background work needs a database file".into()))?;
        let conn = if self.read_only {
            open_read_only(&path)?
        } else {
            Connection::open_with_flags(
                &path,
                OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_NO_MUTEX,
            )?
        };
        conn.busy_timeout(busy_timeout())?;
        conn.pragma_update(None, "foreign_keys", "ON")?;
        tune(&conn)?;
        Ok(Store {
            conn,
            path: Some(path),
            actor: self.actor.clone(),
            migrated_backup: None,
            read_only: self.read_only,
            file_id: self.file_id,
            generation: self.generation.clone(),
        })
    }

    /// Whether the lab this store opened is still the one at its path: None when it is, else
    /// what happened (restored from a backup, or the file moved or replaced) and its message.
    pub fn replaced(&self) -> Result<Option<(Replacement, String)>> {
        match check_still_ours(
            self.path.as_deref(),
            self.file_id,
            self.generation.as_deref(),
            &self.conn,
        ) {
            Ok(()) => Ok(None),
            Err(Error::Replaced { how, message }) => Ok(Some((how, message))),
            Err(e) => Err(e),
        }
    }

    /// SQLite's `data_version`: it changes whenever another connection commits to the lab, so
    /// a view can tell cheaply whether to read again.
    pub fn data_version(&self) -> Result<i64> {
        Ok(self.conn.query_row("PRAGMA data_version", [], |r| r.get(0))?)
    }

    /// Opens the lab at this store's path afresh, with the same access and actor (after a
    /// restore, to go on with the restored lab).
    pub fn reopen(&self) -> Result<Store> {
        let path = self
            .path
            .clone()
            .ok_or_else(|| Error::Invalid("an in-memory lab cannot be reopened".into()))?;
        if self.read_only {
            Store::open_read(&path, &self.actor)
        } else {
            Store::open_existing(&path, &self.actor)
        }
    }

    fn setup(&mut self, existed: bool, version: i64) -> Result<()> {
        let path_text = self
            .path
            .as_ref()
            .map(|p| p.display().to_string())
            .unwrap_or_else(|| ":memory:".into());
        self.conn.busy_timeout(busy_timeout())?;
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
        Ok(())
    }

    /// Runs `f` inside one IMMEDIATE transaction: it commits only if `f` returns Ok, so a
    /// failed command leaves the database exactly as it was. IMMEDIATE takes the write lock at
    /// the start, so two writers queue on the busy timeout instead of failing on upgrade.
    pub fn write<T>(&mut self, f: impl FnOnce(&Transaction, &str) -> Result<T>) -> Result<T> {
        if self.read_only {
            return Err(Error::Storage(
                "this lab is open read-only (the file or its folder cannot be written): nothing was written".into(),
            ));
        }
        let actor = self.actor.clone();
        let (path, file_id, generation) = (self.path.clone(), self.file_id, self.generation.clone());
        let tx = self.conn.transaction_with_behavior(TransactionBehavior::Immediate)?;
        // Checked under the write lock, so a restore cannot slip in between.
        check_still_ours(path.as_deref(), file_id, generation.as_deref(), &tx)?;
        let pending = match &path {
            Some(p) => search_bounds::fold(&tx, p)?,
            None => None,
        };
        let out = f(&tx, &actor)?;
        tx.commit()?;
        if let Some(p) = pending {
            search_bounds::clear(&p);
        }
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
    /// while another process writes. The copy is written beside `dest` under a temporary name
    /// and linked into place only when whole, so a full disk or a kill leaves no half file.
    pub fn backup_to(&self, dest: &Path) -> Result<()> {
        if let (Some(p), Some(d)) = (&self.path, file_identity(dest))
            && file_identity(p) == Some(d)
        {
            return Err(Error::Invalid(format!(
                "{} is the lab itself; choose a new file",
                dest.display()
            )));
        }
        if std::fs::symlink_metadata(dest).is_ok() {
            return Err(Error::Invalid(format!(
                "{} already exists; choose a new file",
                dest.display()
            )));
        }
        backup::write_new_copy(&self.conn, dest).map(|_| ())
    }
}

/// Refuses to write when the file at the lab's path is no longer the one that was opened, or
/// when the lab was restored from a backup since: writing on would put work where nobody looks.
fn check_still_ours(
    path: Option<&Path>,
    file_id: Option<(u64, u64)>,
    generation: Option<&str>,
    tx: &Connection,
) -> Result<()> {
    if let Some(path) = path
        && file_id.is_some()
        && file_identity(path) != file_id
    {
        return Err(Error::Replaced {
            how: Replacement::FileReplaced,
            message: format!(
                "{} is no longer the file this cuvette opened (it was moved or replaced); reopen it: nothing was written",
                path.display()
            ),
        });
    }
    let current = model::meta_get(tx, GENERATION_KEY)?;
    if current.as_deref() != generation {
        let when = model::meta_get(tx, "restored_at")?.unwrap_or_default();
        return Err(Error::Replaced {
            how: Replacement::Restored,
            message: format!(
                "nothing was written: the lab was restored from a backup{} while open; reopen it",
                if when.is_empty() {
                    String::new()
                } else {
                    format!(" at {when}")
                }
            ),
        });
    }
    Ok(())
}

/// A `file:` URI for SQLite with the characters URIs reserve escaped.
fn file_uri(path: &Path, query: &str) -> String {
    let abs = std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf());
    let mut out = String::from("file:");
    for b in abs.to_string_lossy().bytes() {
        match b {
            b'?' | b'#' | b'%' => out.push_str(&format!("%{b:02X}")),
            _ => out.push(b as char),
        }
    }
    // Bytes above 0x7f were pushed as Latin-1 chars; rebuild them as UTF-8 percent escapes.
    let out: String = out
        .chars()
        .flat_map(|c| {
            if (c as u32) > 0x7f {
                let mut buf = [0u8; 4];
                c.encode_utf8(&mut buf)
                    .bytes()
                    .map(|b| format!("%{b:02X}"))
                    .collect::<Vec<_>>()
            } else {
                vec![c.to_string()]
            }
        })
        .collect();
    format!("{out}?{query}")
}

/// Opens a lab for reading without changing it.
///
/// A lab that can be written gets an ordinary connection with `query_only` set: SQLite refuses
/// every write on it, sees other processes' work in the write-ahead log, and on closing cleans up
/// its side files as it does for any connection. A lab that cannot be written (permissions, an
/// immutable flag) gets a read-only connection; where even that cannot work because nothing
/// beside the file can be written (read-only media with no shared-memory file), SQLite's
/// immutable mode, which reads the file alone. A busy lab is waited for (the busy timeout), never
/// read around: falling back to immutable mode then would skip committed work.
fn open_read_only(path: &Path) -> Result<Connection> {
    let not_sqlite = || Error::NotADatabase {
        path: path.display().to_string(),
        reason: "it is not an SQLite file".into(),
    };
    let probe = |c: &Connection| -> rusqlite::Result<()> {
        c.busy_timeout(busy_timeout())?;
        c.query_row("SELECT count(*) FROM sqlite_master", [], |r| r.get::<_, i64>(0))?;
        Ok(())
    };
    let is = |e: &rusqlite::Error, code: rusqlite::ErrorCode| e.sqlite_error_code() == Some(code);
    if let Ok(c) = Connection::open_with_flags(
        path,
        OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_NO_MUTEX,
    ) && !c.is_readonly(rusqlite::MAIN_DB).unwrap_or(true)
    {
        return match probe(&c) {
            Ok(()) => {
                c.pragma_update(None, "query_only", true)?;
                Ok(c)
            }
            Err(e) if is(&e, rusqlite::ErrorCode::NotADatabase) => Err(not_sqlite()),
            Err(e) => Err(Error::from(e)),
        };
    }
    let flags = OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_URI | OpenFlags::SQLITE_OPEN_NO_MUTEX;
    let open = |query: &str| -> rusqlite::Result<Connection> {
        let c = Connection::open_with_flags(file_uri(path, query), flags)?;
        probe(&c)?;
        Ok(c)
    };
    match open("mode=ro") {
        Ok(c) => Ok(c),
        Err(e) if is(&e, rusqlite::ErrorCode::NotADatabase) => Err(not_sqlite()),
        // Only when SQLite cannot open or create what a reader needs beside the file.
        Err(e) if is(&e, rusqlite::ErrorCode::CannotOpen) || is(&e, rusqlite::ErrorCode::ReadOnly) => {
            open("mode=ro&immutable=1").map_err(|e| Error::NotADatabase {
                path: path.display().to_string(),
                reason: e.to_string(),
            })
        }
        Err(e) => Err(Error::from(e)),
    }
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
        "vial_concentration",
        "calibration",
        "derived_value",
        "audit_log",
    ] {
        let n: i64 = conn.query_row(&format!("SELECT count(*) FROM {t}"), [], |r| r.get(0))?;
        out.push((t.to_string(), n));
    }
    Ok(out)
}
