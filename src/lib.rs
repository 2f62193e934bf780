//! cuvette: a lab record for colloidal nanocrystal synthesis. The library holds everything;
//! the binary is a thin shell over [`cli::run`].
//!
//! Layers, lowest first: `vocab` (the closed word lists as enums, which every layer may use),
//! `spectra` (readers and pure analysis) and `derive` (published methods, calibrations and the pure
//! computation of derived values) know nothing of the UI or of SQLite; `store` alone speaks SQL and
//! imports nothing above it (`tests/architecture.rs` names the files still on their way there);
//! `lab` is one function per user action, each owning its transaction, built from store functions
//! and derive's computation; `search`, `report` (the views) and `demo` build on those; `cli` and
//! `tui` are the two faces, calling `lab` for writes and `report` for views.

#![deny(clippy::unwrap_used)]

pub mod cli;
pub mod derive;
pub mod error;
pub mod hazards;
pub mod lab;
pub mod open_labs;
pub mod par;
pub mod paths;
pub mod report;
pub mod safe_text;
pub mod search;
pub mod spectra;
pub mod store;
pub mod tui;
pub mod vocab;

pub use error::{Error, Result};
