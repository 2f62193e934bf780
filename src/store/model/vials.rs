//! Vials and their history: the row with its current concentration, a new vial (with its
//! create event and, when given, an entered concentration), draws, moves and disposal, each
//! written as a vial event and audited; a disposed vial takes no more of them.

use super::{
    VialConcentration, check_bounded, check_number, get_batch, location_by_name, not_found, parse_time, person_id,
    set_vial_concentration,
};
use crate::error::{Result, invalid};
use crate::store::{audit, now};
use crate::vocab::{ConcentrationSource, VialEventKind, VialStatus};
use rusqlite::{Connection, OptionalExtension, Row, params};
use serde::Serialize;
use serde_json::json;

#[derive(Debug, Clone, Serialize)]
pub struct VialRow {
    pub id: i64,
    pub label: String,
    pub batch_id: i64,
    pub batch_name: String,
    pub material: String,
    pub location: String,
    pub position: Option<String>,
    pub volume_ml: f64,
    pub initial_ml: f64,
    pub solvent: String,
    pub owner: Option<String>,
    pub status: VialStatus,
    /// The vial's current concentration (of its own solution), with where it came from.
    pub concentration_molar: Option<f64>,
    pub created_at: String,
    /// measured, estimate, entered or recorded (see `VialConcentration`); None when unknown.
    pub concentration_source: Option<ConcentrationSource>,
    pub concentration_method: Option<String>,
    pub concentration_stale: bool,
    /// The calibration version behind the concentration (None for entered figures).
    pub calibration_version: Option<i64>,
}

const VIAL_SELECT: &str = "SELECT v.id, v.label, v.batch_id, b.name, m.name, l.name, v.position, v.volume_ml,
    v.initial_ml, v.solvent, p.name, v.status, c.value, v.created_at, c.source, c.method, COALESCE(c.stale, 0),
    c.calibration_version
  FROM vial v JOIN batch b ON b.id = v.batch_id JOIN material m ON m.id = b.material_id
  JOIN location l ON l.id = v.location_id LEFT JOIN person p ON p.id = v.owner_id
  LEFT JOIN vial_concentration c ON c.vial_id = v.id AND c.superseded_at IS NULL";

fn vial_from(r: &Row) -> rusqlite::Result<VialRow> {
    Ok(VialRow {
        id: r.get(0)?,
        label: r.get(1)?,
        batch_id: r.get(2)?,
        batch_name: r.get(3)?,
        material: r.get(4)?,
        location: r.get(5)?,
        position: r.get(6)?,
        volume_ml: r.get(7)?,
        initial_ml: r.get(8)?,
        solvent: r.get(9)?,
        owner: r.get(10)?,
        status: r.get(11)?,
        concentration_molar: r.get(12)?,
        created_at: r.get(13)?,
        concentration_source: r.get(14)?,
        concentration_method: r.get(15)?,
        concentration_stale: r.get(16)?,
        calibration_version: r.get(17)?,
    })
}

#[derive(Debug, Clone)]
pub struct NewVial {
    pub batch_id: i64,
    pub label: Option<String>,
    pub volume_ml: f64,
    pub solvent: String,
    pub location: String,
    pub position: Option<String>,
    pub owner: Option<String>,
    pub concentration_molar: Option<f64>,
    pub created_at: Option<String>,
}

