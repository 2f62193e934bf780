//! The audit log's reads (the whole trail, or one thing's) and the lab's settings: `lab_meta`
//! entries set with an audit row, and the screens' `ui.` settings that are not audited.

use crate::error::{Result, invalid};
use crate::store::audit;
use rusqlite::{Connection, OptionalExtension, params};
use serde::Serialize;
use serde_json::json;

#[derive(Debug, Clone, Serialize)]
pub struct AuditRow {
    pub id: i64,
    pub at: String,
    pub who: String,
    pub entity: String,
    pub entity_id: Option<i64>,
    pub action: String,
    pub before: Option<serde_json::Value>,
    pub after: Option<serde_json::Value>,
}

pub fn audit_log(conn: &Connection, entity: Option<&str>, limit: i64) -> Result<Vec<AuditRow>> {
    audit_rows(conn, entity, None, limit)
}

/// The audit entries about one thing (a batch, vial, aliquot...), newest first.
pub fn audit_log_of(conn: &Connection, entity: &str, entity_id: i64, limit: i64) -> Result<Vec<AuditRow>> {
    audit_rows(conn, Some(entity), Some(entity_id), limit)
}

fn audit_rows(conn: &Connection, entity: Option<&str>, entity_id: Option<i64>, limit: i64) -> Result<Vec<AuditRow>> {
    let mut st = conn.prepare(
        "SELECT id, at, who, entity, entity_id, action, before, after FROM audit_log
         WHERE (?1 IS NULL OR entity = ?1) AND (?2 IS NULL OR entity_id = ?2) ORDER BY id DESC LIMIT ?3",
    )?;
    let rows = st.query_map(params![entity, entity_id, limit], |r| {
        let b: Option<String> = r.get(6)?;
        let a: Option<String> = r.get(7)?;
        Ok(AuditRow {
            id: r.get(0)?,
            at: r.get(1)?,
            who: r.get(2)?,
            entity: r.get(3)?,
            entity_id: r.get(4)?,
            action: r.get(5)?,
            before: b.and_then(|s| serde_json::from_str(&s).ok()),
            after: a.and_then(|s| serde_json::from_str(&s).ok()),
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

pub fn meta_get(conn: &Connection, key: &str) -> Result<Option<String>> {
    Ok(conn
        .query_row("SELECT value FROM lab_meta WHERE key = ?1", [key], |r| r.get(0))
        .optional()?)
}

pub fn meta_set(tx: &Connection, who: &str, key: &str, value: &str) -> Result<()> {
    let before = meta_get(tx, key)?;
    tx.execute(
        "INSERT INTO lab_meta (key, value) VALUES (?1, ?2) ON CONFLICT(key) DO UPDATE SET value = excluded.value",
        params![key, value],
    )?;
    audit(
        tx,
        who,
        "lab_meta",
        None,
        "set",
        before.map(|b| json!({key: b})).as_ref(),
        Some(&json!({key: value})),
    )?;
    Ok(())
}

/// A screen's convenience setting (the folder a batch's exports were last picked from), kept
/// in the lab beside its batches but not audited: it records no lab work, and a trail entry
/// for every folder opened would bury the entries that matter. Keys start with `ui.`.
pub fn ui_setting_set(tx: &Connection, key: &str, value: &str) -> Result<()> {
    if !key.starts_with("ui.") {
        return invalid(format!("'{key}' is not a screen setting (they start with ui.)"));
    }
    tx.execute(
        "INSERT INTO lab_meta (key, value) VALUES (?1, ?2) ON CONFLICT(key) DO UPDATE SET value = excluded.value",
        params![key, value],
    )?;
    Ok(())
}
