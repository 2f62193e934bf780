//! Vials: putting one on the shelf (its concentration estimated from the batch's product when
//! none is given), drawing from it, moving it and disposing of it. Each is one audited
//! transaction; a draw larger than what is left is refused by the store and changes nothing.

use crate::error::Result;
use crate::store::{Store, model};

/// A new vial on the shelf. Without a stated concentration, one is estimated from the batch's
/// product aliquot (a derived value with its provenance) in the same transaction.
pub fn new_vial(store: &mut Store, new: &model::NewVial) -> Result<model::VialRow> {
    store.write(|tx, who| {
        let id = model::insert_vial(tx, who, new)?;
        if new.concentration_molar.is_none() {
            crate::lab::derivation::estimate_vial(tx, id)?;
        }
        model::get_vial(tx, id)
    })
}

/// Draws `ml` from a vial (why: what it was drawn for, if said).
pub fn draw(store: &mut Store, vial: i64, ml: f64, why: Option<&str>) -> Result<model::VialRow> {
    store.write(|tx, who| model::draw_from_vial(tx, who, vial, ml, why))
}

/// Moves a vial to another location (and position in it).
pub fn move_to(
    store: &mut Store,
    vial: i64,
    location: &str,
    position: Option<&str>,
    why: Option<&str>,
) -> Result<model::VialRow> {
    store.write(|tx, who| model::move_vial(tx, who, vial, location, position, why))
}

/// Disposes of a vial; the record keeps it, with the reason.
pub fn dispose(store: &mut Store, vial: i64, why: &str) -> Result<model::VialRow> {
    store.write(|tx, who| model::dispose_vial(tx, who, vial, why))
}
