//! The stored derived values: each one a row of `derived_value` with its method, calibration
//! version and inputs hash, current until a newer row supersedes it (the old row stays as
//! history). This module reads and writes those rows and the few facts the derivation needs
//! beside them (a batch's calibration, its product aliquot, the chunked scans a recompute
//! streams through). It decides nothing: which value is stale, what a hash should be and what
//! to write are the lab's, through derive's pure functions; the store takes and gives plain
//! rows, ids, numbers and strings.

use super::model::{self, AliquotRow};
use crate::error::Result;
use rusqlite::{Connection, OptionalExtension, params};
use serde::Serialize;
use std::collections::HashSet;

/// A stored derived value.
#[derive(Debug, Clone, Serialize)]
pub struct StoredValue {
    pub id: i64,
    pub aliquot_id: i64,
    pub quantity: String,
    pub value: Option<f64>,
    pub unit: String,
    pub method: String,
    pub calibration_version: i64,
    pub inputs_hash: String,
    pub warnings: Vec<String>,
    pub computed_at: String,
    pub superseded_at: Option<String>,
    pub stale: bool,
}

const VALUE_COLS: &str = "id, aliquot_id, quantity, value, unit, method, calibration_version, inputs_hash, warnings, computed_at, superseded_at, stale";

fn value_from(r: &rusqlite::Row) -> rusqlite::Result<StoredValue> {
    // Most values carry no warnings: the empty list is not parsed.
    let w = r.get_ref(8)?.as_str().unwrap_or("[]");
    let warnings = if w == "[]" {
        Vec::new()
    } else {
        serde_json::from_str(w).unwrap_or_default()
    };
    Ok(StoredValue {
        id: r.get(0)?,
        aliquot_id: r.get(1)?,
        quantity: r.get(2)?,
        value: r.get(3)?,
        unit: r.get(4)?,
        method: r.get(5)?,
        calibration_version: r.get(6)?,
        inputs_hash: r.get(7)?,
        warnings,
        computed_at: r.get(9)?,
        superseded_at: r.get(10)?,
        stale: r.get(11)?,
    })
}

/// An aliquot's current values, in the order they were written.
pub fn current_values(conn: &Connection, aliquot_id: i64) -> Result<Vec<StoredValue>> {
    // The rows come in the index's order (by quantity) and are put in order here: an ORDER BY
    // would have SQLite build a sorter for every aliquot.
    let mut st = conn.prepare_cached(&format!(
        "SELECT {VALUE_COLS} FROM derived_value WHERE aliquot_id = ?1 AND superseded_at IS NULL"
    ))?;
    let rows = st.query_map([aliquot_id], value_from)?;
    let mut out: Vec<StoredValue> = rows.collect::<rusqlite::Result<_>>()?;
    out.sort_unstable_by_key(|v| v.id);
    Ok(out)
}

/// An aliquot's current value of one quantity, if it has one.
pub fn current_value(conn: &Connection, aliquot_id: i64, quantity: &str) -> Result<Option<StoredValue>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {VALUE_COLS} FROM derived_value WHERE aliquot_id = ?1 AND quantity = ?2 AND superseded_at IS NULL"
    ))?;
    Ok(st.query_row(params![aliquot_id, quantity], value_from).optional()?)
}

/// An aliquot's superseded values, oldest first.
pub fn value_history(conn: &Connection, aliquot_id: i64) -> Result<Vec<StoredValue>> {
    let mut st = conn.prepare(&format!(
        "SELECT {VALUE_COLS} FROM derived_value WHERE aliquot_id = ?1 AND superseded_at IS NOT NULL ORDER BY id"
    ))?;
    let rows = st.query_map([aliquot_id], value_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// The current values of every aliquot with an id in `lo..=hi`, by aliquot, then as written:
/// one range query for a chunk of a recompute.
pub fn current_values_between(conn: &Connection, lo: i64, hi: i64) -> Result<Vec<StoredValue>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {VALUE_COLS} FROM derived_value WHERE superseded_at IS NULL AND aliquot_id BETWEEN ?1 AND ?2"
    ))?;
    let rows = st.query_map(params![lo, hi], value_from)?;
    let mut out: Vec<StoredValue> = rows.collect::<rusqlite::Result<_>>()?;
    out.sort_unstable_by_key(|v| (v.aliquot_id, v.id));
    Ok(out)
}

