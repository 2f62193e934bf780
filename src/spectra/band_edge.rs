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

/// Puts a trace (nm ascending) on an even energy grid, red to blue.
pub fn energy_grid(t: &Trace) -> Option<EnergyGrid> {
    let n = t.nm.len();
    if n < 8 || t.y.len() != n || t.nm[0] <= 0.0 {
        return None;
    }
    let e: Vec<f64> = t.nm.iter().rev().map(|l| HC_EV_NM / l).collect();
    // Red to blue: native point j of the energy axis is the trace's point n-1-j.
    let yr: Vec<f64> = t.y.iter().rev().copied().collect();
    let (e, yr) = (&e[..n], &yr[..n]);
    // The median step. On an even wavelength grid (the common case) the energy steps grow
    // steadily towards the blue, so the middle one is the median; otherwise select it.
    let rising = e.windows(3).all(|w| w[1] - w[0] > 0.0 && w[2] - w[1] >= w[1] - w[0]);
    let med = if rising {
        let mid = (n - 1) / 2;
        e[mid + 1] - e[mid]
    } else {
        let mut steps: Vec<f64> = e.windows(2).map(|w| w[1] - w[0]).filter(|d| *d > 0.0).collect();
        if steps.is_empty() {
            return None;
        }
        let mid = steps.len() / 2;
        *steps.select_nth_unstable_by(mid, f64::total_cmp).1
    };
    let step = med.clamp(MIN_STEP_EV, MAX_STEP_EV);
    let (first, last) = (e[0], e[n - 1]);
    let m = ((last - first) / step).floor() as usize + 1;
    if m < 8 {
        return None;
    }
    let mut out = vec![0.0; m];
    let mut j = 0usize; // first native point not left of the current bin
    for (i, v) in out.iter_mut().enumerate() {
        let c = first + i as f64 * step;
        let (lo, hi) = (c - 0.5 * step, c + 0.5 * step);
        while j < n && e[j] < lo {
            j += 1;
        }
        let (mut k, mut sum) = (j, 0.0);
        while k < n && e[k] < hi {
            sum += yr[k];
            k += 1;
        }
        let count = k - j;
        *v = if count >= 2 {
            sum / count as f64
        } else {
            // Interpolate between the native points around the centre (j is the first point
            // at or right of the bin's left edge, so the bracket is found by walking on).
            let mut r = j.max(1);
            while r < n - 1 && e[r] < c {
                r += 1;
            }
            while r > 1 && e[r - 1] > c {
                r -= 1;
            }
            let (e0, e1) = (e[r - 1], e[r]);
            if e1 > e0 {
                yr[r - 1] + (yr[r] - yr[r - 1]) * ((c - e0) / (e1 - e0)).clamp(0.0, 1.0)
            } else {
                yr[r]
            }
        };
    }
    Some(EnergyGrid {
        e0_ev: first,
        step_ev: step,
        y: out,
    })
}

/// Noise per point, measured locally: the median absolute residual from a light smooth in
/// blocks, never below half the median over blocks (a flat stretch is not noise-free).
pub struct LocalNoise {
    /// Each block's noise, already floored at half the typical value.
    per_block: Vec<f64>,
    pub typical: f64,
    pub smooth: Vec<f64>,
}

/// Points per noise block.
const NOISE_BLOCK: usize = 48;

impl LocalNoise {
    pub fn at(&self, i: usize) -> f64 {
        self.per_block[(i / NOISE_BLOCK).min(self.per_block.len() - 1)]
    }
    /// The lowest noise of any block.
    fn quietest(&self) -> f64 {
        self.per_block.iter().copied().fold(f64::INFINITY, f64::min)
    }
}

fn local_noise(y: &[f64]) -> Option<LocalNoise> {
    let half = 3;
    let smooth = savgol::filter(y, half, 2, 0, 1.0).ok()?;
    // The residual from a least-squares smooth has variance σ²(1 - c₀), c₀ the centre weight.
    let c0 = savgol::coefficients(half, 2, 0).ok()?[half];
    let scale = 1.4826 / (1.0 - c0).sqrt();
    let block = NOISE_BLOCK;
    let mut r: Vec<u64> = Vec::with_capacity(block);
    let mut per_block = Vec::with_capacity(y.len() / block + 1);
    for (yc, sc) in y.chunks(block).zip(smooth.chunks(block)) {
        // Absolute values have the sign bit clear, and for those the order of the bit
        // patterns as integers is the order `f64::total_cmp` gives: the median is selected
        // with integer comparisons.
        r.clear();
        r.extend(yc.iter().zip(sc).map(|(a, b)| (a - b).abs().to_bits()));
        let mid = r.len() / 2;
        let (_, m, _) = r.select_nth_unstable(mid);
        per_block.push(f64::from_bits(*m) * scale);
    }
    // A last short block is a poor estimate: it takes its neighbour's where that is larger.
    if per_block.len() >= 2 && !y.len().is_multiple_of(block) && y.len() % block < block / 2 {
        let k = per_block.len();
        per_block[k - 1] = per_block[k - 1].max(per_block[k - 2]);
    }
    let mut sorted = per_block.clone();
    let mid = sorted.len() / 2;
    let (_, typical, _) = sorted.select_nth_unstable_by(mid, f64::total_cmp);
    let typical = *typical;
    for v in &mut per_block {
        *v = v.max(0.5 * typical);
    }
    Some(LocalNoise {
        per_block,
        typical,
        smooth,
    })
}

/// Means of consecutive runs of `f` points (a last partial run is dropped), each summed in
/// order from -0.0 as `Iterator::sum` does, into `out`. Four runs are summed side by side:
/// one run's sum waits on each of its additions, four of them overlap.
fn bin_means(y: &[f64], f: usize, out: &mut Vec<f64>) {
    let per = 1.0 / f as f64;
    out.clear();
    let runs = y.chunks_exact(f);
    out.reserve(runs.len());
    let mut quads = y.chunks_exact(4 * f);
    for q in &mut quads {
        let mut s = [-0.0f64; 4];
        for t in 0..f {
            for (l, v) in s.iter_mut().enumerate() {
                *v += q[l * f + t];
            }
        }
        out.extend(s.iter().map(|v| v * per));
    }
    out.extend(quads.remainder().chunks_exact(f).map(|c| c.iter().sum::<f64>() * per));
}

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

