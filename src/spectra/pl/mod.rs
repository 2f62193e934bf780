//! Photoluminescence analysis as pure functions on a [`Trace`] (nm ascending): peak, width and
//! integrals over wavelength and energy, baseline removed. Nothing here does I/O or changes its
//! input; doubtful results come back with warnings.
//!
//! Why this file is about 600 lines: it is the analysis's one pipeline, read top to bottom in
//! the order below; its parts with their own concern live beside it (`lines.rs`, `baseline.rs`,
//! `measure.rs`).
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
//!
//! Here: the results, [`analyze_pl`] (the steps in order), the grid gaps and the even grid
//! (steps 1 and 2) and the noise estimates. `lines` is step 3, `baseline` steps 4 and 5 (the
//! emission region, its baseline and the bands), `measure` steps 6 and 7.

mod baseline;
mod lines;
mod measure;

use super::analysis::{AnalysisSettings, Uniform, bounded_grid, half_window};
use super::savgol;
use super::{HC_EV_NM, Trace};
use crate::error::{Result, invalid};
use serde::Serialize;

use baseline::edge_line;
use baseline::edge_min;
use baseline::find_bands;
use baseline::fit_baseline;
use baseline::region_of;
use lines::apply_masks;
use lines::corrected_raw;
use lines::find_lines;
use lines::noise_of_uneven;
use measure::integrate;
use measure::measure_band;

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
