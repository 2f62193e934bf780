//! Batches: the row and its one mapper, logging a batch (material, recipe version, operator,
//! status, parent and relation checked first), reads, edits (a parent that would make a cycle
//! is refused) and status changes, each audited with before and after.

use super::{material_by_name, not_found, parse_time, person_id, recipe_version_id};
use crate::error::{Result, invalid};
use crate::store::{audit, now};
use crate::vocab::{BatchRelation, BatchStatus};
use rusqlite::{Connection, OptionalExtension, Row, params};
use serde::Serialize;
use serde_json::json;

#[derive(Debug, Clone, Serialize)]
pub struct BatchRow {
    pub id: i64,
    pub name: String,
    pub material: String,
    pub core: String,
    pub recipe: Option<String>,
    pub recipe_version: Option<i64>,
    pub recipe_version_id: Option<i64>,
    pub operator: Option<String>,
    pub started_at: String,
    pub status: BatchStatus,
    pub parent_batch_id: Option<i64>,
    pub parent_relation: Option<BatchRelation>,
    pub pinned_calibration: Option<i64>,
    pub product_aliquot_id: Option<i64>,
    pub notes: String,
    /// A voided batch stays in the record, marked, and is left out of search and the pack.
    pub voided: bool,
    pub void_why: Option<String>,
}

const BATCH_SELECT: &str = "SELECT b.id, b.name, m.name, m.core, r.name, rv.version, b.recipe_version_id, p.name,
    b.started_at, b.status, b.parent_batch_id, b.parent_relation, b.pinned_calibration,
    b.product_aliquot_id, b.notes, b.voided_at, b.void_why
  FROM batch b JOIN material m ON m.id = b.material_id
  LEFT JOIN recipe_version rv ON rv.id = b.recipe_version_id
  LEFT JOIN recipe r ON r.id = rv.recipe_id
  LEFT JOIN person p ON p.id = b.operator_id";

fn batch_from(r: &Row) -> rusqlite::Result<BatchRow> {
    Ok(BatchRow {
        id: r.get(0)?,
        name: r.get(1)?,
        material: r.get(2)?,
        core: r.get(3)?,
        recipe: r.get(4)?,
        recipe_version: r.get(5)?,
        recipe_version_id: r.get(6)?,
        operator: r.get(7)?,
        started_at: r.get(8)?,
        status: r.get(9)?,
        parent_batch_id: r.get(10)?,
        parent_relation: r.get(11)?,
        pinned_calibration: r.get(12)?,
        product_aliquot_id: r.get(13)?,
        notes: r.get(14)?,
        voided: r.get::<_, Option<String>>(15)?.is_some(),
        void_why: r.get(16)?,
    })
}

#[derive(Debug, Clone, Default)]
pub struct NewBatch {
    pub name: String,
    pub material: String,
    pub recipe: Option<String>,
    pub recipe_version: Option<i64>,
    pub operator: Option<String>,
    pub started_at: Option<String>,
    pub status: Option<BatchStatus>,
    pub parent_batch_id: Option<i64>,
    pub parent_relation: Option<BatchRelation>,
    pub notes: Option<String>,
}

pub fn insert_batch(tx: &Connection, who: &str, b: &NewBatch) -> Result<i64> {
    let name = b.name.trim();
    if name.is_empty() {
        return invalid("a batch needs a name (--name)");
    }
    let mat = material_by_name(tx, &b.material)?;
    let rv = match &b.recipe {
        Some(r) => {
            let id = recipe_version_id(tx, r, b.recipe_version)?;
            let rm: i64 = tx.query_row(
                "SELECT r.material_id FROM recipe_version rv JOIN recipe r ON r.id = rv.recipe_id WHERE rv.id = ?1",
                [id],
                |r| r.get(0),
            )?;
            if rm != mat.id {
                return invalid(format!("recipe '{r}' is not for {}", mat.name));
            }
            Some(id)
        }
        None => None,
    };
    let op = match &b.operator {
        Some(p) => Some(person_id(tx, p)?),
        None => person_id(tx, who).ok(),
    };
    let status = b.status.unwrap_or(BatchStatus::Planned);
    let started = match &b.started_at {
        Some(s) => parse_time("started at", s)?,
        None => now(),
    };
    if let Some(p) = b.parent_batch_id {
        get_batch(tx, p)?;
    }
    if b.parent_relation.is_some() && b.parent_batch_id.is_none() {
        return invalid("a relation needs a parent batch (--parent)");
    }
    let relation = match (b.parent_relation, b.parent_batch_id) {
        (Some(r), _) => Some(r),
        (None, Some(_)) => Some(BatchRelation::Shell),
        _ => None,
    };
    tx.execute(
        "INSERT INTO batch (name, material_id, recipe_version_id, operator_id, started_at, status,
                            parent_batch_id, parent_relation, notes)
         VALUES (?1,?2,?3,?4,?5,?6,?7,?8,?9)",
        params![
            name,
            mat.id,
            rv,
            op,
            started,
            status,
            b.parent_batch_id,
            relation,
            b.notes.clone().unwrap_or_default()
        ],
    )?;
    let id = tx.last_insert_rowid();
    let after = serde_json::to_value(get_batch(tx, id)?)?;
    audit(tx, who, "batch", Some(id), "create", None, Some(&after))?;
    Ok(id)
}