/// The least significance a candidate needs to matter to any later choice: the first
/// exciton needs [`MIN_SIGNIFICANCE`], a higher transition of the fit 4, and only a far more
/// significant minimum can shadow another. Weaker minima (most of a noisy derivative's) are
/// let go where they are found.
const CANDIDATE_SIGNIFICANCE: f64 = 4.0;

fn candidates(g: &EnergyGrid, noise: &LocalNoise) -> Vec<Candidate> {
    let mut all: Vec<Candidate> = Vec::new();
    let mut binned: Vec<f64> = Vec::new();
    // Each width's derivative is kept until the lobes of the candidates kept are measured.
    let mut d2s: [Vec<f64>; SCALES_EV.len()] = Default::default();
    let quietest = noise.quietest();
    for (scale, &h_ev) in SCALES_EV.iter().enumerate() {
        let d2 = &mut d2s[scale];
        let f = ((h_ev / (5.0 * g.step_ev)).floor() as usize).max(1);
        let d2_of: &[f64] = if f == 1 {
            &g.y
        } else {
            bin_means(&g.y, f, &mut binned);
            &binned
        };
        let step = f as f64 * g.step_ev;
        let e_at = |k: f64| g.e0_ev + 0.5 * (f - 1) as f64 * g.step_ev + k * step;
        let nb = d2_of.len();
        let half = ((h_ev / step).round() as usize).max(3);
        if nb < 2 * half + 3 {
            continue;
        }
        if savgol::filter_into(d2_of, half, 2, 2, step, d2).is_err() {
            continue;
        }
        let Ok(gain) = savgol::noise_gain(half, 2, 2) else {
            continue;
        };
        let d2 = &d2[..];
        // The derivative's noise sd at bin k is sd_gain x the point noise there.
        let sd_gain = gain / (step * step) / (f as f64).sqrt();
        let smoothing_var = h_ev * h_ev / 3.0;
        // No minimum shallower than this can reach the significance that matters wherever it
        // is (the quietest block's noise): tested first, it lets most of a noisy derivative
        // go with one well-predicted comparison.
        let shallow = -CANDIDATE_SIGNIFICANCE * sd_gain * quietest;
        let edge = half.max(1);
        // A bin is judged only where it is below `shallow` (or every bin, should `shallow` not
        // be a number): whatever is not cannot be a candidate. Such bins are found eight at a
        // time from one vectorised comparison's bit mask, so the flat stretches between
        // features (most of the derivative) cost one comparison a bin.
        let judge = |k: usize| -> Option<Candidate> {
            let w = [d2[k - 1], d2[k], d2[k + 1]];
            if !(w[1] < 0.0 && w[1] < w[0] && w[1] <= w[2]) {
                return None;
            }
            let sd = sd_gain * noise.at(k * f + f / 2);
            // The prominence never exceeds the depth: most noise wiggles are let go here,
            // before their ridges are walked.
            if -d2[k] < CANDIDATE_SIGNIFICANCE * sd {
                return None;
            }
            // Significance is the minimum's prominence, not its depth: a wiggle of noise inside
            // a broad feature's trough is as deep as the trough but barely below its ridges.
            // Each side's ridge is the highest point before the curve goes lower than this
            // minimum or crosses zero (the trough's end).
            let ridge = |dir: isize| -> f64 {
                let mut hi = d2[k];
                let mut j = k as isize + dir;
                while j >= 0 && (j as usize) < nb {
                    let v = d2[j as usize];
                    if v < d2[k] {
                        return hi;
                    }
                    if v >= 0.0 {
                        return 0.0;
                    }
                    hi = hi.max(v);
                    j += dir;
                }
                hi.min(0.0)
            };
            let prominence = ridge(-1).min(ridge(1)) - d2[k];
            let significance = if sd > 0.0 { prominence / sd } else { f64::INFINITY };
            if significance < CANDIDATE_SIGNIFICANCE {
                return None;
            }
            let denom = d2[k - 1] - 2.0 * d2[k] + d2[k + 1];
            let off = if denom > 0.0 {
                (0.5 * (d2[k - 1] - d2[k + 1]) / denom).clamp(-0.5, 0.5)
            } else {
                0.0
            };
            // The trough this minimum lies in: the run of negative curvature around it. Its
            // zero crossings either side are at ±σ for a Gaussian, widened by the smoothing
            // window.
            let (mut l, mut r) = (k, k);
            while l > 0 && d2[l - 1] < 0.0 {
                l -= 1;
            }
            while r + 1 < nb && d2[r + 1] < 0.0 {
                r += 1;
            }
            let zl = if l > 0 {
                l as f64 - d2[l] / (d2[l] - d2[l - 1])
            } else {
                f64::NAN
            };
            let zr = if r + 1 < nb {
                r as f64 + d2[r] / (d2[r] - d2[r + 1])
            } else {
                f64::NAN
            };
            let kc = k as f64 + off;
            let wh = match (zl.is_finite(), zr.is_finite()) {
                (true, true) => 0.5 * (zr - zl),
                (true, false) => kc - zl,
                (false, true) => zr - kc,
                (false, false) => return None,
            } * step;
            let sigma_obs = wh;
            let sigma = (wh * wh - smoothing_var).max(0.0).sqrt();
            // A minimum narrower than any excitonic band is a wiggle, a step or a spike at
            // this width; the same feature seen at a wider window is judged there.
            if !(sigma >= MIN_SIGMA_EV) {
                return None;
            }
            let height = -d2[k] * sigma_obs.powi(3) / sigma;
            let reach = ((3.0 * wh / step).ceil() as usize).max(2);
            Some(Candidate {
                e_ev: e_at(kc),
                sigma_ev: sigma,
                height,
                significance,
                lobes: (f64::NAN, f64::NAN),
                found_at: (scale, k, reach),
            })
        };
        let all_bins = shallow.is_nan();
        let end = nb - edge;
        let mut k0 = edge;
        while k0 < end {
            let run = &d2[k0..(k0 + 8).min(end)];
            let mut below = match run.as_array::<8>() {
                _ if all_bins => (1u32 << run.len()) - 1,
                // Most runs have no bin below: one vectorised test says so.
                Some(run) if !run.iter().fold(false, |any, &v| any | (v < shallow)) => 0,
                Some(run) => (0..8).fold(0u32, |m, j| m | ((run[j] < shallow) as u32) << j),
                None => run
                    .iter()
                    .enumerate()
                    .fold(0u32, |m, (j, &v)| m | ((v < shallow) as u32) << j),
            };
            while below != 0 {
                let k = k0 + below.trailing_zeros() as usize;
                below &= below - 1;
                if let Some(c) = judge(k) {
                    all.push(c);
                }
            }
            k0 += run.len();
        }
    }
    // One feature shows at several widths: keep, for each, the width where it stands out most.
    all.sort_by(|a, b| b.significance.total_cmp(&a.significance));
    let mut kept: Vec<Candidate> = Vec::new();
    for c in all {
        let near = kept
            .iter()
            .any(|k| (k.e_ev - c.e_ev).abs() < 0.6 * k.sigma_ev.max(c.sigma_ev).max(0.5 * MIN_SIGMA_EV));
        if !near {
            kept.push(c);
        }
    }
    for c in &mut kept {
        let (scale, k, reach) = c.found_at;
        let d2 = &d2s[scale];
        let lobe = |range: std::ops::Range<usize>| d2[range].iter().copied().fold(0.0f64, f64::max) / -d2[k];
        c.lobes = (
            lobe(k.saturating_sub(reach)..k),
            lobe(k + 1..(k + reach + 1).min(d2.len())),
        );
    }
    kept.sort_by(|a, b| a.e_ev.total_cmp(&b.e_ev));
    kept
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

/// The number of background parameters: c₀ + c₁x, x = E - E_ref. Over a window of a few
/// tenths of an eV this follows scattering (rising as E⁴) and the continuum's foot; a
/// curvature term was tried and absorbs the second transition instead.
const G: usize = 2;

/// The model: Σ aₖ exp(-(E-Eₖ)²/2σₖ²) + c₀ + c₁x. Parameters are laid out as
/// [c₀, c₁, a₁, E₁, σ₁, a₂, E₂, σ₂, ...].
fn model(p: &[f64], e_ref: f64, e: f64) -> f64 {
    let x = e - e_ref;
    let mut v = p[0] + p[1] * x;
    for k in p[G..].chunks_exact(3) {
        let z = (e - k[1]) / k[2];
        v += k[0] * (-0.5 * z * z).exp();
    }
    v
}

/// Cholesky factor (lower, in place) of a symmetric positive-definite n x n matrix; false
/// when it is not positive definite. The normal matrices of the fit are, and this costs half
/// a pivoted elimination.
fn cholesky_in_place(a: &mut [f64], n: usize) -> bool {
    // The fit's normal matrix is always 8 x 8 (a line and two Gaussians) and its linear start
    // 4 x 4: with the size known the compiler drops the index checks and unrolls, and the
    // operations stay the same ones in the same order.
    match n {
        8 => cholesky_fixed::<8>(a),
        4 => cholesky_fixed::<4>(a),
        _ => cholesky_any(a, n),
    }
}

fn cholesky_fixed<const N: usize>(a: &mut [f64]) -> bool {
    cholesky_any(&mut a[..N * N], N)
}

#[inline(always)]
fn cholesky_any(a: &mut [f64], n: usize) -> bool {
    for j in 0..n {
        let mut d = a[j * n + j];
        for k in 0..j {
            d -= a[j * n + k] * a[j * n + k];
        }
        if !(d > 0.0) || !d.is_finite() {
            return false;
        }
        let d = d.sqrt();
        a[j * n + j] = d;
        for i in j + 1..n {
            let mut v = a[i * n + j];
            for k in 0..j {
                v -= a[i * n + k] * a[j * n + k];
            }
            a[i * n + j] = v / d;
        }
    }
    true
}

/// Solves L Lᵀ x = b in place with the factor from [`cholesky_in_place`].
fn cholesky_solve(l: &[f64], b: &mut [f64], n: usize) -> bool {
    match n {
        8 => cholesky_solve_fixed::<8>(l, b),
        4 => cholesky_solve_fixed::<4>(l, b),
        _ => cholesky_solve_any(l, b, n),
    }
}

fn cholesky_solve_fixed<const N: usize>(l: &[f64], b: &mut [f64]) -> bool {
    cholesky_solve_any(&l[..N * N], &mut b[..N], N)
}

#[inline(always)]
fn cholesky_solve_any(l: &[f64], b: &mut [f64], n: usize) -> bool {
    for i in 0..n {
        let mut v = b[i];
        for k in 0..i {
            v -= l[i * n + k] * b[k];
        }
        b[i] = v / l[i * n + i];
    }
    for i in (0..n).rev() {
        let mut v = b[i];
        for k in i + 1..n {
            v -= l[k * n + i] * b[k];
        }
        b[i] = v / l[i * n + i];
    }
    b.iter().all(|v| v.is_finite())
}

/// The fitted stretch of the spectrum: an even energy grid `e0_ev + i·step_ev`, the binned
/// absorbance and each bin's weight (1/σ²), with scratch space for the Gaussian columns.
struct Window<'a> {
    e0_ev: f64,
    step_ev: f64,
    y: &'a [f64],
    w: &'a [f64],
    e_ref: f64,
    /// `e(i)` at every point, and `e(i) - e_ref` (the background's x), computed once for the
    /// fit instead of at every point of every step.
    e: Vec<f64>,
    x: Vec<f64>,
}

