//! The published methods and the recompute engine. `sizing`, `extinction`, `qy`, `yields` and
//! `solvents` are pure functions and tables, each with its source beside it; `calibration`
//! versions the choices a lab makes among them; `engine` ties every stored value to the
//! calibration version and inputs that produced it; `growth` gives the batch-level picture and `series` reads an aliquot knowing its neighbours.
//! Nothing here imports the UI.

pub mod calibration;
pub mod engine;
pub mod extinction;
pub mod growth;
pub mod qy;
pub mod series;
pub mod sizing;
pub mod solvents;
pub mod yields;
