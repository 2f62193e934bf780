//! Calibrations: everything a derived value depends on besides the measurement itself — the
//! sizing curve chosen per material, the extinction model, the quantum-yield reference, the PL
//! detector correction, solvent indices, bulk parameters and the analysis settings. They are
//! versioned as a whole (`store::calibrations` keeps the versions, `lab::calibrations` reads and
//! changes them): a change writes a new version with who, when and why, and the old versions
//! stay. This module holds the calibration's types and its validation, and runs no SQL: a bad
//! change is refused by [`Calibration::validate`] before anything is written.

use super::{extinction, qy, sizing, solvents};
use crate::error::{Error, Result, invalid};
use crate::spectra::analysis::AnalysisSettings;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// The reference measurement a relative quantum yield is computed against.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct QyReference {
    pub dye: String,
    pub solvent: String,
    /// The dye's quantum yield as used (stored with every measurement through the version).
    pub qy: f64,
    pub excitation_nm: f64,
    /// The reference's integrated, corrected PL and absorbance at the excitation wavelength,
    /// measured with the same instrument settings as the samples.
    pub integral: f64,
    pub abs_at_excitation: f64,
}

/// A spectral correction curve for the PL detector: factors to multiply raw counts by.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct DetectorCorrection {
    pub name: String,
    pub nm: Vec<f64>,
    pub factor: Vec<f64>,
}

/// A lab's own sizing curve (for example fitted to its own TEM sizes):
/// D = Σ cᵢ λⁱ with λ in nm, valid over a diameter range. Its id is `lab:NAME`.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct LabCurve {
    pub material: String,
    pub coefficients: Vec<f64>,
    pub valid_range_nm: [f64; 2],
    pub source: String,
}

/// A lab's own extinction power law at the first exciton: ε = prefactor · D^exponent
/// (M⁻¹cm⁻¹, D in nm). Its id is `lab:NAME`.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct LabExtinction {
    pub material: String,
    pub prefactor: f64,
    pub exponent: f64,
    pub source: String,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Calibration {
    /// Sizing curve id per core material.
    pub curves: BTreeMap<String, String>,
    /// Extinction model id per core material.
    pub extinction: BTreeMap<String, String>,
    pub qy_reference: Option<QyReference>,
    pub detector_correction: Option<DetectorCorrection>,
    /// Refractive-index overrides, by solvent.
    pub solvent_index: BTreeMap<String, f64>,
    /// Bulk parameters for the effective-mass model, by core.
    pub bulk: BTreeMap<String, sizing::BulkParams>,
    pub analysis: AnalysisSettings,
    #[serde(default)]
    pub lab_curves: BTreeMap<String, LabCurve>,
    #[serde(default)]
    pub lab_extinction: BTreeMap<String, LabExtinction>,
    /// Homogeneous (single-crystal) HWHM in meV, by core, taken out of the first transition's
    /// width in quadrature before it is turned into a size dispersion. Empty by default: off.
    #[serde(default)]
    pub homogeneous_hwhm_mev: BTreeMap<String, f64>,
    /// The reference dye's dilution series for the gradient method (Williams, Winfield &
    /// Miller 1983): absorbance at the excitation wavelength (in the PL cuvette) and integrated,
    /// corrected PL of each dilution. Empty: the gradient method takes the single reference
    /// point through the origin, with a warning.
    #[serde(default)]
    pub qy_reference_dilutions: Vec<QyDilution>,
    /// The size dispersion (σ/D, %) above which a value is flagged as implausible; None: the
    /// built-in [`DEFAULT_PLAUSIBLE_DISPERSION_PCT`].
    #[serde(default)]
    pub plausible_dispersion_pct: Option<f64>,
}

/// σ/D above which a hot-injection product is flagged: such syntheses commonly give 5-15 %,
/// and a reading above 20 % more often comes from a misread width (a shoulder, overlap,
/// scattering) than from the crystals (common practice).
pub const DEFAULT_PLAUSIBLE_DISPERSION_PCT: f64 = 20.0;

