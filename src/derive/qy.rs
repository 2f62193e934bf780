//! Relative photoluminescence quantum yield, and the inputs it needs as the PL cuvette saw them.
//!
//! Single point (Brouwer, Pure Appl. Chem. 83, 2213 (2011); Würth, Grabolle, Pauli, Spieles &
//! Resch-Genger, Nat. Protoc. 8, 1535 (2013)):
//!   Φ = Φref · (F / Fref) · (fref / f) · (n² / nref²),  f = 1 - 10^(-A).
//! Gradient method (Williams, Winfield & Miller, Analyst 108, 1067 (1983)): the slopes of
//! integrated PL against absorbance over several dilutions replace F/A; we ask for at least
//! [`MIN_GRADIENT_DILUTIONS`] and warn below.
//!
//! The absorbance that counts is the light the crystals absorb in the PL cuvette: scattered
//! light is not absorbed, so the fitted scattering background at the excitation wavelength is
//! taken off the measured absorbance ([`excitation_absorbance`]), and the value is scaled from
//! the absorbance cuvette to the PL cuvette's own path and dilution. Its uncertainty comes from
//! the absorbance analysis's noise and is carried into the quantum yield.
//!
//! Inner-filter effects: keeping absorbance at the excitation wavelength below about 0.1 avoids
//! them on the excitation side (common practice, no source); on the emission side the sample
//! re-absorbs its own PL where it absorbs at the PL band, and above
//! [`INNER_FILTER_EMISSION_ABS`] there (common practice) the integral is low. Both come back
//! as warnings, never as refusals.

use crate::error::{Result, invalid};
use serde::Serialize;

/// Above this absorbance at the excitation wavelength, inner-filter effects matter
/// (common practice).
pub const INNER_FILTER_ABS: f64 = 0.1;

/// Above this absorbance at the PL band (in the PL cuvette), re-absorption of the emission
/// lowers the integral noticeably (common practice: a few per cent of the light re-absorbed).
pub const INNER_FILTER_EMISSION_ABS: f64 = 0.05;

/// The gradient method needs a line through several dilutions; below four the slope is poorly
/// constrained (common practice; Würth et al. 2013 use five).
pub const MIN_GRADIENT_DILUTIONS: usize = 4;

/// The PL cuvette's path when the PL spectrum does not record one: the standard 1 cm
/// fluorescence cuvette (never the absorbance cuvette's path).
pub const DEFAULT_PL_PATH_CM: f64 = 1.0;

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct QyResult {
    pub qy: f64,
    /// One standard deviation of `qy` from the absorbance uncertainties alone (integrals,
    /// reference value and indices taken as exact), when known.
    pub qy_sd: Option<f64>,
    pub method: String,
    pub warnings: Vec<String>,
}

pub fn absorptance(a: f64) -> f64 {
    1.0 - 10f64.powf(-a)
}

/// d ln f / dA: how much a relative error in the absorptance follows an error in absorbance.
fn dlnf_da(a: f64) -> f64 {
    std::f64::consts::LN_10 * 10f64.powf(-a) / absorptance(a)
}

/// The absorbance at the excitation wavelength as the PL measurement saw it.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ExcitationAbsorbance {
    pub excitation_nm: f64,
    /// Measured, in the absorbance cuvette.
    pub measured: f64,
    /// The fitted scattering background at the excitation wavelength (absorbance cuvette).
    pub background: f64,
    /// Measured minus background, in the absorbance cuvette.
    pub corrected: f64,
    /// The corrected value scaled to the PL cuvette's path and dilution: what the QY uses.
    pub in_pl_cuvette: f64,
    /// One standard deviation of `in_pl_cuvette`, from the absorbance analysis's noise.
    pub sd: f64,
    pub pl_path_cm: f64,
    /// False when the PL spectrum recorded no path and [`DEFAULT_PL_PATH_CM`] was taken.
    pub pl_path_recorded: bool,
    pub pl_dilution: f64,
    pub warnings: Vec<String>,
}

/// Where the absorbance was measured and where the PL was.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cuvettes {
    pub abs_path_cm: f64,
    pub abs_dilution: f64,
    /// The PL spectrum's own path, if recorded.
    pub pl_path_cm: Option<f64>,
    /// The PL spectrum's own dilution, if recorded; else the absorbance's (the same solution).
    pub pl_dilution: Option<f64>,
}

impl Cuvettes {
    /// Absorbance in the absorbance cuvette to absorbance in the PL cuvette: A scales with path
    /// and with concentration, and a dilution factor D means stock / D in the cuvette.
    pub fn scale(&self) -> f64 {
        let pl_path = self.pl_path_cm.unwrap_or(DEFAULT_PL_PATH_CM);
        let pl_dil = self.pl_dilution.unwrap_or(self.abs_dilution);
        (pl_path / self.abs_path_cm) * (self.abs_dilution / pl_dil)
    }
}

