//! Step 3 of the PL analysis: narrow lines (excitation, laser, Raman, cosmic-ray spikes) found
//! on the even grid at three scales, with the noise read at their own level, and the masks
//! that interpolate across them. Promises: a band as narrow as 6 nm FWHM is never taken for a
//! line; the input is not changed (masks are returned, applied to copies).

use crate::spectra::Trace;
use crate::spectra::analysis::Uniform;

use super::{
    Baseline, LINE_BASE_NM, LINE_FWHM_MAX_NM, LINE_LEVEL_BAND, LINE_LEVEL_POINTS, LINE_NOISE_REACH_NM, LINE_SIGMAS,
    Mask, NarrowLine, mad_sd, noise_of_points,
};

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
pub(super) fn noise_of_uneven(nm: &[f64], y: &[f64]) -> f64 {
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
pub(super) fn find_lines(u: &Uniform, noise: f64) -> (Vec<Mask>, Vec<NarrowLine>) {
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

pub(super) fn apply_masks(u: &Uniform, masks: &[Mask]) -> Vec<f64> {
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
pub(super) fn corrected_raw(t: &Trace, masks: &[Mask], base: &Baseline) -> Vec<f64> {
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