impl<'a> Window<'a> {
    fn new(e0_ev: f64, step_ev: f64, y: &'a [f64], w: &'a [f64], e_ref: f64) -> Window<'a> {
        let e: Vec<f64> = (0..y.len()).map(|i| e0_ev + i as f64 * step_ev).collect();
        let x = e.iter().map(|e| e - e_ref).collect();
        Window {
            e0_ev,
            step_ev,
            y,
            w,
            e_ref,
            e,
            x,
        }
    }
    fn len(&self) -> usize {
        self.y.len()
    }
    fn e(&self, i: usize) -> f64 {
        self.e0_ev + i as f64 * self.step_ev
    }
    /// Fills `cols` (one column of `len()` values per Gaussian of `p`) with each Gaussian's
    /// unit-height shape at the window's points.
    fn columns(&self, p: &[f64], cols: &mut Vec<f64>) {
        let m = self.len();
        let ng = (p.len() - G) / 3;
        cols.resize(ng * m, 0.0);
        for (k, col) in cols.chunks_exact_mut(m).enumerate() {
            let q = &p[G + 3 * k..G + 3 + 3 * k];
            gaussian_column(self.e0_ev, self.step_ev, q[1], q[2], col);
        }
    }
}

/// exp(-(eᵢ - c)²/2σ²) at eᵢ = e0 + i·h. On an even grid each point's value is the last one's
/// times a ratio, and each ratio the last one's times exp(-h²/σ²): four exponentials a column
/// instead of one a point (the exponential was most of the fit's cost). The walk starts at the
/// point nearest the centre and moves away from it, so values only shrink: nothing overflows,
/// an underflow is a true zero, and the rounding carried over a window (under 200 points) stays
/// near 1e-14.
fn gaussian_column(e0: f64, h: f64, c: f64, sigma: f64, out: &mut [f64]) {
    let m = out.len();
    if m == 0 {
        return;
    }
    let d = h / sigma;
    let q = (-d * d).exp();
    let k = ((c - e0) / h).round().clamp(0.0, (m - 1) as f64) as usize;
    let zk = (e0 + k as f64 * h - c) / sigma;
    let gk = (-0.5 * zk * zk).exp();
    out[k] = gk;
    let (mut g, mut r) = (gk, (-zk * d - 0.5 * d * d).exp());
    for v in &mut out[k + 1..] {
        g *= r;
        r *= q;
        *v = g;
    }
    let (mut g, mut r) = (gk, (zk * d - 0.5 * d * d).exp());
    for v in out[..k].iter_mut().rev() {
        g *= r;
        r *= q;
        *v = g;
    }
}

