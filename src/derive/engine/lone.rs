//! Both stages for a lone absorbance trace: a file analysed outside the lab, or a vial's own
//! measurement with the concentration it gives.

use super::vial_measure_hash;
use super::{BatchContext, Derived, absorbance_values_with, band_edge_hint, derive_values, find_value, trace_of};
use crate::derive::calibration::Calibration;
use crate::error::Result;
use crate::spectra::Trace;
use crate::spectra::analysis::AbsResult;
use crate::store::model::{AliquotRow, SpectrumRow, VialConcentration};

/// Both stages for a lone absorbance trace (a file not in the lab, or a vial's own
/// measurement), as an aliquot with this dilution and path would get them.
pub fn derive_from_trace(
    t: &Trace,
    core: &str,
    dilution_factor: f64,
    path_cm: f64,
    cal: &Calibration,
) -> Result<(AbsResult, Vec<Derived>)> {
    let (mut values, r) = absorbance_values_with(t, cal, &band_edge_hint(core, cal))?;
    let a = AliquotRow {
        id: 0,
        batch_id: 0,
        minutes: None,
        stage: None,
        dilution_factor,
        path_cm,
        solvent: "hexane".into(),
        taken_at: String::new(),
        voided: false,
        void_why: None,
    };
    let (more, _, _) = derive_values(&a, core, &[], &values, cal, &BatchContext::default());
    values.extend(more);
    Ok((r, values))
}

/// A vial's concentration from its own absorbance spectrum under one calibration version.
pub fn vial_measured(
    spectrum: &SpectrumRow,
    core: &str,
    dilution: f64,
    path_cm: f64,
    version: i64,
    cal: &Calibration,
) -> Result<(AbsResult, Vec<Derived>, VialConcentration)> {
    let t = trace_of(spectrum)?;
    let (r, values) = derive_from_trace(&t, core, dilution, path_cm, cal)?;
    let conc = find_value(&values, "concentration_molar");
    let mut warnings = r.warnings.clone();
    for q in ["diameter_nm", "extinction_m1cm1", "concentration_molar"] {
        warnings.extend(find_value(&values, q).map(|d| d.warnings.clone()).unwrap_or_default());
    }
    let c = VialConcentration {
        source: crate::vocab::ConcentrationSource::Measured,
        spectrum_id: Some(spectrum.id),
        aliquot_id: None,
        value: conc.and_then(|c| c.value),
        method: format!(
            "measured: spectrum {} ({}), dilution {dilution}, path {path_cm} cm; {}",
            spectrum.id,
            spectrum.file_name,
            conc.map(|c| c.method.clone())
                .unwrap_or_else(|| "no concentration".into())
        ),
        calibration_version: Some(version),
        inputs_hash: vial_measure_hash(&spectrum.sha256, &spectrum.x_unit, dilution, path_cm, core, cal),
        warnings,
    };
    Ok((r, values, c))
}
