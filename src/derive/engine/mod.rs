//! The derived-property engine, pure: what an aliquot's values are, given its row, its spectra,
//! its batch's context and one calibration version. Every value is stored (by `lab::derivation`,
//! through `store::values`) with its method, the calibration version it used and a hash of all
//! its inputs (the spectra's file hashes, the aliquot's dilution, path and solvent, and the
//! parts of the calibration that touch it); a value whose stored hash differs from the hash its
//! inputs give now is stale. Nothing here reads or writes the lab.
//!
//! Stage one ([`stage1`]: first exciton, widths, absorbances, PL numbers) comes from the
//! spectra and the analysis settings alone; stage two ([`stage2`]: size, extinction,
//! concentration, Stokes shift, quantum yield) from the stage-one numbers and the calibration,
//! so a calibration change downstream of the analysis needs no spectrum read again. The hashes
//! that tell the two apart are in [`hashes`]; a lone trace (a file not in the lab, a vial's own
//! measurement) in [`lone`]; the reaction yield's pure part in [`reaction`].
//!
//! One value looks beyond its aliquot: a growth series may give an aliquot a second look at its
//! first exciton (see [`super::series`]). The range it is looked at in is stored with the
//! aliquot's stage-one values (`series_expected_lo_nm`/`_hi_nm`), so recomputing it needs only
//! the aliquot's own rows; `lab::derivation::series_pass` keeps those ranges in step with the
//! neighbours' readings.

pub mod hashes;
pub mod lone;
pub mod reaction;
pub mod stage1;
pub mod stage2;

pub use hashes::{
    analysis_hash, analysis_hash_before_method_versions, analysis_hash_with, analysis_part, expected_hash, inputs_hash,
    inputs_hash_with, relevant, vial_measure_hash,
};
pub use lone::{derive_from_trace, vial_measured};
pub use reaction::{ReactionYieldView, reaction_yield_from};
pub use stage1::{
    absorbance_values, absorbance_values_with, analyse, analyse_in_series, band_edge_hint, series_absorbance_values,
};
pub use stage2::derive_values;

use super::calibration::Calibration;
use super::series::SeriesHint;
use super::{extinction, sizing};
use crate::error::Result;
use crate::spectra::analysis::{AbsResult, PlResult};
use crate::spectra::{RawSpectrum, Trace};
use crate::store::model::{AliquotRow, SpectrumRow};
use serde::Serialize;

/// One derived quantity of an aliquot.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Derived {
    pub quantity: String,
    pub value: Option<f64>,
    pub unit: String,
    pub method: String,
    pub warnings: Vec<String>,
}

fn d(quantity: &str, value: Option<f64>, unit: &str, method: &str, warnings: Vec<String>) -> Derived {
    Derived {
        quantity: quantity.into(),
        value,
        unit: unit.into(),
        method: method.into(),
        warnings,
    }
}

/// What the hash needs of a spectrum (no data).
#[derive(Debug, Clone)]
pub struct SpectrumMeta {
    pub kind: String,
    pub sha256: String,
    pub excitation_nm: Option<f64>,
    pub x_unit: String,
    /// The spectrum's own cuvette, when recorded (schema 0005): for a PL spectrum, the PL
    /// cuvette's path and dilution.
    pub path_cm: Option<f64>,
    pub dilution_factor: Option<f64>,
}

impl From<&SpectrumRow> for SpectrumMeta {
    fn from(s: &SpectrumRow) -> Self {
        SpectrumMeta {
            kind: s.kind.clone(),
            sha256: s.sha256.clone(),
            excitation_nm: s.excitation_nm,
            x_unit: s.x_unit.clone(),
            path_cm: s.path_cm,
            dilution_factor: s.dilution_factor,
        }
    }
}

/// What an aliquot's batch adds to its values: the shell its crystals carry and, for a batch
/// grown on another batch's cores, that parent's core size.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct BatchContext {
    pub material: String,
    pub shell: Option<String>,
    pub parent_core: Option<ParentCore>,
}

