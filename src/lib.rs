//! cuvette: a lab record for colloidal nanocrystal synthesis. The library holds everything;
//! the binary is a thin shell over [`cli::run`].
//!
//! Layers, lowest first: `spectra` (readers and pure analysis) and `derive` (published methods,
//! calibrations, the recompute engine) know nothing of the UI; `store` owns SQLite; `search`,
//! `report` and `demo` build on those; `cli` and `tui` are the two faces.

#![deny(clippy::unwrap_used)]

pub mod bench;
pub mod cli;
pub mod corrections;
pub mod demo;
pub mod derive;
pub mod error;
pub mod hazards;
pub mod lab;
pub mod par;
pub mod report;
pub mod safe_text;
pub mod search;
pub mod spectra;
pub mod store;
pub mod tui;

pub use error::{Error, Result};
