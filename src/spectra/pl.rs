//! Photoluminescence analysis as pure functions on a [`Trace`] (nm ascending): peak, width and
//! integrals over wavelength and energy, baseline removed. Nothing here does I/O or changes its
//! input; doubtful results come back with warnings.
//!
//! What it does, in order, each step linear in the number of points:
//! 1. Grid gaps: a step more than [`GAP_FACTOR`] times its neighbours' median step is reported.
//! 2. The trace is resampled onto an even grid (linear interpolation, one merge pass), binned
//!    where the smoothing window would span too many points ([`bounded_grid`]).
//! 3. Narrow lines: peaks whose full width at half height is at most [`LINE_FWHM_MAX_NM`] are
//!    far narrower than any room-temperature excitonic emission; they are the excitation or
//!    laser line, its second order, a solvent Raman line or a cosmic-ray spike. A line must
//!    stand [`LINE_SIGMAS`] noise deviations above both its surroundings and the points beside
//!    it, the noise read at its own level: counted photons scatter by √N, so the top of a
//!    bright band is noisier than the dark floor, and its noise is not a line. Lines are
//!    interpolated across and named in a warning.
//! 4. The emission region: from each outermost band's peak out to [`REGION_HALF_WIDTHS`] of its
//!    own half width (about 4 σ for a Gaussian), or further while it stays above the noise.
//!    The baseline is a straight line fitted, with iterative 3σ rejection, to everything outside
//!    that region on both ends (dark counts drift; a constant baseline turns a slope into
//!    integral). Region and baseline are refined together until the region stops moving.
//! 5. Bands: maxima of the corrected, smoothed curve that stand out from their neighbours. The
//!    band-edge band is the bluest band at least [`BAND_EDGE_MIN_FRACTION`] of the tallest: band-
//!    edge emission lies just red of the absorption edge, trap (deep-level) emission is broader
//!    and further red, so a chemist reads the bluest real band as the band edge even when trap
//!    emission is taller. The top-level peak and widths describe it; `pl_integral` is the whole
//!    emission (all bands), as the relative quantum yield needs (Brouwer, Pure Appl. Chem. 83,
//!    2213 (2011)); each band's share is in `bands`.
//! 6. Peak and widths are measured on a Savitzky-Golay smooth whose window follows the band's
//!    own width (one FWHM for the peak's local cubic, half of it for the half-height crossings),
//!    so a broad band is not left noisy and a narrow one is not flattened. In energy the
//!    spectrum is I(E) = I(λ) λ²/hc (the Jacobian of E = hc/λ; Mooney & Kambhampati, J. Phys.
//!    Chem. Lett. 4, 3316 (2013), from memory), whose peak and width differ from the
//!    wavelength ones. Where a band overlaps its neighbour, its width comes from its free side
//!    mirrored in energy (a band symmetric in energy is assumed) and the warning says so.
//! 7. Integrals are trapezoids on the file's own grid (so non-uniform CCD grids count each
//!    interval at its true width) over the emission region, of the data with the baseline
//!    removed and narrow lines interpolated across. Outside the region the corrected curve is
//!    zero by construction of the baseline, so this is the integral of the emission.

use super::analysis::{AnalysisSettings, MAX_HALF_WINDOW, Uniform, bounded_grid, half_window};
use super::savgol;
use super::{HC_EV_NM, Trace};
use crate::error::{Result, invalid};
use serde::Serialize;

/// A step this many times the median of its neighbouring steps is a gap in the grid.
pub const GAP_FACTOR: f64 = 4.0;
/// Peaks at most this wide (FWHM, nm) are lines, not emission: excitation and laser lines seen
/// through a fluorimeter's slits are a few nm or less, while room-temperature nanocrystal
/// emission is at least about 30-40 meV wide, 6 nm or more in the visible (common practice).
pub const LINE_FWHM_MAX_NM: f64 = 4.0;
/// A line must stand this many noise standard deviations above its surroundings.
const LINE_SIGMAS: f64 = 8.0;
/// The local surroundings of a line candidate are read this far (nm) on each side.
const LINE_BASE_NM: f64 = 8.0;
/// The scatter a line candidate is held to is read this far (nm) beyond its own tails.
const LINE_NOISE_REACH_NM: f64 = 20.0;
/// Points whose level above the floor is within these fractions of a candidate's half height
/// count as "at its level" when its noise is read.
const LINE_LEVEL_BAND: (f64, f64) = (0.8, 1.2);
/// The fewest points a candidate's noise is read from: those nearest its level when fewer
/// are within [`LINE_LEVEL_BAND`].
const LINE_LEVEL_POINTS: usize = 12;
/// The emission region reaches this many half widths (peak to half height) beyond the
/// outermost bands' peaks: 3.4 x 1.177 σ = 4 σ for a Gaussian, which leaves out 3e-5 of it.
pub const REGION_HALF_WIDTHS: f64 = 3.4;
/// The band-edge band is the bluest band at least this fraction of the tallest one.
pub const BAND_EDGE_MIN_FRACTION: f64 = 0.1;
/// A baseline end needs this many points outside the emission to be fitted.
const MIN_BASELINE_POINTS: usize = 8;
/// Neighbouring bands whose dip rises above this fraction of the lower band overlap.
const OVERLAP_FRACTION: f64 = 0.05;

/// One emission band of the corrected spectrum.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct PlBand {
    /// "band_edge", "trap" (a broader band red of the band edge), or "other".
    pub role: String,
    pub peak_nm: f64,
    pub peak_ev: Option<f64>,
    pub fwhm_nm: Option<f64>,
    pub fwhm_mev: Option<f64>,
    /// Height of the corrected curve at the peak, in the file's intensity units.
    pub height: f64,
    /// This band's share of `pl_integral` (∫ I dλ over the band).
    pub integral: f64,
    /// "both sides", or which side was mirrored in energy because the other overlaps.
    pub width_from: String,
}

/// A narrow line found and interpolated across.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct NarrowLine {
    pub nm: f64,
    pub fwhm_nm: f64,
    /// Height above its surroundings, in the file's intensity units.
    pub height: f64,
    /// The span replaced by a straight line between its neighbours.
    pub from_nm: f64,
    pub to_nm: f64,
}

/// A step in the file's grid much larger than its neighbours.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct GridGap {
    pub from_nm: f64,
    pub to_nm: f64,
}

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct PlResult {
    /// The band-edge band's peak (maximum of I(λ)).
    pub pl_peak_nm: Option<f64>,
    /// The band-edge band's peak in energy (maximum of I(E) = I(λ) λ²/hc).
    pub pl_peak_ev: Option<f64>,
    pub pl_fwhm_nm: Option<f64>,
    pub pl_fwhm_mev: Option<f64>,
    /// ∫ I dλ, baseline subtracted, narrow lines interpolated across, over the emission region
    /// (all bands), in the file's intensity units times nm.
    pub pl_integral: f64,
    /// ∫ I(E) dE with I(E) = I(λ) λ²/hc: equal to `pl_integral` when the Jacobian is right.
    pub pl_integral_energy: f64,
    /// The band-edge band's share of `pl_integral`.
    pub pl_integral_band_edge: Option<f64>,
    /// The baseline's value under the band-edge peak (at the middle of the scan without one).
    pub baseline: f64,
    /// The baseline's slope, intensity units per nm (0 for a constant baseline).
    pub baseline_slope_per_nm: f64,
    /// How the baseline was obtained.
    pub baseline_model: String,
    /// The emission region: integrated, and left out of the baseline fit.
    pub emission_from_nm: Option<f64>,
    pub emission_to_nm: Option<f64>,
    pub noise: f64,
    /// Emission bands, blue to red.
    pub bands: Vec<PlBand>,
    pub narrow_lines: Vec<NarrowLine>,
    pub grid_gaps: Vec<GridGap>,
    pub warnings: Vec<String>,
}

