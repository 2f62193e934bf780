//! The migrations of `schema/`, embedded in order (append only), and their application: in one
//! exclusive transaction after the file is copied aside, or in a memory copy for a read of an
//! older lab, with the work a migration needs beyond SQL.

use super::{Store, backup, tune};
use crate::error::{Error, Result};
use rusqlite::{Connection, TransactionBehavior, params};
use std::path::PathBuf;
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
    (
        "0005_corrections_and_provenance",
        include_str!("../../schema/0005_corrections_and_provenance.sql"),
    ),
    (
        "0006_spectrum_label",
        include_str!("../../schema/0006_spectrum_label.sql"),
    ),
    (
        "0007_spectrum_cuvette_index",
        include_str!("../../schema/0007_spectrum_cuvette_index.sql"),
    ),
    (
        "0008_current_value_hashes",
        include_str!("../../schema/0008_current_value_hashes.sql"),
    ),
];

/// The schema version this build writes.
pub const SCHEMA_VERSION: i64 = MIGRATIONS.len() as i64;

impl Store {
    /// A read of an older lab: the file is copied into memory and migrated there.
    pub(super) fn migrate_in_memory(&mut self, version: i64) -> Result<()> {
        let mut mem = Connection::open_in_memory()?;
        {
            let b = rusqlite::backup::Backup::new(&self.conn, &mut mem)?;
            b.run_to_completion(1024, Duration::from_millis(0), None)?;
        }
        self.conn = mem;
        tune(&self.conn)?;
        self.conn.pragma_update(None, "foreign_keys", "ON")?;
        self.migrate(version)
    }

    pub(super) fn backup_before_migration(&self, version: i64) -> Result<PathBuf> {
        let path = self.path.clone().unwrap_or_default();
        let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%S");
        let mut name = path.file_name().unwrap_or_default().to_os_string();
        name.push(format!(".v{version}-{stamp}.bak"));
        let dest = path.with_file_name(name);
        backup::write_new_copy(&self.conn, &dest)
            .map_err(|e| Error::Invalid(format!("could not back up before migrating: {e}")))
    }

    pub(super) fn migrate(&mut self, from: i64) -> Result<()> {
        let tx = self.conn.transaction_with_behavior(TransactionBehavior::Exclusive)?;
        for (i, (_name, sql)) in MIGRATIONS.iter().enumerate().skip(from as usize) {
            tx.execute_batch(sql)?;
            tx.pragma_update(None, "user_version", (i + 1) as i64)?;
        }
        after_migration(&tx, from)?;
        tx.commit()?;
        Ok(())
    }
}

/// Work a migration needs beyond SQL: the stored data hash of every spectrum that has none (all
/// written before version 5; SQLite has no SHA-256 of its own). Idempotent.
fn after_migration(tx: &Connection, _from: i64) -> Result<()> {
    {
        let mut st = tx.prepare("SELECT id, data FROM spectrum WHERE data_sha256 IS NULL")?;
        let rows: Vec<(i64, Vec<u8>)> = st
            .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?
            .collect::<rusqlite::Result<_>>()?;
        for (id, data) in rows {
            tx.execute(
                "UPDATE spectrum SET data_sha256 = ?1 WHERE id = ?2",
                params![crate::spectra::sha256_hex(&data), id],
            )?;
        }
    }
    Ok(())
}
