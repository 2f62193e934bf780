//! Corrections to the record, one function per action, shared by the command line and the UI so
//! the two cannot drift apart: each validates, writes and audits (through `store::model`), then
//! re-derives what depends on it (through `derive::engine`), all in one transaction. Nothing is
//! deleted; every correction carries a reason.

use crate::error::Result;
use crate::store::Store;
use crate::store::model::{self, AliquotEdit, AliquotRow, BatchRow, VialRow};

/// Voids an aliquot (`void`) or reinstates it; its values and its batch's vials follow.
pub fn set_aliquot_void(store: &mut Store, id: i64, void: bool, why: &str) -> Result<AliquotRow> {
    store.write(|tx, who| {
        let row = if void {
            model::void_aliquot(tx, who, id, why)?
        } else {
            model::reinstate_aliquot(tx, who, id, why)?
        };
        crate::lab::derivation::after_correction(tx, id)?;
        Ok(row)
    })
}

/// Corrects an aliquot's logged facts; what depends on them is recomputed.
pub fn edit_aliquot(store: &mut Store, id: i64, edit: &AliquotEdit, why: &str) -> Result<AliquotRow> {
    store.write(|tx, who| {
        if let Some(solvent) = &edit.solvent {
            crate::derive::solvents::check(solvent)?;
        }
        model::edit_aliquot(tx, who, id, edit, why)?;
        crate::lab::derivation::after_correction(tx, id)?;
        model::get_aliquot(tx, id)
    })
}

/// Corrects a spectrum's own cuvette (path, dilution); its aliquot is recomputed. Returns the
/// aliquot.
pub fn set_spectrum_cuvette(
    store: &mut Store,
    spectrum: i64,
    path_cm: Option<f64>,
    dilution_factor: Option<f64>,
    why: &str,
) -> Result<i64> {
    // The bounds a PL cuvette is held to when it is logged.
    let c = crate::lab::bench::OwnCuvette {
        path_cm,
        dilution_factor,
    }
    .checked("--path-cm", "--dilution")?;
    store.write(|tx, who| {
        let aliquot = model::set_spectrum_cuvette(tx, who, spectrum, c.path_cm, c.dilution_factor, why)?;
        crate::lab::derivation::after_correction(tx, aliquot)?;
        Ok(aliquot)
    })
}

/// Moves a spectrum to another aliquot; both are recomputed. Returns (from, to).
pub fn move_spectrum(store: &mut Store, spectrum: i64, to_aliquot: i64, why: &str) -> Result<(i64, i64)> {
    store.write(|tx, who| {
        let (from, to) = model::move_spectrum(tx, who, spectrum, to_aliquot, why)?;
        crate::lab::derivation::after_correction(tx, from)?;
        crate::lab::derivation::after_correction(tx, to)?;
        Ok((from, to))
    })
}

/// Voids a batch (`void`) or reinstates it; its vials' estimates follow.
pub fn set_batch_void(store: &mut Store, id: i64, void: bool, why: &str) -> Result<BatchRow> {
    store.write(|tx, who| {
        let row = if void {
            model::void_batch(tx, who, id, why)?
        } else {
            model::reinstate_batch(tx, who, id, why)?
        };
        crate::lab::derivation::refresh_vials(tx, Some(id), false)?;
        Ok(row)
    })
}

/// Puts a disposed vial back on the shelf.
pub fn reinstate_vial(store: &mut Store, id: i64, why: &str) -> Result<VialRow> {
    store.write(|tx, who| model::reinstate_vial(tx, who, id, why))
}