pub fn insert_vial(tx: &Connection, who: &str, v: &NewVial) -> Result<i64> {
    let batch = get_batch(tx, v.batch_id)?;
    if batch.voided {
        return invalid(format!("batch {} is voided; reinstate it first", batch.id));
    }
    check_bounded("volume", v.volume_ml, false, 10_000.0, "mL")?;
    if let Some(c) = v.concentration_molar {
        check_bounded("concentration", c, true, 10.0, "M")?;
    }
    let loc = location_by_name(tx, &v.location)?;
    let owner = match &v.owner {
        Some(o) => Some(person_id(tx, o)?),
        None => person_id(tx, who).ok(),
    };
    let label = match &v.label {
        Some(l) if !l.trim().is_empty() => l.trim().to_string(),
        Some(_) => return invalid("a vial label cannot be empty"),
        None => {
            let n: i64 = tx.query_row("SELECT count(*) + 1 FROM vial WHERE batch_id = ?1", [batch.id], |r| {
                r.get(0)
            })?;
            format!("B{}-{}", batch.id, n)
        }
    };
    if tx
        .query_row("SELECT 1 FROM vial WHERE label = ?1", [&label], |_| Ok(()))
        .optional()?
        .is_some()
    {
        return invalid(format!("a vial labelled '{label}' already exists"));
    }
    let created = match &v.created_at {
        Some(t) => parse_time("created at", t)?,
        None => now(),
    };
    tx.execute(
        "INSERT INTO vial (batch_id, label, volume_ml, initial_ml, solvent, location_id, position, owner_id,
                           status, concentration_molar, created_at)
         VALUES (?1,?2,?3,?3,?4,?5,?6,?7,'in_use',?8,?9)",
        params![
            batch.id,
            label,
            v.volume_ml,
            v.solvent,
            loc.id,
            v.position,
            owner,
            Option::<f64>::None,
            created
        ],
    )?;
    let id = tx.last_insert_rowid();
    if let Some(c) = v.concentration_molar {
        set_vial_concentration(
            tx,
            id,
            &VialConcentration {
                source: ConcentrationSource::Entered,
                spectrum_id: None,
                aliquot_id: None,
                value: Some(c),
                method: format!("entered by {who}"),
                calibration_version: None,
                inputs_hash: String::new(),
                warnings: vec![],
            },
        )?;
    }
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, amount_ml, to_location_id, who, why, at) VALUES (?1,'create',?2,?3,?4,NULL,?5)",
        params![id, v.volume_ml, loc.id, who, created],
    )?;
    let row = get_vial(tx, id)?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "create",
        None,
        Some(&serde_json::to_value(&row)?),
    )?;
    Ok(id)
}

pub fn get_vial(conn: &Connection, id: i64) -> Result<VialRow> {
    conn.query_row(&format!("{VIAL_SELECT} WHERE v.id = ?1"), [id], vial_from)
        .optional()?
        .ok_or_else(|| not_found("vial", id))
}

/// Vials by id or by label.
pub fn find_vial(conn: &Connection, key: &str) -> Result<VialRow> {
    if let Ok(id) = key.parse::<i64>() {
        return get_vial(conn, id);
    }
    conn.query_row(&format!("{VIAL_SELECT} WHERE v.label = ?1"), [key], vial_from)
        .optional()?
        .ok_or_else(|| not_found("vial", key))
}