/// Scratch space of one fit, reused across its iterations.
struct Scratch {
    cols: Vec<f64>,
    /// The Jacobian, one contiguous column of `len()` values per parameter.
    jac: Vec<f64>,
    /// One Jacobian column times the points' weights.
    weighted: Vec<f64>,
    res: Vec<f64>,
}

/// Weighted normal equations JᵀWJ and JᵀW r at p; returns χ².
fn normal_equations(win: &Window, p: &[f64], jtj: &mut [f64], jtr: &mut [f64], sc: &mut Scratch) -> f64 {
    let chi2 = residuals(win, p, sc);
    jacobian_products(win, p, jtj, jtr, sc);
    chi2
}

/// JᵀWJ and JᵀW r at p, from the residuals and Gaussian columns [`residuals`] left in `sc`
/// for the same p (an accepted step has just computed them). The Jacobian is built column by
/// column so every entry of JᵀWJ is one dot product of contiguous columns; each column is
/// weighted once, not once for every product it enters.
fn jacobian_products(win: &Window, p: &[f64], jtj: &mut [f64], jtr: &mut [f64], sc: &mut Scratch) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx") {
            // SAFETY: `jacobian_products_avx` only needs AVX, which the CPU was checked just
            // above to have; that is all its `target_feature` attribute requires of its caller.
            unsafe { jacobian_products_avx(win, p, jtj, jtr, sc) };
            return;
        }
    }
    jacobian_products_with(win, p, jtj, jtr, sc, |x, ys, out| {
        for (o, y) in out.iter_mut().zip(ys) {
            *o = dot(x, y);
        }
    });
}

/// The same with the columns built and the products run in AVX registers: the same
/// operations in the same order (no fused multiply-add is enabled), so the same bits.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
fn jacobian_products_avx(win: &Window, p: &[f64], jtj: &mut [f64], jtr: &mut [f64], sc: &mut Scratch) {
    jacobian_products_with(win, p, jtj, jtr, sc, |x, ys, out| lanes::products(x, ys, out));
}

#[inline(always)]
fn jacobian_products_with(
    win: &Window,
    p: &[f64],
    jtj: &mut [f64],
    jtr: &mut [f64],
    sc: &mut Scratch,
    products: impl Fn(&[f64], &[&[f64]], &mut [f64]),
) {
    jacobian_columns(win, p, sc);
    let np = p.len();
    let m = win.len();
    let (jac, res, weighted) = (&sc.jac[..], &sc.res[..], &mut sc.weighted);
    // Row a of the products takes the residual and columns a..np against weighted column a.
    // The fit has 8 parameters; room for 15 keeps the rows off the heap.
    const ROOM: usize = 16;
    let mut row: [&[f64]; ROOM] = [&[]; ROOM];
    let mut out = [0.0f64; ROOM];
    for a in 0..np {
        let ja = &jac[a * m..(a + 1) * m];
        for ((o, x), w) in weighted.iter_mut().zip(ja).zip(win.w) {
            *o = x * w;
        }
        let count = np - a + 1;
        if count > ROOM {
            jtr[a] = dot(weighted, res);
            for b in a..np {
                let v = dot(weighted, &jac[b * m..(b + 1) * m]);
                jtj[a * np + b] = v;
                jtj[b * np + a] = v;
            }
            continue;
        }
        row[0] = res;
        for (slot, col) in row[1..count].iter_mut().zip(jac[a * m..].chunks_exact(m)) {
            *slot = col;
        }
        let out = &mut out[..count];
        products(weighted, &row[..count], out);
        jtr[a] = out[0];
        for (j, v) in out[1..].iter().enumerate() {
            let b = a + j;
            jtj[a * np + b] = *v;
            jtj[b * np + a] = *v;
        }
    }
}

/// The Jacobian at p, one contiguous column of `len()` values per parameter, into `sc.jac`.
#[inline(always)]
fn jacobian_columns(win: &Window, p: &[f64], sc: &mut Scratch) {
    let np = p.len();
    let m = win.len();
    sc.jac.resize(np * m, 0.0);
    sc.weighted.resize(m, 0.0);
    let (jac, cols) = (&mut sc.jac, &sc.cols);
    let (c0, rest) = jac.split_at_mut(m);
    let (c1, rest) = rest.split_at_mut(m);
    c0.fill(1.0);
    c1.copy_from_slice(&win.x);
    for (k, q) in p[G..].chunks_exact(3).enumerate() {
        let g = &cols[k * m..(k + 1) * m];
        let (ca, rest2) = rest[3 * k * m..].split_at_mut(m);
        let (cc, cs) = rest2.split_at_mut(m);
        let inv = 1.0 / q[2];
        ca.copy_from_slice(g);
        let (cc, cs, e) = (&mut cc[..m], &mut cs[..m], &win.e[..m]);
        for i in 0..m {
            let z = (e[i] - q[1]) * inv;
            let ag = q[0] * g[i];
            cc[i] = ag * z * inv;
            cs[i] = ag * z * z * inv;
        }
    }
}

/// The fit's dot products in AVX registers: lane j of a register is running sum j of [`dot`].
#[cfg(target_arch = "x86_64")]
mod lanes {
    use std::arch::x86_64::*;

