//! The candidate transitions of a band edge: the minima of the second derivative at every
//! smoothing width, each with its significance against the local noise, its width and height
//! from the derivative's zero crossings and its lobes. Pure; the choice among them is the
//! parent's.

use super::grid::bin_means;
use super::savgol;
use super::{Candidate, EnergyGrid, LocalNoise, MIN_SIGMA_EV, SCALES_EV};

/// The least significance a candidate needs to matter to any later choice: the first
/// exciton needs [`MIN_SIGNIFICANCE`], a higher transition of the fit 4, and only a far more
/// significant minimum can shadow another. Weaker minima (most of a noisy derivative's) are
/// let go where they are found.
const CANDIDATE_SIGNIFICANCE: f64 = 4.0;

pub(super) fn candidates(g: &EnergyGrid, noise: &LocalNoise) -> Vec<Candidate> {
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
