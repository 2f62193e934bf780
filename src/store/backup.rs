//! Copies of a lab that cannot lose data: `backup` and `restore`.
//!
//! Every copy is written through SQLite's online backup to a temporary file beside its target
//! (named `.NAME.cuvette-partial-PID-N`, so cuvette knows it made it), synced, then hard-linked
//! to its final name, which never replaces an existing file; a full disk or a kill leaves no
//! half file under a real name, and the next backup or restore in that folder removes partial
//! files whose process is gone. No other file is ever deleted.
//!
//! `restore` replaces a lab's content in place, inside one write transaction on the live file:
//! the content it replaces is first copied (under the same lock, so no write can slip between
//! the copy and the replacement) to `NAME.replaced-STAMP[-N]`, then every table is refilled
//! from the backup (migrated to this schema first when older) and the lab gets a new
//! generation. Any other process that has the lab open sees the restored content and has its
//! next write refused with a message, instead of writing into a file nobody looks at.

use super::{GENERATION_KEY, Store, check, file_identity};
use crate::error::{Error, Result};
use rusqlite::{Connection, params};
use serde::Serialize;
use std::path::{Path, PathBuf};

const PARTIAL_MARK: &str = ".cuvette-partial-";

fn partial_name(dest: &Path, n: u32) -> PathBuf {
    let name = dest
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    dest.with_file_name(format!(".{name}{PARTIAL_MARK}{}-{n}", std::process::id()))
}

fn folder_of(p: &Path) -> PathBuf {
    match p.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Removes partial files cuvette left in `dir` when a process was killed mid-copy: only files
/// with cuvette's own partial mark whose process no longer runs.
pub fn sweep_partials(dir: &Path) {
    let Ok(entries) = std::fs::read_dir(dir) else { return };
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().to_string();
        let Some(rest) = name.split(PARTIAL_MARK).nth(1) else {
            continue;
        };
        if !name.starts_with('.') {
            continue;
        }
        let Some(pid) = rest.split('-').next().and_then(|p| p.parse::<u32>().ok()) else {
            continue;
        };
        if pid != std::process::id() && !process_alive(pid) {
            let _ = std::fs::remove_file(e.path());
        }
    }
}

fn process_alive(pid: u32) -> bool {
    if cfg!(target_os = "linux") {
        Path::new(&format!("/proc/{pid}")).exists()
    } else {
        // Without a cheap way to ask, assume it runs: leaving a partial file is safe.
        true
    }
}

/// Writes a consistent copy of `src`'s main database to a new partial file beside `dest` and
/// returns that file's path; nothing is left behind when it fails.
fn copy_to_partial(src: &Connection, dest: &Path) -> Result<PathBuf> {
    sweep_partials(&folder_of(dest));
    let mut n = 0;
    let tmp = loop {
        let t = partial_name(dest, n);
        if std::fs::symlink_metadata(&t).is_err() {
            break t;
        }
        n += 1;
    };
    let result = src
        .backup(rusqlite::MAIN_DB, &tmp, None::<fn(rusqlite::backup::Progress)>)
        .map_err(Error::from)
        .and_then(|_| {
            // Synced before it gets a real name, so a crash cannot leave a named file whose
            // pages never reached the disk.
            std::fs::File::open(&tmp)?.sync_all()?;
            Ok(())
        });
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        for side in ["-journal", "-wal", "-shm"] {
            let mut s = tmp.as_os_str().to_os_string();
            s.push(side);
            let _ = std::fs::remove_file(PathBuf::from(s));
        }
        return Err(match e {
            Error::Storage(m) => Error::Storage(format!("writing {}: {m}", dest.display())),
            other => Error::Storage(format!(
                "cannot write {}: {other}; nothing was left behind",
                dest.display()
            )),
        });
    }
    Ok(tmp)
}