/// Hands `f` (aliquot, quantity, inputs hash, stale flag) of every current value of the
/// aliquots with an id in `lo..=hi`, from the covering index of schema 0008 and without
/// copying the strings: how a recompute compares hashes while streaming.
pub fn current_hashes_between(
    conn: &Connection,
    lo: i64,
    hi: i64,
    mut f: impl FnMut(i64, &str, &str, bool),
) -> Result<()> {
    let mut st = conn.prepare_cached(
        "SELECT aliquot_id, quantity, inputs_hash, stale FROM derived_value WHERE superseded_at IS NULL AND aliquot_id BETWEEN ?1 AND ?2",
    )?;
    let mut rows = st.query(params![lo, hi])?;
    while let Some(r) = rows.next()? {
        let id: i64 = r.get(0)?;
        let stale: bool = r.get(3)?;
        let q = r.get_ref(1)?.as_str().unwrap_or("");
        let h = r.get_ref(2)?.as_str().unwrap_or("");
        f(id, q, h, stale);
    }
    Ok(())
}

/// Whether an aliquot's current value of `quantity` is flagged stale (None: it has none).
pub fn current_stale_flag(conn: &Connection, aliquot_id: i64, quantity: &str) -> Result<Option<bool>> {
    Ok(conn
        .query_row(
            "SELECT stale FROM derived_value WHERE aliquot_id = ?1 AND quantity = ?2 AND superseded_at IS NULL",
            params![aliquot_id, quantity],
            |r| r.get(0),
        )
        .optional()?)
}

/// A derived value to write as a new current row.
#[derive(Debug, Clone, Copy)]
pub struct NewValue<'a> {
    pub aliquot_id: i64,
    pub quantity: &'a str,
    pub value: Option<f64>,
    pub unit: &'a str,
    pub method: &'a str,
    pub calibration_version: i64,
    pub inputs_hash: &'a str,
    pub warnings: &'a [String],
    pub computed_at: &'a str,
}

/// Writes a new current value.
pub fn insert_value(tx: &Connection, v: &NewValue) -> Result<()> {
    let w = serde_json::to_string(v.warnings)?;
    tx.prepare_cached(
        "INSERT INTO derived_value (aliquot_id, quantity, value, unit, method, calibration_version, inputs_hash, warnings, computed_at)
         VALUES (?1,?2,?3,?4,?5,?6,?7,?8,?9)",
    )?
    .execute(params![
        v.aliquot_id,
        v.quantity,
        v.value,
        v.unit,
        v.method,
        v.calibration_version,
        v.inputs_hash,
        w,
        v.computed_at
    ])?;
    Ok(())
}

/// Re-stamps a current value whose number and method are unchanged: its inputs hash,
/// calibration version, time and warnings become the new ones, and it is no longer stale.
pub fn restamp_value(
    tx: &Connection,
    id: i64,
    inputs_hash: &str,
    calibration_version: i64,
    computed_at: &str,
    warnings: &[String],
) -> Result<()> {
    let w = serde_json::to_string(warnings)?;
    tx.prepare_cached(
        "UPDATE derived_value SET inputs_hash = ?1, calibration_version = ?2, computed_at = ?3, stale = 0, warnings = ?4 WHERE id = ?5",
    )?
    .execute(params![inputs_hash, calibration_version, computed_at, w, id])?;
    Ok(())
}

/// Marks a value superseded at `at`: it stays, as history.
pub fn supersede_value(tx: &Connection, id: i64, at: &str) -> Result<()> {
    tx.prepare_cached("UPDATE derived_value SET superseded_at = ?1 WHERE id = ?2")?
        .execute(params![at, id])?;
    Ok(())
}

