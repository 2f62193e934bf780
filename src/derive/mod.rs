//! The published methods and the pure computation of derived values. `sizing`, `extinction`,
//! `qy`, `yields` and `solvents` are pure functions and tables, each with its source beside it;
//! `calibration` holds the choices a lab makes among them and their validation; `engine`
//! computes an aliquot's values and the hashes that tie each to the calibration version and
//! inputs that produced it; `growth` gives the batch-level picture and `series` reads an
//! aliquot knowing its neighbours. Nothing here runs SQL or imports the UI: `store` keeps the
//! values and `lab` runs the derivations.

pub mod calibration;
pub mod engine;
pub mod extinction;
pub mod growth;
pub mod qy;
pub mod series;
pub mod sizing;
pub mod solvents;
pub mod yields;
