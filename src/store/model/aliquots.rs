//! Aliquots: the row, its column list and mapper (which other store modules reuse), logging
//! one (a void or archived batch takes none) and the reads, with or without the voided ones.

use super::{check_number, get_batch, not_found, parse_time};
use crate::error::{Result, invalid};
use crate::store::{audit, now};
use crate::vocab::BatchStatus;
use rusqlite::{Connection, OptionalExtension, Row, params};
use serde::Serialize;

#[derive(Debug, Clone, Serialize)]
pub struct AliquotRow {
    pub id: i64,
    pub batch_id: i64,
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub dilution_factor: f64,
    pub path_cm: f64,
    pub solvent: String,
    pub taken_at: String,
    /// A voided aliquot stays in the record but counts for nothing.
    pub voided: bool,
    pub void_why: Option<String>,
}

/// The aliquot columns, in the order [`aliquot_from`] maps them.
pub const ALIQUOT_COLS: &str =
    "id, batch_id, minutes, stage, dilution_factor, path_cm, solvent, taken_at, voided_at, void_why";

/// Maps the first ten columns of a row (in `ALIQUOT_COLS` order) to an aliquot.
pub fn aliquot_from(r: &Row) -> rusqlite::Result<AliquotRow> {
    Ok(AliquotRow {
        id: r.get(0)?,
        batch_id: r.get(1)?,
        minutes: r.get(2)?,
        stage: r.get(3)?,
        dilution_factor: r.get(4)?,
        path_cm: r.get(5)?,
        solvent: r.get(6)?,
        taken_at: r.get(7)?,
        voided: r.get::<_, Option<String>>(8)?.is_some(),
        void_why: r.get(9)?,
    })
}

#[derive(Debug, Clone)]
pub struct NewAliquot {
    pub batch_id: i64,
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub dilution_factor: f64,
    pub path_cm: f64,
    pub solvent: String,
    pub taken_at: Option<String>,
}

pub fn insert_aliquot(tx: &Connection, who: &str, a: &NewAliquot) -> Result<i64> {
    let batch = get_batch(tx, a.batch_id)?;
    if let Some(m) = a.minutes {
        check_number("minutes", m, true)?;
    }
    check_number("dilution factor", a.dilution_factor, false)?;
    check_number("path length (cm)", a.path_cm, false)?;
    if a.dilution_factor < 1.0 {
        return invalid(format!(
            "dilution factor {} is below 1; it is the factor by which the aliquot was diluted",
            a.dilution_factor
        ));
    }
    let stage = match (&a.minutes, &a.stage) {
        (None, None) => Some("crude".to_string()),
        (_, s) => s.clone(),
    };
    if batch.status == BatchStatus::Archived {
        return invalid(format!("batch {} is archived; set its status first", batch.id));
    }
    if batch.voided {
        return invalid(format!("batch {} is void; reinstate it first", batch.id));
    }
    let taken = match &a.taken_at {
        Some(t) => parse_time("taken at", t)?,
        None => now(),
    };
    tx.execute(
        "INSERT INTO aliquot (batch_id, minutes, stage, dilution_factor, path_cm, solvent, taken_at)
         VALUES (?1,?2,?3,?4,?5,?6,?7)",
        params![
            a.batch_id,
            a.minutes,
            stage,
            a.dilution_factor,
            a.path_cm,
            a.solvent,
            taken
        ],
    )?;
    let id = tx.last_insert_rowid();
    let row = get_aliquot(tx, id)?;
    audit(
        tx,
        who,
        "aliquot",
        Some(id),
        "create",
        None,
        Some(&serde_json::to_value(&row)?),
    )?;
    Ok(id)
}

pub fn get_aliquot(conn: &Connection, id: i64) -> Result<AliquotRow> {
    conn.query_row(
        &format!("SELECT {ALIQUOT_COLS} FROM aliquot WHERE id = ?1"),
        [id],
        aliquot_from,
    )
    .optional()?
    .ok_or_else(|| not_found("aliquot", id))
}

/// The aliquots of a batch that count: voided ones are left out (growth, product, plots, pack).
pub fn aliquots_of(conn: &Connection, batch_id: i64) -> Result<Vec<AliquotRow>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {ALIQUOT_COLS} FROM aliquot WHERE batch_id = ?1 AND voided_at IS NULL ORDER BY minutes IS NULL, minutes, id"
    ))?;
    let rows = st.query_map([batch_id], aliquot_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Every aliquot of a batch, voided ones included (the record as logged).
pub fn all_aliquots_of(conn: &Connection, batch_id: i64) -> Result<Vec<AliquotRow>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {ALIQUOT_COLS} FROM aliquot WHERE batch_id = ?1 ORDER BY minutes IS NULL, minutes, id"
    ))?;
    let rows = st.query_map([batch_id], aliquot_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}
