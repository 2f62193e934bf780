//! Molar extinction coefficients and concentration by Beer-Lambert.
//!
//! Models: Yu et al. 2003 (at the first exciton: CdSe 5857 D^2.65, CdTe 10043 D^2.12, CdS
//! 21536 D^2.3, M⁻¹cm⁻¹ with D in nm; from memory of the paper); Jasieniak et al. 2009 (CdSe, at
//! the first exciton, ε = 155507 + 6.67054e13 exp(-E1/0.10551) for a 0.06 eV HWHM, scaled by
//! 0.06 eV / HWHM); Moreels et al. 2009 (PbS, ε(400 nm) = 0.0233 d³ µM⁻¹cm⁻¹) and Moreels et al.
//! 2007 (PbSe, ε(400 nm) = 0.0277 d³ µM⁻¹cm⁻¹), both at 400 nm where absorption scales with
//! volume.

use crate::error::{Result, invalid};
use crate::spectra::HC_EV_NM;
use serde::Serialize;

pub const MODEL_IDS: &[&str] = &["yu2003", "jasieniak2009", "moreels2009", "moreels2007"];

/// Where a model's ε applies.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub enum At {
    FirstExciton,
    Wavelength(f64),
}

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Extinction {
    pub model: String,
    pub extinction_m1cm1: f64,
    /// The wavelength whose absorbance the coefficient goes with.
    pub at_nm: f64,
    pub warnings: Vec<String>,
}

pub fn model_for(core: &str, model: &str) -> Result<At> {
    match (model, core) {
        ("yu2003", "CdSe" | "CdTe" | "CdS") => Ok(At::FirstExciton),
        ("jasieniak2009", "CdSe") => Ok(At::FirstExciton),
        ("moreels2009", "PbS") => Ok(At::Wavelength(400.0)),
        ("moreels2007", "PbSe") => Ok(At::Wavelength(400.0)),
        _ => invalid(format!(
            "no extinction model '{model}' for {core} (models: yu2003 for CdSe/CdTe/CdS, jasieniak2009 for CdSe, moreels2009 for PbS, moreels2007 for PbSe)"
        )),
    }
}

/// The default extinction model for a core, if one is known.
pub fn default_model(core: &str) -> Option<&'static str> {
    match core {
        "CdSe" | "CdTe" | "CdS" => Some("yu2003"),
        "PbS" => Some("moreels2009"),
        "PbSe" => Some("moreels2007"),
        _ => None,
    }
}

/// ε for a crystal of diameter `d_nm` whose first exciton is at `peak_nm` with low-energy HWHM
/// `hwhm_ev` (needed by jasieniak2009 only).
pub fn coefficient(model: &str, core: &str, d_nm: f64, peak_nm: f64, hwhm_ev: Option<f64>) -> Result<Extinction> {
    let at = model_for(core, model)?;
    let mut warnings = Vec::new();
    let eps = match (model, core) {
        ("yu2003", "CdSe") => 5857.0 * d_nm.powf(2.65),
        ("yu2003", "CdTe") => 10043.0 * d_nm.powf(2.12),
        ("yu2003", "CdS") => 21536.0 * d_nm.powf(2.3),
        ("jasieniak2009", _) => {
            let e1 = HC_EV_NM / peak_nm;
            let eps_ref = 155507.0 + 6.67054e13 * (-e1 / 0.10551).exp();
            match hwhm_ev {
                Some(h) if h > 0.0 => eps_ref * 0.06 / h,
                _ => {
                    warnings.push("no HWHM measured: ε taken for the reference 0.06 eV HWHM".into());
                    eps_ref
                }
            }
        }
        ("moreels2009", _) => 0.0233e6 * d_nm.powi(3),
        ("moreels2007", _) => 0.0277e6 * d_nm.powi(3),
        _ => return invalid(format!("no extinction model '{model}' for {core}")),
    };
    Ok(Extinction {
        model: model.to_string(),
        extinction_m1cm1: eps,
        at_nm: match at {
            At::FirstExciton => peak_nm,
            At::Wavelength(w) => w,
        },
        warnings,
    })
}

/// Beer-Lambert: c = A / (ε l), times the dilution factor, for the undiluted sample (mol/L).
pub fn concentration_molar(absorbance: f64, eps_m1cm1: f64, path_cm: f64, dilution: f64) -> Result<f64> {
    if !(eps_m1cm1 > 0.0) {
        return invalid(format!("extinction coefficient must be above zero, got {eps_m1cm1}"));
    }
    if !(path_cm > 0.0) {
        return invalid(format!("path length must be above zero, got {path_cm} cm"));
    }
    if !(dilution >= 1.0) {
        return invalid(format!("dilution factor must be 1 or more, got {dilution}"));
    }
    Ok(absorbance / (eps_m1cm1 * path_cm) * dilution)
}
