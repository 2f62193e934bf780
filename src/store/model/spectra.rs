//! Spectra as stored: the points as a BLOB with their SHA-256, one mapper that decodes it, and
//! the reads by aliquot, by a range of aliquots (recompute's chunks) and by file hash. A new
//! spectrum keeps its points in memory as the row it becomes (`NewSpectrum::into_row`).

use super::{check_bounded, check_number, not_found};
use crate::error::{Result, invalid};
use crate::store::{audit, decode_xy, encode_xy, now};
use crate::vocab::SpectrumKind;
use rusqlite::{Connection, OptionalExtension, Row, params};
use serde::Serialize;
use serde_json::json;

#[derive(Debug, Clone)]
pub struct NewSpectrum {
    pub aliquot_id: Option<i64>,
    pub vial_id: Option<i64>,
    pub kind: String,
    pub x_unit: String,
    pub y_unit: Option<String>,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub file_name: String,
    pub sha256: String,
    pub excitation_nm: Option<f64>,
    pub instrument: Option<String>,
    /// For a vial's own measurement: the dilution and path of its cuvette.
    pub dilution_factor: Option<f64>,
    pub path_cm: Option<f64>,
    /// Which spectrum of its file this is (a column header, a block title), when the file holds several.
    pub label: Option<String>,
}

impl NewSpectrum {
    /// The row this spectrum is once inserted with `id`: what the store would give back when
    /// asked, without reading or decoding the BLOB it just wrote (the points are kept exactly;
    /// the BLOB is their lossless encoding).
    pub fn into_row(self, id: i64) -> SpectrumRow {
        SpectrumRow {
            id,
            aliquot_id: self.aliquot_id,
            vial_id: self.vial_id,
            kind: self.kind,
            x_unit: self.x_unit,
            y_unit: self.y_unit,
            npoints: self.x.len() as i64,
            x: self.x,
            y: self.y,
            file_name: self.file_name,
            sha256: self.sha256,
            excitation_nm: self.excitation_nm,
            instrument: self.instrument,
            dilution_factor: self.dilution_factor,
            path_cm: self.path_cm,
            label: self.label,
        }
    }
}

#[derive(Debug, Clone, Serialize)]
pub struct SpectrumRow {
    pub id: i64,
    pub aliquot_id: Option<i64>,
    pub vial_id: Option<i64>,
    pub kind: String,
    pub x_unit: String,
    pub y_unit: Option<String>,
    pub npoints: i64,
    #[serde(skip)]
    pub x: Vec<f64>,
    #[serde(skip)]
    pub y: Vec<f64>,
    pub file_name: String,
    pub sha256: String,
    pub excitation_nm: Option<f64>,
    pub instrument: Option<String>,
    pub dilution_factor: Option<f64>,
    pub path_cm: Option<f64>,
    pub label: Option<String>,
}

pub fn insert_spectrum(tx: &Connection, who: &str, s: &NewSpectrum) -> Result<i64> {
    if s.kind.parse::<SpectrumKind>().is_err() {
        return invalid(format!("unknown spectrum kind '{}' (abs, pl, ple)", s.kind));
    }
    if s.x.len() != s.y.len() || s.x.is_empty() {
        return invalid("a spectrum needs as many y values as x values");
    }
    if s.aliquot_id.is_some() == s.vial_id.is_some() {
        return invalid("a spectrum belongs to exactly one aliquot or one vial");
    }
    if let Some(e) = s.excitation_nm {
        check_number("excitation wavelength (nm)", e, false)?;
    }
    // The spectrum's own cuvette is held to the bounds `aliquot edit` holds an aliquot's to.
    if let Some(p) = s.path_cm {
        check_bounded("the spectrum's path length", p, false, 100.0, "cm")?;
    }
    if let Some(d) = s.dilution_factor {
        check_bounded("the spectrum's dilution factor", d, false, 1e6, "x")?;
    }
    let data = encode_xy(&s.x, &s.y);
    let data_sha = crate::spectra::sha256_hex(&data);
    tx.execute(
        "INSERT INTO spectrum (aliquot_id, vial_id, kind, x_unit, y_unit, npoints, data, file_name, sha256,
                               excitation_nm, instrument, created_at, data_sha256, dilution_factor, path_cm, label)
         VALUES (?1,?2,?3,?4,?5,?6,?7,?8,?9,?10,?11,?12,?13,?14,?15,?16)",
        params![
            s.aliquot_id,
            s.vial_id,
            s.kind,
            s.x_unit,
            s.y_unit,
            s.x.len() as i64,
            data,
            s.file_name,
            s.sha256,
            s.excitation_nm,
            s.instrument,
            now(),
            data_sha,
            s.dilution_factor,
            s.path_cm,
            s.label
        ],
    )?;
    let id = tx.last_insert_rowid();
    audit(
        tx,
        who,
        "spectrum",
        Some(id),
        "create",
        None,
        Some(
            &json!({"aliquot_id": s.aliquot_id, "vial_id": s.vial_id, "kind": s.kind,
                     "file_name": s.file_name, "label": s.label, "sha256": s.sha256, "npoints": s.x.len(),
                     "excitation_nm": s.excitation_nm, "path_cm": s.path_cm, "dilution_factor": s.dilution_factor}),
        ),
    )?;
    Ok(id)
}