/// A straight baseline: `value` at `ref_nm`, rising by `slope` per nm.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Baseline {
    ref_nm: f64,
    value: f64,
    slope: f64,
}

impl Baseline {
    fn at(&self, nm: f64) -> f64 {
        self.value + self.slope * (nm - self.ref_nm)
    }
}

/// A run of points of the even grid replaced by a line between anchors just outside it.
#[derive(Debug, Clone, Copy)]
struct Mask {
    /// First and last replaced index on the even grid.
    lo: usize,
    hi: usize,
    /// The file's points strictly between these are replaced (the first free points each side).
    span_lo_nm: f64,
    span_hi_nm: f64,
    a_nm: f64,
    a_val: f64,
    b_nm: f64,
    b_val: f64,
    /// A parabola (centre nm, coefficients) through three free points each side, where both
    /// sides have them: it follows a band's curvature under a line sitting on the band.
    quad: Option<(f64, [f64; 3])>,
}

impl Mask {
    fn value(&self, nm: f64) -> f64 {
        if let Some((x0, q)) = self.quad {
            let x = nm - x0;
            return q[0] + q[1] * x + q[2] * x * x;
        }
        if self.b_nm > self.a_nm {
            self.a_val + (self.b_val - self.a_val) * ((nm - self.a_nm) / (self.b_nm - self.a_nm)).clamp(0.0, 1.0)
        } else {
            self.a_val
        }
    }
}

/// A band found on the stage-one smooth: its peak index and the dips to its neighbours.
#[derive(Debug, Clone, Copy)]
struct Found {
    peak: usize,
    value: f64,
    /// Index and value of the minimum between this band and the previous one.
    dip_before: Option<(usize, f64)>,
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
    if t.nm.iter().chain(&t.y).any(|v| !v.is_finite()) {
        return invalid("a PL trace holds a NaN or infinite value");
    }
    if t.nm.windows(2).any(|w| !(w[1] > w[0])) {
        return invalid("a PL trace needs strictly ascending wavelengths");
    }
    let mut warnings = Vec::new();
    let steps: Vec<f64> = t.nm.windows(2).map(|w| w[1] - w[0]).collect();
    let grid_gaps = find_gaps(&t.nm, &steps);
    let resampled = resample(t, &steps);
    let even = resampled.y.len() == n;
    let native_step = resampled.step_nm;
    let u = bounded_grid(resampled, set);
    let m = u.y.len();
    // On an uneven grid the interpolated even grid is smoother than the data, so the noise
    // is read on the file's own points (and scaled down where points were then binned).
    let noise = if even {
        noise_of_points(&u.y)
    } else {
        noise_of_uneven(&t.nm, &t.y) * (native_step / u.step_nm).min(1.0).sqrt()
    };
    let half1 = half_window(&u, set);
    let order = set.smoothing_order.min(2 * half1 - 1).max(2);
    let (masks, narrow_lines) = find_lines(&u, noise);
    let clean = apply_masks(&u, &masks);
    let s1 = savgol::filter(&clean, half1, order, 0, u.step_nm)?;
    let c0 = savgol::coefficients(half1, order, 0)?;
    let noise_s = noise * c0.iter().map(|c| c * c).sum::<f64>().sqrt();

    // Region and baseline, refined together.
    let mut base = edge_line(&u, &clean);
    let mut model = "straight line through the medians of both ends (first guess)".to_string();
    let mut region: Option<(usize, usize)> = None;
    let mut c = vec![0.0; m];
    let mut bands = Vec::new();
    let mut one_sided: Option<&str> = None;
    for iter in 0..6 {
        for i in 0..m {
            c[i] = s1[i] - base.at(u.nm(i as f64));
        }
        bands = find_bands(&c, noise_s, 3 * half1);
        if bands.is_empty() {
            break;
        }
        let reg = region_of(&c, &bands, noise_s);
        if Some(reg) == region || iter == 5 {
            break;
        }
        region = Some(reg);
        match fit_baseline(&u, &clean, reg) {
            Some((b, how, side)) => {
                base = b;
                model = how;
                one_sided = side;
            }
            None => {
                base = edge_min(&clean);
                model = "constant: the lower of the two end medians (no end is free of emission)".into();
                one_sided = Some("none");
            }
        }
    }

    // The file's own grid, baseline removed, narrow lines replaced.
    let corrected = corrected_raw(t, &masks, &base);
    let (from_nm, to_nm) = match region {
        Some((lo, hi)) if !bands.is_empty() => (u.nm(lo as f64).max(t.nm[0]), u.nm(hi as f64).min(t.nm[n - 1])),
        _ => (t.nm[0], t.nm[n - 1]),
    };
    let (integral, integral_e) = integrate(&t.nm, &corrected, from_nm, to_nm);
    for g in &grid_gaps {
        let inside = g.to_nm > from_nm && g.from_nm < to_nm && !bands.is_empty();
        warnings.push(format!(
            "gap in the wavelength grid from {:.1} to {:.1} nm ({:.1} nm){}",
            g.from_nm,
            g.to_nm,
            g.to_nm - g.from_nm,
            if inside {
                ": it lies in the emission, so the integral across it is a straight-line interpolation"
            } else {
                ", outside the emission"
            }
        ));
    }
    for l in &narrow_lines {
        let second = narrow_lines
            .iter()
            .find(|o| o.nm < l.nm && (2.0 * o.nm - l.nm).abs() < 3.0)
            .map(|o| format!(" (the second order of the {:.1} nm line)", o.nm))
            .unwrap_or_default();
        warnings.push(format!(
            "narrow line at {:.1} nm (FWHM {:.1} nm){second}: far narrower than excitonic emission, taken as an excitation or laser line (or a spike) and interpolated across for peak, width and integral",
            l.nm, l.fwhm_nm
        ));
    }
    let smax = c.iter().copied().fold(f64::MIN, f64::max);
    if smax <= 0.0 || smax < 10.0 * noise {
        warnings.push(format!("low signal: PL peak {smax:.3} against noise {noise:.3}"));
    }
    let base_model = model;
    if bands.is_empty() || smax <= 0.0 {
        let mid = 0.5 * (t.nm[0] + t.nm[n - 1]);
        return Ok(PlResult {
            pl_peak_nm: None,
            pl_peak_ev: None,
            pl_fwhm_nm: None,
            pl_fwhm_mev: None,
            pl_integral: integral,
            pl_integral_energy: integral_e,
            pl_integral_band_edge: None,
            baseline: base.at(mid),
            baseline_slope_per_nm: base.slope,
            baseline_model: base_model,
            emission_from_nm: None,
            emission_to_nm: None,
            noise,
            bands: Vec::new(),
            narrow_lines,
            grid_gaps,
            warnings,
        });
    }

