//! Photoluminescence analysis as pure functions on a [`Trace`] (nm ascending): peak, width and
//! integrals over wavelength and energy, baseline removed. Nothing here does I/O or changes its
//! input; doubtful results come back with warnings.

use super::analysis::{
    AnalysisSettings, Uniform, bounded_grid, half_window, noise_of, uniform, value_at, zero_crossing,
};
use super::savgol;
use super::{HC_EV_NM, Trace};
use crate::error::{Result, invalid};
use serde::Serialize;

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct PlResult {
    pub pl_peak_nm: Option<f64>,
    pub pl_peak_ev: Option<f64>,
    pub pl_fwhm_nm: Option<f64>,
    pub pl_fwhm_mev: Option<f64>,
    /// ∫ I dλ, baseline subtracted, in the file's intensity units times nm.
    pub pl_integral: f64,
    /// ∫ I(E) dE with I(E) = I(λ) λ²/hc: equal to `pl_integral` when the Jacobian is right.
    pub pl_integral_energy: f64,
    pub baseline: f64,
    pub noise: f64,
    pub warnings: Vec<String>,
}

/// Peak, width and integrals of a photoluminescence spectrum.
pub fn analyze_pl(t: &Trace, set: &AnalysisSettings) -> Result<PlResult> {
    let n = t.nm.len();
    if n != t.y.len() || n < super::MIN_POINTS {
        return invalid(format!(
            "a PL trace needs {} or more points with one value each (got {n} and {})",
            super::MIN_POINTS,
            t.y.len()
        ));
    }
    let tail = (n / 20).max(3).min(n / 2);
    let median = |v: &mut Vec<f64>| {
        v.sort_by(f64::total_cmp);
        v[v.len() / 2]
    };
    let left = median(&mut t.y[..tail].to_vec());
    let right = median(&mut t.y[n - tail..].to_vec());
    let baseline = left.min(right);
    let corrected: Vec<f64> = t.y.iter().map(|y| y - baseline).collect();
    let mut integral = 0.0;
    for i in 1..n {
        integral += 0.5 * (corrected[i] + corrected[i - 1]) * (t.nm[i] - t.nm[i - 1]);
    }
    // Over energy: E = hc/λ, I(E) = I(λ) λ²/hc; points reversed so E ascends.
    let mut integral_e = 0.0;
    for i in 1..n {
        let (l0, l1) = (t.nm[i - 1], t.nm[i]);
        let (e0, e1) = (HC_EV_NM / l0, HC_EV_NM / l1);
        let (i0, i1) = (corrected[i - 1] * l0 * l0 / HC_EV_NM, corrected[i] * l1 * l1 / HC_EV_NM);
        integral_e += 0.5 * (i0 + i1) * (e0 - e1);
    }
    let u = bounded_grid(
        uniform(&Trace {
            nm: t.nm.clone(),
            y: corrected.clone(),
        })?,
        set,
    );
    let half = half_window(&u, set);
    let order = set.smoothing_order.min(2 * half - 1);
    let s = savgol::filter(&u.y, half, order, 0, u.step_nm)?;
    // The first derivative is needed only at candidate maxima, so it is taken point by point.
    let d1 = |i: usize| savgol::at(&u.y, half, order.max(2), 1, u.step_nm, i).unwrap_or(0.0);
    let noise = noise_of(&u.y, &s);
    let mut warnings = Vec::new();
    let (imax, smax) = s
        .iter()
        .copied()
        .enumerate()
        .fold((0, f64::MIN), |acc, (i, v)| if v > acc.1 { (i, v) } else { acc });
    if smax <= 0.0 || smax < 10.0 * noise {
        warnings.push(format!("low signal: PL peak {smax:.3} against noise {noise:.3}"));
    }
    if smax <= 0.0 {
        return Ok(PlResult {
            pl_peak_nm: None,
            pl_peak_ev: None,
            pl_fwhm_nm: None,
            pl_fwhm_mev: None,
            pl_integral: integral,
            pl_integral_energy: integral_e,
            baseline,
            noise,
            warnings,
        });
    }
    let fi = if imax + 1 < s.len() && d1(imax) > 0.0 && d1(imax + 1) <= 0.0 {
        zero_crossing(d1(imax), d1(imax + 1), imax)
    } else if imax > 0 && d1(imax - 1) > 0.0 && d1(imax) <= 0.0 {
        zero_crossing(d1(imax - 1), d1(imax), imax - 1)
    } else {
        imax as f64
    };
    let peak_nm = u.nm(fi);
    let peak = value_at(&s, fi);
    let crossing = |dir: i64| -> Option<f64> {
        let mut i = imax as i64;
        while i >= 0 && (i as usize) < s.len() {
            if s[i as usize] <= peak / 2.0 {
                let j = (i - dir) as usize;
                let (a, b) = (s[j], s[i as usize]);
                let f = if a == b { 0.0 } else { (a - peak / 2.0) / (a - b) };
                return Some(u.nm(j as f64 + f * dir as f64));
            }
            i += dir;
        }
        None
    };
    let lo = crossing(-1);
    let hi = crossing(1);
    let fwhm = match (lo, hi) {
        (Some(a), Some(b)) => Some(b - a),
        _ => {
            warnings.push("PL does not fall to half its peak on both sides: FWHM not measured".into());
            None
        }
    };
    // In energy the spectrum is I(E) = I(λ) λ²/hc (the Jacobian), whose peak and width differ
    // slightly from the wavelength ones.
    let (peak_ev, fwhm_mev) = energy_peak_and_width(&u, &s);
    let edge = (3 * half) as f64;
    if fi < edge || fi > (u.y.len() - 1) as f64 - edge {
        warnings.push(format!(
            "PL peak at {peak_nm:.1} nm is at the edge of the measured range"
        ));
    }
    if corrected[0] > 0.1 * peak || corrected[n - 1] > 0.1 * peak {
        warnings.push("PL is not fully inside the scanned range: the integral is a lower bound".into());
    }
    Ok(PlResult {
        pl_peak_nm: Some(peak_nm),
        pl_peak_ev: peak_ev,
        pl_fwhm_nm: fwhm,
        pl_fwhm_mev: fwhm_mev,
        pl_integral: integral,
        pl_integral_energy: integral_e,
        baseline,
        noise,
        warnings,
    })
}

