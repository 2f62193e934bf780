//! Checking a lab file: SQLite's integrity and foreign-key checks, cuvette's own invariants,
//! the stored data of every spectrum against its SHA-256, the audit log's guard triggers and the
//! continuity of its ids. (Whether derived values still follow from their inputs is asked of
//! the engine, which knows how they are computed.)

use crate::error::Result;
use rusqlite::Connection;
use serde::Serialize;

/// One thing wrong with a lab.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Problem {
    /// integrity, foreign_key, invariant, spectrum_data, audit_log, derived_value
    pub kind: String,
    pub detail: String,
}

impl Problem {
    pub fn new(kind: &str, detail: impl Into<String>) -> Problem {
        Problem {
            kind: kind.into(),
            detail: detail.into(),
        }
    }
}

fn strings(conn: &Connection, sql: &str) -> Result<Vec<String>> {
    let mut st = conn.prepare(sql)?;
    let rows = st.query_map([], |r| r.get::<_, String>(0))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Every problem found; empty when the file is sound.
pub fn check(conn: &Connection) -> Result<Vec<Problem>> {
    let mut p = Vec::new();
    for r in strings(conn, "PRAGMA integrity_check")? {
        if r != "ok" {
            p.push(Problem::new("integrity", r));
        }
    }
    let mut st = conn.prepare("PRAGMA foreign_key_check")?;
    let fk = st.query_map([], |r| {
        Ok(format!(
            "{} row {} points at a missing {}",
            r.get::<_, String>(0)?,
            r.get::<_, Option<i64>>(1)?.unwrap_or(0),
            r.get::<_, String>(2)?
        ))
    })?;
    for f in fk {
        p.push(Problem::new("foreign_key", f?));
    }
    let checks: &[&str] = &[
        "SELECT 'vial ' || id || ' (' || label || ') holds ' || volume_ml || ' mL, below zero' FROM vial WHERE volume_ml < 0",
        "SELECT 'vial ' || id || ' holds more than it started with' FROM vial WHERE volume_ml > initial_ml + 1e-9",
        "SELECT 'vial ' || id || ' is marked empty but holds ' || volume_ml || ' mL' FROM vial WHERE status = 'empty' AND volume_ml > 1e-9",
        "SELECT 'vial ' || v.id || ': events add up to ' || (v.initial_ml - COALESCE(SUM(e.amount_ml), 0)) || ' mL, the vial says ' || v.volume_ml
          FROM vial v LEFT JOIN vial_event e ON e.vial_id = v.id AND e.kind = 'draw' GROUP BY v.id
          HAVING abs(v.initial_ml - COALESCE(SUM(e.amount_ml), 0) - v.volume_ml) > 1e-6",
        "SELECT 'derived value ' || d.id || ' names calibration version ' || d.calibration_version || ', which does not exist'
          FROM derived_value d LEFT JOIN calibration c ON c.version = d.calibration_version WHERE c.version IS NULL",
        "SELECT 'derived value ' || d.id || ' belongs to aliquot ' || d.aliquot_id || ', which has no spectrum'
          FROM derived_value d WHERE d.superseded_at IS NULL AND NOT EXISTS (SELECT 1 FROM spectrum s WHERE s.aliquot_id = d.aliquot_id)",
        "SELECT 'aliquot ' || a.id || ' belongs to batch ' || a.batch_id || ', which does not exist'
          FROM aliquot a LEFT JOIN batch b ON b.id = a.batch_id WHERE b.id IS NULL",
        "SELECT 'aliquot ' || a.id || ' has no spectrum' FROM aliquot a
          WHERE a.voided_at IS NULL AND NOT EXISTS (SELECT 1 FROM spectrum s WHERE s.aliquot_id = a.id)",
        "SELECT 'aliquot ' || aliquot_id || ' has ' || count(*) || ' current values of ' || quantity
          FROM derived_value WHERE superseded_at IS NULL GROUP BY aliquot_id, quantity HAVING count(*) > 1",
        "SELECT 'vial ' || vial_id || ' has ' || count(*) || ' current concentrations'
          FROM vial_concentration WHERE superseded_at IS NULL GROUP BY vial_id HAVING count(*) > 1",
        "SELECT 'spectrum ' || id || ' data is ' || length(data) || ' bytes for ' || npoints || ' points' FROM spectrum WHERE length(data) <> npoints * 16",
    ];
    for sql in checks {
        p.extend(strings(conn, sql)?.into_iter().map(|d| Problem::new("invariant", d)));
    }
    p.extend(spectrum_data(conn)?);
    p.extend(audit_log(conn)?);
    Ok(p)
}

/// Each spectrum's stored data against the SHA-256 recorded when it was stored.
fn spectrum_data(conn: &Connection) -> Result<Vec<Problem>> {
    let mut out = Vec::new();
    let mut st = conn.prepare("SELECT id, data, data_sha256, file_name FROM spectrum ORDER BY id")?;
    let mut rows = st.query([])?;
    while let Some(r) = rows.next()? {
        let id: i64 = r.get(0)?;
        let data = r.get_ref(1)?.as_blob().unwrap_or(&[]);
        let stored: Option<String> = r.get(2)?;
        let file: String = r.get(3)?;
        match stored {
            None => out.push(Problem::new(
                "spectrum_data",
                format!("spectrum {id} ({file}) has no stored data hash"),
            )),
            Some(h) if h != crate::spectra::sha256_hex(data) => out.push(Problem::new(
                "spectrum_data",
                format!("spectrum {id} ({file}): its data no longer match the SHA-256 stored with them"),
            )),
            Some(_) => {}
        }
    }
    Ok(out)
}

/// The audit log's guards exist and its ids run without a gap.
fn audit_log(conn: &Connection) -> Result<Vec<Problem>> {
    let mut out = Vec::new();
    // The guards exactly as schema 0001 made them (compared with whitespace folded): a trigger
    // of the same name that does something else guards nothing.
    for (t, event) in [("audit_no_update", "UPDATE"), ("audit_no_delete", "DELETE")] {
        let expected = format!(
            "CREATE TRIGGER {t} BEFORE {event} ON audit_log BEGIN SELECT RAISE(ABORT, 'the audit log is append-only'); END"
        );
        let found: Option<String> = conn
            .query_row(
                "SELECT sql FROM sqlite_master WHERE type = 'trigger' AND name = ?1 AND tbl_name = 'audit_log'",
                [t],
                |r| r.get(0),
            )
            .ok();
        let fold = |s: &str| {
            s.split_whitespace()
                .collect::<Vec<_>>()
                .join(" ")
                .trim_end_matches(';')
                .to_string()
        };
        match found {
            None => out.push(Problem::new(
                "audit_log",
                format!("the trigger {t} that keeps the audit log append-only is missing"),
            )),
            Some(sql) if fold(&sql) != fold(&expected) => out.push(Problem::new(
                "audit_log",
                format!(
                    "the trigger {t} no longer refuses every {event} of the audit log: {}",
                    fold(&sql)
                ),
            )),
            Some(_) => {}
        }
    }
    let (count, max): (i64, Option<i64>) = conn.query_row("SELECT count(*), max(id) FROM audit_log", [], |r| {
        Ok((r.get(0)?, r.get(1)?))
    })?;
    let max = max.unwrap_or(0);
    let seq: Option<i64> = conn
        .query_row("SELECT seq FROM sqlite_sequence WHERE name = 'audit_log'", [], |r| {
            r.get(0)
        })
        .ok();
    if count != max {
        let gaps = strings(
            conn,
            "SELECT (a.id + 1) || CASE WHEN n.id - 1 > a.id + 1 THEN '-' || (n.id - 1) ELSE '' END FROM audit_log a
               JOIN audit_log n ON n.id = (SELECT min(id) FROM audit_log WHERE id > a.id)
              WHERE n.id > a.id + 1 LIMIT 5",
        )?;
        out.push(Problem::new(
            "audit_log",
            format!(
                "the audit log has {count} rows but ids reach {max}: rows are missing{}",
                if gaps.is_empty() {
                    String::new()
                } else {
                    format!(" (ids {})", gaps.join(", "))
                }
            ),
        ));
    }
    if let Some(s) = seq
        && s > max
    {
        out.push(Problem::new(
            "audit_log",
            format!("the audit log's last rows are missing: ids were given up to {s}, the last row is {max}"),
        ));
    }
    let before: Vec<String> = strings(
        conn,
        "SELECT 'audit row ' || id || ' is dated before the row ahead of it' FROM
          (SELECT id, at, LAG(at) OVER (ORDER BY id) AS prev FROM audit_log) WHERE at < prev LIMIT 20",
    )?;
    out.extend(before.into_iter().map(|d| Problem::new("audit_log", d)));
    Ok(out)
}