    #[inline]
    #[target_feature(enable = "avx")]
    fn load(x: &[f64; 4]) -> __m256d {
        _mm256_set_pd(x[3], x[2], x[1], x[0])
    }

    /// (s₀ + s₁) + (s₂ + s₃) + tail, as [`super::dot`] ends.
    #[inline]
    #[target_feature(enable = "avx")]
    fn finish(s: __m256d, tail: f64) -> f64 {
        let lo = _mm256_castpd256_pd128(s);
        let hi = _mm256_extractf128_pd::<1>(s);
        let s01 = _mm_cvtsd_f64(lo) + _mm_cvtsd_f64(_mm_unpackhi_pd(lo, lo));
        let s23 = _mm_cvtsd_f64(hi) + _mm_cvtsd_f64(_mm_unpackhi_pd(hi, hi));
        (s01 + s23) + tail
    }

    #[inline]
    #[target_feature(enable = "avx")]
    fn tail(x: &[f64], y: &[f64]) -> f64 {
        x.iter().zip(y).map(|(x, z)| x * z).sum()
    }

    /// `out[t] = dot(x, ys[t])`, four targets at a time; every target at least as long as x.
    #[target_feature(enable = "avx")]
    pub(super) fn products(x: &[f64], ys: &[&[f64]], out: &mut [f64]) {
        let m = x.len();
        let (cx, tx) = x.as_chunks::<4>();
        let nc = cx.len();
        let mut t = 0;
        while t + 4 <= ys.len() {
            let (y0, y1, y2, y3) = (&ys[t][..m], &ys[t + 1][..m], &ys[t + 2][..m], &ys[t + 3][..m]);
            let (c0, c1, c2, c3) = (
                &y0.as_chunks::<4>().0[..nc],
                &y1.as_chunks::<4>().0[..nc],
                &y2.as_chunks::<4>().0[..nc],
                &y3.as_chunks::<4>().0[..nc],
            );
            let mut s = [_mm256_setzero_pd(); 4];
            for i in 0..nc {
                let xv = load(&cx[i]);
                s[0] = _mm256_add_pd(s[0], _mm256_mul_pd(xv, load(&c0[i])));
                s[1] = _mm256_add_pd(s[1], _mm256_mul_pd(xv, load(&c1[i])));
                s[2] = _mm256_add_pd(s[2], _mm256_mul_pd(xv, load(&c2[i])));
                s[3] = _mm256_add_pd(s[3], _mm256_mul_pd(xv, load(&c3[i])));
            }
            out[t] = finish(s[0], tail(tx, &y0[4 * nc..]));
            out[t + 1] = finish(s[1], tail(tx, &y1[4 * nc..]));
            out[t + 2] = finish(s[2], tail(tx, &y2[4 * nc..]));
            out[t + 3] = finish(s[3], tail(tx, &y3[4 * nc..]));
            t += 4;
        }
        // The last few one at a time: they overlap with the next row's work anyway.
        while t < ys.len() {
            let y = &ys[t][..m];
            let c = &y.as_chunks::<4>().0[..nc];
            let mut s = _mm256_setzero_pd();
            for i in 0..nc {
                s = _mm256_add_pd(s, _mm256_mul_pd(load(&cx[i]), load(&c[i])));
            }
            out[t] = finish(s, tail(tx, &y[4 * nc..]));
            t += 1;
        }
    }
}

/// Σ aᵢ bᵢ in four independent sums (so it vectorises and pipelines).
#[inline(always)]
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut s = [0.0f64; 4];
    let n = a.len().min(b.len());
    let (ca, ta) = a[..n].as_chunks::<4>();
    let (cb, tb) = b[..n].as_chunks::<4>();
    for (x, z) in ca.iter().zip(cb) {
        for j in 0..4 {
            s[j] += x[j] * z[j];
        }
    }
    let tail: f64 = ta.iter().zip(tb).map(|(x, z)| x * z).sum();
    (s[0] + s[1]) + (s[2] + s[3]) + tail
}

/// The model minus the data at every point of the window (into `sc.res`, with the Gaussian
/// columns in `sc.cols`); returns the weighted χ².
fn residuals(win: &Window, p: &[f64], sc: &mut Scratch) -> f64 {
    let m = win.len();
    win.columns(p, &mut sc.cols);
    sc.res.resize(m, 0.0);
    // Column by column, each point's sum still in the order background, first Gaussian, next.
    let res = &mut sc.res[..m];
    for (r, x) in res.iter_mut().zip(&win.x) {
        *r = p[0] + p[1] * x;
    }
    for (k, col) in sc.cols.chunks_exact(m).enumerate() {
        let a = p[G + 3 * k];
        for (r, g) in res.iter_mut().zip(col) {
            *r += a * g;
        }
    }
    for (r, y) in res.iter_mut().zip(win.y) {
        *r -= y;
    }
    res.iter().zip(win.w).map(|(r, w)| w * r * r).sum()
}

/// Keeps parameters physical: positive heights, widths in the excitonic range, the first
/// transition inside the window and every later one bluer than the first.
fn constrain(p: &mut [f64], lo: f64, hi: f64) {
    let e1 = p[G + 1].clamp(lo, hi);
    p[G + 1] = e1;
    for k in (G..p.len()).step_by(3) {
        // Never quite zero: a vanished transition would leave its centre and width undefined.
        p[k] = p[k].max(1e-6);
        p[k + 2] = p[k + 2].clamp(MIN_SIGMA_EV, MAX_SIGMA_EV);
    }
    let s1 = p[G + 2];
    for k in (G + 3..p.len()).step_by(3) {
        // Two transitions closer than this are one transition split in two (the first and
        // second excitonic transitions of these crystals lie 0.1 eV or more apart, common
        // practice).
        let bluer = e1 + (1.5 * s1).max(0.08);
        p[k + 1] = p[k + 1].min(hi + p[k + 2]).max(bluer);
    }
}