fn energy_peak_and_width(u: &Uniform, s: &[f64]) -> (Option<f64>, Option<f64>) {
    let e: Vec<f64> = (0..s.len()).map(|i| HC_EV_NM / u.nm(i as f64)).collect();
    let ie: Vec<f64> = (0..s.len()).map(|i| s[i] * u.nm(i as f64).powi(2) / HC_EV_NM).collect();
    let (imax, vmax) = ie
        .iter()
        .copied()
        .enumerate()
        .fold((0, f64::MIN), |acc, (i, v)| if v > acc.1 { (i, v) } else { acc });
    if vmax <= 0.0 {
        return (None, None);
    }
    // Parabolic refinement of the peak in energy.
    let peak_ev = if imax > 0 && imax + 1 < ie.len() {
        let (a, b, c) = (ie[imax - 1], ie[imax], ie[imax + 1]);
        let denom = a - 2.0 * b + c;
        let off = if denom != 0.0 {
            (0.5 * (a - c) / denom).clamp(-0.5, 0.5)
        } else {
            0.0
        };
        let fi = imax as f64 + off;
        Some(HC_EV_NM / u.nm(fi))
    } else {
        Some(e[imax])
    };
    let half = vmax / 2.0;
    let cross = |dir: i64| -> Option<f64> {
        let mut i = imax as i64;
        while i >= 0 && (i as usize) < ie.len() {
            if ie[i as usize] <= half {
                let j = (i - dir) as usize;
                let (a, b) = (ie[j], ie[i as usize]);
                let f = if a == b { 0.0 } else { (a - half) / (a - b) };
                return Some(e[j] + f * (e[i as usize] - e[j]));
            }
            i += dir;
        }
        None
    };
    let width = match (cross(-1), cross(1)) {
        (Some(hi_e), Some(lo_e)) => Some(1000.0 * (hi_e - lo_e)),
        _ => None,
    };
    (peak_ev, width)
}
