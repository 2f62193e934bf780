//! Spectrum analysis as pure functions on a [`Trace`] (nm ascending). Nothing here does I/O or
//! changes its input. Doubtful results (low signal, a peak at the edge of the range, saturated
//! absorbance) come back with warnings rather than as confident numbers.
//!
//! The first excitonic peak is the longest-wavelength excitonic feature: the local maximum of
//! the smoothed absorbance where the peak is resolved, else the minimum of the second
//! derivative (a shoulder; common practice). Smoothing and derivatives are Savitzky-Golay.
//!
//! Cost is linear in the number of points. The smoothing window is set in nm, so on a very
//! fine grid it would span thousands of points (and the wide second-derivative windows five
//! times that). Where the window would span more than [`MAX_HALF_WINDOW`] points, neighbouring
//! points are first averaged in equal runs onto a coarser grid ([`bounded_grid`]): the window
//! in nm stays as set, its length in points stays bounded. Ordinary scans (steps of about
//! 0.12 nm or more at the default 9 nm) are analysed on their own grid, unchanged. On a
//! binned grid `noise` is the noise of the averaged points.

use super::band_edge::{self, BandEdge, BandEdgeHint};
use super::{HC_EV_NM, Trace};
use crate::error::{Result, invalid};
use serde::{Deserialize, Serialize};

pub use super::pl::{PlResult, analyze_pl};

/// The analysis method's version: it changes whenever the same spectrum under the same
/// settings would give other numbers (a new band-edge search or fit, a new PL baseline). It
/// is part of the stage-one inputs hash, so values an earlier cuvette stored read as out of
/// date, and `recompute` derives them again, instead of silently standing beside numbers the
/// current method would not give.
pub const METHOD_VERSION: &str = "2026-12: band edge fitted in energy on quarter-σ bins";

/// Settings that shape the analysis; part of the calibration, so a change is versioned.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct AnalysisSettings {
    /// Width of the Savitzky-Golay window in nm (rounded to an odd number of points).
    pub smoothing_nm: f64,
    /// Polynomial order of the Savitzky-Golay fit.
    pub smoothing_order: usize,
    /// Absorbance above which a detector is taken to be saturated (common practice: about 2).
    pub saturation_abs: f64,
}

impl Default for AnalysisSettings {
    fn default() -> Self {
        AnalysisSettings {
            smoothing_nm: 9.0,
            smoothing_order: 3,
            saturation_abs: 2.0,
        }
    }
}

/// An evenly spaced copy of a trace (linear interpolation where the file was not even).
#[derive(Debug, Clone)]
pub struct Uniform {
    pub start_nm: f64,
    pub step_nm: f64,
    pub y: Vec<f64>,
}

impl Uniform {
    pub fn nm(&self, i: f64) -> f64 {
        self.start_nm + i * self.step_nm
    }
}

pub fn uniform(t: &Trace) -> Result<Uniform> {
    let n = t.nm.len();
    if n < 2 || n != t.y.len() {
        return invalid("a trace needs at least two points, each with one value");
    }
    let span = t.nm[n - 1] - t.nm[0];
    let step = span / (n - 1) as f64;
    let even =
        t.nm.windows(2)
            .all(|w| ((w[1] - w[0]) - step).abs() <= 1e-6 * step.abs().max(1e-12) + 1e-9);
    if even {
        return Ok(Uniform {
            start_nm: t.nm[0],
            step_nm: step,
            y: t.y.clone(),
        });
    }
    let mut steps: Vec<f64> = t.nm.windows(2).map(|w| w[1] - w[0]).collect();
    steps.sort_by(f64::total_cmp);
    let step = steps[steps.len() / 2].max(span / 20_000.0);
    let m = (span / step).floor() as usize + 1;
    let y = (0..m)
        .map(|i| interpolate(t, t.nm[0] + i as f64 * step).unwrap_or(0.0))
        .collect();
    Ok(Uniform {
        start_nm: t.nm[0],
        step_nm: step,
        y,
    })
}

/// The value at `nm` by linear interpolation, or None outside the measured range.
pub fn interpolate(t: &Trace, nm: f64) -> Option<f64> {
    let n = t.nm.len();
    if n == 0 || !nm.is_finite() || nm < t.nm[0] || nm > t.nm[n - 1] {
        return None;
    }
    let i = t.nm.partition_point(|&x| x < nm);
    if i == 0 {
        return Some(t.y[0]);
    }
    let (x0, x1) = (t.nm[i - 1], t.nm[i]);
    let (y0, y1) = (t.y[i - 1], t.y[i]);
    Some(y0 + (y1 - y0) * (nm - x0) / (x1 - x0))
}

/// The most points half a smoothing window may span before the grid is binned.
pub const MAX_HALF_WINDOW: usize = 40;

