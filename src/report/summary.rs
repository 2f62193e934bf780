//! The aliquot and recipe summaries read from the store: an aliquot with its current values
//! and spectra, and a recipe version's repeatability over its batches, computed by
//! `derive::growth`. Read-only.

use crate::derive::growth::{self, AliquotSummary, RecipeStats, SpectrumBrief};
use crate::error::Result;
use crate::store::{Db, model, values};

/// An aliquot with its current derived values, as scripts and screens see it.
pub fn aliquot_summary(db: &Db, a: &model::AliquotRow) -> Result<AliquotSummary> {
    let vals = values::current_values(db, a.id)?;
    let spectra = model::spectra_of_aliquot(db, a.id)?
        .into_iter()
        .map(SpectrumBrief::from)
        .collect();
    Ok(growth::summarise(a, &vals, spectra))
}

/// How repeatable a recipe version is: mean and spread of its batches' product values.
pub fn recipe_stats(db: &Db, recipe_version_id: i64) -> Result<RecipeStats> {
    let view = model::recipe_view(db, recipe_version_id)?;
    let mut batches = Vec::new();
    for b in model::list_batches(db)?
        .into_iter()
        .filter(|b| b.recipe_version_id == Some(recipe_version_id))
    {
        // A failed batch's aliquots are not read: it only counts as failed.
        let product = if growth::failed(&b) {
            None
        } else {
            super::product_summary(db, b.id)?
        };
        batches.push((b, product));
    }
    Ok(growth::recipe_stats(view.name, view.version, &batches))
}
