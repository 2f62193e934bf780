//! The band edge of an absorbance spectrum, modelled in energy: where the first excitonic
//! transition is, how wide it is and how sure we are, as pure functions of a [`Trace`].
//!
//! A colloidal sample's spectrum near the band edge is a superposition of size-distributed
//! transitions, each close to a Gaussian in energy (Pesika, Stebe & Searson, Adv. Mater. 15,
//! 1289 (2003), volume and page from memory; Segets et al., ACS Nano (2012),
//! doi 10.1021/nn303130d). So the work is done in energy:
//!
//! 1. The spectrum is put on an even energy grid whose step follows the file's own step
//!    (bounded to 1-10 meV): dense scans are averaged into bins, coarse ones interpolated, so
//!    cost stays linear in points whatever the point density.
//! 2. Candidate transitions are the minima of the second derivative at several smoothing
//!    widths set in energy (15-100 meV half windows), each judged against the noise measured
//!    locally (a noisy detector end does not borrow the quiet middle's noise), with its width
//!    and amplitude estimated from the derivative's zero crossings.
//! 3. The first exciton is the reddest candidate that stands on evidence: well above the local
//!    noise, wider than an instrument artefact (a step or spike is narrower than any excitonic
//!    band), and strong against the spectrum's own absorbance. Where the material is known, the
//!    region its sizing curve covers guides the choice and nothing redder than the bulk band
//!    gap is ever taken.
//! 4. A sum of Gaussians in energy (the first transition and the next one or two) on a linear
//!    background (scattering plus continuum, locally) is fitted by weighted Levenberg-Marquardt
//!    from the transparent red side to a few tenths of an eV above. The first transition's
//!    centre, its own HWHM (not the composite's), height and their uncertainties come from the
//!    fit; a fit that fails its checks falls back to the derivative estimate, and says so.
//!
//! This file holds the types, the thresholds and the choice (step 3); `grid.rs` step 1 and the
//! local noise, `candidates.rs` step 2, `fit/` step 4 (`fit/normal.rs` the arithmetic of each
//! Levenberg-Marquardt step: Jacobian products, residuals, Cholesky).

use super::savgol;
use super::{HC_EV_NM, Trace};
use serde::Serialize;

/// What is known about the sample that helps to find its first exciton.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct BandEdgeHint {
    /// The core material, for messages.
    pub material: Option<String>,
    /// First-exciton wavelengths the material's sizing curve covers (nm, red end and blue end
    /// in either order).
    pub expected_nm: Option<(f64, f64)>,
    /// The bulk band gap as a wavelength: no first exciton can lie redder.
    pub bulk_gap_nm: Option<f64>,
}

/// One fitted transition.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Transition {
    pub centre_nm: f64,
    pub centre_ev: f64,
    pub hwhm_ev: f64,
    /// Peak height of this transition alone (absorbance).
    pub height: f64,
}

/// How the band edge was measured, with the fit's evidence.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct BandEdge {
    /// "gaussian fit in energy" or "second derivative" (the fallback).
    pub method: &'static str,
    /// "good", "poor" (the model leaves structure in the residual) or "fallback".
    pub quality: &'static str,
    pub centre_ev: f64,
    /// One standard deviation of the centre, from the fit's covariance (or the derivative's
    /// width where there is no fit).
    pub centre_sd_ev: f64,
    pub hwhm_ev: f64,
    pub hwhm_sd_ev: f64,
    /// Height of the first transition alone.
    pub height: f64,
    /// The fitted model (all transitions and background) at the first transition's centre.
    pub composite_abs: f64,
    /// Root-mean-square residual of the fit over its window, and that over the local noise.
    pub residual_rms: f64,
    pub residual_over_noise: f64,
    pub fit_from_nm: f64,
    pub fit_to_nm: f64,
    /// The first transition and the next ones that were fitted, red to blue.
    pub transitions: Vec<Transition>,
    /// True when the composite has no maximum near the first transition (a shoulder).
    pub shoulder: bool,
    pub warnings: Vec<String>,
}

