//! Measuring a vial: its absorbance spectrum read through the door and stored with the vial
//! and, where the spectrum gives a size and the material has an extinction model, the vial's
//! concentration set from it (Beer-Lambert with the measurement's dilution and path). One
//! transaction.

use crate::derive::engine;
use crate::error::{Error, Result};
use crate::spectra::ReadOptions;
use crate::store::Store;
use crate::store::model::{self};
use std::path::Path;

use super::{SpectrumFile, new_spectrum, read_for_logging};

/// What measuring a vial's absorbance gave.
#[derive(Debug, Clone, serde::Serialize)]
pub struct VialMeasurement {
    pub vial_id: i64,
    pub spectrum_id: i64,
    pub first_exciton_nm: Option<f64>,
    pub diameter_nm: Option<f64>,
    pub curve: Option<String>,
    pub extinction_m1cm1: Option<f64>,
    pub concentration_molar: Option<f64>,
    pub calibration_version: i64,
    pub warnings: Vec<String>,
}

/// Measures a vial: stores its absorbance spectrum with the vial and, where the spectrum gives
/// a size and the material has an extinction model, sets the vial's concentration from it
/// (Beer-Lambert with the dilution and path of the measurement). One transaction.
pub fn measure_vial(store: &mut Store, vial: i64, abs: &Path, dilution: f64, path_cm: f64) -> Result<VialMeasurement> {
    model::check_number("dilution factor", dilution, false)?;
    model::check_number("path length (cm)", path_cm, false)?;
    let (raw, sha) = read_for_logging(abs, &ReadOptions::default(), "abs", false)?;
    store.write(|tx, who| {
        let v = model::get_vial(tx, vial)?;
        if v.status == "disposed" {
            return Err(Error::Invalid(format!(
                "vial {} ({}) has been disposed of",
                v.id, v.label
            )));
        }
        let core = model::material_by_name(tx, &v.material)?.core;
        let f = SpectrumFile {
            path: abs.to_path_buf(),
            kind: "abs",
            ..Default::default()
        };
        let mut ns = new_spectrum(None, &f, &raw, &sha);
        ns.vial_id = Some(vial);
        ns.dilution_factor = Some(dilution);
        ns.path_cm = Some(path_cm);
        let sid = model::insert_spectrum(tx, who, &ns)?;
        let version = crate::store::values::effective_calibration_version(tx, v.batch_id)?;
        let cal = crate::lab::calibrations::get(tx, version)?;
        let stored = model::get_spectrum(tx, sid)?;
        let (r, values, conc) = engine::vial_measured(&stored, &core, dilution, path_cm, version, &cal.body)?;
        let get = |q: &str| engine::find_value(&values, q);
        let diameter = get("diameter_nm").filter(|d| d.value.is_some());
        let mut out = VialMeasurement {
            vial_id: vial,
            spectrum_id: sid,
            first_exciton_nm: r.first_exciton_nm,
            diameter_nm: diameter.and_then(|d| d.value),
            curve: diameter.map(|d| d.method.clone()),
            extinction_m1cm1: get("extinction_m1cm1").and_then(|d| d.value),
            concentration_molar: conc.value,
            calibration_version: version,
            warnings: conc.warnings.clone(),
        };
        if out.concentration_molar.is_some() {
            model::set_vial_concentration(tx, vial, &conc)?;
            model::record_vial_measured(tx, who, vial, sid)?;
            crate::store::audit(
                tx,
                who,
                "vial",
                Some(vial),
                "measure",
                Some(&serde_json::json!({"concentration_molar": v.concentration_molar, "source": v.concentration_source})),
                Some(&serde_json::json!({"concentration_molar": conc.value, "spectrum_id": sid,
                    "method": conc.method, "curve": out.curve, "calibration_version": version})),
            )?;
        } else {
            out.warnings
                .push("no concentration derived: the vial's concentration is unchanged".into());
        }
        Ok(out)
    })
}
