//! Molar extinction coefficients and concentration by Beer-Lambert.
//!
//! Models: Yu et al. 2003 (at the first exciton: CdSe 5857 D^2.65, CdTe 10043 D^2.12, CdS
//! 21536 D^2.3, M⁻¹cm⁻¹ with D in nm; from memory of the paper); Jasieniak et al. 2009 (CdSe, at
//! the first exciton, ε = 155507 + 6.67054e13 exp(-E1/0.10551) for a 0.06 eV HWHM, scaled by
//! 0.06 eV / HWHM); Moreels et al. 2009 (PbS, ε(400 nm) = 0.0233 d³ µM⁻¹cm⁻¹) and Moreels et al.
//! 2007 (PbSe, ε(400 nm) = 0.0277 d³ µM⁻¹cm⁻¹), both at 400 nm where absorption scales with
//! volume; Leatherdale, Woo, Mikulec & Bawendi, J. Phys. Chem. B 106, 7619 (2002) (CdSe, at
//! 350 nm, far above the band edge, where absorption scales with volume and hardly with size
//! dispersion: see [`leatherdale2002_m1cm1`]).
//!
//! Every law in D was fitted to the diameters of one sizing method. A diameter from another
//! curve gives another ε, so [`pairing_warning`] says when a calibration pairs one paper's
//! diameter with another's ε(D), and by how much the concentration moves.

use crate::error::{Result, invalid};
use crate::spectra::HC_EV_NM;
use serde::Serialize;

pub const MODEL_IDS: &[&str] = &[
    "yu2003",
    "jasieniak2009",
    "moreels2009",
    "moreels2007",
    "leatherdale2002",
];

/// Leatherdale et al. 2002, abstract: at 350 nm the absorption cross section per CdSe crystal
/// (in hexane) is C = 5.501e5 · a³ cm⁻¹ with a the radius in cm. As a molar decadic
/// coefficient, ε = C · N_A / (1000 · ln 10): with a = D/2 in nm,
/// ε = 5.501e5 · 1e-21 · 2.61538e20 / 8 · D³ = 1.79837e4 · D³ M⁻¹cm⁻¹ (D in nm).
/// The formula was checked against the paper's abstract; the sizes it covers (about 2-8 nm
/// diameter) are from memory.
pub fn leatherdale2002_m1cm1(d_nm: f64) -> f64 {
    let per_mol = crate::derive::yields::AVOGADRO / (1000.0 * std::f64::consts::LN_10);
    5.501e5 * (d_nm * 0.5e-7).powi(3) * per_mol
}

/// The sizing curves whose diameters an ε(D) law may be fed without a warning: the curve
/// fitted to the same diameters (the same paper, or the lab law of the same name). For
/// leatherdale2002 the curves that size by electron microscopy (yu2003, jasieniak2009) are
/// taken as compatible: its own sizes came from TEM and small-angle X-ray scattering (from
/// memory). `None` for a law that does not use D (jasieniak2009 uses the peak energy and
/// width only).
pub fn paired_curves(model: &str) -> Option<Vec<String>> {
    if let Some(n) = model.strip_prefix("lab:") {
        return Some(vec![format!("lab:{n}")]);
    }
    Some(match model {
        "yu2003" => vec!["yu2003".into()],
        "moreels2009" => vec!["moreels2009".into()],
        "moreels2007" => vec!["moreels2007".into()],
        "leatherdale2002" => vec!["yu2003".into(), "jasieniak2009".into()],
        _ => return None,
    })
}

/// A warning when `curve` (the diameter's source) and `model` (the ε(D) law) come from
/// different calibrations. `own_diameter_nm` is the diameter the law's own curve gives for the
/// same peak, when it can size it: then the warning says how far the concentration moves.
pub fn pairing_warning(
    curve: &str,
    model: &str,
    d_nm: f64,
    own_diameter_nm: Option<f64>,
    eps: &dyn Fn(f64) -> f64,
) -> Option<String> {
    let paired = paired_curves(model)?;
    if paired.iter().any(|c| c == curve) {
        return None;
    }
    let mut w = format!(
        "diameter from {curve} with {model}'s extinction law: {model} was fitted to {}'s diameters, so the pair is not one calibration",
        paired.join("/")
    );
    if let Some(own) = own_diameter_nm.filter(|o| o.is_finite() && *o > 0.0) {
        let ratio = eps(d_nm) / eps(own);
        if ratio.is_finite() && ratio > 0.0 {
            w.push_str(&format!(
                "; with {}'s diameter ({own:.2} nm) the concentration would be {:.2}x this one",
                paired[0], ratio
            ));
        }
    }
    Some(w)
}

/// Above this measured absorbance at a short wavelength (350 or 400 nm), where the volume-scaling
/// laws apply, the reading is not trusted: stray light and the detector's range flatten it
/// (common practice; the ordinary linear range of a UV-Vis spectrometer).
pub const MAX_TRUSTED_ABS_SHORT: f64 = 1.5;

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
        ("leatherdale2002", "CdSe") => Ok(At::Wavelength(350.0)),
        _ => invalid(format!(
            "no extinction model '{model}' for {core} (models: yu2003 for CdSe/CdTe/CdS, jasieniak2009 or leatherdale2002 for CdSe, moreels2009 for PbS, moreels2007 for PbSe)"
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
        ("leatherdale2002", _) => {
            if !(2.0..=8.0).contains(&d_nm) {
                warnings.push(format!(
                    "diameter {d_nm:.2} nm is outside the sizes leatherdale2002 measured (about 2-8 nm, from memory)"
                ));
            }
            leatherdale2002_m1cm1(d_nm)
        }
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