/// An even grid in energy, ascending (red to blue).
#[derive(Debug, Clone)]
pub struct EnergyGrid {
    pub e0_ev: f64,
    pub step_ev: f64,
    pub y: Vec<f64>,
}

impl EnergyGrid {
    pub fn e(&self, i: f64) -> f64 {
        self.e0_ev + i * self.step_ev
    }
    fn index(&self, e: f64) -> f64 {
        (e - self.e0_ev) / self.step_ev
    }
}

/// The smallest and largest energy step of the working grid (eV).
const MIN_STEP_EV: f64 = 0.001;
const MAX_STEP_EV: f64 = 0.010;
/// Smoothing half-widths at which candidate transitions are sought (eV).
const SCALES_EV: [f64; 5] = [0.015, 0.025, 0.040, 0.065, 0.100];
/// The narrowest Gaussian width (σ) taken as excitonic. Room-temperature band-edge
/// transitions of colloidal crystals are wider than about 20 meV HWHM (common practice);
/// instrument steps and spikes are narrower.
const MIN_SIGMA_EV: f64 = 0.012;
const MAX_SIGMA_EV: f64 = 0.35;
/// A candidate stands above the noise when its second-derivative minimum exceeds this many
/// standard deviations of the derivative's noise.
const MIN_SIGNIFICANCE: f64 = 6.0;
/// ... and its estimated height is at least this fraction of the band edge's absorbance scale.
const MIN_RELATIVE_HEIGHT: f64 = 0.015;

mod candidates;
mod fit;
mod grid;
#[cfg(test)]
mod tests;

use candidates::candidates;
use fit::fit_band_edge;
use grid::local_noise;
pub use grid::{LocalNoise, energy_grid};

/// A possible transition found in the second derivative.
#[derive(Debug, Clone)]
struct Candidate {
    e_ev: f64,
    sigma_ev: f64,
    height: f64,
    significance: f64,
    /// The derivative's positive lobes (red side, blue side) over its minimum's depth. A lone
    /// Gaussian's are equal (about 0.45 each); a step's are one-sided (about 1 and 0).
    lobes: (f64, f64),
    /// Where it was found: the smoothing width's index, the bin, and how far its lobes reach
    /// in bins (the lobes are measured only for the candidates kept).
    found_at: (usize, usize, usize),
}

/// What the search for the first transition found.
#[derive(Debug, Clone)]
pub struct Found {
    /// None when no feature stands on evidence (the reasons are in `warnings`).
    pub edge: Option<BandEdge>,
    /// Typical noise of one point of the working energy grid (absorbance).
    pub noise: f64,
    pub warnings: Vec<String>,
}

/// Finds the first excitonic transition and fits the band edge.
pub fn first_transition(t: &Trace, hint: &BandEdgeHint, saturation_abs: f64) -> Found {
    let mut warnings = Vec::new();
    let few = |mut warnings: Vec<String>| {
        warnings.push("too few points to analyse the band edge".into());
        Found {
            edge: None,
            noise: 0.0,
            warnings,
        }
    };
    let Some(g) = energy_grid(t) else {
        return few(warnings);
    };
    let Some(noise) = local_noise(&g.y) else {
        return few(warnings);
    };
    let found = candidates(&g, &noise);
    let Some((ci, first)) = choose(&g, &noise, &found, hint, saturation_abs, &mut warnings) else {
        return Found {
            edge: None,
            noise: noise.typical,
            warnings,
        };
    };
    let edge = fit_chosen(&g, &noise, &found, ci, &first);
    Found {
        edge: Some(edge),
        noise: noise.typical,
        warnings,
    }
}