    // Each band measured on a smooth matched to its own width.
    let cu: Vec<f64> = (0..m).map(|i| clean[i] - base.at(u.nm(i as f64))).collect();
    let gmax = bands.iter().map(|b| b.value).fold(f64::MIN, f64::max);
    let edge_k = bands
        .iter()
        .position(|b| b.value >= BAND_EDGE_MIN_FRACTION * gmax)
        .unwrap_or(0);
    let mut measured = Vec::with_capacity(bands.len());
    for k in 0..bands.len() {
        let lo = bands[k].dip_before.map(|d| d.0).unwrap_or(0);
        let hi = bands
            .get(k + 1)
            .and_then(|b| b.dip_before)
            .map(|d| d.0)
            .unwrap_or(m - 1);
        let overlap_lo = bands[k]
            .dip_before
            .is_some_and(|d| d.1 > OVERLAP_FRACTION * bands[k].value);
        let overlap_hi = bands
            .get(k + 1)
            .and_then(|b| b.dip_before)
            .is_some_and(|d| d.1 > OVERLAP_FRACTION * bands[k].value);
        measured.push(measure_band(
            &u, &c, &cu, bands[k], lo, hi, overlap_lo, overlap_hi, order,
        )?);
    }

    // Band integrals: split at the dips; a band-edge band overlapping a red neighbour counts
    // twice its blue half in energy (∫ over E above its peak), the neighbour the rest.
    let mut bounds: Vec<f64> = Vec::with_capacity(bands.len() + 1);
    bounds.push(from_nm);
    for b in bands.iter().skip(1) {
        let d = b.dip_before.map(|d| u.nm(d.0 as f64)).unwrap_or(from_nm);
        bounds.push(d.clamp(from_nm, to_nm));
    }
    bounds.push(to_nm);
    let mut shares: Vec<f64> = (0..bands.len())
        .map(|k| integrate(&t.nm, &corrected, bounds[k], bounds[k + 1]).0)
        .collect();
    // Split at the dip alone, the band edge would keep the red band's blue tail and lose its
    // own red tail. Each tail is estimated from its band's free side mirrored in energy (a
    // band symmetric in energy is assumed): the band edge's tail red of the dip as its blue
    // side equally far above its peak, the red band's tail blue of the dip as its red side
    // equally far below its peak. Tails are small, so an error in a peak moves them little.
    if edge_k + 1 < bands.len() {
        let k = edge_k;
        let dip_e = HC_EV_NM / bounds[k + 1];
        if let (Some(ep), Some(et)) = (measured[k].peak_ev, measured[k + 1].peak_ev) {
            let edge_tail = if 2.0 * ep - dip_e > 0.0 {
                integrate(&t.nm, &corrected, bounds[k], HC_EV_NM / (2.0 * ep - dip_e)).0
            } else {
                0.0
            };
            let red_tail = if 2.0 * et - dip_e > 0.0 {
                integrate(&t.nm, &corrected, HC_EV_NM / (2.0 * et - dip_e), bounds[k + 2]).0
            } else {
                0.0
            };
            let moved = edge_tail - red_tail;
            shares[k] += moved;
            shares[k + 1] -= moved;
        }
    }
    let edge_fwhm = measured[edge_k].fwhm_mev;
    let out_bands: Vec<PlBand> = measured
        .iter()
        .enumerate()
        .map(|(k, b)| PlBand {
            role: if k == edge_k {
                "band_edge".into()
            } else if k > edge_k && matches!((b.fwhm_mev, edge_fwhm), (Some(w), Some(e)) if w > 1.5 * e) {
                "trap".into()
            } else {
                "other".into()
            },
            peak_nm: b.peak_nm,
            peak_ev: b.peak_ev,
            fwhm_nm: b.fwhm_nm,
            fwhm_mev: b.fwhm_mev,
            height: b.height,
            integral: shares[k],
            width_from: b.width_from.clone(),
        })
        .collect();

    let be = &measured[edge_k];
    let peak_nm = be.peak_nm;
    if out_bands.len() > 1 {
        let others: Vec<String> = out_bands
            .iter()
            .enumerate()
            .filter(|(k, _)| *k != edge_k)
            .map(|(_, b)| format!("{:.1} nm ({})", b.peak_nm, b.role))
            .collect();
        warnings.push(format!(
            "{} emission bands: the band edge at {peak_nm:.1} nm, also {}; peak and width describe the band edge, pl_integral holds all bands (the band edge's share is {:.0} %)",
            out_bands.len(),
            others.join(", "),
            100.0 * shares[edge_k] / integral
        ));
        if edge_k + 1 < bands.len() {
            warnings.push(
                "the bands are split at the dip between them, each band's tail beyond it estimated from its free side mirrored in energy (bands symmetric in energy are assumed)"
            .to_string(),
            );
        }
    }
    for b in &out_bands {
        if b.width_from != "both sides" && b.fwhm_mev.is_some() {
            warnings.push(format!(
                "band at {:.1} nm overlaps its neighbour: its width is from its {} (a band symmetric in energy is assumed){}",
                b.peak_nm,
                b.width_from,
                ""
            ));
        }
    }
    if be.fwhm_nm.is_none() {
        warnings.push("PL does not fall to half its peak on both sides: FWHM not measured".into());
    }
    if let Some(g) = grid_gaps.iter().find(|g| g.from_nm < peak_nm && g.to_nm > peak_nm) {
        warnings.push(format!(
            "the PL peak lies in the grid gap {:.1}-{:.1} nm: its position and width are interpolated",
            g.from_nm, g.to_nm
        ));
    }
    let fi = (peak_nm - u.start_nm) / u.step_nm;
    let edge = (3 * half1) as f64;
    if fi < edge || fi > (m - 1) as f64 - edge {
        warnings.push(format!(
            "PL peak at {peak_nm:.1} nm is at the edge of the measured range"
        ));
    }
    let touches = region.is_some_and(|(lo, hi)| lo == 0 || hi == m - 1);
    if touches || corrected[0] > 0.1 * be.height || corrected[n - 1] > 0.1 * be.height {
        warnings.push("PL is not fully inside the scanned range: the integral is a lower bound".into());
    }
    match one_sided {
        Some("none") => warnings.push(
            "no end of the scan is free of emission: the baseline is a constant (the lower end median)".into(),
        ),
        Some(side) => warnings.push(format!(
            "only the {side} end of the scan is free of emission: the baseline is a constant from it (a slope cannot be measured)"
        )),
        None => {}
    }
    Ok(PlResult {
        pl_peak_nm: Some(peak_nm),
        pl_peak_ev: be.peak_ev,
        pl_fwhm_nm: be.fwhm_nm,
        pl_fwhm_mev: be.fwhm_mev,
        pl_integral: integral,
        pl_integral_energy: integral_e,
        pl_integral_band_edge: Some(shares[edge_k]),
        baseline: base.at(peak_nm),
        baseline_slope_per_nm: base.slope,
        baseline_model: base_model,
        emission_from_nm: Some(from_nm),
        emission_to_nm: Some(to_nm),
        noise,
        bands: out_bands,
        narrow_lines,
        grid_gaps,
        warnings,
    })
}

