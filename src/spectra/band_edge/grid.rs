//! The even energy grid a band-edge search works on, and the noise measured locally along it.
//! `energy_grid` keeps the file's values (dense scans averaged into bins, coarse ones
//! interpolated) at a step bounded to 1-10 meV; `LocalNoise` is the noise per point, block by
//! block, never below half the typical block's.

use super::savgol;
use super::{EnergyGrid, HC_EV_NM, MAX_STEP_EV, MIN_STEP_EV, Trace};

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
    pub(super) fn quietest(&self) -> f64 {
        self.per_block.iter().copied().fold(f64::INFINITY, f64::min)
    }
}

pub(super) fn local_noise(y: &[f64]) -> Option<LocalNoise> {
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
pub(super) fn bin_means(y: &[f64], f: usize, out: &mut Vec<f64>) {
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