/// A grid on which the smoothing window spans at most [`MAX_HALF_WINDOW`] points each side:
/// the trace itself when it already does, else averages of `f` neighbouring points, placed at
/// the centre of their run. Binning stops short of leaving fewer than `12 * MAX_HALF_WINDOW`
/// points, so an absurdly wide window on a short scan still has data to smooth (its length is
/// then capped by the point count, as on any short scan).
pub fn bounded_grid(u: Uniform, s: &AnalysisSettings) -> Uniform {
    let n = u.y.len();
    let want_half = s.smoothing_nm / u.step_nm / 2.0;
    if !(want_half > MAX_HALF_WINDOW as f64) {
        return u;
    }
    let by_window = (want_half / MAX_HALF_WINDOW as f64).ceil();
    let by_length = (n / (12 * MAX_HALF_WINDOW)) as f64;
    let f = by_window.min(by_length) as usize;
    if f <= 1 {
        return u;
    }
    let y: Vec<f64> = u.y.chunks_exact(f).map(|c| c.iter().sum::<f64>() / f as f64).collect();
    Uniform {
        start_nm: u.start_nm + 0.5 * (f - 1) as f64 * u.step_nm,
        step_nm: f as f64 * u.step_nm,
        y,
    }
}

pub(crate) fn half_window(u: &Uniform, s: &AnalysisSettings) -> usize {
    let want = (s.smoothing_nm / u.step_nm / 2.0).round() as usize;
    let cap = (u.y.len().saturating_sub(1) / 6).max(2);
    want.clamp((s.smoothing_order / 2 + 1).max(3).min(cap.max(2)), cap.max(2))
}

/// The scattering background model fitted red of the first exciton.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Background {
    /// "c + k/λ⁴ (Rayleigh-like scattering) fitted over the transparent red side", or "none".
    pub model: String,
    pub offset: f64,
    pub k_nm4: f64,
    pub fit_from_nm: Option<f64>,
}

impl Background {
    fn none() -> Background {
        Background {
            model: "none".into(),
            offset: 0.0,
            k_nm4: 0.0,
            fit_from_nm: None,
        }
    }
    pub fn at(&self, nm: f64) -> f64 {
        self.offset + self.k_nm4 / nm.powi(4)
    }
}

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct AbsResult {
    pub first_exciton_nm: Option<f64>,
    /// Absorbance at the first exciton, scattering background removed.
    pub first_exciton_abs: Option<f64>,
    /// Half width at half maximum on the low-energy (red) side.
    pub hwhm_nm: Option<f64>,
    pub hwhm_ev: Option<f64>,
    pub shoulder: bool,
    pub max_abs: f64,
    pub noise: f64,
    pub background: Background,
    /// The band-edge model: method, fit quality, uncertainties, every fitted transition.
    pub band_edge: Option<BandEdge>,
    pub warnings: Vec<String>,
}

/// Finds the first excitonic transition of an absorbance (or PL excitation) spectrum, knowing
/// nothing of the material. See [`analyze_absorbance_with`].
pub fn analyze_absorbance(t: &Trace, set: &AnalysisSettings) -> Result<AbsResult> {
    analyze_absorbance_with(t, set, &BandEdgeHint::default())
}