/// Sets the stale flag of the current values of each (aliquot, full hash, stage-one hash) to
/// whether the value's hash differs from the one it should carry: the stage-one hash for the
/// `spectral` quantities, the full hash for the rest. Only flags that change are written.
/// Returns how many changed.
pub fn flag_stale_values(tx: &Connection, spectral: &[&str], rows: &[(i64, &str, &str)]) -> Result<usize> {
    if rows.is_empty() {
        return Ok(0);
    }
    let spectral = spectral.iter().map(|q| format!("'{q}'")).collect::<Vec<_>>().join(",");
    let sql = format!(
        "UPDATE derived_value SET stale = NOT (inputs_hash = CASE WHEN quantity IN ({spectral}) THEN ?3 ELSE ?1 END)
         WHERE aliquot_id = ?2 AND superseded_at IS NULL AND stale <> NOT (inputs_hash = CASE WHEN quantity IN ({spectral}) THEN ?3 ELSE ?1 END)"
    );
    let mut n = 0;
    for (aliquot_id, hash, stage1) in rows {
        n += tx.prepare_cached(&sql)?.execute(params![hash, aliquot_id, stage1])?;
    }
    Ok(n)
}

/// The calibration an aliquot's batch uses: its pinned version, else the latest.
pub fn effective_calibration_version(conn: &Connection, batch_id: i64) -> Result<i64> {
    let pinned: Option<i64> = conn
        .prepare_cached("SELECT pinned_calibration FROM batch WHERE id = ?1")?
        .query_row([batch_id], |r| r.get(0))?;
    match pinned {
        Some(v) => Ok(v),
        None => super::calibrations::latest_version(conn),
    }
}

/// A batch's product aliquot, by the one rule (the `batch_product` view of schema 0005).
pub fn product_aliquot(conn: &Connection, batch_id: i64) -> Result<Option<i64>> {
    Ok(conn
        .prepare_cached("SELECT aliquot_id FROM batch_product WHERE batch_id = ?1")?
        .query_row([batch_id], |r| r.get(0))
        .optional()?
        .flatten())
}

/// Each batch's product aliquot.
pub fn product_aliquots(conn: &Connection) -> Result<HashSet<i64>> {
    Ok(product_aliquot_of_batches(conn)?.into_values().collect())
}