pub fn list_vials(conn: &Connection, include_disposed: bool) -> Result<Vec<VialRow>> {
    let sql = if include_disposed {
        format!("{VIAL_SELECT} ORDER BY l.name, v.id")
    } else {
        format!("{VIAL_SELECT} WHERE v.status <> 'disposed' ORDER BY l.name, v.id")
    };
    let mut st = conn.prepare(&sql)?;
    let rows = st.query_map([], vial_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

pub fn vials_of_batch(conn: &Connection, batch_id: i64) -> Result<Vec<VialRow>> {
    let mut st = conn.prepare(&format!("{VIAL_SELECT} WHERE v.batch_id = ?1 ORDER BY v.id"))?;
    let rows = st.query_map([batch_id], vial_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

fn usable_vial(conn: &Connection, id: i64) -> Result<VialRow> {
    let v = get_vial(conn, id)?;
    if v.status == VialStatus::Disposed {
        return invalid(format!("vial {} ({}) has been disposed of", v.id, v.label));
    }
    Ok(v)
}

/// Tolerance for "draw everything that is left": volumes carry float round-off (a
/// reinstatement reads it too).
pub(super) const VOLUME_EPS_ML: f64 = 1e-9;

/// A volume as the decimal number of mL it is to the chemist: binary round-off below a
/// nanolitre (2 - 0.45 = 1.5500000000000003) goes, so the vial holds and shows 1.55 mL. Volumes
/// are typed to far fewer places, and "start minus draws" still holds within [`VOLUME_EPS_ML`].
pub(super) fn decimal_ml(ml: f64) -> f64 {
    let r = (ml * 1e9).round() / 1e9;
    if r.is_finite() { r } else { ml }
}

pub fn draw_from_vial(tx: &Connection, who: &str, id: i64, ml: f64, why: Option<&str>) -> Result<VialRow> {
    let v = usable_vial(tx, id)?;
    check_number("volume to draw (mL)", ml, false)?;
    if ml > v.volume_ml + VOLUME_EPS_ML {
        return invalid(format!(
            "cannot draw {ml} mL from vial {} ({}): only {} mL left",
            v.id,
            v.label,
            decimal_ml(v.volume_ml)
        ));
    }
    let left = decimal_ml((v.volume_ml - ml).max(0.0));
    let left = if left < VOLUME_EPS_ML { 0.0 } else { left };
    let status = if left == 0.0 {
        VialStatus::Empty
    } else {
        VialStatus::InUse
    };
    tx.execute(
        "UPDATE vial SET volume_ml = ?1, status = ?2 WHERE id = ?3",
        params![left, status, id],
    )?;
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, amount_ml, who, why, at) VALUES (?1,'draw',?2,?3,?4,?5)",
        params![id, ml, who, why, now()],
    )?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "draw",
        Some(&json!({"volume_ml": v.volume_ml})),
        Some(&json!({"volume_ml": left, "drawn_ml": ml, "why": why})),
    )?;
    get_vial(tx, id)
}

pub fn move_vial(
    tx: &Connection,
    who: &str,
    id: i64,
    location: &str,
    position: Option<&str>,
    why: Option<&str>,
) -> Result<VialRow> {
    let v = usable_vial(tx, id)?;
    let to = location_by_name(tx, location)?;
    let from = location_by_name(tx, &v.location)?;
    tx.execute(
        "UPDATE vial SET location_id = ?1, position = ?2 WHERE id = ?3",
        params![to.id, position, id],
    )?;
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, from_location_id, to_location_id, who, why, at) VALUES (?1,'move',?2,?3,?4,?5,?6)",
        params![id, from.id, to.id, who, why, now()],
    )?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "move",
        Some(&json!({"location": v.location, "position": v.position})),
        Some(&json!({"location": to.name, "position": position})),
    )?;
    get_vial(tx, id)
}

pub fn dispose_vial(tx: &Connection, who: &str, id: i64, why: &str) -> Result<VialRow> {
    let v = usable_vial(tx, id)?;
    if why.trim().is_empty() {
        return invalid("disposal needs a reason (--why)");
    }
    tx.execute("UPDATE vial SET status = 'disposed' WHERE id = ?1", [id])?;
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, amount_ml, who, why, at) VALUES (?1,'dispose',?2,?3,?4,?5)",
        params![id, v.volume_ml, who, why, now()],
    )?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "dispose",
        Some(&json!({"status": v.status, "volume_ml": v.volume_ml})),
        Some(&json!({"status": VialStatus::Disposed, "why": why})),
    )?;
    get_vial(tx, id)
}

#[derive(Debug, Clone, Serialize)]
pub struct VialEventRow {
    pub id: i64,
    pub vial_id: i64,
    pub kind: VialEventKind,
    pub amount_ml: Option<f64>,
    pub who: String,
    pub why: Option<String>,
    pub at: String,
}

/// Records that a vial's concentration was measured from a spectrum (the event the vial's
/// history shows; the value itself is `set_vial_concentration`'s).
pub fn record_vial_measured(tx: &Connection, who: &str, vial_id: i64, spectrum_id: i64) -> Result<()> {
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, who, why, at) VALUES (?1, 'measure', ?2, ?3, ?4)",
        params![vial_id, who, format!("spectrum {spectrum_id}"), crate::store::now()],
    )?;
    Ok(())
}

pub fn vial_events(conn: &Connection, vial_id: i64) -> Result<Vec<VialEventRow>> {
    let mut st = conn
        .prepare("SELECT id, vial_id, kind, amount_ml, who, why, at FROM vial_event WHERE vial_id = ?1 ORDER BY id")?;
    let rows = st.query_map([vial_id], |r| {
        Ok(VialEventRow {
            id: r.get(0)?,
            vial_id: r.get(1)?,
            kind: r.get(2)?,
            amount_ml: r.get(3)?,
            who: r.get(4)?,
            why: r.get(5)?,
            at: r.get(6)?,
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}