/// Gives a finished partial file its real name without replacing anything; with `counter`,
/// takes the first free `NAME`, `NAME-1`, `NAME-2`, ... instead of refusing.
fn publish(tmp: &Path, dest: &Path, counter: bool) -> Result<PathBuf> {
    let mut n = 0u32;
    loop {
        let target = if n == 0 {
            dest.to_path_buf()
        } else {
            let mut s = dest.as_os_str().to_os_string();
            s.push(format!("-{n}"));
            PathBuf::from(s)
        };
        match std::fs::hard_link(tmp, &target) {
            Ok(()) => {
                let _ = std::fs::remove_file(tmp);
                if let Ok(d) = std::fs::File::open(folder_of(&target)) {
                    let _ = d.sync_all();
                }
                return Ok(target);
            }
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists && counter && n < 10_000 => n += 1,
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                let _ = std::fs::remove_file(tmp);
                return Err(Error::Invalid(format!(
                    "{} already exists; choose a new file",
                    target.display()
                )));
            }
            Err(e) => {
                // A file system without hard links: a rename after a fresh look is the best left.
                if std::fs::symlink_metadata(&target).is_ok() {
                    if counter {
                        n += 1;
                        continue;
                    }
                    let _ = std::fs::remove_file(tmp);
                    return Err(Error::Invalid(format!(
                        "{} already exists; choose a new file",
                        target.display()
                    )));
                }
                std::fs::rename(tmp, &target).map_err(|e2| {
                    let _ = std::fs::remove_file(tmp);
                    Error::Storage(format!("cannot name {}: {e}; {e2}", target.display()))
                })?;
                return Ok(target);
            }
        }
    }
}

/// A whole copy of `src` at `dest`, which must not exist yet.
pub fn write_new_copy(src: &Connection, dest: &Path) -> Result<PathBuf> {
    let tmp = copy_to_partial(src, dest)?;
    publish(&tmp, dest, false)
}

/// What a restore did.
#[derive(Debug, Clone, Serialize)]
pub struct RestoreReport {
    pub restored_from: String,
    pub lab: String,
    /// Where the content the restore replaced is kept (none when there was no lab yet).
    pub replaced_kept_at: Option<String>,
    pub generation: String,
}

fn new_generation() -> String {
    use sha2::{Digest, Sha256};
    let mut h = Sha256::new();
    h.update(format!(
        "{}|{}|{:?}",
        std::process::id(),
        chrono::Utc::now().to_rfc3339_opts(chrono::SecondsFormat::Nanos, true),
        std::time::Instant::now()
    ));
    h.finalize().iter().take(8).map(|b| format!("{b:02x}")).collect()
}

fn table_columns(conn: &Connection, schema: &str) -> Result<Vec<(String, Vec<String>)>> {
    let mut st = conn.prepare(&format!(
        "SELECT name FROM {schema}.sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name"
    ))?;
    let names: Vec<String> = st.query_map([], |r| r.get(0))?.collect::<rusqlite::Result<_>>()?;
    let mut out = Vec::new();
    for n in names {
        let mut c = conn.prepare("SELECT name FROM pragma_table_info(?1, ?2) ORDER BY cid")?;
        let cols: Vec<String> = c
            .query_map(params![n, schema], |r| r.get(0))?
            .collect::<rusqlite::Result<_>>()?;
        out.push((n, cols));
    }
    Ok(out)
}

/// How a restore checks a backup before anything is replaced: the store's own checks, plus
/// whatever the caller adds (the command line adds the engine's recomputed sample).
pub type BackupCheck<'a> = &'a dyn Fn(&Connection) -> Result<Vec<check::Problem>>;

/// Opens and checks a backup, naming it in every refusal.
fn checked_backup(file: &Path, actor: &str, extra: BackupCheck) -> Result<Store> {
    let named = |e: Error| -> Error {
        let m = e.to_string();
        if m.contains(&file.display().to_string()) {
            e
        } else {
            Error::Invalid(format!("the backup {}: {m}; nothing was restored", file.display()))
        }
    };
    if std::fs::metadata(file).is_err() {
        return Err(Error::Invalid(format!(
            "no backup file at {}; nothing was restored",
            file.display()
        )));
    }
    let backup = Store::open_read(file, actor).map_err(named)?;
    let mut problems = check::check(&backup.conn).map_err(named)?;
    problems.extend(extra(&backup.conn).map_err(named)?);
    if !problems.is_empty() {
        let only_derived = problems.iter().all(|p| p.kind == "derived_value");
        return Err(Error::Invalid(format!(
            "the backup {} fails its check ({}); nothing was restored{}",
            file.display(),
            problems.iter().map(|p| p.detail.clone()).collect::<Vec<_>>().join("; "),
            if only_derived {
                " (its records are sound and only derived values are out of date: `restore --recompute` takes it and recomputes them)"
            } else {
                ""
            }
        )));
    }
    Ok(backup)
}