/// One dilution of a gradient-method series.
#[derive(Debug, Clone, Copy, Serialize, Deserialize, PartialEq)]
pub struct QyDilution {
    pub abs_at_excitation: f64,
    pub integral: f64,
}

impl Default for Calibration {
    fn default() -> Self {
        let cores = ["CdSe", "CdTe", "CdS", "PbS", "PbSe", "InP"];
        let curves = cores
            .iter()
            .filter_map(|c| sizing::default_curve(c).map(|k| (c.to_string(), k.to_string())))
            .collect();
        let extinction = cores
            .iter()
            .filter_map(|c| extinction::default_model(c).map(|k| (c.to_string(), k.to_string())))
            .collect();
        let bulk = ["CdSe", "CdS", "CdTe", "PbS", "PbSe", "InP", "ZnSe"]
            .iter()
            .filter_map(|c| sizing::default_bulk(c).map(|b| (c.to_string(), b)))
            .collect();
        Calibration {
            curves,
            extinction,
            qy_reference: None,
            detector_correction: None,
            solvent_index: BTreeMap::new(),
            bulk,
            analysis: AnalysisSettings::default(),
            lab_curves: BTreeMap::new(),
            lab_extinction: BTreeMap::new(),
            homogeneous_hwhm_mev: BTreeMap::new(),
            qy_reference_dilutions: Vec::new(),
            plausible_dispersion_pct: None,
        }
    }
}

fn lab_diameter(c: &LabCurve, l: f64) -> f64 {
    c.coefficients.iter().rev().fold(0.0, |acc, k| acc * l + k)
}

/// The wavelengths over which a lab curve gives diameters inside its range, if it ever does.
fn lab_peak_span(c: &LabCurve) -> Option<(f64, f64)> {
    let inside: Vec<f64> = (0..=3300)
        .map(|i| 200.0 + i as f64)
        .filter(|l| (c.valid_range_nm[0]..=c.valid_range_nm[1]).contains(&lab_diameter(c, *l)))
        .collect();
    Some((*inside.first()?, *inside.last()?))
}

impl Calibration {
    /// σ/D (%) above which a size dispersion is flagged.
    pub fn plausible_dispersion_pct(&self) -> f64 {
        self.plausible_dispersion_pct
            .unwrap_or(DEFAULT_PLAUSIBLE_DISPERSION_PCT)
    }

    /// The homogeneous HWHM (eV) to take out of a core's width, if the lab set one.
    pub fn homogeneous_hwhm_ev(&self, core: &str) -> Option<f64> {
        self.homogeneous_hwhm_mev
            .iter()
            .find(|(k, _)| k.eq_ignore_ascii_case(core))
            .map(|(_, v)| *v / 1000.0)
    }

    /// Sets (or, with `None`, switches off) the homogeneous HWHM subtracted for a core.
    pub fn set_homogeneous_hwhm(&mut self, core: &str, mev: Option<f64>) {
        match mev {
            Some(v) => {
                self.homogeneous_hwhm_mev.insert(core.to_string(), v);
            }
            None => {
                self.homogeneous_hwhm_mev.remove(core);
            }
        }
    }

    pub fn refractive_index(&self, solvent: &str) -> Option<f64> {
        self.solvent_index
            .iter()
            .find(|(k, _)| k.eq_ignore_ascii_case(solvent))
            .map(|(_, v)| *v)
            .or_else(|| solvents::refractive_index(solvent))
    }

    /// Chooses the sizing curve for a core. A curve that comes with its own extinction
    /// coefficients (the same paper, or a lab extinction law of the same name) brings them
    /// along: the two calibrations of one source belong together.
    pub fn set_curve(&mut self, core: &str, curve: &str) {
        let curve = if curve.starts_with("lab:") {
            curve.to_string()
        } else {
            curve.to_ascii_lowercase()
        };
        let paired = extinction::model_for(core, &curve).is_ok()
            || curve
                .strip_prefix("lab:")
                .is_some_and(|n| self.lab_extinction.contains_key(n));
        if paired {
            self.extinction.insert(core.to_string(), curve.clone());
        }
        self.curves.insert(core.to_string(), curve);
    }

