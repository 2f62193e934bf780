//! Relative photoluminescence quantum yield.
//!
//! Single point (Brouwer, Pure Appl. Chem. 83, 2213 (2011); Würth, Grabolle, Pauli, Spieles &
//! Resch-Genger, Nat. Protoc. 8, 1535 (2013)):
//!   Φ = Φref · (F / Fref) · (fref / f) · (n² / nref²),  f = 1 - 10^(-A).
//! Gradient method (Williams, Winfield & Miller, Analyst 108, 1067 (1983)): the slopes of
//! integrated PL against absorbance over several dilutions replace F/A.
//! Keeping absorbance at the excitation wavelength below about 0.1 avoids inner-filter effects
//! (common practice, no source); above it the value comes with a warning.

use crate::error::{Result, invalid};
use serde::Serialize;

/// Above this absorbance at the excitation wavelength, inner-filter effects matter
/// (common practice).
pub const INNER_FILTER_ABS: f64 = 0.1;

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct QyResult {
    pub qy: f64,
    pub method: String,
    pub warnings: Vec<String>,
}

pub fn absorptance(a: f64) -> f64 {
    1.0 - 10f64.powf(-a)
}

#[allow(clippy::too_many_arguments)]
pub fn single_point(
    sample_integral: f64,
    sample_abs: f64,
    ref_integral: f64,
    ref_abs: f64,
    ref_qy: f64,
    n_sample: f64,
    n_ref: f64,
) -> Result<QyResult> {
    check_ref_qy(ref_qy)?;
    for (name, v) in [("sample absorbance", sample_abs), ("reference absorbance", ref_abs)] {
        if !(v > 0.0) || !v.is_finite() {
            return invalid(format!(
                "{name} at the excitation wavelength must be above zero, got {v}"
            ));
        }
    }
    if !(ref_integral > 0.0) {
        return invalid(format!("reference PL integral must be above zero, got {ref_integral}"));
    }
    if !sample_integral.is_finite() || sample_integral < 0.0 {
        return invalid(format!(
            "sample PL integral must be zero or more, got {sample_integral}"
        ));
    }
    let mut warnings = Vec::new();
    for (name, v) in [("sample", sample_abs), ("reference", ref_abs)] {
        if v > INNER_FILTER_ABS {
            warnings.push(format!(
                "{name} absorbance {v:.3} at excitation is above {INNER_FILTER_ABS}: inner-filter effects likely; dilute"
            ));
        }
    }
    let qy = ref_qy
        * (sample_integral / ref_integral)
        * (absorptance(ref_abs) / absorptance(sample_abs))
        * (n_sample * n_sample)
        / (n_ref * n_ref);
    if qy > 1.0 {
        warnings.push(format!(
            "quantum yield {qy:.3} is above 1: check the reference and the spectral correction"
        ));
    }
    Ok(QyResult {
        qy,
        method: "relative, single point (Brouwer 2011)".into(),
        warnings,
    })
}

/// Least-squares slope of y on x, with its intercept.
pub fn linear_fit(points: &[(f64, f64)]) -> Result<(f64, f64)> {
    if points.len() < 2 {
        return invalid("the gradient method needs at least two dilutions");
    }
    let n = points.len() as f64;
    let sx: f64 = points.iter().map(|p| p.0).sum();
    let sy: f64 = points.iter().map(|p| p.1).sum();
    let sxx: f64 = points.iter().map(|p| p.0 * p.0).sum();
    let sxy: f64 = points.iter().map(|p| p.0 * p.1).sum();
    let det = n * sxx - sx * sx;
    if det.abs() < 1e-300 {
        return invalid("the dilutions all have the same absorbance");
    }
    let slope = (n * sxy - sx * sy) / det;
    Ok((slope, (sy - slope * sx) / n))
}

/// Gradient method: `sample` and `reference` are (absorbance at excitation, integrated PL).
pub fn gradient(
    sample: &[(f64, f64)],
    reference: &[(f64, f64)],
    ref_qy: f64,
    n_sample: f64,
    n_ref: f64,
) -> Result<QyResult> {
    check_ref_qy(ref_qy)?;
    let (gs, _) = linear_fit(sample)?;
    let (gr, _) = linear_fit(reference)?;
    if !(gr > 0.0) {
        return invalid("the reference's PL does not rise with absorbance");
    }
    let mut warnings = Vec::new();
    if sample.iter().chain(reference).any(|p| p.0 > INNER_FILTER_ABS) {
        warnings.push(format!(
            "a dilution has absorbance above {INNER_FILTER_ABS} at excitation: inner-filter effects likely"
        ));
    }
    Ok(QyResult {
        qy: ref_qy * (gs / gr) * (n_sample * n_sample) / (n_ref * n_ref),
        method: "relative, gradient (Williams, Winfield & Miller 1983)".into(),
        warnings,
    })
}

pub fn check_ref_qy(q: f64) -> Result<()> {
    if !(q > 0.0 && q <= 1.0) {
        return invalid(format!(
            "a reference quantum yield must be a fraction above 0 and at most 1, got {q}"
        ));
    }
    Ok(())
}