/// Restores the lab `store` has open from the backup `file` (see the module note).
pub fn restore(store: &mut Store, file: &Path, extra: BackupCheck) -> Result<RestoreReport> {
    let target = store
        .path
        .clone()
        .ok_or_else(|| Error::Invalid("restore needs a lab file".into()))?;
    if store.read_only {
        return Err(Error::Storage(format!(
            "{} is read-only: nothing can be restored into it",
            target.display()
        )));
    }
    let same = file_identity(file).is_some() && file_identity(file) == file_identity(&target);
    let canon = |p: &Path| std::fs::canonicalize(p).ok();
    if same || (canon(file).is_some() && canon(file) == canon(&target)) {
        return Err(Error::Invalid(format!(
            "{} is the lab itself: nothing to restore",
            file.display()
        )));
    }
    // The backup, checked and (when older) migrated, without changing it.
    let backup = checked_backup(file, &store.actor, extra)?;
    // A snapshot of the backup at this schema, in a partial file beside the lab.
    let staged = copy_to_partial(&backup.conn, &target)?;
    drop(backup);
    let result = restore_staged(store, &staged, file, &target);
    let _ = std::fs::remove_file(&staged);
    result
}

fn restore_staged(store: &mut Store, staged: &Path, file: &Path, target: &Path) -> Result<RestoreReport> {
    let conn = &store.conn;
    conn.execute("ATTACH DATABASE ?1 AS restored", [staged.to_string_lossy()])?;
    let outcome = (|| -> Result<RestoreReport> {
        let ours = table_columns(conn, "main")?;
        let theirs = table_columns(conn, "restored")?;
        if ours != theirs {
            return Err(Error::Invalid(format!(
                "{} does not have this lab's tables after migration; nothing was restored",
                file.display()
            )));
        }
        // Foreign keys are off for the refill (the pragma only takes effect outside a
        // transaction) and checked whole before the commit: SQLite's deferred-constraint counter
        // does not always balance when every row of a self-referencing table is replaced.
        conn.execute_batch("PRAGMA foreign_keys = OFF; BEGIN IMMEDIATE")?;
        let mut kept_made: Option<PathBuf> = None;
        let inner = (|| -> Result<RestoreReport> {
            super::check_still_ours(Some(target), store.file_id, store.generation.as_deref(), conn)?;
            // The content being replaced, copied while this transaction holds the write lock: a
            // second connection reads the last committed state (readers never wait on a writer
            // in WAL mode), and nobody can commit anything between this copy and the restore.
            let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%S");
            let mut kept_name = target.file_name().unwrap_or_default().to_os_string();
            kept_name.push(format!(".replaced-{stamp}"));
            let reader = Connection::open_with_flags(
                target,
                rusqlite::OpenFlags::SQLITE_OPEN_READ_ONLY | rusqlite::OpenFlags::SQLITE_OPEN_NO_MUTEX,
            )?;
            let kept_tmp = copy_to_partial(&reader, &target.with_file_name(&kept_name));
            drop(reader);
            let kept_tmp = kept_tmp?;
            let kept = publish(&kept_tmp, &target.with_file_name(&kept_name), true)?;
            kept_made = Some(kept.clone());
            let triggers: Vec<(String, String)> = {
                let mut st = conn.prepare("SELECT name, sql FROM main.sqlite_master WHERE type = 'trigger'")?;
                st.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?
                    .collect::<rusqlite::Result<_>>()?
            };
            for (name, _) in &triggers {
                conn.execute_batch(&format!("DROP TRIGGER main.\"{}\"", name.replace('"', "\"\"")))?;
            }
            for (t, _) in &ours {
                let q = format!("\"{}\"", t.replace('"', "\"\""));
                conn.execute_batch(&format!(
                    "DELETE FROM main.{q}; INSERT INTO main.{q} SELECT * FROM restored.{q};"
                ))?;
            }
            let has_seq: bool = conn
                .query_row(
                    "SELECT count(*) FROM restored.sqlite_master WHERE name = 'sqlite_sequence'",
                    [],
                    |r| r.get::<_, i64>(0),
                )
                .map(|n| n > 0)?;
            if has_seq {
                conn.execute_batch(
                    "DELETE FROM main.sqlite_sequence; INSERT INTO main.sqlite_sequence SELECT * FROM restored.sqlite_sequence;",
                )?;
            }
            for (_, sql) in &triggers {
                conn.execute_batch(sql)?;
            }
            let broken: i64 = conn.query_row("SELECT count(*) FROM pragma_foreign_key_check", [], |r| r.get(0))?;
            if broken > 0 {
                return Err(Error::Invalid(format!(
                    "{} would leave {broken} rows pointing at missing ones; nothing was restored",
                    file.display()
                )));
            }
            let generation = stamp_restore(conn, &store.actor, file, Some(&kept))?;
            Ok(RestoreReport {
                restored_from: file.display().to_string(),
                lab: target.display().to_string(),
                replaced_kept_at: Some(kept.display().to_string()),
                generation,
            })
        })();
        let inner = match inner {
            Ok(r) => match conn.execute_batch("COMMIT") {
                Ok(()) => Ok(r),
                Err(e) => {
                    let _ = conn.execute_batch("ROLLBACK");
                    Err(Error::Invalid(format!(
                        "committing the restore: {e}; nothing was changed"
                    )))
                }
            },
            Err(e) => {
                let _ = conn.execute_batch("ROLLBACK");
                Err(e)
            }
        };
        // A restore that did not happen keeps no copy of a lab that was not replaced.
        if outcome_failed(&inner)
            && let Some(k) = kept_made
        {
            let _ = std::fs::remove_file(k);
        }
        inner
    })();
    let _ = conn.execute_batch("PRAGMA foreign_keys = ON");
    let _ = conn.execute("DETACH DATABASE restored", []);
    if let Ok(r) = &outcome {
        store.generation = Some(r.generation.clone());
    }
    outcome
}

