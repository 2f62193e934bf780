//! Vial concentrations with their provenance (schema 0005): source, method, calibration
//! version and inputs hash. A changed value supersedes the current row, which stays as history;
//! an unchanged one is re-stamped; the stale flag is bookkeeping.

use super::{SpectrumRow, check_bounded, get_spectrum};
use crate::error::Result;
use crate::store::now;
use crate::vocab::ConcentrationSource;
use rusqlite::{Connection, OptionalExtension, Row, params};
use serde::Serialize;

/// A vial concentration with its provenance, as written (see schema 0005).
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct VialConcentration {
    pub source: ConcentrationSource,
    pub spectrum_id: Option<i64>,
    pub aliquot_id: Option<i64>,
    pub value: Option<f64>,
    pub method: String,
    pub calibration_version: Option<i64>,
    pub inputs_hash: String,
    pub warnings: Vec<String>,
}

/// A stored vial concentration row.
#[derive(Debug, Clone, Serialize)]
pub struct StoredVialConcentration {
    pub id: i64,
    pub vial_id: i64,
    #[serde(flatten)]
    pub c: VialConcentration,
    pub computed_at: String,
    pub stale: bool,
}

const VIAL_CONC_COLS: &str = "id, vial_id, source, spectrum_id, aliquot_id, value, method, calibration_version, inputs_hash, warnings, computed_at, stale";

fn vial_conc_from(r: &Row) -> rusqlite::Result<StoredVialConcentration> {
    let w: String = r.get(9)?;
    Ok(StoredVialConcentration {
        id: r.get(0)?,
        vial_id: r.get(1)?,
        c: VialConcentration {
            source: r.get(2)?,
            spectrum_id: r.get(3)?,
            aliquot_id: r.get(4)?,
            value: r.get(5)?,
            method: r.get(6)?,
            calibration_version: r.get(7)?,
            inputs_hash: r.get(8)?,
            warnings: serde_json::from_str(&w).unwrap_or_default(),
        },
        computed_at: r.get(10)?,
        stale: r.get(11)?,
    })
}

/// The current concentration row of a vial.
pub fn current_vial_concentration(conn: &Connection, vial_id: i64) -> Result<Option<StoredVialConcentration>> {
    Ok(conn
        .query_row(
            &format!("SELECT {VIAL_CONC_COLS} FROM vial_concentration WHERE vial_id = ?1 AND superseded_at IS NULL"),
            [vial_id],
            vial_conc_from,
        )
        .optional()?)
}

/// Every vial's current concentration whose value can follow a calibration (measured or
/// estimated), of one batch's vials or of all, for recompute and stale marking.
pub fn derived_vial_concentrations(conn: &Connection, batch: Option<i64>) -> Result<Vec<StoredVialConcentration>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {VIAL_CONC_COLS} FROM vial_concentration
          WHERE superseded_at IS NULL AND source IN ('measured','estimate')
            AND (?1 IS NULL OR vial_id IN (SELECT id FROM vial WHERE batch_id = ?1))
          ORDER BY vial_id"
    ))?;
    let rows = st.query_map([batch], vial_conc_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Writes a vial's concentration: an unchanged one is re-stamped, a changed one supersedes the
/// current row (kept as history). Returns whether the value changed. Audited by the caller's
/// action (measure, new vial, recompute).
pub fn set_vial_concentration(tx: &Connection, vial_id: i64, c: &VialConcentration) -> Result<bool> {
    if let Some(v) = c.value {
        check_bounded("concentration", v, true, 10.0, "M")?;
    }
    let t = now();
    let w = serde_json::to_string(&c.warnings)?;
    if let Some(old) = current_vial_concentration(tx, vial_id)? {
        if old.c == *c {
            if old.stale {
                tx.execute(
                    "UPDATE vial_concentration SET stale = 0, computed_at = ?1 WHERE id = ?2",
                    params![t, old.id],
                )?;
            }
            return Ok(false);
        }
        tx.execute(
            "UPDATE vial_concentration SET superseded_at = ?1 WHERE id = ?2",
            params![t, old.id],
        )?;
    }
    tx.execute(
        "INSERT INTO vial_concentration (vial_id, source, spectrum_id, aliquot_id, value, method, calibration_version, inputs_hash, warnings, computed_at)
         VALUES (?1,?2,?3,?4,?5,?6,?7,?8,?9,?10)",
        params![vial_id, c.source, c.spectrum_id, c.aliquot_id, c.value, c.method, c.calibration_version, c.inputs_hash, w, t],
    )?;
    Ok(true)
}

/// Flags a vial's current concentration stale (or not); bookkeeping, not audited.
pub fn flag_vial_concentration(tx: &Connection, id: i64, stale: bool) -> Result<bool> {
    Ok(tx.execute(
        "UPDATE vial_concentration SET stale = ?1 WHERE id = ?2 AND stale <> ?1",
        params![stale, id],
    )? > 0)
}

/// The absorbance spectrum a vial was last measured with.
pub fn vial_spectrum(conn: &Connection, spectrum_id: i64) -> Result<SpectrumRow> {
    get_spectrum(conn, spectrum_id)
}
