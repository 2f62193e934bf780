//! Corrections: void and reinstate (aliquots, batches, disposed vials), edit an aliquot's
//! logged facts, correct a spectrum's cuvette, move a spectrum to another aliquot. Each needs a
//! reason and is audited with before and after; nothing is deleted, and the caller re-derives
//! what moved.

use super::vials::VOLUME_EPS_ML;
use super::{
    AliquotRow, BatchRow, VialRow, check_bounded, check_reason, get_aliquot, get_batch, get_spectrum, get_vial,
};
use crate::error::{Result, invalid};
use crate::store::{audit, now};
use crate::vocab::VialStatus;
use rusqlite::{Connection, OptionalExtension, params};
use serde::Serialize;
use serde_json::json;

/// What an aliquot edit may change; None leaves a field as it is.
#[derive(Debug, Clone, Default)]
pub struct AliquotEdit {
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub dilution_factor: Option<f64>,
    pub path_cm: Option<f64>,
    pub solvent: Option<String>,
}

/// A change of a row's void mark, with its reason.
#[derive(Debug, Clone, Copy)]
enum VoidChange<'a> {
    Void(&'a str),
    Reinstate(&'a str),
}

/// Sets or clears the void mark of an aliquot or a batch row, audited with before and after
/// (a void's reason is in the row; a reinstatement's beside it).
fn mark_void<T: Serialize>(
    tx: &Connection,
    who: &str,
    entity: &str,
    id: i64,
    change: VoidChange,
    get: fn(&Connection, i64) -> Result<T>,
) -> Result<T> {
    let before = get(tx, id)?;
    let (stamp, why, action) = match change {
        VoidChange::Void(w) => (Some(now()), Some(w), "void"),
        VoidChange::Reinstate(_) => (None, None, "reinstate"),
    };
    tx.execute(
        &format!("UPDATE {entity} SET voided_at = ?1, void_why = ?2 WHERE id = ?3"),
        params![stamp, why, id],
    )?;
    let after = serde_json::to_value(get(tx, id)?)?;
    let recorded = match change {
        VoidChange::Void(_) => after,
        VoidChange::Reinstate(w) => json!({"row": after, "why": w}),
    };
    audit(
        tx,
        who,
        entity,
        Some(id),
        action,
        Some(&serde_json::to_value(&before)?),
        Some(&recorded),
    )?;
    get(tx, id)
}

/// Voids an aliquot: it stays in the record, marked, and counts for nothing.
pub fn void_aliquot(tx: &Connection, who: &str, id: i64, why: &str) -> Result<AliquotRow> {
    let why = check_reason(why)?;
    let before = get_aliquot(tx, id)?;
    if before.voided {
        return invalid(format!(
            "aliquot {id} is already void ({})",
            before.void_why.unwrap_or_default()
        ));
    }
    mark_void(tx, who, "aliquot", id, VoidChange::Void(why), get_aliquot)
}

/// Undoes a void.
pub fn reinstate_aliquot(tx: &Connection, who: &str, id: i64, why: &str) -> Result<AliquotRow> {
    let why = check_reason(why)?;
    let before = get_aliquot(tx, id)?;
    if !before.voided {
        return invalid(format!("aliquot {id} is not void"));
    }
    let has_spectrum: bool = tx
        .query_row("SELECT 1 FROM spectrum WHERE aliquot_id = ?1 LIMIT 1", [id], |_| Ok(()))
        .optional()?
        .is_some();
    if !has_spectrum {
        return invalid(format!("aliquot {id} has no spectrum left; move one back to it first"));
    }
    mark_void(tx, who, "aliquot", id, VoidChange::Reinstate(why), get_aliquot)
}

/// Changes the logged facts of an aliquot; the caller re-derives its values.
pub fn edit_aliquot(tx: &Connection, who: &str, id: i64, e: &AliquotEdit, why: &str) -> Result<AliquotRow> {
    let why = check_reason(why)?;
    let before = get_aliquot(tx, id)?;
    if e.minutes.is_none()
        && e.stage.is_none()
        && e.dilution_factor.is_none()
        && e.path_cm.is_none()
        && e.solvent.is_none()
    {
        return invalid("nothing to change: give --minutes, --stage, --dilution, --path-cm or --solvent");
    }
    if let Some(m) = e.minutes {
        check_bounded("minutes", m, true, 100_000.0, "min")?;
    }
    if let Some(d) = e.dilution_factor {
        check_bounded("dilution factor", d, false, 1e6, "x")?;
        if d < 1.0 {
            return invalid(format!(
                "dilution factor {d} is below 1; it is the factor by which the aliquot was diluted"
            ));
        }
    }
    if let Some(p) = e.path_cm {
        check_bounded("path length", p, false, 100.0, "cm")?;
    }
    // A timed aliquot given a stage (or the reverse) keeps exactly one of the two.
    let (minutes, stage) = match (e.minutes, &e.stage) {
        (Some(m), Some(s)) if !s.is_empty() => {
            return invalid(format!("give either --minutes ({m}) or --stage ({s}), not both"));
        }
        (Some(m), _) => (Some(m), None),
        (None, Some(s)) if !s.trim().is_empty() => (None, Some(s.trim().to_string())),
        (None, Some(_)) => return invalid("a stage cannot be empty"),
        (None, None) => (before.minutes, before.stage.clone()),
    };
    tx.execute(
        "UPDATE aliquot SET minutes = ?1, stage = ?2, dilution_factor = ?3, path_cm = ?4, solvent = ?5 WHERE id = ?6",
        params![
            minutes,
            stage,
            e.dilution_factor.unwrap_or(before.dilution_factor),
            e.path_cm.unwrap_or(before.path_cm),
            e.solvent.clone().unwrap_or(before.solvent.clone()),
            id
        ],
    )?;
    let after = get_aliquot(tx, id)?;
    audit(
        tx,
        who,
        "aliquot",
        Some(id),
        "edit",
        Some(&serde_json::to_value(&before)?),
        Some(&json!({"row": serde_json::to_value(&after)?, "why": why})),
    )?;
    Ok(after)
}

/// Corrects the cuvette a spectrum of an aliquot was measured in: its own path length (cm)
/// and dilution factor, already checked by the caller (`bench::OwnCuvette::checked`). Returns
/// the aliquot, whose values the caller derives again. Audited with before and after.
pub fn set_spectrum_cuvette(
    tx: &Connection,
    who: &str,
    spectrum_id: i64,
    path_cm: Option<f64>,
    dilution_factor: Option<f64>,
    why: &str,
) -> Result<i64> {
    let why = check_reason(why)?;
    if path_cm.is_none() && dilution_factor.is_none() {
        return invalid("nothing to change: give --path-cm or --dilution");
    }
    let s = get_spectrum(tx, spectrum_id)?;
    let Some(aliquot) = s.aliquot_id else {
        return invalid(format!(
            "spectrum {spectrum_id} belongs to vial {}, not an aliquot: measure the vial again instead",
            s.vial_id.unwrap_or(0)
        ));
    };
    let (path, dilution) = (path_cm.or(s.path_cm), dilution_factor.or(s.dilution_factor));
    tx.execute(
        "UPDATE spectrum SET path_cm = ?1, dilution_factor = ?2 WHERE id = ?3",
        params![path, dilution, spectrum_id],
    )?;
    audit(
        tx,
        who,
        "spectrum",
        Some(spectrum_id),
        "cuvette",
        Some(&json!({"path_cm": s.path_cm, "dilution_factor": s.dilution_factor})),
        Some(&json!({"path_cm": path, "dilution_factor": dilution, "why": why})),
    )?;
    Ok(aliquot)
}

/// Moves a spectrum to another aliquot (of any batch). Returns (from, to) aliquot ids; the
/// caller re-derives both. An aliquot left without spectra is voided, since it holds nothing.
pub fn move_spectrum(tx: &Connection, who: &str, spectrum_id: i64, to_aliquot: i64, why: &str) -> Result<(i64, i64)> {
    let why = check_reason(why)?;
    let s = get_spectrum(tx, spectrum_id)?;
    let Some(from) = s.aliquot_id else {
        return invalid(format!(
            "spectrum {spectrum_id} belongs to vial {}, not an aliquot",
            s.vial_id.unwrap_or(0)
        ));
    };
    if from == to_aliquot {
        return invalid(format!(
            "spectrum {spectrum_id} already belongs to aliquot {to_aliquot}"
        ));
    }
    let target = get_aliquot(tx, to_aliquot)?;
    let target_empty = tx
        .query_row(
            "SELECT 1 FROM spectrum WHERE aliquot_id = ?1 LIMIT 1",
            [to_aliquot],
            |_| Ok(()),
        )
        .optional()?
        .is_none();
    // An aliquot voided because its last spectrum moved away takes one back (and counts again);
    // any other void aliquot is reinstated on purpose first.
    if target.voided && !target_empty {
        return invalid(format!("aliquot {to_aliquot} is void; reinstate it first"));
    }
    let clash: Option<i64> = tx
        .query_row(
            "SELECT id FROM spectrum WHERE aliquot_id = ?1 AND kind = ?2",
            params![to_aliquot, s.kind],
            |r| r.get(0),
        )
        .optional()?;
    if let Some(c) = clash {
        return invalid(format!(
            "aliquot {to_aliquot} already has {} spectrum ({c}); move or void that one first",
            match s.kind.as_str() {
                "abs" => "an absorbance",
                "pl" => "a PL",
                _ => "a PLE",
            }
        ));
    }
    tx.execute(
        "UPDATE spectrum SET aliquot_id = ?1 WHERE id = ?2",
        params![to_aliquot, spectrum_id],
    )?;
    audit(
        tx,
        who,
        "spectrum",
        Some(spectrum_id),
        "move",
        Some(&json!({"aliquot_id": from})),
        Some(&json!({"aliquot_id": to_aliquot, "why": why})),
    )?;
    if target.voided {
        reinstate_aliquot(
            tx,
            who,
            to_aliquot,
            &format!("spectrum {spectrum_id} moved back to it: {why}"),
        )?;
    }
    let left: i64 = tx.query_row("SELECT count(*) FROM spectrum WHERE aliquot_id = ?1", [from], |r| {
        r.get(0)
    })?;
    if left == 0 && !get_aliquot(tx, from)?.voided {
        void_aliquot(
            tx,
            who,
            from,
            &format!("its last spectrum ({spectrum_id}) moved to aliquot {to_aliquot}: {why}"),
        )?;
    }
    Ok((from, to_aliquot))
}

/// Voids a batch: it stays in the record, marked, and is left out of search, the shelf's
/// product values and the pack; its vials stay on the shelf until disposed.
pub fn void_batch(tx: &Connection, who: &str, id: i64, why: &str) -> Result<BatchRow> {
    let why = check_reason(why)?;
    if get_batch(tx, id)?.voided {
        return invalid(format!("batch {id} is already void"));
    }
    mark_void(tx, who, "batch", id, VoidChange::Void(why), get_batch)
}

/// Undoes a batch void.
pub fn reinstate_batch(tx: &Connection, who: &str, id: i64, why: &str) -> Result<BatchRow> {
    let why = check_reason(why)?;
    if !get_batch(tx, id)?.voided {
        return invalid(format!("batch {id} is not void"));
    }
    mark_void(tx, who, "batch", id, VoidChange::Reinstate(why), get_batch)
}

/// Puts a disposed vial back on the shelf, as it was before its disposal.
pub fn reinstate_vial(tx: &Connection, who: &str, id: i64, why: &str) -> Result<VialRow> {
    let why = check_reason(why)?;
    let v = get_vial(tx, id)?;
    if v.status != VialStatus::Disposed {
        return invalid(format!("vial {} ({}) is not disposed of", v.id, v.label));
    }
    let status = if v.volume_ml > VOLUME_EPS_ML {
        VialStatus::InUse
    } else {
        VialStatus::Empty
    };
    tx.execute("UPDATE vial SET status = ?1 WHERE id = ?2", params![status, id])?;
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, who, why, at) VALUES (?1,'reinstate',?2,?3,?4)",
        params![id, who, why, now()],
    )?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "reinstate",
        Some(&json!({"status": v.status})),
        Some(&json!({"status": status, "why": why})),
    )?;
    get_vial(tx, id)
}