    /// Sizes with a shipped curve or one of the lab's own.
    pub fn size(&self, curve_id: &str, core: &str, peak_nm: f64) -> Result<sizing::Sizing> {
        let Some(name) = curve_id.strip_prefix("lab:") else {
            return sizing::size(curve_id, core, peak_nm, self.bulk.get(core));
        };
        let c = self
            .lab_curves
            .get(name)
            .ok_or_else(|| Error::Invalid(format!("no lab curve '{name}' in this calibration")))?;
        if c.material != core {
            return invalid(format!("lab curve '{name}' is for {}, not {core}", c.material));
        }
        let d = lab_diameter(c, peak_nm);
        let slope = (lab_diameter(c, peak_nm + 0.5) - lab_diameter(c, peak_nm - 0.5)) / 1.0;
        let mut warnings = Vec::new();
        if !(c.valid_range_nm[0]..=c.valid_range_nm[1]).contains(&d) {
            warnings.push(format!(
                "diameter {d:.2} nm is outside {curve_id}'s range {:.1}-{:.1} nm: extrapolated",
                c.valid_range_nm[0], c.valid_range_nm[1]
            ));
        }
        Ok(sizing::Sizing {
            diameter_nm: d,
            edge_nm: None,
            curve: curve_id.to_string(),
            valid_range_nm: c.valid_range_nm,
            slope,
            warnings,
        })
    }

    /// ε with a shipped model or the lab's own power law.
    pub fn extinction(
        &self,
        model: &str,
        core: &str,
        d_nm: f64,
        peak_nm: f64,
        hwhm_ev: Option<f64>,
    ) -> Result<extinction::Extinction> {
        let Some(name) = model.strip_prefix("lab:") else {
            return extinction::coefficient(model, core, d_nm, peak_nm, hwhm_ev);
        };
        let e = self
            .lab_extinction
            .get(name)
            .ok_or_else(|| Error::Invalid(format!("no lab extinction '{name}' in this calibration")))?;
        Ok(extinction::Extinction {
            model: model.to_string(),
            extinction_m1cm1: e.prefactor * d_nm.powf(e.exponent),
            at_nm: peak_nm,
            warnings: vec![],
        })
    }

