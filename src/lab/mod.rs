//! The lab's actions: one function per thing a person does to the record (log a batch, add an
//! aliquot, draw from a vial, hand over, change a calibration, ...). Each opens and commits its
//! own transaction, keeps the record's rules (validation, the audit row, the values derived
//! again in the same transaction) and returns what it wrote as a typed row. The two faces, the
//! command line and the UI, call these for every write and `report` for every view, so an
//! action behaves the same whichever face ran it.
//!
//! `lab` sits above `store` (which alone speaks SQL) and `derive` (the pure science): it asks
//! the store for rows, hands them to the science and writes the results back.

pub mod batches;
pub mod handover;
pub mod register;
pub mod settings;
pub mod vials;