/// Each batch's product aliquot, by batch (batches without one are left out): one query for a
/// walk over the lab's vials.
pub fn product_aliquot_of_batches(conn: &Connection) -> Result<std::collections::HashMap<i64, i64>> {
    let mut st = conn.prepare_cached("SELECT batch_id, aliquot_id FROM batch_product WHERE aliquot_id IS NOT NULL")?;
    let rows = st.query_map([], |r| Ok((r.get::<_, i64>(0)?, r.get::<_, i64>(1)?)))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Batches whose product values (or a vial's concentration, of a vial not disposed) are
/// flagged stale.
pub fn stale_batches(conn: &Connection) -> Result<HashSet<i64>> {
    let mut st = conn.prepare(
        "SELECT p.batch_id FROM batch_product p JOIN derived_value d ON d.aliquot_id = p.aliquot_id
          WHERE d.superseded_at IS NULL AND d.stale = 1
         UNION SELECT v.batch_id FROM vial v JOIN vial_concentration c ON c.vial_id = v.id
          WHERE c.superseded_at IS NULL AND c.stale = 1 AND v.status <> 'disposed'",
    )?;
    let rows = st.query_map([], |r| r.get::<_, i64>(0))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// The shelled batches grown on another batch (on `parent` only, when given), by id: those
/// whose values follow their parent's product.
pub fn shelled_children(conn: &Connection, parent: Option<i64>) -> Result<Vec<i64>> {
    let mut st = conn.prepare_cached(
        "SELECT b.id FROM batch b JOIN material m ON m.id = b.material_id
          WHERE m.shell IS NOT NULL AND m.shell <> '' AND b.parent_batch_id IS NOT NULL
            AND (?1 IS NULL OR b.parent_batch_id = ?1) ORDER BY b.id",
    )?;
    let rows = st.query_map([parent], |r| r.get(0))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// How many aliquots the lab has, void ones included.
pub fn aliquot_count(conn: &Connection) -> Result<i64> {
    Ok(conn.query_row("SELECT count(*) FROM aliquot", [], |r| r.get(0))?)
}

/// Every aliquot's id, in order.
pub fn aliquot_ids(conn: &Connection) -> Result<Vec<i64>> {
    let mut st = conn.prepare("SELECT id FROM aliquot ORDER BY id")?;
    let rows = st.query_map([], |r| r.get(0))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// What a batch's derivation context is read from: its material and that material's shell, and
/// the batch it was grown on, with how.
#[derive(Debug, Clone)]
pub struct BatchShellRow {
    pub batch_id: i64,
    pub material: String,
    pub shell: Option<String>,
    pub parent_batch_id: Option<i64>,
    pub parent_relation: Option<crate::vocab::BatchRelation>,
}

const BATCH_SHELL_SELECT: &str = "SELECT b.id, m.name, m.shell, b.parent_batch_id, b.parent_relation
  FROM batch b JOIN material m ON m.id = b.material_id";

fn batch_shell_from(r: &rusqlite::Row) -> rusqlite::Result<BatchShellRow> {
    Ok(BatchShellRow {
        batch_id: r.get(0)?,
        material: r.get(1)?,
        shell: r.get(2)?,
        parent_batch_id: r.get(3)?,
        parent_relation: r.get(4)?,
    })
}

/// One batch's material, shell and parent.
pub fn batch_shell(conn: &Connection, batch_id: i64) -> Result<BatchShellRow> {
    conn.prepare_cached(&format!("{BATCH_SHELL_SELECT} WHERE b.id = ?1"))?
        .query_row([batch_id], batch_shell_from)
        .optional()?
        .ok_or_else(|| crate::error::Error::NotFound {
            kind: "batch",
            what: batch_id.to_string(),
        })
}

/// Every batch's material, shell and parent: one query for a walk over the whole lab.
pub fn batch_shells(conn: &Connection) -> Result<Vec<BatchShellRow>> {
    let mut st = conn.prepare_cached(BATCH_SHELL_SELECT)?;
    let rows = st.query_map([], batch_shell_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Each vial's batch, by vial id.
pub fn vial_batches(conn: &Connection) -> Result<std::collections::HashMap<i64, i64>> {
    let mut st = conn.prepare_cached("SELECT id, batch_id FROM vial")?;
    let rows = st.query_map([], |r| Ok((r.get::<_, i64>(0)?, r.get::<_, i64>(1)?)))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Every batch's id, in order.
pub fn batch_ids(conn: &Connection) -> Result<Vec<i64>> {
    let mut st = conn.prepare("SELECT id FROM batch ORDER BY id")?;
    let rows = st.query_map([], |r| r.get::<_, i64>(0))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// An aliquot as a recompute scans it: with its batch's core and the calibration version its
/// values are computed under (the batch's pinned one, else the latest).
#[derive(Debug, Clone)]
pub struct ScannedAliquot {
    pub aliquot: AliquotRow,
    pub core: String,
    pub calibration_version: i64,
}

/// Up to `limit` aliquots with an id above `after`, in order, with `latest` the version for
/// batches that pin none.
pub fn aliquots_after(conn: &Connection, latest: i64, after: i64, limit: i64) -> Result<Vec<ScannedAliquot>> {
    let mut st = conn.prepare_cached(
        "SELECT a.id, a.batch_id, a.minutes, a.stage, a.dilution_factor, a.path_cm, a.solvent, a.taken_at,
                a.voided_at, a.void_why, m.core, COALESCE(b.pinned_calibration, ?1)
         FROM aliquot a JOIN batch b ON b.id = a.batch_id JOIN material m ON m.id = b.material_id
         WHERE a.id > ?2 ORDER BY a.id LIMIT ?3",
    )?;
    let rows = st.query_map(params![latest, after, limit], |r| {
        Ok(ScannedAliquot {
            aliquot: model::aliquot_from(r)?,
            core: r.get(10)?,
            calibration_version: r.get(11)?,
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// What an inputs hash needs of an aliquot's spectrum: no data.
#[derive(Debug, Clone)]
pub struct SpectrumMetaRow {
    pub aliquot_id: i64,
    pub kind: String,
    pub sha256: String,
    pub excitation_nm: Option<f64>,
    pub x_unit: String,
    pub path_cm: Option<f64>,
    pub dilution_factor: Option<f64>,
}

/// The spectrum metadata of the aliquots with an id in `lo..=hi`, by aliquot, then as logged,
/// from the covering index (schema 0007): no spectrum data is read.
pub fn spectrum_metas_between(conn: &Connection, lo: i64, hi: i64) -> Result<Vec<SpectrumMetaRow>> {
    let mut st = conn.prepare_cached(
        "SELECT aliquot_id, kind, sha256, excitation_nm, x_unit, path_cm, dilution_factor FROM spectrum INDEXED BY spectrum_meta_cuvette WHERE aliquot_id BETWEEN ?1 AND ?2 ORDER BY aliquot_id, id",
    )?;
    let mut rows = st.query(params![lo, hi])?;
    let mut out = Vec::new();
    while let Some(r) = rows.next()? {
        out.push(SpectrumMetaRow {
            aliquot_id: r.get(0)?,
            kind: r.get(1)?,
            sha256: r.get(2)?,
            excitation_nm: r.get(3)?,
            x_unit: r.get(4)?,
            path_cm: r.get(5)?,
            dilution_factor: r.get(6)?,
        });
    }
    Ok(out)
}

/// What a measured vial concentration's hash needs of its spectrum.
#[derive(Debug, Clone)]
pub struct SpectrumHashInputs {
    pub sha256: String,
    pub x_unit: String,
    pub dilution_factor: Option<f64>,
    pub path_cm: Option<f64>,
}

/// A spectrum's hash inputs, by its id.
pub fn spectrum_hash_inputs(conn: &Connection, spectrum_id: i64) -> Result<SpectrumHashInputs> {
    Ok(conn.query_row(
        "SELECT sha256, x_unit, dilution_factor, path_cm FROM spectrum WHERE id = ?1",
        [spectrum_id],
        |r| {
            Ok(SpectrumHashInputs {
                sha256: r.get(0)?,
                x_unit: r.get(1)?,
                dilution_factor: r.get(2)?,
                path_cm: r.get(3)?,
            })
        },
    )?)
}

/// The (field, value) pairs people have searched by, in order.
pub fn search_thresholds(conn: &Connection) -> Result<Vec<(String, f64)>> {
    let mut st = conn.prepare("SELECT field, value FROM search_threshold ORDER BY field, value")?;
    let rows = st.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, f64>(1)?)))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// What SQLite plans for a query (the detail column of EXPLAIN QUERY PLAN, joined).
    fn plan(conn: &Connection, sql: &str) -> String {
        let mut st = conn.prepare(&format!("EXPLAIN QUERY PLAN {sql}")).unwrap();
        let rows = st.query_map(params![1, 2000], |r| r.get::<_, String>(3)).unwrap();
        rows.map(|r| r.unwrap()).collect::<Vec<_>>().join("; ")
    }

    #[test]
    fn the_hash_scan_reads_the_covering_index_alone() {
        let mut store = crate::store::Store::in_memory("test").unwrap();
        let p = store
            .read(|tx| {
                Ok(plan(
                    tx,
                    "SELECT aliquot_id, quantity, inputs_hash, stale FROM derived_value WHERE superseded_at IS NULL AND aliquot_id BETWEEN ?1 AND ?2",
                ))
            })
            .unwrap();
        assert!(p.contains("COVERING INDEX derived_current_hash"), "plan: {p}");
        // An aliquot's value of one quantity is found through the same index.
        let p = store
            .read(|tx| {
                Ok(plan(
                    tx,
                    "SELECT value FROM derived_value WHERE aliquot_id = ?1 AND quantity = 'x' AND superseded_at IS NULL AND ?2 > 0",
                ))
            })
            .unwrap();
        assert!(p.contains("INDEX derived_current_hash"), "plan: {p}");
    }
}
