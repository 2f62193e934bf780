//! Steps 6 and 7 of the PL analysis: one band's peak, peak energy, widths and height on a
//! smooth matched to its own width, and the trapezoid integrals over wavelength and energy on
//! the file's own grid. Pure; nothing changes its input.

use crate::error::Result;
use crate::spectra::HC_EV_NM;
use crate::spectra::analysis::{MAX_HALF_WINDOW, Uniform};
use crate::spectra::savgol;

use super::Found;

/// What [`measure_band`] found.
pub(super) struct Measured {
    pub(super) peak_nm: f64,
    pub(super) peak_ev: Option<f64>,
    pub(super) fwhm_nm: Option<f64>,
    pub(super) fwhm_mev: Option<f64>,
    pub(super) height: f64,
    pub(super) width_from: String,
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
pub(super) fn measure_band(
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
pub(super) fn integrate(nm: &[f64], v: &[f64], from: f64, to: f64) -> (f64, f64) {
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