/// The scatter-corrected absorbance at the excitation wavelength, in the PL cuvette.
/// `measured` is the absorbance read at λex, `background` the fitted scattering background
/// there, `noise_sd` the point noise of the absorbance analysis.
pub fn excitation_absorbance(
    excitation_nm: f64,
    measured: f64,
    background: f64,
    noise_sd: f64,
    cuvettes: Cuvettes,
) -> Result<ExcitationAbsorbance> {
    for (name, v) in [
        ("absorbance at the excitation wavelength", measured),
        ("scattering background", background),
    ] {
        if !v.is_finite() {
            return invalid(format!("{name} is not a number"));
        }
    }
    if !(cuvettes.abs_path_cm > 0.0) || !(cuvettes.abs_dilution > 0.0) {
        return invalid("the absorbance cuvette needs a positive path and dilution");
    }
    if let Some(p) = cuvettes.pl_path_cm
        && !(p > 0.0 && p.is_finite())
    {
        return invalid(format!("the PL cuvette's path must be above zero, got {p} cm"));
    }
    if let Some(d) = cuvettes.pl_dilution
        && !(d >= 1.0 && d.is_finite())
    {
        return invalid(format!("the PL cuvette's dilution factor must be 1 or more, got {d}"));
    }
    let mut warnings = Vec::new();
    let corrected = measured - background;
    if background.abs() > 0.2 * measured.abs() && measured > 0.0 {
        warnings.push(format!(
            "scattering is {:.0} % of the absorbance at {excitation_nm} nm: the absorbed fraction rests on the background fit",
            100.0 * background / measured
        ));
    }
    let scale = cuvettes.scale();
    let pl_path_recorded = cuvettes.pl_path_cm.is_some();
    if !pl_path_recorded && (cuvettes.abs_path_cm - DEFAULT_PL_PATH_CM).abs() > 1e-9 {
        warnings.push(format!(
            "the PL cuvette's path is not recorded: {DEFAULT_PL_PATH_CM} cm taken, not the absorbance cuvette's {} cm",
            cuvettes.abs_path_cm
        ));
    }
    Ok(ExcitationAbsorbance {
        excitation_nm,
        measured,
        background,
        corrected,
        in_pl_cuvette: corrected * scale,
        sd: noise_sd.abs() * scale,
        pl_path_cm: cuvettes.pl_path_cm.unwrap_or(DEFAULT_PL_PATH_CM),
        pl_path_recorded,
        pl_dilution: cuvettes.pl_dilution.unwrap_or(cuvettes.abs_dilution),
        warnings,
    })
}

/// The emission-side inner-filter warning, from the sample's absorbance at its PL band in the
/// PL cuvette.
pub fn emission_inner_filter(abs_at_pl_band: f64, pl_peak_nm: f64) -> Option<String> {
    (abs_at_pl_band > INNER_FILTER_EMISSION_ABS).then(|| {
        format!(
            "absorbance {abs_at_pl_band:.3} at the PL band ({pl_peak_nm:.0} nm) is above {INNER_FILTER_EMISSION_ABS}: the sample re-absorbs its emission (inner filter, emission side); dilute"
        )
    })
}

/// The warning when the PL was integrated without a detector correction.
pub const NO_DETECTOR_CORRECTION: &str = "no detector correction applied: the PL integral is in raw detector counts, so a QY against a reference emitting elsewhere is biased by the detector's spectral response";

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
        qy_sd: None,
        method: "relative, single point (Brouwer 2011)".into(),
        warnings,
    })
}

/// The single-point QY with the sample absorbance's uncertainty carried through:
/// σΦ/Φ = |d ln f / dA| σA.
#[allow(clippy::too_many_arguments)]
pub fn single_point_with_sd(
    sample_integral: f64,
    sample_abs: f64,
    sample_abs_sd: f64,
    ref_integral: f64,
    ref_abs: f64,
    ref_qy: f64,
    n_sample: f64,
    n_ref: f64,
) -> Result<QyResult> {
    let mut r = single_point(
        sample_integral,
        sample_abs,
        ref_integral,
        ref_abs,
        ref_qy,
        n_sample,
        n_ref,
    )?;
    if sample_abs_sd.is_finite() && sample_abs_sd >= 0.0 {
        let rel = dlnf_da(sample_abs) * sample_abs_sd;
        r.qy_sd = Some(r.qy * rel);
        if rel > 0.1 {
            r.warnings.push(format!(
                "the absorbance at excitation is known to ±{sample_abs_sd:.4} only: QY uncertain by {:.0} %",
                100.0 * rel
            ));
        }
    }
    Ok(r)
}

/// A straight-line fit: slope, intercept, the slope's standard error (None for two points)
/// and R².
#[derive(Debug, Clone, Copy, Serialize, PartialEq)]
pub struct LineFit {
    pub slope: f64,
    pub intercept: f64,
    pub slope_se: Option<f64>,
    pub r_squared: f64,
}

/// Least-squares slope of y on x, with its intercept.
pub fn linear_fit(points: &[(f64, f64)]) -> Result<(f64, f64)> {
    let f = line_fit(points)?;
    Ok((f.slope, f.intercept))
}

