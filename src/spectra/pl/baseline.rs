//! Steps 4 and 5 of the PL analysis: the bands of the corrected smooth, the emission region
//! out from them, and the straight baseline fitted with 3σ rejection to what lies outside it
//! (a constant from one end when the other has too few free points). Pure; nothing changes
//! its input.

use crate::spectra::analysis::Uniform;

use super::{Baseline, Found, MIN_BASELINE_POINTS, REGION_HALF_WIDTHS, mad_sd};

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
pub(super) fn edge_line(u: &Uniform, y: &[f64]) -> Baseline {
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
pub(super) fn edge_min(y: &[f64]) -> Baseline {
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
pub(super) fn find_bands(c: &[f64], noise_s: f64, edge_zone: usize) -> Vec<Found> {
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
pub(super) fn region_of(c: &[f64], bands: &[Found], noise_s: f64) -> (usize, usize) {
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
pub(super) fn fit_baseline(
    u: &Uniform,
    y: &[f64],
    (lo, hi): (usize, usize),
) -> Option<(Baseline, String, Option<&'static str>)> {
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