/// Gaps: steps above [`GAP_FACTOR`] times the median of up to six neighbouring steps. Local,
/// so a grid even in energy or a CCD's smoothly varying step is not a gap.
fn find_gaps(nm: &[f64], steps: &[f64]) -> Vec<GridGap> {
    let k = steps.len();
    let mut out = Vec::new();
    if k < 3 {
        return out;
    }
    let mut near = [0.0f64; 6];
    for i in 0..k {
        let mut c = 0;
        for j in i.saturating_sub(3)..(i + 4).min(k) {
            if j != i {
                near[c] = steps[j];
                c += 1;
            }
        }
        let w = &mut near[..c];
        w.sort_by(f64::total_cmp);
        let med = if c % 2 == 1 {
            w[c / 2]
        } else {
            0.5 * (w[c / 2 - 1] + w[c / 2])
        };
        if steps[i] > GAP_FACTOR * med {
            out.push(GridGap {
                from_nm: nm[i],
                to_nm: nm[i + 1],
            });
        }
    }
    out
}

/// An even grid at the median step, by linear interpolation in one merge pass (the file's own
/// values when it is already even).
fn resample(t: &Trace, steps: &[f64]) -> Uniform {
    let n = t.nm.len();
    let span = t.nm[n - 1] - t.nm[0];
    let even_step = span / (n - 1) as f64;
    let even = steps
        .iter()
        .all(|s| (s - even_step).abs() <= 1e-6 * even_step.abs().max(1e-12) + 1e-9);
    if even {
        return Uniform {
            start_nm: t.nm[0],
            step_nm: even_step,
            y: t.y.clone(),
        };
    }
    let mut sorted = steps.to_vec();
    let mid = sorted.len() / 2;
    let (_, med, _) = sorted.select_nth_unstable_by(mid, f64::total_cmp);
    let step = med.max(span / 20_000.0);
    let m = (span / step).floor() as usize + 1;
    let mut y = Vec::with_capacity(m);
    let mut j = 0;
    for i in 0..m {
        let x = t.nm[0] + i as f64 * step;
        while j + 2 < n && t.nm[j + 1] < x {
            j += 1;
        }
        let (x0, x1) = (t.nm[j], t.nm[j + 1]);
        let f = ((x - x0) / (x1 - x0)).clamp(0.0, 1.0);
        y.push(t.y[j] + (t.y[j + 1] - t.y[j]) * f);
    }
    Uniform {
        start_nm: t.nm[0],
        step_nm: step,
        y,
    }
}

/// Noise of single points from second differences: 1.4826 x their median absolute value / √6
/// (a second difference of white noise has variance 6σ²). Robust to a few peaks and lines.
fn noise_of_points(y: &[f64]) -> f64 {
    if y.len() < 3 {
        return 0.0;
    }
    let mut d: Vec<f64> = y.windows(3).map(|w| (w[0] - 2.0 * w[1] + w[2]).abs()).collect();
    mad_sd(&mut d) / 6f64.sqrt()
}

/// The standard deviation a normal sample's absolute values give: 1.4826 x their median
/// (the median absolute deviation's consistency factor), robust to a few peaks and lines.
/// Reorders `abs_values`; 0 for none.
fn mad_sd(abs_values: &mut [f64]) -> f64 {
    if abs_values.is_empty() {
        return 0.0;
    }
    let mid = abs_values.len() / 2;
    1.4826 * *abs_values.select_nth_unstable_by(mid, f64::total_cmp).1
}

/// Where a line candidate's surroundings are read (nm each side) and the widest FWHM (nm) a
/// line may have at that distance. Wide surroundings see a line on a flat baseline; close
/// ones see a line sitting on a band (a Raman or stray laser line) without taking the band's
/// own fall for the line's. Each width limit is under half its distance, so a band as narrow
/// as 6 nm FWHM is never a line at any of them.
const LINE_SCALES: [(f64, f64); 3] = [(LINE_BASE_NM, LINE_FWHM_MAX_NM), (5.0, 2.5), (3.5, 1.75)];

/// A line at `i` seen from `dist` nm each side: (its base, FWHM in nm, distance in points,
/// height above the base).
fn line_at(y: &[f64], i: usize, step: f64, noise: f64, dist: f64, widest: f64) -> Option<(f64, f64, usize, f64)> {
    let n = y.len();
    let k = ((dist / step).ceil() as usize).max(2);
    let reach = ((0.5 * widest / step).ceil() as usize + 1).min(k);
    let base = match (i.checked_sub(k), i + k < n) {
        (Some(a), true) => 0.5 * (y[a] + y[i + k]),
        (Some(a), false) => y[a],
        (None, true) => y[i + k],
        (None, false) => return None,
    };
    let h = y[i] - base;
    if !(h > LINE_SIGMAS * noise) || h <= 0.0 {
        return None;
    }
    let half = base + 0.5 * h;
    // Distance in points to half height, None past `reach` or at the end of the data.
    let walk = |dir: isize| -> Option<f64> {
        for s in 1..=reach as isize {
            let j = i as isize + dir * s;
            if j < 0 || j >= n as isize {
                return None;
            }
            let (a, b) = (y[(j - dir) as usize], y[j as usize]);
            if b <= half {
                return Some((s - 1) as f64 + if a == b { 0.0 } else { (a - half) / (a - b) });
            }
        }
        None
    };
    let (l, r) = match (walk(-1), walk(1)) {
        (Some(l), Some(r)) => (l, r),
        // A line cut by the end of the scan: its one side counts twice.
        (None, Some(r)) if i < reach => (r, r),
        (Some(l), None) if i + reach >= n => (l, l),
        _ => return None,
    };
    let fwhm = (l + r) * step;
    if fwhm > widest {
        return None;
    }
    // The chord between the two surroundings sits below a band's rounded top; a line must
    // also stand above the points beside it, past its own half width. Each side's median
    // is read apart and the two averaged: on a band's flank one side is all higher and the
    // other all lower, and their mean is the band's level at the line.
    let core = (fwhm / step).ceil() as usize + 1;
    let median = |mut v: Vec<f64>| -> Option<f64> {
        let mid = v.len() / 2;
        (!v.is_empty()).then(|| *v.select_nth_unstable_by(mid, f64::total_cmp).1)
    };
    let left = median((core..=k).filter_map(|s| i.checked_sub(s)).map(|j| y[j]).collect());
    let right = median((core..=k).map(|s| i + s).filter(|&j| j < n).map(|j| y[j]).collect());
    let level = match (left, right) {
        (Some(a), Some(b)) => Some(0.5 * (a + b)),
        (a, b) => a.or(b),
    };
    if let Some(level) = level
        && !(y[i] - level > LINE_SIGMAS * noise)
    {
        return None;
    }
    Some((base, fwhm, k, h))
}

/// Noise of single points on an uneven grid: each point's departure from the straight line
/// through its neighbours, divided by that departure's standard deviation in units of σ
/// (√(1 + (a² + b²)/(a + b)²) for steps a and b), then 1.4826 x the median absolute value.
fn noise_of_uneven(nm: &[f64], y: &[f64]) -> f64 {
    if y.len() < 3 {
        return 0.0;
    }
    let mut d: Vec<f64> = (1..y.len() - 1)
        .map(|i| {
            let (a, b) = (nm[i] - nm[i - 1], nm[i + 1] - nm[i]);
            let line = (y[i - 1] * b + y[i + 1] * a) / (a + b);
            let sd = (1.0 + (a * a + b * b) / ((a + b) * (a + b))).sqrt();
            ((y[i] - line) / sd).abs()
        })
        .collect();
    mad_sd(&mut d)
}