/// Finds and fits the first excitonic transition (see [`super::band_edge`]); where the
/// material is known, `hint` keeps the choice inside the region its sizing curve covers and
/// never redder than its bulk band gap.
pub fn analyze_absorbance_with(t: &Trace, set: &AnalysisSettings, hint: &BandEdgeHint) -> Result<AbsResult> {
    if t.nm.len() != t.y.len() || t.nm.len() < super::MIN_POINTS {
        return invalid(format!(
            "an absorbance trace needs {} or more points with one value each (got {} and {})",
            super::MIN_POINTS,
            t.nm.len(),
            t.y.len()
        ));
    }
    let u = uniform(t)?;
    let n = u.y.len();
    let max_abs = t.y.iter().copied().fold(f64::MIN, f64::max);
    let found = band_edge::first_transition(t, hint, set.saturation_abs);
    let noise = found.noise;
    let mut warnings = found.warnings;
    let Some(edge) = found.edge else {
        warnings.push("no excitonic feature found".into());
        if max_abs > set.saturation_abs {
            warnings.push(format!(
                "absorbance reaches {max_abs:.2}, above {:.1}: saturated",
                set.saturation_abs
            ));
        }
        return Ok(AbsResult {
            first_exciton_nm: None,
            first_exciton_abs: None,
            hwhm_nm: None,
            hwhm_ev: None,
            shoulder: false,
            max_abs,
            noise,
            background: Background::none(),
            band_edge: None,
            warnings,
        });
    };
    let peak_ev = edge.centre_ev;
    let peak_nm = HC_EV_NM / peak_ev;
    let hwhm_ev = edge.hwhm_ev;
    let hwhm_nm = (peak_ev > hwhm_ev).then(|| HC_EV_NM / (peak_ev - hwhm_ev) - peak_nm);
    let mut background = Background::none();
    // Scattering: fit c + k/λ⁴ over the transparent red side, if the scan reaches it.
    if let Some(h) = hwhm_nm {
        let from = peak_nm + 4.0 * h;
        let idx: Vec<usize> = (0..n).filter(|&i| u.nm(i as f64) >= from).collect();
        if idx.len() >= 10.max(n / 20) {
            if let Some(bg) = fit_scatter(&u, &idx, from) {
                background = bg;
            }
        } else if u.y[n - 1] > 0.1 * edge.composite_abs {
            warnings.push("the scan ends before the sample is transparent: scattering background not removed".into());
        }
    }
    let peak_abs = edge.composite_abs - background.at(peak_nm);
    let (lo_nm, hi_nm) = (u.nm(0.0), u.nm((n - 1) as f64));
    let edge_margin = 1.5 * hwhm_nm.unwrap_or(5.0);
    if peak_nm - lo_nm < edge_margin || hi_nm - peak_nm < edge_margin {
        warnings.push(format!(
            "first exciton at {peak_nm:.1} nm is at the edge of the measured range"
        ));
    }
    let raw_peak = edge.composite_abs;
    if raw_peak > set.saturation_abs {
        warnings.push(format!(
            "absorbance {raw_peak:.2} at the first exciton is above {:.1}: likely saturated; dilute and remeasure",
            set.saturation_abs
        ));
    } else if max_abs > set.saturation_abs {
        warnings.push(format!(
            "absorbance reaches {max_abs:.2} in the UV, above {:.1}: values there are unreliable",
            set.saturation_abs
        ));
    }
    if raw_peak < 0.02 || edge.height < 20.0 * noise {
        warnings.push(format!(
            "low signal: absorbance {raw_peak:.4} at the first exciton, noise {noise:.4}"
        ));
    }
    if edge.shoulder {
        warnings
            .push("first exciton is a shoulder (no maximum of its own); position and width are less certain".into());
    }
    warnings.extend(edge.warnings.iter().cloned());
    if hwhm_nm.is_none() {
        warnings
            .push("the first transition is too wide to give a half width on the red side: HWHM not measured".into());
    }
    Ok(AbsResult {
        first_exciton_nm: Some(peak_nm),
        first_exciton_abs: Some(peak_abs),
        hwhm_nm,
        hwhm_ev: hwhm_nm.map(|_| hwhm_ev),
        shoulder: edge.shoulder,
        max_abs,
        noise,
        background,
        band_edge: Some(edge),
        warnings,
    })
}

fn fit_scatter(u: &Uniform, idx: &[usize], from: f64) -> Option<Background> {
    // Linear least squares y = c + k w with w = 1/λ⁴.
    let m = idx.len() as f64;
    let (mut sw, mut sy, mut sww, mut swy) = (0.0, 0.0, 0.0, 0.0);
    for &i in idx {
        let w = 1.0 / u.nm(i as f64).powi(4);
        let y = u.y[i];
        sw += w;
        sy += y;
        sww += w * w;
        swy += w * y;
    }
    let det = m * sww - sw * sw;
    let (c, k) = if det.abs() > 1e-300 {
        let k = (m * swy - sw * sy) / det;
        ((sy - k * sw) / m, k)
    } else {
        (sy / m, 0.0)
    };
    let (c, k) = if k < 0.0 { (sy / m, 0.0) } else { (c, k) };
    if !c.is_finite() || !k.is_finite() {
        return None;
    }
    Some(Background {
        model: "c + k/λ⁴ (Rayleigh-like scattering) fitted over the transparent red side".into(),
        offset: c,
        k_nm4: k,
        fit_from_nm: Some(from),
    })
}

/// Stokes shift between the first exciton and the PL peak: (nm, meV).
pub fn stokes_shift(abs_nm: f64, pl_nm: f64) -> (f64, f64) {
    (pl_nm - abs_nm, 1000.0 * (HC_EV_NM / abs_nm - HC_EV_NM / pl_nm))
}

/// Multiplies a PL trace by a detector correction curve (interpolated; 1 outside its range
/// is not assumed: points outside it are refused).
pub fn apply_correction(t: &Trace, curve: &Trace) -> Result<Trace> {
    let mut y = Vec::with_capacity(t.y.len());
    for (nm, v) in t.nm.iter().zip(&t.y) {
        match interpolate(curve, *nm) {
            Some(f) => y.push(v * f),
            None => {
                return invalid(format!(
                    "detector correction covers {:.0}-{:.0} nm but the PL spectrum reaches {nm:.0} nm",
                    curve.nm[0],
                    curve.nm[curve.nm.len() - 1]
                ));
            }
        }
    }
    Ok(Trace { nm: t.nm.clone(), y })
}
