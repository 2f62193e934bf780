//! The lab as its users act on it: one function per user action, each owning its transaction,
//! built from the store's reads and writes and derive's pure computation. The faces (`cli`,
//! `tui`) call `lab` for writes and `report` for views; `lab` runs no SQL itself.
//!
//! `derivation` holds the steps those actions are made of (deriving an aliquot, recompute,
//! stale marking, the vials' concentrations, `check`'s recomputation), each running inside the
//! caller's transaction; `calibrations` the calibration versions, typed and with the rules for
//! a change.
//!
//! Opening a lab for writing goes through here: a new lab is seeded with the shipped
//! calibration (version 1) and the shipped reagents, which the store, knowing nothing of
//! either, does not do.

pub mod calibrations;
pub mod derivation;

use crate::derive::calibration::Calibration;
use crate::error::Result;
use crate::store::{self, Store, model};
use std::path::Path;

/// Opens (creating if needed) the lab at `path`, migrated and seeded.
pub fn open(path: &Path, actor: &str) -> Result<Store> {
    let mut s = Store::open(path, actor)?;
    seed(&mut s)?;
    Ok(s)
}

/// Opens an existing lab for writing (a missing file is refused, not created), seeded.
pub fn open_existing(path: &Path, actor: &str) -> Result<Store> {
    let mut s = Store::open_existing(path, actor)?;
    seed(&mut s)?;
    Ok(s)
}

/// An in-memory lab, set up and seeded exactly as a file would be (tests and benchmarks).
pub fn in_memory(actor: &str) -> Result<Store> {
    let mut s = Store::in_memory(actor)?;
    seed(&mut s)?;
    Ok(s)
}

/// Opens the lab at `store`'s path afresh (after a restore), as it was opened: a lab opened
/// for writing is seeded, one opened for reading is not touched.
pub fn reopen(store: &Store) -> Result<Store> {
    let mut s = store.reopen()?;
    if !s.read_only {
        seed(&mut s)?;
    }
    Ok(s)
}

/// Writes version 1 with the shipped defaults, and the shipped reagents, on a new lab.
fn seed(s: &mut Store) -> Result<()> {
    if store::calibrations::count(&s.conn)? > 0 {
        return Ok(());
    }
    s.write(|tx, who| {
        store::calibrations::insert_initial(tx, who, &Calibration::default())?;
        for r in crate::hazards::SHIPPED_REAGENTS {
            let hazards: Vec<String> = r.hazards.split_whitespace().map(String::from).collect();
            if model::reagent_by_name(tx, r.name).is_err() {
                model::add_reagent(tx, who, r.name, Some(r.formula), None, &hazards, r.pyrophoric)?;
            }
        }
        Ok(())
    })
}
