//! The calibration table: versions written whole, with who, when and why, and never changed
//! after. The store keeps the body as JSON and knows nothing of what it says: it is generic over
//! the body, and `lab::calibrations` gives it its type and its rules (a reason, a valid body,
//! a real change). A body that no longer reads is refused with its version named.

use super::{audit, now};
use crate::error::{Error, Result};
use rusqlite::{Connection, OptionalExtension, params};
use serde::Serialize;
use serde::de::DeserializeOwned;

/// One calibration version as stored. The field order is the JSON `calib show --json` and
/// `calib history --json` print.
#[derive(Debug, Clone, Serialize)]
pub struct CalibrationRecord<T> {
    pub version: i64,
    pub created_at: String,
    pub created_by: String,
    pub why: String,
    pub body: T,
}

fn row<T: DeserializeOwned>(conn: &Connection, version: Option<i64>) -> Result<CalibrationRecord<T>> {
    let sql = "SELECT version, body, created_at, created_by, why FROM calibration
               WHERE (?1 IS NULL OR version = ?1) ORDER BY version DESC LIMIT 1";
    let found: Option<(i64, String, String, String, String)> = conn
        .query_row(sql, params![version], |r| {
            Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?, r.get(4)?))
        })
        .optional()?;
    let (v, body, at, by, why) = found.ok_or_else(|| Error::NotFound {
        kind: "calibration version",
        what: version.map(|v| v.to_string()).unwrap_or_else(|| "(none)".into()),
    })?;
    let body: T = serde_json::from_str(&body)
        .map_err(|e| Error::Invalid(format!("calibration version {v} cannot be read: {e}")))?;
    Ok(CalibrationRecord {
        version: v,
        created_at: at,
        created_by: by,
        why,
        body,
    })
}

/// The newest version.
pub fn latest<T: DeserializeOwned>(conn: &Connection) -> Result<CalibrationRecord<T>> {
    row(conn, None)
}

/// One version by its number.
pub fn get<T: DeserializeOwned>(conn: &Connection, version: i64) -> Result<CalibrationRecord<T>> {
    row(conn, Some(version))
}

/// Every version, oldest first.
pub fn history<T: DeserializeOwned>(conn: &Connection) -> Result<Vec<CalibrationRecord<T>>> {
    let mut st = conn.prepare("SELECT version FROM calibration ORDER BY version")?;
    let versions: Vec<i64> = st.query_map([], |r| r.get(0))?.collect::<rusqlite::Result<_>>()?;
    versions.into_iter().map(|v| get(conn, v)).collect()
}

/// How many versions the lab has (none only before a new lab is seeded).
pub fn count(conn: &Connection) -> Result<i64> {
    Ok(conn.query_row("SELECT count(*) FROM calibration", [], |r| r.get(0))?)
}

/// The newest version's number (NULL, read as an error, on a lab never seeded).
pub fn latest_version(conn: &Connection) -> Result<i64> {
    Ok(conn
        .prepare_cached("SELECT MAX(version) FROM calibration")?
        .query_row([], |r| r.get(0))?)
}

/// Writes version 1 of a new lab, with its audit row.
pub fn insert_initial<T: Serialize>(tx: &Connection, who: &str, body: &T) -> Result<()> {
    let body = serde_json::to_string(body)?;
    tx.execute(
        "INSERT INTO calibration (version, body, created_at, created_by, why) VALUES (1, ?1, ?2, ?3, 'shipped defaults')",
        params![body, now(), who],
    )?;
    audit(
        tx,
        who,
        "calibration",
        Some(1),
        "create",
        None,
        Some(&serde_json::json!({"why": "shipped defaults"})),
    )?;
    Ok(())
}

/// Writes `body` as the version after `prev`, audited with both bodies. The caller has checked
/// that it may (a reason, a valid body, a real change). Returns the new version number.
pub fn insert_next<T: Serialize>(
    tx: &Connection,
    who: &str,
    why: &str,
    prev: &CalibrationRecord<T>,
    body: &T,
) -> Result<i64> {
    let v = prev.version + 1;
    tx.execute(
        "INSERT INTO calibration (version, body, created_at, created_by, why) VALUES (?1, ?2, ?3, ?4, ?5)",
        params![v, serde_json::to_string(body)?, now(), who, why],
    )?;
    audit(
        tx,
        who,
        "calibration",
        Some(v),
        "new_version",
        Some(&serde_json::to_value(&prev.body)?),
        Some(&serde_json::to_value(body)?),
    )?;
    Ok(v)
}