pub fn get_batch(conn: &Connection, id: i64) -> Result<BatchRow> {
    conn.query_row(&format!("{BATCH_SELECT} WHERE b.id = ?1"), [id], batch_from)
        .optional()?
        .ok_or_else(|| not_found("batch", id))
}

pub fn list_batches(conn: &Connection) -> Result<Vec<BatchRow>> {
    let mut st = conn.prepare(&format!("{BATCH_SELECT} ORDER BY b.id"))?;
    let rows = st.query_map([], batch_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

pub fn children_of(conn: &Connection, id: i64) -> Result<Vec<(i64, String, Option<BatchRelation>)>> {
    let mut st = conn.prepare("SELECT id, name, parent_relation FROM batch WHERE parent_batch_id = ?1 ORDER BY id")?;
    let rows = st.query_map([id], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

#[derive(Debug, Clone, Default)]
pub struct BatchEdit {
    pub name: Option<String>,
    pub notes: Option<String>,
    pub append_notes: Option<String>,
    pub operator: Option<String>,
    pub product_aliquot_id: Option<i64>,
    pub pin_calibration: Option<i64>,
    pub unpin: bool,
    pub parent_batch_id: Option<i64>,
}

pub fn edit_batch(tx: &Connection, who: &str, id: i64, e: &BatchEdit) -> Result<BatchRow> {
    let before = get_batch(tx, id)?;
    if let Some(n) = &e.name {
        if n.trim().is_empty() {
            return invalid("a batch name cannot be empty");
        }
        tx.execute("UPDATE batch SET name = ?1 WHERE id = ?2", params![n.trim(), id])?;
    }
    if let Some(n) = &e.notes {
        tx.execute("UPDATE batch SET notes = ?1 WHERE id = ?2", params![n, id])?;
    }
    if let Some(n) = &e.append_notes {
        let cur: String = tx.query_row("SELECT notes FROM batch WHERE id = ?1", [id], |r| r.get(0))?;
        let joined = if cur.is_empty() {
            n.clone()
        } else {
            format!("{cur}\n{n}")
        };
        tx.execute("UPDATE batch SET notes = ?1 WHERE id = ?2", params![joined, id])?;
    }
    if let Some(p) = &e.operator {
        let pid = person_id(tx, p)?;
        tx.execute("UPDATE batch SET operator_id = ?1 WHERE id = ?2", params![pid, id])?;
    }
    if let Some(a) = e.product_aliquot_id {
        let owner: Option<i64> = tx
            .query_row("SELECT batch_id FROM aliquot WHERE id = ?1", [a], |r| r.get(0))
            .optional()?;
        if owner != Some(id) {
            return invalid(format!("aliquot {a} is not an aliquot of batch {id}"));
        }
        tx.execute("UPDATE batch SET product_aliquot_id = ?1 WHERE id = ?2", params![a, id])?;
    }
    if let Some(v) = e.pin_calibration {
        let ok = tx
            .query_row("SELECT 1 FROM calibration WHERE version = ?1", [v], |_| Ok(()))
            .optional()?;
        if ok.is_none() {
            return Err(not_found("calibration version", v));
        }
        tx.execute("UPDATE batch SET pinned_calibration = ?1 WHERE id = ?2", params![v, id])?;
    }
    if e.unpin {
        tx.execute("UPDATE batch SET pinned_calibration = NULL WHERE id = ?1", [id])?;
    }
    if let Some(p) = e.parent_batch_id {
        if p == id {
            return invalid("a batch cannot be its own parent");
        }
        get_batch(tx, p)?;
        // A parent that grew from this batch would make each the other's core.
        let mut seen = std::collections::HashSet::new();
        let mut up = Some(p);
        while let Some(b) = up {
            if b == id {
                return invalid(format!(
                    "batch {p} descends from batch {id}: it cannot be batch {id}'s parent"
                ));
            }
            if !seen.insert(b) {
                break;
            }
            up = tx.query_row("SELECT parent_batch_id FROM batch WHERE id = ?1", [b], |r| r.get(0))?;
        }
        tx.execute("UPDATE batch SET parent_batch_id = ?1 WHERE id = ?2", params![p, id])?;
    }
    let after = get_batch(tx, id)?;
    audit(
        tx,
        who,
        "batch",
        Some(id),
        "edit",
        Some(&serde_json::to_value(&before)?),
        Some(&serde_json::to_value(&after)?),
    )?;
    Ok(after)
}

pub fn set_batch_status(tx: &Connection, who: &str, id: i64, status: BatchStatus) -> Result<BatchRow> {
    let before = get_batch(tx, id)?;
    tx.execute("UPDATE batch SET status = ?1 WHERE id = ?2", params![status, id])?;
    audit(
        tx,
        who,
        "batch",
        Some(id),
        "set_status",
        Some(&json!({"status": before.status})),
        Some(&json!({"status": status})),
    )?;
    get_batch(tx, id)
}