/// The core a shelled batch grew on: its parent batch's product.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ParentCore {
    pub batch_id: i64,
    pub aliquot_id: Option<i64>,
    pub diameter_nm: Option<f64>,
    pub curve: Option<String>,
}

impl BatchContext {
    /// The part of the inputs hash the batch context gives: empty for a plain core batch, so
    /// those hashes are as they were.
    pub fn hash_part(&self) -> String {
        match &self.shell {
            None => String::new(),
            Some(sh) => format!(
                "|shell {sh}|parent {:?}",
                self.parent_core
                    .as_ref()
                    .map(|p| (p.batch_id, p.aliquot_id, p.diameter_nm))
            ),
        }
    }
}

pub fn trace_of(s: &SpectrumRow) -> Result<Trace> {
    let raw = RawSpectrum {
        format: String::new(),
        title: None,
        label: None,
        x_unit: s.x_unit.clone(),
        y_unit: s.y_unit.clone(),
        x: s.x.clone(),
        y: s.y.clone(),
        checks: Vec::new(),
        warnings: Vec::new(),
    };
    raw.to_trace(&s.file_name, None)
}

/// The quantities that come from the spectra alone (under the analysis settings and, for PL,
/// the detector correction). They are stage one: a change of sizing curve, extinction model or
/// QY reference leaves them as they are, so a recompute need not read any spectrum again.
pub const SPECTRAL: &[&str] = &[
    "first_exciton_nm",
    "first_exciton_abs",
    "hwhm_nm",
    "hwhm_mev",
    "shoulder",
    "first_exciton_sd_nm",
    "band_edge_fit",
    "abs_400nm",
    "abs_400nm_corrected",
    "abs_350nm_corrected",
    "abs_at_excitation",
    "abs_at_excitation_measured",
    "abs_at_excitation_sd",
    "abs_at_pl_band",
    "pl_peak_nm",
    "pl_fwhm_nm",
    "pl_fwhm_mev",
    "pl_integral",
    // The growth series' second look (see `series`): the range the neighbours give and, where
    // the first exciton was reassigned, the reading as first made.
    "series_expected_lo_nm",
    "series_expected_hi_nm",
    "first_exciton_as_read_nm",
    "hwhm_as_read_nm",
    "shoulder_as_read",
];

/// Everything computed for an aliquot, with the intermediate analysis kept for `explain`.
#[derive(Debug, Clone, Serialize)]
pub struct Computation {
    pub values: Vec<Derived>,
    pub absorbance: Option<AbsResult>,
    pub pl: Option<PlResult>,
    pub sizing: Option<sizing::Sizing>,
    pub extinction: Option<extinction::Extinction>,
}

fn value_of(values: &[Derived], q: &str) -> Option<f64> {
    find_value(values, q).and_then(|v| v.value)
}

/// The value of one quantity in a list of derived values.
pub fn find_value<'a>(values: &'a [Derived], quantity: &str) -> Option<&'a Derived> {
    values.iter().find(|v| v.quantity == quantity)
}

/// Computes an aliquot's derived values from its spectra under one calibration. Pure.
pub fn compute(
    a: &AliquotRow,
    core: &str,
    spectra: &[SpectrumRow],
    cal: &Calibration,
    ctx: &BatchContext,
) -> Computation {
    compute_in_series(a, core, spectra, cal, ctx, None)
}

/// As [`compute`], with the range the aliquot's growth series expects (stored with its values
/// by `lab::derivation::series_pass`). Pure.
pub fn compute_in_series(
    a: &AliquotRow,
    core: &str,
    spectra: &[SpectrumRow],
    cal: &Calibration,
    ctx: &BatchContext,
    hint: Option<&SeriesHint>,
) -> Computation {
    let (mut values, absorbance, pl) = analyse_in_series(spectra, cal, core, hint);
    let metas: Vec<SpectrumMeta> = spectra.iter().map(SpectrumMeta::from).collect();
    let (more, sizing, extinction) = derive_values(a, core, &metas, &values, cal, ctx);
    values.extend(more);
    Computation {
        values,
        absorbance,
        pl,
        sizing,
        extinction,
    }
}