/// The first exciton among the candidates (its index, and the candidate with its σ taken from
/// the red side where that is measurable), or None when no candidate stands on evidence; the
/// reasons go to `warnings`.
fn choose(
    g: &EnergyGrid,
    noise: &LocalNoise,
    found: &[Candidate],
    hint: &BandEdgeHint,
    saturation_abs: f64,
    warnings: &mut Vec<String>,
) -> Option<(usize, Candidate)> {
    let top = noise
        .smooth
        .iter()
        .copied()
        .fold(0.0f64, f64::max)
        .min(saturation_abs.max(0.5));
    // A step down in absorbance towards the blue (a detector or grating change) has a
    // derivative trough with a strong positive lobe on its blue side only. A real first
    // exciton has its positive lobe on the red side, where the curve rises out of the
    // transparent region (its blue lobe can vanish into the next transition's trough).
    // A real band also leaves the curve higher on its blue side than on its red side, where
    // the sample turns transparent; a step down towards the blue leaves it lower.
    let level = |e: f64| {
        let i = g.index(e).round().clamp(0.0, (g.y.len() - 1) as f64) as usize;
        noise.smooth[i]
    };
    let step_like = |c: &Candidate| {
        let reach = 3.0 * c.sigma_ev.max(MIN_SIGMA_EV);
        c.lobes.1 > 0.75 && c.lobes.0 < 0.35 * c.lobes.1 && level(c.e_ev - reach) > level(c.e_ev + reach)
    };
    // Much weaker than the transitions just above it: a first exciton carries an oscillator
    // strength comparable to the next transitions (common practice), noise or an artefact
    // does not.
    let dwarfed = |c: &Candidate| {
        found
            .iter()
            .filter(|o| {
                o.e_ev > c.e_ev
                    && o.e_ev < c.e_ev + 0.6
                    && o.significance >= MIN_SIGNIFICANCE
                    && o.sigma_ev <= MAX_SIGMA_EV
            })
            .any(|o| c.height < 0.08 * o.height)
    };
    // A faint trough on the flank of a far stronger one next to it is the flank's noise, not
    // a transition of its own; and a weaker minimum inside a stronger one's trough (closer
    // than its σ, where the trough's zero crossings lie) is a wiggle of noise within the same
    // band seen at a narrower smoothing, not a first transition: first and second transitions
    // lie 0.1 eV or more apart (common practice) and each has its own trough.
    let shadowed = |c: &Candidate| {
        found.iter().any(|o| {
            let apart = o.e_ev - c.e_ev;
            let reach = o.sigma_ev.max(c.sigma_ev);
            apart > 0.0
                && ((apart < 1.5 * reach && o.significance > 10.0 * c.significance)
                    || (apart < reach && o.significance > 4.0 * c.significance))
        })
    };
    let strong = |c: &Candidate| {
        let i = g.index(c.e_ev).round().clamp(0.0, (g.y.len() - 1) as f64) as usize;
        !step_like(c)
            && !shadowed(c)
            && !dwarfed(c)
            && c.significance >= MIN_SIGNIFICANCE
            && c.sigma_ev >= MIN_SIGMA_EV
            && c.sigma_ev <= MAX_SIGMA_EV
            && c.height >= MIN_RELATIVE_HEIGHT * top
            && c.height >= 4.0 * noise.at(i)
            && noise.smooth[i] < saturation_abs
    };
    let e_bulk = hint.bulk_gap_nm.map(|l| HC_EV_NM / l);
    let region = hint.expected_nm.map(|(a, b)| {
        let (lo, hi) = (HC_EV_NM / a.max(b), HC_EV_NM / a.min(b));
        // A margin of 0.05 eV either side: curves are fitted to data that end somewhere.
        (lo - 0.05, hi + 0.05)
    });
    let mut below_gap: Option<f64> = None;
    let mut outside: Option<f64> = None;
    let mut chosen: Option<usize> = None;
    let mut fallback_outside: Option<usize> = None;
    for (i, c) in found.iter().enumerate() {
        if !strong(c) {
            continue;
        }
        if let Some(eb) = e_bulk
            && c.e_ev < eb - 0.01
        {
            // The sample's band edge is not this material's: whatever is bluer would be its
            // second transition, not a first exciton.
            below_gap = Some(c.e_ev);
            break;
        }
        if let Some((lo, hi)) = region
            && (c.e_ev < lo || c.e_ev > hi)
        {
            if c.e_ev < lo {
                outside.get_or_insert(c.e_ev);
            }
            fallback_outside.get_or_insert(i);
            continue;
        }
        chosen = Some(i);
        break;
    }
    let material = hint.material.as_deref().unwrap_or("this material");
    if let Some(e) = below_gap {
        warnings.push(format!(
            "a band edge at {:.0} nm is redder than {material}'s bulk band gap ({:.0} nm): it cannot be {material}'s first exciton; check the material",
            HC_EV_NM / e,
            hint.bulk_gap_nm.unwrap_or(f64::NAN)
        ));
        return None;
    }
    if chosen.is_none()
        && let Some(i) = fallback_outside
    {
        warnings.push(format!(
            "the first exciton at {:.0} nm is outside the range {material}'s sizing curve covers",
            HC_EV_NM / found[i].e_ev
        ));
        chosen = Some(i);
    } else if let Some(e) = outside {
        warnings.push(format!(
            "a weaker feature at {:.0} nm, outside the range {material}'s sizing curve covers, was not taken as the first exciton",
            HC_EV_NM / e
        ));
    }
    let ci = chosen?;
    let mut first = found[ci].clone();
    if let Some(s) = red_side_sigma(g, noise, first.e_ev) {
        // The red side can include a scattering tail: never more than twice the derivative's.
        first.sigma_ev = s.min(2.0 * first.sigma_ev).clamp(MIN_SIGMA_EV, MAX_SIGMA_EV);
    }
    Some((ci, first))
}