/// The scatter of single points at a candidate line's level: third differences (variance
/// 20σ² for white noise, blind to a band's curvature) of the points within
/// [`LINE_NOISE_REACH_NM`] of the candidate, outside twice its own width (so neither it nor
/// its tails count), whose level is within [`LINE_LEVEL_BAND`] of the candidate's half height
/// above the scan's floor, or the [`LINE_LEVEL_POINTS`] nearest it in level. Counted photons scatter by √N, so a band's top is noisier than
/// the dark floor; points at the same level carry the same scatter whatever the detector.
/// On the scale of `noise` and never below it. A tall line on a low floor finds only floor
/// points near its half height's level, and is judged against the floor's noise.
fn noise_at_level(u: &LineScan, i: usize, fwhm_nm: f64, half_height: f64, noise: f64) -> f64 {
    let y = u.y;
    if !(u.whole_scan_noise > 0.0) || y.len() < 4 {
        return noise;
    }
    let n = y.len() as isize;
    let i = i as isize;
    let inner = (2.0 * fwhm_nm / u.step).ceil() as isize + 1;
    let outer = inner + (LINE_NOISE_REACH_NM / u.step).ceil() as isize;
    let level = half_height - u.floor;
    let (lo, hi) = (LINE_LEVEL_BAND.0 * level, LINE_LEVEL_BAND.1 * level);
    // (distance in level from the candidate's, third difference) of each point read.
    let mut pts: Vec<(f64, f64)> = ((i - outer).max(1)..=(i - inner - 2))
        .chain((i + inner + 1)..=(i + outer).min(n - 3))
        .map(|j| j as usize)
        .map(|j| {
            let at = 0.25 * (y[j - 1] + y[j] + y[j + 1] + y[j + 2]) - u.floor;
            let third = (y[j - 1] - 3.0 * y[j] + 3.0 * y[j + 1] - y[j + 2]).abs();
            (
                if at < lo {
                    lo - at
                } else if at > hi {
                    at - hi
                } else {
                    0.0
                },
                third,
            )
        })
        .collect();
    if pts.len() < LINE_LEVEL_POINTS {
        return noise;
    }
    // Those at its level, and at least the few nearest to it in level (on a coarse grid a
    // band's top may hold only a handful of points).
    pts.sort_by(|a, b| a.0.total_cmp(&b.0));
    let at_level = pts.iter().take_while(|p| p.0 == 0.0).count().max(LINE_LEVEL_POINTS);
    let mut d: Vec<f64> = pts[..at_level].iter().map(|p| p.1).collect();
    let here = mad_sd(&mut d) / 20f64.sqrt();
    (noise * here / u.whole_scan_noise).max(noise)
}

/// What [`noise_at_level`] reads of the scan: the even grid, its step, the noise of its points
/// over the whole scan (second differences) and its floor (the 5th percentile of its values).
struct LineScan<'a> {
    y: &'a [f64],
    step: f64,
    whole_scan_noise: f64,
    floor: f64,
}

/// Narrow lines on the even grid, blue to red, with the masks that replace them.
fn find_lines(u: &Uniform, noise: f64) -> (Vec<Mask>, Vec<NarrowLine>) {
    let y = &u.y;
    let n = y.len();
    let step = u.step_nm;
    let mut masks = Vec::new();
    let mut lines = Vec::new();
    let scan = LineScan {
        y,
        step,
        whole_scan_noise: noise_of_points(y),
        floor: {
            let mut v = y.to_vec();
            let at = v.len() / 20;
            if v.is_empty() {
                0.0
            } else {
                *v.select_nth_unstable_by(at, f64::total_cmp).1
            }
        },
    };
    let mut i = 0;
    while i < n {
        let is_max = (i == 0 || y[i] >= y[i - 1]) && (i + 1 == n || y[i] > y[i + 1]);
        if !is_max {
            i += 1;
            continue;
        }
        // On a coarse grid a line sampled on two points measures about two steps wide.
        let detect = |noise: f64| {
            LINE_SCALES.iter().enumerate().find_map(|(s, &(dist, widest))| {
                let widest = if s == 0 { widest.max(2.25 * step) } else { widest };
                line_at(y, i, step, noise, dist, widest)
            })
        };
        // A candidate against the whole scan's noise is then held to the noise around it:
        // counted photons scatter by √N, so a bright band's top is noisier than the floor.
        let found = detect(noise).and_then(|f| {
            let here = noise_at_level(&scan, i, f.1, f.0 + 0.5 * f.3, noise);
            if here > noise {
                detect(here).map(|f| (f, here))
            } else {
                Some((f, noise))
            }
        });
        let Some(((base, fwhm, k, h), noise)) = found else {
            i += 1;
            continue;
        };
        // The line's extent: out until it is back within the noise of its surroundings or
        // turns up again, and no further than a Gaussian line of its width and height stays
        // above twice the noise (so a line on a band does not take the band's top with it).
        let low = base + 2.0 * noise;
        let sigma_pts = fwhm / 2.354_820_045 / step;
        let tail = ((sigma_pts * (2.0 * (h / (2.0 * noise).max(1e-300)).max(1.0).ln()).sqrt()).ceil() as usize)
            .saturating_add(1);
        let cap = tail.clamp(1, k);
        let extent = |dir: isize| -> usize {
            let mut j = i as isize;
            for _ in 0..cap {
                let nx = j + dir;
                if nx < 0 || nx >= n as isize {
                    return j as usize;
                }
                j = nx;
                let v = y[j as usize];
                if v <= low || v > y[(j - dir) as usize] {
                    return j as usize;
                }
            }
            j as usize
        };
        let (ea, eb) = (extent(-1), extent(1));
        // `ea`/`eb` are the first points back at the surroundings; they anchor the line.
        let lo = if ea == 0 && y[0] > low { 0 } else { ea + 1 };
        let hi = if eb == n - 1 && y[n - 1] > low {
            n - 1
        } else {
            eb.saturating_sub(1)
        };
        let hi = hi.max(lo);
        let anchor = |from: usize, dir: isize| -> Option<(f64, f64)> {
            let mut sum = 0.0;
            let mut cnt = 0;
            let mut j = from as isize;
            while cnt < 3 && j >= 0 && j < n as isize {
                sum += y[j as usize];
                cnt += 1;
                j += dir;
            }
            // Placed at the centre of the points averaged.
            (cnt > 0).then(|| {
                (
                    u.nm(from as f64 + dir as f64 * 0.5 * (cnt - 1) as f64),
                    sum / cnt as f64,
                )
            })
        };
        let a = if lo > 0 { anchor(lo - 1, -1) } else { None };
        let b = if hi + 1 < n { anchor(hi + 1, 1) } else { None };
        let (a, b) = match (a, b) {
            (Some(a), Some(b)) => (a, b),
            (Some(a), None) => (a, (u.nm(hi as f64) + step, a.1)),
            (None, Some(b)) => ((u.nm(lo as f64) - step, b.1), b),
            (None, None) => {
                i += 1;
                continue;
            }
        };
        let off = if i > 0 && i + 1 < n {
            let d = y[i - 1] - 2.0 * y[i] + y[i + 1];
            if d != 0.0 {
                (0.5 * (y[i - 1] - y[i + 1]) / d).clamp(-0.5, 0.5)
            } else {
                0.0
            }
        } else {
            0.0
        };
        let quad = (lo >= 3 && hi + 3 < n)
            .then(|| {
                let x0 = u.nm(i as f64);
                let pts = [lo - 3, lo - 2, lo - 1, hi + 1, hi + 2, hi + 3];
                parabola(pts.map(|j| (u.nm(j as f64) - x0, y[j]))).map(|q| (x0, q))
            })
            .flatten()
            // On a flat surrounding the chord is the less noisy bridge; the parabola only
            // where the band's curvature shows beyond the noise.
            .filter(|&(x0, q)| {
                let chord = a.1 + (b.1 - a.1) * ((x0 - a.0) / (b.0 - a.0)).clamp(0.0, 1.0);
                (q[0] - chord).abs() > 3.0 * noise
            });
        masks.push(Mask {
            quad,
            lo,
            hi,
            span_lo_nm: if lo > 0 {
                u.nm((lo - 1) as f64)
            } else {
                f64::NEG_INFINITY
            },
            span_hi_nm: if hi + 1 < n {
                u.nm((hi + 1) as f64)
            } else {
                f64::INFINITY
            },
            a_nm: a.0,
            a_val: a.1,
            b_nm: b.0,
            b_val: b.1,
        });
        lines.push(NarrowLine {
            nm: u.nm(i as f64 + off),
            fwhm_nm: fwhm,
            height: h,
            from_nm: u.nm(lo as f64),
            to_nm: u.nm(hi as f64),
        });
        i = hi + 1;
    }
    (masks, lines)
}