const SPECTRUM_COLS: &str = "id, aliquot_id, vial_id, kind, x_unit, y_unit, npoints, data, file_name, sha256, excitation_nm, instrument, dilution_factor, path_cm, label";

fn spectrum_from(r: &Row) -> rusqlite::Result<(SpectrumRow, Vec<u8>)> {
    Ok((
        SpectrumRow {
            id: r.get(0)?,
            aliquot_id: r.get(1)?,
            vial_id: r.get(2)?,
            kind: r.get(3)?,
            x_unit: r.get(4)?,
            y_unit: r.get(5)?,
            npoints: r.get(6)?,
            x: Vec::new(),
            y: Vec::new(),
            file_name: r.get(8)?,
            sha256: r.get(9)?,
            excitation_nm: r.get(10)?,
            instrument: r.get(11)?,
            dilution_factor: r.get(12)?,
            path_cm: r.get(13)?,
            label: r.get(14)?,
        },
        r.get(7)?,
    ))
}

fn with_data((mut s, blob): (SpectrumRow, Vec<u8>)) -> Result<SpectrumRow> {
    let (x, y) = decode_xy(&blob)?;
    s.x = x;
    s.y = y;
    Ok(s)
}

pub fn spectra_of_aliquot(conn: &Connection, aliquot_id: i64) -> Result<Vec<SpectrumRow>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {SPECTRUM_COLS} FROM spectrum WHERE aliquot_id = ?1 ORDER BY id"
    ))?;
    let rows = st
        .query_map([aliquot_id], spectrum_from)?
        .collect::<rusqlite::Result<Vec<_>>>()?;
    rows.into_iter().map(with_data).collect()
}

/// The spectra of the aliquots with ids in `lo..=hi`, grouped by aliquot, in one query.
pub fn spectra_of_aliquots_in(
    conn: &Connection,
    lo: i64,
    hi: i64,
) -> Result<std::collections::HashMap<i64, Vec<SpectrumRow>>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {SPECTRUM_COLS} FROM spectrum WHERE aliquot_id BETWEEN ?1 AND ?2 ORDER BY aliquot_id, id"
    ))?;
    let rows = st.query_map(params![lo, hi], spectrum_from)?;
    let mut out: std::collections::HashMap<i64, Vec<SpectrumRow>> = std::collections::HashMap::new();
    for r in rows {
        let s = with_data(r?)?;
        if let Some(a) = s.aliquot_id {
            out.entry(a).or_default().push(s);
        }
    }
    Ok(out)
}

/// A spectrum with this file hash (and label within the file) already logged in a batch
/// (voided aliquots do not count):
/// (spectrum id, aliquot id).
pub fn spectrum_in_batch(
    conn: &Connection,
    batch_id: i64,
    sha256: &str,
    label: Option<&str>,
) -> Result<Option<(i64, i64)>> {
    Ok(conn
        .query_row(
            "SELECT s.id, a.id FROM spectrum s JOIN aliquot a ON a.id = s.aliquot_id
             WHERE a.batch_id = ?1 AND s.sha256 = ?2 AND s.label IS ?3 AND a.voided_at IS NULL LIMIT 1",
            params![batch_id, sha256, label],
            |r| Ok((r.get(0)?, r.get(1)?)),
        )
        .optional()?)
}

pub fn get_spectrum(conn: &Connection, id: i64) -> Result<SpectrumRow> {
    let raw = conn
        .query_row(
            &format!("SELECT {SPECTRUM_COLS} FROM spectrum WHERE id = ?1"),
            [id],
            spectrum_from,
        )
        .optional()?
        .ok_or_else(|| not_found("spectrum", id))?;
    with_data(raw)
}