/// Gives a restored lab a new generation and records the restore in its audit log, inside the
/// caller's transaction. Returns the generation.
fn stamp_restore(conn: &Connection, actor: &str, file: &Path, kept: Option<&Path>) -> Result<String> {
    let generation = new_generation();
    let at = super::now();
    for (k, v) in [(GENERATION_KEY, generation.as_str()), ("restored_at", at.as_str())] {
        conn.execute(
            "INSERT INTO lab_meta (key, value) VALUES (?1, ?2) ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            params![k, v],
        )?;
    }
    super::audit(
        conn,
        actor,
        "lab",
        None,
        "restore",
        None,
        Some(&serde_json::json!({
            "restored_from": file.display().to_string(),
            "replaced_kept_at": kept.map(|k| k.display().to_string()),
            "generation": generation,
        })),
    )?;
    Ok(generation)
}

fn outcome_failed<T>(r: &Result<T>) -> bool {
    r.is_err()
}

/// Restores a backup where there is no lab yet: a new copy, whose audit log records where it
/// came from, with a generation of its own.
pub fn restore_new(file: &Path, target: &Path, actor: &str, extra: BackupCheck) -> Result<RestoreReport> {
    let backup = checked_backup(file, actor, extra)?;
    write_new_copy(&backup.conn, target)?;
    drop(backup);
    let mut lab = Store::open_existing(target, actor)?;
    let conn = &lab.conn;
    conn.execute_batch("BEGIN IMMEDIATE")?;
    let generation = match stamp_restore(conn, actor, file, None) {
        Ok(g) => {
            conn.execute_batch("COMMIT")?;
            g
        }
        Err(e) => {
            let _ = conn.execute_batch("ROLLBACK");
            return Err(e);
        }
    };
    lab.generation = Some(generation.clone());
    Ok(RestoreReport {
        restored_from: file.display().to_string(),
        lab: target.display().to_string(),
        replaced_kept_at: None,
        generation,
    })
}