/// The band edge of the chosen first transition: the fit, else the derivative's estimate,
/// with the plausibility of its red side checked.
fn fit_chosen(g: &EnergyGrid, noise: &LocalNoise, found: &[Candidate], ci: usize, first: &Candidate) -> BandEdge {
    let higher: Vec<&Candidate> = found[ci + 1..]
        .iter()
        .filter(|c| c.significance >= 4.0 && c.e_ev > first.e_ev + 0.5 * first.sigma_ev)
        .collect();
    let edge = fit_band_edge(g, noise, first, &higher);
    let mut edge = match edge {
        Some(e) => e,
        None => derivative_estimate(g, noise, first),
    };
    // Plausibility: absorption that rises well red of the first exciton means a redder
    // feature was missed or the sample scatters strongly.
    if let Some(onset) = onset_ev(g, noise, edge.centre_ev, edge.height)
        && onset < edge.centre_ev - 4.0 * edge.hwhm_ev.max(0.03) - 0.05
    {
        edge.warnings.push(format!(
            "absorption already rises at {:.0} nm, well red of the first exciton at {:.0} nm: a redder feature may have been missed, or the sample scatters",
            HC_EV_NM / onset,
            HC_EV_NM / edge.centre_ev
        ));
    }
    edge
}

/// The stages of [`first_transition`] one at a time, for `benches/analysis_stages.rs`: not
/// an interface to build on.
#[doc(hidden)]
pub mod stages {
    use super::*;

    /// A spectrum carried up to the choice of its first transition.
    pub struct Prepared {
        pub grid: EnergyGrid,
        pub noise: LocalNoise,
        found: Vec<Candidate>,
        chosen: Option<(usize, Candidate)>,
    }

    pub fn prepare(t: &Trace) -> Option<Prepared> {
        let grid = energy_grid(t)?;
        let noise = local_noise(&grid.y)?;
        let found = super::candidates(&grid, &noise);
        let chosen = super::choose(&grid, &noise, &found, &BandEdgeHint::default(), 2.0, &mut Vec::new());
        Some(Prepared {
            grid,
            noise,
            found,
            chosen,
        })
    }

    /// The local noise of the grid's points; its typical value.
    pub fn noise(p: &Prepared) -> Option<f64> {
        local_noise(&p.grid.y).map(|n| n.typical)
    }