/// Heights and background for fixed centres and widths (the linear half of the problem),
/// used for starting values.
fn linear_start(win: &Window, p: &mut [f64], sc: &mut Scratch) -> bool {
    let ng = (p.len() - G) / 3;
    let nl = G + ng;
    let m = win.len();
    let mut a = vec![0.0; nl * nl];
    let mut b = vec![0.0; nl];
    let mut row = vec![0.0; nl];
    win.columns(p, &mut sc.cols);
    for i in 0..m {
        row[0] = 1.0;
        row[1] = win.e(i) - win.e_ref;
        for k in 0..ng {
            row[G + k] = sc.cols[k * m + i];
        }
        let (y, w) = (win.y[i], win.w[i]);
        for r in 0..nl {
            b[r] += w * row[r] * y;
            for c in 0..nl {
                a[r * nl + c] += w * row[r] * row[c];
            }
        }
    }
    // A light ridge keeps nearly collinear starts solvable.
    for i in 0..nl {
        a[i * nl + i] *= 1.0 + 1e-9;
    }
    if !(cholesky_in_place(&mut a, nl) && cholesky_solve(&a, &mut b, nl)) {
        return false;
    }
    p[..G].copy_from_slice(&b[..G]);
    for k in 0..ng {
        p[G + 3 * k] = b[G + k].max(1e-6);
    }
    true
}

/// Weighted Levenberg-Marquardt from `p`; returns the parameters, χ² and the normal matrix
/// at the end (for the covariance).
fn levenberg_marquardt(win: &Window, mut p: Vec<f64>, lo: f64, hi: f64, sc: &mut Scratch) -> (Vec<f64>, f64, Vec<f64>) {
    let np = p.len();
    let mut jtj = vec![0.0; np * np];
    let mut jtr = vec![0.0; np];
    let mut a = vec![0.0; np * np];
    let mut b = vec![0.0; np];
    let mut trial = p.clone();
    let mut lambda = 1e-3;
    let dof = win.len().saturating_sub(np).max(1) as f64;
    let mut chi2 = normal_equations(win, &p, &mut jtj, &mut jtr, sc);
    for _ in 0..120 {
        a.copy_from_slice(&jtj);
        for d in 0..np {
            a[d * np + d] += lambda * jtj[d * np + d].max(1e-12);
        }
        b.iter_mut().zip(&jtr).for_each(|(bi, g)| *bi = -g);
        if !(cholesky_in_place(&mut a, np) && cholesky_solve(&a, &mut b, np)) {
            lambda *= 10.0;
            if lambda > 1e10 {
                break;
            }
            continue;
        }
        for ((t, p0), d) in trial.iter_mut().zip(&p).zip(&b) {
            *t = p0 + d;
        }
        constrain(&mut trial, lo, hi);
        let c2 = residuals(win, &trial, sc);
        if c2 < chi2 {
            // Converged when χ² falls by less than a hundredth of one standard deviation's
            // worth (Δχ² = 1 bounds a parameter's 1σ range; scaled by the reduced χ² where the
            // model leaves more than noise): further steps move nothing by more than a small
            // fraction of its own uncertainty. Or when no centre or width moves by more than a
            // micro-electronvolt.
            let moved = trial[G..]
                .chunks_exact(3)
                .zip(p[G..].chunks_exact(3))
                .map(|(t, q)| (t[1] - q[1]).abs().max((t[2] - q[2]).abs()))
                .fold(0.0f64, f64::max);
            let unit = (c2 / dof).max(1.0);
            let done = chi2 - c2 < 0.01 * unit || (moved < 1e-6 && lambda < 1.0);
            p.copy_from_slice(&trial);
            // `residuals` has just been evaluated at this p: only the products are new.
            chi2 = c2;
            jacobian_products(win, &p, &mut jtj, &mut jtr, sc);
            lambda = (lambda / 3.0).max(1e-9);
            if done {
                break;
            }
        } else {
            lambda *= 4.0;
            if lambda > 1e10 {
                break;
            }
        }
    }
    (p, chi2, jtj)
}

