//! Checking a lab file and restoring one from a backup. `check` runs SQLite's integrity and
//! foreign-key checks and cuvette's own invariants; `restore` checks a backup before it
//! replaces anything and keeps the file it replaces.

use super::{SCHEMA_VERSION, check_is_sqlite};
use crate::error::{Error, Result};
use rusqlite::{Connection, OpenFlags};
use std::path::{Path, PathBuf};

fn strings(conn: &Connection, sql: &str) -> Result<Vec<String>> {
    let mut st = conn.prepare(sql)?;
    let rows = st.query_map([], |r| r.get::<_, String>(0))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Every problem found, in words; empty when the file is sound.
pub fn check(conn: &Connection) -> Result<Vec<String>> {
    let mut p = Vec::new();
    for r in strings(conn, "PRAGMA integrity_check")? {
        if r != "ok" {
            p.push(format!("integrity: {r}"));
        }
    }
    let mut st = conn.prepare("PRAGMA foreign_key_check")?;
    let fk = st.query_map([], |r| {
        Ok(format!(
            "foreign key: {} row {} points at a missing {}",
            r.get::<_, String>(0)?,
            r.get::<_, i64>(1)?,
            r.get::<_, String>(2)?
        ))
    })?;
    for f in fk {
        p.push(f?);
    }
    let checks: &[(&str, &str)] = &[
        ("SELECT 'vial ' || id || ' (' || label || ') holds ' || volume_ml || ' mL, below zero' FROM vial WHERE volume_ml < 0", ""),
        ("SELECT 'vial ' || id || ' holds more than it started with' FROM vial WHERE volume_ml > initial_ml + 1e-9", ""),
        ("SELECT 'vial ' || id || ' is marked empty but holds ' || volume_ml || ' mL' FROM vial WHERE status = 'empty' AND volume_ml > 1e-9", ""),
        ("SELECT 'vial ' || v.id || ': events add up to ' || (v.initial_ml - COALESCE(SUM(e.amount_ml), 0)) || ' mL, the vial says ' || v.volume_ml
          FROM vial v LEFT JOIN vial_event e ON e.vial_id = v.id AND e.kind = 'draw' GROUP BY v.id
          HAVING abs(v.initial_ml - COALESCE(SUM(e.amount_ml), 0) - v.volume_ml) > 1e-6", ""),
        ("SELECT 'derived value ' || d.id || ' names calibration version ' || d.calibration_version || ', which does not exist'
          FROM derived_value d LEFT JOIN calibration c ON c.version = d.calibration_version WHERE c.version IS NULL", ""),
        ("SELECT 'derived value ' || d.id || ' belongs to aliquot ' || d.aliquot_id || ', which has no spectrum'
          FROM derived_value d WHERE NOT EXISTS (SELECT 1 FROM spectrum s WHERE s.aliquot_id = d.aliquot_id)", ""),
        ("SELECT 'aliquot ' || a.id || ' belongs to batch ' || a.batch_id || ', which does not exist'
          FROM aliquot a LEFT JOIN batch b ON b.id = a.batch_id WHERE b.id IS NULL", ""),
        ("SELECT 'aliquot ' || a.id || ' has no spectrum' FROM aliquot a WHERE NOT EXISTS (SELECT 1 FROM spectrum s WHERE s.aliquot_id = a.id)", ""),
        ("SELECT 'aliquot ' || aliquot_id || ' has ' || count(*) || ' current values of ' || quantity
          FROM derived_value WHERE superseded_at IS NULL GROUP BY aliquot_id, quantity HAVING count(*) > 1", ""),
        ("SELECT 'spectrum ' || id || ' data is ' || length(data) || ' bytes for ' || npoints || ' points' FROM spectrum WHERE length(data) <> npoints * 16", ""),
        ("SELECT 'audit row ' || id || ' is dated before the row ahead of it' FROM
          (SELECT id, at, LAG(at) OVER (ORDER BY id) AS prev FROM audit_log) WHERE at < prev", ""),
    ];
    for (sql, _) in checks {
        p.extend(strings(conn, sql)?);
    }
    Ok(p)
}

/// Replaces `target` with the backup `file`, after checking that the backup is a sound cuvette
/// database this version can read. The replaced file is renamed, not deleted.
pub fn restore(file: &Path, target: &Path) -> Result<Option<PathBuf>> {
    check_is_sqlite(file)?;
    {
        let c =
            Connection::open_with_flags(file, OpenFlags::SQLITE_OPEN_READ_ONLY).map_err(|e| Error::NotADatabase {
                path: file.display().to_string(),
                reason: e.to_string(),
            })?;
        let v: i64 = c.query_row("PRAGMA user_version", [], |r| r.get(0))?;
        if v == 0 {
            return Err(Error::NotADatabase {
                path: file.display().to_string(),
                reason: "it has no cuvette schema".into(),
            });
        }
        if v > SCHEMA_VERSION {
            return Err(Error::NewerSchema {
                found: v,
                supported: SCHEMA_VERSION,
            });
        }
        let problems = check(&c)?;
        if !problems.is_empty() {
            return Err(Error::Invalid(format!(
                "{} fails its check: {}",
                file.display(),
                problems.join("; ")
            )));
        }
    }
    let tmp = target.with_extension("restoring");
    std::fs::copy(file, &tmp).map_err(|e| Error::Invalid(format!("cannot copy {}: {e}", file.display())))?;
    let kept = if target.exists() {
        let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%S");
        let mut name = target.file_name().unwrap_or_default().to_os_string();
        name.push(format!(".replaced-{stamp}"));
        let k = target.with_file_name(name);
        std::fs::rename(target, &k)?;
        for ext in ["-wal", "-shm"] {
            let mut side = target.as_os_str().to_os_string();
            side.push(ext);
            let side = PathBuf::from(side);
            if side.exists() {
                let mut ks = k.as_os_str().to_os_string();
                ks.push(ext);
                std::fs::rename(&side, PathBuf::from(ks))?;
            }
        }
        Some(k)
    } else {
        None
    };
    std::fs::rename(&tmp, target)?;
    Ok(kept)
}