/// Least-squares parabola through six points (Cramer's rule on the 3x3 normal equations).
fn parabola(p: [(f64, f64); 6]) -> Option<[f64; 3]> {
    let (mut s, mut t) = ([0.0f64; 5], [0.0f64; 3]);
    for (x, y) in p {
        let mut xp = 1.0;
        for (k, sk) in s.iter_mut().enumerate() {
            *sk += xp;
            if k < 3 {
                t[k] += xp * y;
            }
            xp *= x;
        }
    }
    let det3 = |a: [[f64; 3]; 3]| {
        a[0][0] * (a[1][1] * a[2][2] - a[1][2] * a[2][1]) - a[0][1] * (a[1][0] * a[2][2] - a[1][2] * a[2][0])
            + a[0][2] * (a[1][0] * a[2][1] - a[1][1] * a[2][0])
    };
    let a = [[s[0], s[1], s[2]], [s[1], s[2], s[3]], [s[2], s[3], s[4]]];
    let d = det3(a);
    if !(d.abs() > 1e-12 * s[4].abs().max(1e-300)) {
        return None;
    }
    let mut out = [0.0; 3];
    for (k, o) in out.iter_mut().enumerate() {
        let mut m = a;
        for r in 0..3 {
            m[r][k] = t[r];
        }
        *o = det3(m) / d;
    }
    out.iter().all(|v| v.is_finite()).then_some(out)
}

fn apply_masks(u: &Uniform, masks: &[Mask]) -> Vec<f64> {
    let mut y = u.y.clone();
    for mk in masks {
        for (i, v) in y.iter_mut().enumerate().take(mk.hi + 1).skip(mk.lo) {
            *v = mk.value(u.nm(i as f64));
        }
    }
    y
}

/// The file's values minus the baseline, with the narrow lines' spans replaced by their masks
/// (one pass: masks and points are both ascending).
fn corrected_raw(t: &Trace, masks: &[Mask], base: &Baseline) -> Vec<f64> {
    let mut out = Vec::with_capacity(t.nm.len());
    let mut k = 0;
    for (&x, &y) in t.nm.iter().zip(&t.y) {
        while k < masks.len() && x >= masks[k].span_hi_nm {
            k += 1;
        }
        let v = match masks.get(k) {
            Some(mk) if x > mk.span_lo_nm => mk.value(x),
            _ => y,
        };
        out.push(v - base.at(x));
    }
    out
}

fn median_of(v: &[f64]) -> f64 {
    let mut w = v.to_vec();
    let mid = w.len() / 2;
    let (_, m, _) = w.select_nth_unstable_by(mid, f64::total_cmp);
    *m
}

fn tail_len(m: usize) -> usize {
    (m / 20).max(3).min(m / 2)
}

/// First guess: the straight line through the medians of the two ends.
fn edge_line(u: &Uniform, y: &[f64]) -> Baseline {
    let m = y.len();
    let t = tail_len(m);
    let (l, r) = (median_of(&y[..t]), median_of(&y[m - t..]));
    let (xl, xr) = (u.nm(0.5 * (t - 1) as f64), u.nm((m - t) as f64 + 0.5 * (t - 1) as f64));
    let slope = if xr > xl { (r - l) / (xr - xl) } else { 0.0 };
    Baseline {
        ref_nm: xl,
        value: l,
        slope,
    }
}

/// The fallback the analysis used to rely on: the lower of the two end medians.
fn edge_min(y: &[f64]) -> Baseline {
    let m = y.len();
    let t = tail_len(m);
    Baseline {
        ref_nm: 0.0,
        value: median_of(&y[..t]).min(median_of(&y[m - t..])),
        slope: 0.0,
    }
}

/// Bands: maxima of the corrected smooth above five smoothed-noise deviations and 5 % of the
/// tallest, merged (in one stack pass) where a neighbour does not stand out by a real dip.
fn find_bands(c: &[f64], noise_s: f64, edge_zone: usize) -> Vec<Found> {
    let m = c.len();
    let gmax = c.iter().copied().fold(f64::MIN, f64::max);
    if !(gmax > 0.0) {
        return Vec::new();
    }
    let thr = (5.0 * noise_s).max(0.05 * gmax);
    let prom = |a: f64, b: f64| (6.0 * noise_s).max(0.15 * a.min(b));
    let mut stack: Vec<Found> = Vec::new();
    let mut run = (0usize, f64::MAX);
    for i in 0..m {
        let v = c[i];
        if v < run.1 {
            run = (i, v);
        }
        let is_max = (i == 0 || v > c[i - 1]) && (i + 1 == m || v >= c[i + 1]);
        // The smooth is an off-centre fit near the ends, several times noisier: a band there
        // must stand out three times as far (a band cut by the scan end still does).
        let near_end = i < edge_zone || i + edge_zone >= m;
        if !is_max || v <= if near_end { 3.0 * thr } else { thr } {
            continue;
        }
        let mut cand = Found {
            peak: i,
            value: v,
            dip_before: None,
        };
        loop {
            let Some(top) = stack.last().copied() else {
                stack.push(cand);
                run = (i, v);
                break;
            };
            if top.value.min(v) - run.1 >= prom(top.value, v) {
                cand.dip_before = Some(run);
                stack.push(cand);
                run = (i, v);
                break;
            }
            if top.value >= v {
                break;
            }
            stack.pop();
            if let Some(d) = top.dip_before
                && d.1 < run.1
            {
                run = d;
            }
        }
    }
    stack
}