fn fit_band_edge(g: &EnergyGrid, noise: &LocalNoise, first: &Candidate, higher: &[&Candidate]) -> Option<BandEdge> {
    let s1 = first.sigma_ev.clamp(MIN_SIGMA_EV, MAX_SIGMA_EV);
    // The window: the transparent red side, the first transition, and the next one up to its
    // centre. Going further blue adds the continuum's rise and curvature, which a linear
    // background cannot follow: it tilts the background and narrows and reddens the first
    // transition. The red side reaches well past the first transition's foot (5 σ, where a
    // Gaussian is below 1e-5 of its height), so the transparent stretch pins the background's
    // level and slope instead of leaving the slope to trade against the transitions' heights;
    // with 3.5 σ a broad band edge on a strong continuum drew the fit to a tilted background
    // and a first transition 10-20 % too narrow. Much further (5.5 σ) takes in enough of a
    // real scan's red tail that the open-data growth series' imperfect fits start to jump.
    let next = higher.iter().find(|c| c.e_ev < first.e_ev + 0.45);
    let blue_reach = match next {
        Some(c) => (c.e_ev - first.e_ev).max(2.5 * s1),
        None => (3.0 * s1).max(0.20),
    };
    let lo = (first.e_ev - (5.0 * s1).max(0.10)).max(g.e0_ev);
    let hi = (first.e_ev + blue_reach).min(g.e((g.y.len() - 1) as f64));
    // Bin the window to about a quarter of the first transition's σ: its FWHM spans ten bins
    // or more, not hundreds of points (the fit's cost is linear in bins). A third of σ was
    // tried: on real high-signal scans, whose lineshape a Gaussian only approximates, it let
    // one aliquot of a growth series settle in another minimum (a width twice its neighbours'). Averaging over a
    // bin of width b widens a Gaussian's variance by b²/12; that is taken out of the reported
    // widths below.
    let f = ((s1 / (4.0 * g.step_ev)).floor() as usize).max(1);
    let i0 = g.index(lo).ceil().max(0.0) as usize;
    let i1 = (g.index(hi).floor() as usize).min(g.y.len() - 1);
    if i1 <= i0 + 10 * f {
        return None;
    }
    let mut y = Vec::with_capacity((i1 - i0) / f + 1);
    let mut w = Vec::with_capacity(y.capacity());
    let mut i = i0;
    while i + f <= i1 + 1 {
        let ys = &g.y[i..i + f];
        y.push(ys.iter().sum::<f64>() / f as f64);
        let sd = noise.at(i + f / 2) / (f as f64).sqrt();
        w.push(1.0 / (sd * sd).max(1e-16));
        i += f;
    }
    let m = y.len();
    let win = Window::new(
        g.e(i0 as f64 + 0.5 * (f - 1) as f64),
        f as f64 * g.step_ev,
        &y,
        &w,
        first.e_ev,
    );
    let mut sc = Scratch {
        cols: Vec::with_capacity(2 * m),
        jac: Vec::with_capacity((G + 6) * m),
        weighted: Vec::with_capacity(m),
        res: Vec::with_capacity(m),
    };
    // Starting values: the first transition from the derivative, the next one or two from
    // bluer derivative minima inside the window, else one placed where a second transition
    // commonly is (0.15-0.25 eV above, common practice for II-VI and III-V crystals).
    let mut p = vec![0.0, 0.0, first.height.max(0.0), first.e_ev, s1];
    let mut added = 0;
    for c in higher {
        if c.e_ev < hi + 2.0 * c.sigma_ev && added < 1 {
            // Derivative widths come out narrow where transitions overlap: start no narrower
            // than the first.
            p.extend([
                c.height.max(0.0),
                c.e_ev,
                c.sigma_ev.max(s1).clamp(MIN_SIGMA_EV, MAX_SIGMA_EV),
            ]);
            added += 1;
        }
    }
    if added == 0 {
        p.extend([first.height.max(0.0), first.e_ev + (2.5 * s1).max(0.15), 1.3 * s1]);
    }
    let np = p.len();
    if m < np + 5 {
        return None;
    }
    constrain(&mut p, lo, hi);
    if !linear_start(&win, &mut p, &mut sc) {
        return None;
    }
    let start = p.clone();
    // Covariance from the unregularised normal matrix, scaled by the reduced χ²; a fit is
    // believed only when the first transition is significant, inside the window, off its
    // width bounds and not run away from where the derivative saw it.
    let dof = (m - np) as f64;
    let judge = |p: &[f64], chi2: f64, jtj: &[f64]| -> Option<(f64, f64)> {
        let red = chi2 / dof;
        // Variances from the noise alone, and scaled by the reduced χ² where the model leaves
        // more than noise (the reported uncertainties).
        // (JᵀWJ)⁻¹ᵢᵢ = |L⁻¹ eᵢ|², from one factorisation.
        let mut l = jtj.to_vec();
        let factored = cholesky_in_place(&mut l, np);
        let raw_var = |idx: usize| -> f64 {
            if !factored {
                return f64::INFINITY;
            }
            let mut y = vec![0.0; np];
            for i in idx..np {
                let mut v = if i == idx { 1.0 } else { 0.0 };
                for k in idx..i {
                    v -= l[i * np + k] * y[k];
                }
                y[i] = v / l[i * np + i];
            }
            let var: f64 = y.iter().map(|v| v * v).sum();
            if var.is_finite() { var } else { f64::INFINITY }
        };
        let (a1, e1, sig1) = (p[G], p[G + 1], p[G + 2]);
        let scale = red.max(1.0).sqrt();
        let sd_a1_noise = raw_var(G).sqrt();
        let (sd_e1, sd_s1) = (raw_var(G + 1).sqrt() * scale, raw_var(G + 2).sqrt() * scale);
        let at_bound = sig1 <= MIN_SIGMA_EV * 1.0001 || sig1 >= MAX_SIGMA_EV * 0.9999;
        let inside = e1 > lo + 0.25 * sig1 && e1 < hi - 0.25 * sig1;
        // The height must stand above the noise; where the model is imperfect the heights
        // correlate with the background, so what must also be sharp is the centre.
        let significant = a1 > 4.0 * sd_a1_noise && a1 > 0.0 && sd_e1 < 0.5 * sig1;
        let moved = (e1 - first.e_ev).abs() <= 3.0 * s1.max(sig1);
        (!at_bound && inside && significant && moved && sd_e1.is_finite() && sd_s1.is_finite())
            .then_some((sd_e1, sd_s1))
    };
    let (p1, c1, j1) = levenberg_marquardt(&win, p, lo, hi, &mut sc);
    let mut best = judge(&p1, c1, &j1).map(|sd| (p1.clone(), c1, sd));
    // A second transition that vanished, or one that ran out of the window (where no data
    // hold it) leaving more than noise behind, or a fit that failed its checks, is often a
    // local minimum: start once more from the derivative's first transition with the second
    // where it commonly is (0.12 eV or 2.5 σ above), and keep the better believed fit.
    let collapsed = p1[G + 3] < 0.02 * p1[G] || p1[G + 5] <= MIN_SIGMA_EV * 1.0001;
    let escaped = p1[G + 4] > hi + 0.5 * p1[G + 5] && c1 / dof > 4.0;
    if collapsed || escaped || best.is_none() {
        let mut again = start.clone();
        again.truncate(G + 6);
        again[G + 4] = start[G + 1] + (2.5 * s1).max(0.12);
        again[G + 5] = 1.2 * s1;
        constrain(&mut again, lo, hi);
        if linear_start(&win, &mut again, &mut sc) {
            let (p2, c2, j2) = levenberg_marquardt(&win, again, lo, hi, &mut sc);
            if let Some(sd) = judge(&p2, c2, &j2)
                && best.as_ref().is_none_or(|b| c2 < b.1)
            {
                best = Some((p2, c2, sd));
            }
        }
    }
    let (p, _chi2, (sd_e1, sd_s1)) = best?;
    let (a1, e1, sig1) = (p[G], p[G + 1], p[G + 2]);
    // The fitted σ is of the bin-averaged curve: σ² = σ₀² + b²/12, the height falls as the
    // area is kept.
    let bin_var = win.step_ev * win.step_ev / 12.0;
    let unbinned = |sigma: f64| (sigma * sigma - bin_var).max(0.25 * sigma * sigma).sqrt();
    residuals(&win, &p, &mut sc);
    let rms = (sc.res.iter().map(|r| r * r).sum::<f64>() / m as f64).sqrt();
    let mean_noise = w.iter().map(|w| 1.0 / w.sqrt()).sum::<f64>() / m as f64;
    let over = if mean_noise > 0.0 {
        rms / mean_noise
    } else {
        f64::INFINITY
    };
    let mut warnings = Vec::new();
    let mut quality = "good";
    // A mismatch only matters when it is both well above the noise and a visible fraction of
    // the transition: at high signal every real lineshape differs a little from a Gaussian.
    if over > 4.0 && rms > 0.02 * a1 {
        quality = "poor";
        warnings.push(format!(
            "the band-edge model leaves structure in the residual ({over:.1} x the noise): first exciton and width are less certain"
        ));
    }
    if e1 - sig1 * 2.0 < win.e(0) {
        warnings
            .push("the scan does not reach the transparent red side of the first exciton: width less certain".into());
    }
    let mut transitions: Vec<Transition> = p[G..]
        .chunks_exact(3)
        .filter(|q| q[0] > 0.01 * a1)
        .map(|q| Transition {
            centre_nm: HC_EV_NM / q[1],
            centre_ev: q[1],
            hwhm_ev: unbinned(q[2]) * HWHM_PER_SIGMA,
            height: q[0] * q[2] / unbinned(q[2]),
        })
        .collect();
    transitions.sort_by(|a, b| a.centre_ev.total_cmp(&b.centre_ev));
    let composite = model(&p, first.e_ev, e1);
    // A shoulder: the composite keeps rising through the first transition's centre (its
    // slope, analytic, never turns from rising to falling within ±σ of it).
    let steps = 40;
    let h = 2.0 * sig1 / steps as f64;
    let x0 = e1 - sig1;
    let mut slope = vec![p[1]; steps + 1];
    let mut col = vec![0.0; steps + 1];
    for q in p[G..].chunks_exact(3) {
        gaussian_column(x0, h, q[1], q[2], &mut col);
        for (i, (s, g)) in slope.iter_mut().zip(&col).enumerate() {
            let x = x0 + i as f64 * h;
            *s -= q[0] * g * (x - q[1]) / (q[2] * q[2]);
        }
    }
    let shoulder = !slope.windows(2).any(|w| w[0] > 0.0 && w[1] <= 0.0);
    Some(BandEdge {
        method: "gaussian fit in energy",
        quality,
        centre_ev: e1,
        centre_sd_ev: sd_e1,
        hwhm_ev: unbinned(sig1) * HWHM_PER_SIGMA,
        hwhm_sd_ev: sd_s1 * HWHM_PER_SIGMA * sig1 / unbinned(sig1),
        height: a1 * sig1 / unbinned(sig1),
        composite_abs: composite,
        residual_rms: rms,
        residual_over_noise: over,
        fit_from_nm: HC_EV_NM / win.e(0),
        fit_to_nm: HC_EV_NM / win.e(m - 1),
        transitions,
        shoulder,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn gaussians(nm: &[f64], bands: &[(f64, f64, f64)], bg: f64) -> Trace {
        let y = nm
            .iter()
            .map(|l| {
                let e = HC_EV_NM / l;
                bg + bands
                    .iter()
                    .map(|(a, c, s)| a * (-0.5 * ((e - c) / s).powi(2)).exp())
                    .sum::<f64>()
            })
            .collect();
        Trace { nm: nm.to_vec(), y }
    }

    #[test]
    fn the_ratio_recurrence_gives_the_gaussian_at_every_point() {
        // Against the definition exp(-(e-c)²/2σ²) evaluated directly, for a centre inside,
        // left of and right of the window, narrow and wide.
        for &(c, sigma) in &[(2.10, 0.012), (2.10, 0.35), (1.90, 0.05), (2.40, 0.05), (2.0004, 0.02)] {
            let (e0, h, m) = (2.0, 0.004, 120);
            let mut col = vec![0.0; m];
            gaussian_column(e0, h, c, sigma, &mut col);
            for (i, v) in col.iter().enumerate() {
                let e = e0 + i as f64 * h;
                let want = (-0.5 * ((e - c) / sigma).powi(2)).exp();
                assert!(
                    (v - want).abs() <= 1e-12 * want.max(1e-300) + 1e-300,
                    "c {c} σ {sigma} at {e}: {v} vs {want}"
                );
            }
        }
    }

    /// The fit's products side by side in AVX registers must be the one-at-a-time dot
    /// products bit for bit (known truth: `dot`), so the fit gives the numbers it gave before
    /// it was made faster.
    #[test]
    fn side_by_side_products_equal_one_at_a_time() {
        let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut next = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        for m in [0usize, 1, 3, 4, 5, 7, 8, 39, 45, 61] {
            let x: Vec<f64> = (0..m).map(|_| next() * 1e3).collect();
            for targets in 1..=9 {
                let ys: Vec<Vec<f64>> = (0..targets).map(|_| (0..m).map(|_| next()).collect()).collect();
                let refs: Vec<&[f64]> = ys.iter().map(|y| &y[..]).collect();
                let want: Vec<u64> = refs.iter().map(|y| dot(&x, y).to_bits()).collect();
                let mut got = vec![0.0; targets];
                #[cfg(target_arch = "x86_64")]
                if std::is_x86_feature_detected!("avx") {
                    // SAFETY: the CPU has AVX, checked just above.
                    unsafe { lanes::products(&x, &refs, &mut got) };
                    assert_eq!(got.iter().map(|v| v.to_bits()).collect::<Vec<_>>(), want, "m {m}");
                }
            }
        }
    }

    #[test]
    fn an_even_energy_grid_keeps_the_values_of_a_smooth_curve() {
        let nm: Vec<f64> = (0..601).map(|i| 400.0 + 0.5 * i as f64).collect();
        let t = gaussians(&nm, &[(0.5, 2.2, 0.05)], 0.01);
        let g = energy_grid(&t).unwrap();
        for (i, v) in g.y.iter().enumerate() {
            let e = g.e(i as f64);
            let want = 0.01 + 0.5 * (-0.5 * ((e - 2.2) / 0.05f64).powi(2)).exp();
            assert!((v - want).abs() < 2e-3, "at {e} eV: {v} vs {want}");
        }
    }

    #[test]
    fn a_noiseless_two_transition_band_edge_is_fitted_to_its_truth() {
        // Known truth: transitions at 2.10 and 2.28 eV, σ 50 and 70 meV.
        let nm: Vec<f64> = (0..301).map(|i| 400.0 + i as f64).collect();
        let t = gaussians(&nm, &[(0.30, 2.10, 0.05), (0.45, 2.28, 0.07)], 0.02);
        let found = first_transition(&t, &BandEdgeHint::default(), 2.0);
        let edge = found
            .edge
            .unwrap_or_else(|| panic!("no band edge: {:?}", found.warnings));
        assert_eq!(edge.method, "gaussian fit in energy");
        assert!((edge.centre_ev - 2.10).abs() < 0.003, "{edge:?}");
        assert!((edge.hwhm_ev / (0.05 * HWHM_PER_SIGMA) - 1.0).abs() < 0.05, "{edge:?}");
    }
}
