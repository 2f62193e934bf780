//! The lab's actions: one function per thing a person does to the record (log a batch, add an
//! aliquot, draw from a vial, hand over, change a calibration, ...). Each opens and commits its
//! own transaction, keeps the record's rules (validation, the audit row, the values derived
//! again in the same transaction) and returns what it wrote as a typed row. The two faces, the
//! command line and the UI, call these for every write and `report` for every view, so an
//! action behaves the same whichever face ran it. `lab` runs no SQL itself: it asks the store
//! for rows, hands them to derive's pure science and writes the results back.
//!
//! `derivation` holds the steps those actions are made of (deriving an aliquot, recompute,
//! stale marking, the vials' concentrations, `check`'s recomputation), each running inside the
//! caller's transaction; `calibrations` the calibration versions, typed and with the rules for
//! a change.
//!
//! Opening a lab for writing goes through here: a new lab is seeded with the shipped
//! calibration (version 1) and the shipped reagents, which the store, knowing nothing of
//! either, does not do.

pub mod batches;
pub mod bench;
pub mod calibrations;
pub mod corrections;
pub mod demo;
pub mod derivation;
pub mod handover;
pub mod register;
pub mod restore;
pub mod settings;
pub mod vials;

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