/// The emission region, in even-grid indices: out from the bands by
/// [`REGION_HALF_WIDTHS`] of their own half widths, or further while above the noise.
fn region_of(c: &[f64], bands: &[Found], noise_s: f64) -> (usize, usize) {
    let m = c.len();
    // A side with a neighbouring band is that band's to cover: a walk that reaches the dip
    // between them adds nothing (the trap band's walk would otherwise run on across the band
    // edge).
    let reach = |k: usize, dir: isize| -> usize {
        let b = &bands[k];
        let stop = if dir < 0 {
            b.dip_before.map(|d| d.0)
        } else {
            bands.get(k + 1).and_then(|n| n.dip_before).map(|d| d.0)
        };
        if let Some(stop) = stop {
            let below_half = if dir < 0 {
                c[stop..=b.peak].iter().any(|&v| v <= 0.5 * b.value)
            } else {
                c[b.peak..=stop].iter().any(|&v| v <= 0.5 * b.value)
            };
            if !below_half {
                return 0;
            }
        }
        let low = (3.0 * noise_s).max(0.01 * b.value);
        let mut half_at = None;
        let mut low_at = None;
        let mut j = b.peak as isize;
        while j >= 0 && j < m as isize && low_at.is_none() {
            let v = c[j as usize];
            let d = (j - b.peak as isize).unsigned_abs();
            if half_at.is_none() && v <= 0.5 * b.value {
                half_at = Some(d);
            }
            if v <= low {
                low_at = Some(d);
            }
            j += dir;
        }
        let to_end = if dir < 0 { b.peak } else { m - 1 - b.peak };
        let by_half = half_at.map_or(to_end, |h| (REGION_HALF_WIDTHS * h as f64).ceil() as usize);
        by_half.max(low_at.unwrap_or(to_end)).min(to_end)
    };
    // Every band's own reach counts, so a noise bump on a broad band's flank cannot cut the
    // region short (the baseline would then swallow the flank).
    let lo = (0..bands.len())
        .map(|k| bands[k].peak - reach(k, -1))
        .min()
        .unwrap_or(0);
    let hi = (0..bands.len())
        .map(|k| bands[k].peak + reach(k, 1))
        .max()
        .unwrap_or(m - 1);
    (lo, hi)
}

/// A straight baseline through the points outside the emission region, with 3σ rejection;
/// a constant from one end when the other end has too few free points.
fn fit_baseline(u: &Uniform, y: &[f64], (lo, hi): (usize, usize)) -> Option<(Baseline, String, Option<&'static str>)> {
    let m = y.len();
    let left = 0..lo;
    let right = (hi + 1).min(m)..m;
    let (nl, nr) = (left.len(), right.len());
    let use_l = nl >= MIN_BASELINE_POINTS;
    let use_r = nr >= MIN_BASELINE_POINTS;
    if !use_l && !use_r {
        return None;
    }
    let line = use_l && use_r;
    let idx = || {
        let l = if use_l { left.clone() } else { 0..0 };
        let r = if use_r { right.clone() } else { m..m };
        l.chain(r)
    };
    let ref_nm = 0.5 * (u.nm(0.0) + u.nm((m - 1) as f64));
    let mut b = Baseline {
        ref_nm,
        value: 0.0,
        slope: 0.0,
    };
    let mut limit = f64::INFINITY;
    let mut resid: Vec<f64> = Vec::with_capacity(nl + nr);
    for _ in 0..4 {
        let (mut s0, mut sx, mut sy, mut sxx, mut sxy) = (0.0, 0.0, 0.0, 0.0, 0.0);
        for i in idx() {
            let x = u.nm(i as f64) - ref_nm;
            if (y[i] - b.at(x + ref_nm)).abs() > limit {
                continue;
            }
            s0 += 1.0;
            sx += x;
            sy += y[i];
            sxx += x * x;
            sxy += x * y[i];
        }
        if s0 < 2.0 {
            break;
        }
        let det = s0 * sxx - sx * sx;
        let (value, slope) = if line && det.abs() > 1e-12 * s0 * sxx.max(1e-300) {
            let slope = (s0 * sxy - sx * sy) / det;
            ((sy - slope * sx) / s0, slope)
        } else {
            (sy / s0, 0.0)
        };
        b = Baseline { ref_nm, value, slope };
        resid.clear();
        resid.extend(idx().map(|i| (y[i] - b.at(u.nm(i as f64))).abs()));
        let sigma = mad_sd(&mut resid);
        limit = 3.0 * sigma.max(1e-300);
    }
    if !b.value.is_finite() || !b.slope.is_finite() {
        return None;
    }
    let (how, side) = if line {
        (
            "straight line fitted to both ends outside the emission (3σ rejection)".to_string(),
            None,
        )
    } else if use_l {
        (
            "constant fitted to the blue end outside the emission (3σ rejection)".to_string(),
            Some("blue"),
        )
    } else {
        (
            "constant fitted to the red end outside the emission (3σ rejection)".to_string(),
            Some("red"),
        )
    };
    Some((b, how, side))
}

/// What [`measure_band`] found.
struct Measured {
    peak_nm: f64,
    peak_ev: Option<f64>,
    fwhm_nm: Option<f64>,
    fwhm_mev: Option<f64>,
    height: f64,
    width_from: String,
}

/// Half windows used for band-matched smoothing: a short ladder, so the thread's cache of
/// Savitzky-Golay weights stays small.
const LADDER: [usize; 13] = [2, 3, 4, 5, 6, 8, 10, 13, 16, 20, 25, 32, MAX_HALF_WINDOW];

fn ladder(points: f64, m: usize) -> usize {
    let cap = (m.saturating_sub(1) / 2).max(1);
    LADDER
        .iter()
        .copied()
        .rfind(|&h| (h as f64) <= points && h <= cap)
        .unwrap_or(0)
}