    /// Refuses a calibration that cannot be right: a curve not made for its material, a
    /// non-monotonic curve, a non-positive extinction, a dye value outside (0, 1], a
    /// detector correction that is not a positive, increasing curve.
    pub fn validate(&self) -> Result<()> {
        for (name, c) in &self.lab_curves {
            if c.coefficients.is_empty() || c.coefficients.iter().any(|k| !k.is_finite()) {
                return invalid(format!("lab curve '{name}' needs finite coefficients"));
            }
            if !(c.valid_range_nm[0] > 0.0 && c.valid_range_nm[0] < c.valid_range_nm[1]) {
                return invalid(format!("lab curve '{name}' needs a range LOW..HIGH above zero"));
            }
            let (lo, hi) = lab_peak_span(c).ok_or_else(|| {
                Error::Invalid(format!(
                    "lab curve '{name}' gives no diameter inside its range between 200 and 3500 nm"
                ))
            })?;
            let mut prev = lab_diameter(c, lo);
            let mut l = lo;
            while l < hi {
                l = (l + 0.5).min(hi);
                let d = lab_diameter(c, l);
                if d < prev - 1e-9 {
                    return invalid(format!(
                        "lab curve '{name}' is not monotonic: diameter falls near {l:.0} nm"
                    ));
                }
                prev = d;
            }
        }
        for (name, e) in &self.lab_extinction {
            if !(e.prefactor > 0.0) || !e.exponent.is_finite() {
                return invalid(format!(
                    "lab extinction '{name}' must have a positive prefactor (got {})",
                    e.prefactor
                ));
            }
        }
        for (core, curve) in &self.curves {
            if let Some(name) = curve.strip_prefix("lab:") {
                match self.lab_curves.get(name) {
                    Some(c) if &c.material == core => continue,
                    Some(c) => return invalid(format!("lab curve '{name}' is for {}, not {core}", c.material)),
                    None => return invalid(format!("no lab curve '{name}'")),
                }
            }
            let c = sizing::Curve::parse(curve)?;
            if c != sizing::Curve::Brus && !c.materials().contains(&core.as_str()) {
                return invalid(format!(
                    "curve {curve} is not for {core} (curves for {core}: {})",
                    sizing::curves_for(core).join(", ")
                ));
            }
            if c == sizing::Curve::Brus && !self.bulk.contains_key(core) {
                return invalid(format!("brus needs bulk parameters for {core}"));
            }
            sizing::check_monotonic(curve, core, self.bulk.get(core))?;
        }
        for (core, model) in &self.extinction {
            if let Some(name) = model.strip_prefix("lab:") {
                match self.lab_extinction.get(name) {
                    Some(e) if &e.material == core => continue,
                    Some(e) => return invalid(format!("lab extinction '{name}' is for {}, not {core}", e.material)),
                    None => return invalid(format!("no lab extinction '{name}'")),
                }
            }
            extinction::model_for(core, model)?;
        }
        for (core, b) in &self.bulk {
            if !(b.eg_ev > 0.0 && b.me > 0.0 && b.mh > 0.0 && b.eps_r >= 1.0) {
                return invalid(format!(
                    "bulk parameters for {core} must be positive (eps_r at least 1)"
                ));
            }
        }
        if let Some(r) = &self.qy_reference {
            qy::check_ref_qy(r.qy)?;
            if !(r.integral > 0.0) || !(r.abs_at_excitation > 0.0) || !(r.excitation_nm > 0.0) {
                return invalid("the QY reference needs a positive integral, absorbance and excitation wavelength");
            }
            if self.refractive_index(&r.solvent).is_none() {
                return invalid(format!("no refractive index for the reference solvent '{}'", r.solvent));
            }
        }
        if let Some(d) = &self.detector_correction {
            if d.nm.len() != d.factor.len() || d.nm.len() < 2 {
                return invalid(
                    "a detector correction needs matching wavelength and factor lists of two or more points",
                );
            }
            if d.nm.windows(2).any(|w| w[1] <= w[0]) {
                return invalid("detector correction wavelengths must increase");
            }
            if d.factor.iter().any(|f| !(*f > 0.0) || !f.is_finite()) {
                return invalid("detector correction factors must be positive");
            }
        }
        if let Some(p) = self.plausible_dispersion_pct
            && !(p.is_finite() && p > 0.0 && p <= 100.0)
        {
            return invalid(format!(
                "the plausible size dispersion must be above 0 and at most 100 %, got {p}"
            ));
        }
        for (core, h) in &self.homogeneous_hwhm_mev {
            if !(h.is_finite() && *h > 0.0 && *h < 500.0) {
                return invalid(format!(
                    "the homogeneous HWHM for {core} must be above 0 and below 500 meV, got {h}"
                ));
            }
        }
        for p in &self.qy_reference_dilutions {
            if !(p.abs_at_excitation > 0.0
                && p.abs_at_excitation.is_finite()
                && p.integral >= 0.0
                && p.integral.is_finite())
            {
                return invalid(
                    "each reference dilution needs an absorbance above zero and an integral of zero or more",
                );
            }
        }
        for (s, n) in &self.solvent_index {
            if !(1.0..=3.0).contains(n) {
                return invalid(format!("refractive index {n} for {s} is not plausible (1 to 3)"));
            }
        }
        let a = &self.analysis;
        if !(a.smoothing_nm > 0.0 && a.smoothing_nm <= 100.0 && (2..=6).contains(&a.smoothing_order)) {
            return invalid("smoothing must be 0-100 nm wide with a polynomial order of 2 to 6");
        }
        if !(a.saturation_abs > 0.0) {
            return invalid("the saturation absorbance must be above zero");
        }
        Ok(())
    }
}