/// Least-squares line of y on x, with the slope's standard error and R².
pub fn line_fit(points: &[(f64, f64)]) -> Result<LineFit> {
    if points.len() < 2 {
        return invalid("the gradient method needs at least two dilutions");
    }
    if points.iter().any(|p| !p.0.is_finite() || !p.1.is_finite()) {
        return invalid("a dilution's absorbance or integral is not a number");
    }
    let n = points.len() as f64;
    let mx = points.iter().map(|p| p.0).sum::<f64>() / n;
    let my = points.iter().map(|p| p.1).sum::<f64>() / n;
    let sxx: f64 = points.iter().map(|p| (p.0 - mx).powi(2)).sum();
    let sxy: f64 = points.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    let syy: f64 = points.iter().map(|p| (p.1 - my).powi(2)).sum();
    if !(sxx > 1e-300 * n) {
        return invalid("the dilutions all have the same absorbance");
    }
    let slope = sxy / sxx;
    let intercept = my - slope * mx;
    let ssr: f64 = points.iter().map(|p| (p.1 - intercept - slope * p.0).powi(2)).sum();
    let slope_se = (points.len() > 2).then(|| (ssr / (n - 2.0) / sxx).sqrt());
    let r_squared = if syy > 0.0 { 1.0 - ssr / syy } else { 1.0 };
    Ok(LineFit {
        slope,
        intercept,
        slope_se,
        r_squared,
    })
}

/// Below this R² the dilutions do not lie on a line (common practice): inner filter,
/// aggregation or a bad point.
pub const MIN_GRADIENT_R2: f64 = 0.98;

fn series_warnings(name: &str, points: &[(f64, f64)], fit: &LineFit, warnings: &mut Vec<String>) {
    if points.len() < MIN_GRADIENT_DILUTIONS {
        warnings.push(format!(
            "the {name} has {} dilutions: the gradient method wants at least {MIN_GRADIENT_DILUTIONS}",
            points.len()
        ));
    }
    if fit.r_squared < MIN_GRADIENT_R2 {
        warnings.push(format!(
            "the {name}'s integrals are not linear in absorbance (R² {:.3}): inner filter, aggregation or a bad dilution",
            fit.r_squared
        ));
    }
    let top = points.iter().map(|p| p.1).fold(0.0, f64::max);
    if top > 0.0 && fit.intercept.abs() > 0.1 * top {
        warnings.push(format!(
            "the {name}'s line misses the origin by {:.0} % of its largest integral: check the blank and baseline",
            100.0 * fit.intercept.abs() / top
        ));
    }
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
    let fs = line_fit(sample)?;
    let fr = line_fit(reference)?;
    if !(fr.slope > 0.0) {
        return invalid("the reference's PL does not rise with absorbance");
    }
    let mut warnings = Vec::new();
    series_warnings("sample series", sample, &fs, &mut warnings);
    series_warnings("reference series", reference, &fr, &mut warnings);
    if sample.iter().chain(reference).any(|p| p.0 > INNER_FILTER_ABS) {
        warnings.push(format!(
            "a dilution has absorbance above {INNER_FILTER_ABS} at excitation: inner-filter effects likely"
        ));
    }
    let qy = ref_qy * (fs.slope / fr.slope) * (n_sample * n_sample) / (n_ref * n_ref);
    if qy > 1.0 {
        warnings.push(format!(
            "quantum yield {qy:.3} is above 1: check the reference and the spectral correction"
        ));
    }
    let qy_sd = match (fs.slope_se, fr.slope_se) {
        (Some(a), Some(b)) if fs.slope != 0.0 => {
            Some(qy.abs() * ((a / fs.slope).powi(2) + (b / fr.slope).powi(2)).sqrt())
        }
        _ => None,
    };
    Ok(QyResult {
        qy,
        qy_sd,
        method: "relative, gradient (Williams, Winfield & Miller 1983)".into(),
        warnings,
    })
}

/// Gradient method for a sample series against a reference known by one point only: the
/// reference's line is taken through the origin and that point, with a warning.
pub fn gradient_single_reference(
    sample: &[(f64, f64)],
    ref_abs: f64,
    ref_integral: f64,
    ref_qy: f64,
    n_sample: f64,
    n_ref: f64,
) -> Result<QyResult> {
    if !(ref_abs > 0.0) || !(ref_integral > 0.0) {
        return invalid("the reference point needs a positive absorbance and integral");
    }
    let reference = [(0.0, 0.0), (ref_abs, ref_integral)];
    let mut r = gradient(sample, &reference, ref_qy, n_sample, n_ref)?;
    r.warnings.retain(|w| !w.starts_with("the reference series has"));
    r.warnings.push(
        "the reference is one point: its line is taken through the origin (record its dilution series for the full gradient method)"
            .into(),
    );
    Ok(r)
}

pub fn check_ref_qy(q: f64) -> Result<()> {
    if !(q > 0.0 && q <= 1.0) {
        return invalid(format!(
            "a reference quantum yield must be a fraction above 0 and at most 1, got {q}"
        ));
    }
    Ok(())
}
