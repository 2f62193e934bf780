//! Batches: logging one, editing it (with the values its edit moves derived again in the same
//! transaction), setting its status and starting a repeat of it.

use crate::error::Result;
use crate::store::{Store, model};
use crate::vocab::{BatchRelation, BatchStatus};

/// Logs a new batch; returns it as stored.
pub fn log_batch(store: &mut Store, new: &model::NewBatch) -> Result<model::BatchRow> {
    store.write(|tx, who| {
        let id = model::insert_batch(tx, who, new)?;
        model::get_batch(tx, id)
    })
}

/// What an edit did besides changing the batch: how many aliquots of shelled batches were
/// derived again because the batch's parent (so their core) changed.
#[derive(Debug, Clone)]
pub struct BatchEdited {
    pub batch: model::BatchRow,
    pub aliquots_followed: usize,
}

/// Edits a batch. Pinning or unpinning a calibration marks the values it moves stale; choosing
/// the product aliquot refreshes the concentrations of the vials estimated from it; a new
/// parent moves the core size of its shelled batches, all in this one transaction.
pub fn edit_batch(store: &mut Store, id: i64, edit: &model::BatchEdit) -> Result<BatchEdited> {
    store.write(|tx, who| {
        let batch = model::edit_batch(tx, who, id, edit)?;
        if edit.pin_calibration.is_some() || edit.unpin {
            crate::lab::derivation::mark_stale(tx)?;
        }
        if edit.product_aliquot_id.is_some() {
            crate::lab::derivation::refresh_vials(tx, Some(id), false)?;
        }
        // A shelled batch takes its core's size from its parent's product: a new parent
        // moves it, in this same transaction.
        let aliquots_followed = match edit.parent_batch_id {
            Some(p) => crate::lab::derivation::follow_parent_cores(tx, Some(p))?,
            None => 0,
        };
        Ok(BatchEdited {
            batch,
            aliquots_followed,
        })
    })
}

/// Sets a batch's status (planned, growing, done, failed, ...).
pub fn set_status(store: &mut Store, id: i64, status: BatchStatus) -> Result<model::BatchRow> {
    store.write(|tx, who| model::set_batch_status(tx, who, id, status))
}

/// Starts a repeat of a batch: a new batch of the same material and recipe version, its parent
/// the batch repeated (relation `repeat`), named `NAME (repeat)` unless a name is given.
pub fn repeat_batch(store: &mut Store, id: i64, name: Option<&str>) -> Result<model::BatchRow> {
    store.write(|tx, who| {
        let b = model::get_batch(tx, id)?;
        let nb = model::NewBatch {
            name: name
                .map(str::to_string)
                .unwrap_or_else(|| format!("{} (repeat)", b.name)),
            material: b.material.clone(),
            recipe: b.recipe.clone(),
            recipe_version: b.recipe_version,
            parent_batch_id: Some(b.id),
            parent_relation: Some(BatchRelation::Repeat),
            ..Default::default()
        };
        let nid = model::insert_batch(tx, who, &nb)?;
        model::get_batch(tx, nid)
    })
}