/// Peak, peak energy, widths and height of one band, on `cu` (the even grid, corrected),
/// within the indices `lo..=hi` that separate it from its neighbours.
fn measure_band(
    u: &Uniform,
    c: &[f64],
    cu: &[f64],
    b: Found,
    lo: usize,
    hi: usize,
    overlap_lo: bool,
    overlap_hi: bool,
    order: usize,
) -> Result<Measured> {
    let m = cu.len();
    let step = u.step_nm;
    // A first width from the stage-one smooth sets the matched windows.
    let half_dist = |dir: isize| -> Option<f64> {
        let mut j = b.peak as isize;
        while j >= lo as isize && j <= hi as isize {
            if c[j as usize] <= 0.5 * b.value {
                return Some((j - b.peak as isize).unsigned_abs() as f64);
            }
            j += dir;
        }
        None
    };
    let fwhm1_pts = match (half_dist(-1), half_dist(1)) {
        (Some(a), Some(z)) => a + z,
        (Some(a), None) => 2.0 * a,
        (None, Some(z)) => 2.0 * z,
        (None, None) => (hi - lo) as f64,
    };
    let hp = ladder(0.5 * fwhm1_pts, m).max(2).min((m - 1) / 2);
    let hw = ladder(0.25 * fwhm1_pts, m);
    // The peak is the zero of a local cubic's slope over about one FWHM: a quadratic would
    // be less noisy but is biased by the band's skew in wavelength (a Gaussian in energy is
    // skewed in nm), about 0.1-0.2 nm on a 1 nm grid; a wider window outgrows the cubic.
    let op = 3.min(2 * hp - 1);
    let ow = if hw >= 2 { order.min(2 * hw - 1) } else { 0 };
    let val = |i: usize| -> f64 {
        if hw >= 2 {
            savgol::at(cu, hw, ow, 0, step, i).unwrap_or(cu[i])
        } else {
            cu[i]
        }
    };
    let sp = |i: usize| savgol::at(cu, hp, op, 0, step, i).unwrap_or(cu[i]);
    let d1 = |i: usize| savgol::at(cu, hp, op, 1, step, i).unwrap_or(0.0);
    // The peak: climb the matched smooth from the stage-one maximum, then the zero of its
    // first derivative.
    let mut ip = b.peak;
    for _ in 0..m {
        if ip < hi && sp(ip + 1) > sp(ip) {
            ip += 1;
        } else if ip > lo && sp(ip - 1) > sp(ip) {
            ip -= 1;
        } else {
            break;
        }
    }
    let zero = |a: f64, z: f64, i: usize| if a == z { i as f64 } else { i as f64 + a / (a - z) };
    let fi = if ip + 1 < m && d1(ip) > 0.0 && d1(ip + 1) <= 0.0 {
        zero(d1(ip), d1(ip + 1), ip)
    } else if ip > 0 && d1(ip - 1) > 0.0 && d1(ip) <= 0.0 {
        zero(d1(ip - 1), d1(ip), ip - 1)
    } else {
        ip as f64
    };
    let peak_nm = u.nm(fi);
    // Values between grid points: the parabola through the three nearest.
    let vfrac = |f: f64| -> f64 {
        let i0 = (f.round() as usize).clamp(1, m - 2);
        let t = f - i0 as f64;
        let (a, z, e) = (val(i0 - 1), val(i0), val(i0 + 1));
        z + 0.5 * t * (e - a) + 0.5 * t * t * (a - 2.0 * z + e)
    };
    let height = vfrac(fi);
    // Half-height crossing in wavelength: fractional index, or None at a neighbour or the end.
    let cross = |dir: isize, level: f64, weight: &dyn Fn(usize) -> f64, from: f64| -> Option<f64> {
        let start = if dir > 0 {
            from.ceil() as isize
        } else {
            from.floor() as isize
        };
        let mut prev = (from, level * 2.0);
        let mut j = start;
        while j >= lo as isize && j <= hi as isize {
            let v = val(j as usize) * weight(j as usize);
            if v <= level {
                let (pf, pv) = prev;
                let f = if pv == v { 0.0 } else { (pv - level) / (pv - v) };
                return Some(pf + f * (j as f64 - pf));
            }
            prev = (j as f64, v);
            j += dir;
        }
        None
    };
    let one = |_: usize| 1.0;
    let (wl_lo, wl_hi) = (
        cross(-1, 0.5 * height, &one, fi).filter(|_| !overlap_lo),
        cross(1, 0.5 * height, &one, fi).filter(|_| !overlap_hi),
    );
    // In energy: I(E) = I(λ) λ²/hc peaks where d ln I(λ)/dλ + 2/λ = 0, a little red of the
    // wavelength peak.
    let g = |i: usize| d1(i) + 2.0 * sp(i) / u.nm(i as f64);
    let mut j = fi.floor() as usize;
    let mut fe = None;
    while j < hi.min(m - 1) {
        let (a, z) = (g(j), g(j + 1));
        if a > 0.0 && z <= 0.0 {
            fe = Some(zero(a, z, j));
            break;
        }
        if a <= 0.0 && j as f64 + 1.0 > fi + 1.0 {
            break;
        }
        j += 1;
    }
    let jac = |i: usize| u.nm(i as f64).powi(2) / HC_EV_NM;
    let (mut peak_ev, mut e_lo, mut e_hi) = (None, None, None);
    if let Some(fe) = fe {
        let le = u.nm(fe);
        peak_ev = Some(HC_EV_NM / le);
        let top = vfrac(fe) * le * le / HC_EV_NM;
        e_lo = cross(-1, 0.5 * top, &jac, fe).filter(|_| !overlap_lo);
        e_hi = cross(1, 0.5 * top, &jac, fe).filter(|_| !overlap_hi);
    }
    let ev = |f: f64| HC_EV_NM / u.nm(f);
    let lp = peak_nm;
    let ep = peak_ev;
    let (fwhm_nm, fwhm_mev, width_from) = match (wl_lo, wl_hi) {
        (Some(a), Some(z)) => (
            Some(u.nm(z) - u.nm(a)),
            e_lo.zip(e_hi).map(|(a, z)| 1000.0 * (ev(a) - ev(z))),
            "both sides".to_string(),
        ),
        // One free side, mirrored in energy about the peak.
        (Some(a), None) if overlap_hi => {
            let (e_a, e_p) = (ev(a), HC_EV_NM / lp);
            let red = HC_EV_NM / (2.0 * e_p - e_a);
            (
                (2.0 * e_p - e_a > 0.0).then(|| red - u.nm(a)),
                e_lo.zip(ep).map(|(x, p)| 2000.0 * (ev(x) - p)),
                "blue side, mirrored in energy".to_string(),
            )
        }
        (None, Some(z)) if overlap_lo => {
            let (e_z, e_p) = (ev(z), HC_EV_NM / lp);
            let blue = HC_EV_NM / (2.0 * e_p - e_z);
            (
                Some(u.nm(z) - blue),
                e_hi.zip(ep).map(|(x, p)| 2000.0 * (p - ev(x))),
                "red side, mirrored in energy".to_string(),
            )
        }
        _ => (None, None, "not measured".to_string()),
    };
    Ok(Measured {
        peak_nm,
        peak_ev,
        fwhm_nm,
        fwhm_mev,
        height,
        width_from,
    })
}

/// Trapezoids of `v` over `[from, to]` on the grid `nm` (partial intervals cut by linear
/// interpolation): (∫ v dλ, ∫ v λ²/hc dE).
fn integrate(nm: &[f64], v: &[f64], from: f64, to: f64) -> (f64, f64) {
    let (mut wl, mut en) = (0.0, 0.0);
    if !(to > from) {
        return (0.0, 0.0);
    }
    let start = nm.partition_point(|&x| x <= from).saturating_sub(1);
    for i in (start + 1)..nm.len() {
        let (x0, x1) = (nm[i - 1], nm[i]);
        if x0 >= to {
            break;
        }
        if x1 <= from {
            continue;
        }
        let (a, b) = (x0.max(from), x1.min(to));
        let lerp = |x: f64| v[i - 1] + (v[i] - v[i - 1]) * (x - x0) / (x1 - x0);
        let (va, vb) = (lerp(a), lerp(b));
        wl += 0.5 * (va + vb) * (b - a);
        let (ia, ib) = (va * a * a / HC_EV_NM, vb * b * b / HC_EV_NM);
        en += 0.5 * (ia + ib) * (HC_EV_NM / a - HC_EV_NM / b);
    }
    (wl, en)
}