    /// The candidate search at every width; how many candidates it kept.
    pub fn candidates(p: &Prepared) -> usize {
        super::candidates(&p.grid, &p.noise).len()
    }

    /// The choice of the first transition among the candidates (without a hint).
    pub fn choose(p: &Prepared) -> Option<usize> {
        super::choose(
            &p.grid,
            &p.noise,
            &p.found,
            &BandEdgeHint::default(),
            2.0,
            &mut Vec::new(),
        )
        .map(|c| c.0)
    }

    /// The band-edge fit of the chosen transition, its fallback and plausibility check.
    pub fn fit(p: &Prepared) -> Option<BandEdge> {
        let (ci, first) = p.chosen.as_ref()?;
        Some(fit_chosen(&p.grid, &p.noise, &p.found, *ci, first))
    }
}

/// σ of the first transition from the red side of the smoothed curve, which higher
/// transitions barely touch: where it falls to half its height over the red-end level.
fn red_side_sigma(g: &EnergyGrid, noise: &LocalNoise, centre: f64) -> Option<f64> {
    let s = &noise.smooth;
    let ic = g.index(centre).round();
    if ic < 3.0 || ic >= s.len() as f64 {
        return None;
    }
    let ic = ic as usize;
    let floor = s[..ic].iter().copied().fold(f64::MAX, f64::min);
    let top = s[ic] - floor;
    if top <= 0.0 {
        return None;
    }
    let mut i = ic;
    while i > 0 && s[i] - floor > 0.5 * top {
        i -= 1;
    }
    if i == 0 {
        return None;
    }
    let (a, b) = (s[i] - floor, s[i + 1] - floor);
    let at = i as f64 + if b > a { (0.5 * top - a) / (b - a) } else { 0.0 };
    Some((ic as f64 - at) * g.step_ev / HWHM_PER_SIGMA)
}

/// Where, scanning from the red end, the smoothed absorbance first rises by a quarter of the
/// first transition's height over its red-end level.
fn onset_ev(g: &EnergyGrid, noise: &LocalNoise, centre: f64, height: f64) -> Option<f64> {
    let stop = g.index(centre).floor().max(0.0) as usize;
    let s = &noise.smooth;
    if stop < 4 || height <= 0.0 {
        return None;
    }
    let floor = s[..stop].iter().copied().fold(f64::MAX, f64::min);
    (0..stop).find(|&i| s[i] - floor > 0.25 * height).map(|i| g.e(i as f64))
}

fn derivative_estimate(g: &EnergyGrid, noise: &LocalNoise, c: &Candidate) -> BandEdge {
    let i = g.index(c.e_ev).round().clamp(0.0, (g.y.len() - 1) as f64) as usize;
    let sigma = c.sigma_ev.max(MIN_SIGMA_EV);
    let composite = noise.smooth[i];
    BandEdge {
        method: "second derivative",
        quality: "fallback",
        centre_ev: c.e_ev,
        centre_sd_ev: sigma / c.significance.max(1.0).sqrt(),
        hwhm_ev: sigma * HWHM_PER_SIGMA,
        hwhm_sd_ev: 0.25 * sigma * HWHM_PER_SIGMA,
        height: c.height.min(composite.max(0.0)),
        composite_abs: composite,
        residual_rms: f64::NAN,
        residual_over_noise: f64::NAN,
        fit_from_nm: HC_EV_NM / (c.e_ev - 2.0 * sigma),
        fit_to_nm: HC_EV_NM / (c.e_ev + 2.0 * sigma),
        transitions: vec![],
        shoulder: true,
        warnings: vec![
            "the band-edge fit failed its checks: first exciton and width are from the second derivative and less certain"
                .into(),
        ],
    }
}

/// HWHM of a Gaussian in units of its σ: √(2 ln 2).
pub const HWHM_PER_SIGMA: f64 = 1.177_410_022_515_474_6;
