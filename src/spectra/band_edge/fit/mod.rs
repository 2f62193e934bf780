//! The band-edge fit: a sum of Gaussians in energy on a linear background, its parameter
//! layout, the fitted window and its scratch space, the constraints that keep it physical,
//! its linear start and the weighted Levenberg-Marquardt that refines it, and the checks a fit
//! must pass before its centre and width are taken (otherwise `None`, and the caller falls
//! back to the derivative estimate). The arithmetic of each step is in `normal.rs`.

pub(super) mod normal;

use super::{
    BandEdge, Candidate, EnergyGrid, HC_EV_NM, HWHM_PER_SIGMA, LocalNoise, MAX_SIGMA_EV, MIN_SIGMA_EV, Transition,
};
use normal::{cholesky_in_place, cholesky_solve, gaussian_column, jacobian_products, normal_equations, residuals};

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

/// Scratch space of one fit, reused across its iterations.
struct Scratch {
    cols: Vec<f64>,
    /// The Jacobian, one contiguous column of `len()` values per parameter.
    jac: Vec<f64>,
    /// One Jacobian column times the points' weights.
    weighted: Vec<f64>,
    res: Vec<f64>,
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

pub(super) fn fit_band_edge(
    g: &EnergyGrid,
    noise: &LocalNoise,
    first: &Candidate,
    higher: &[&Candidate],
) -> Option<BandEdge> {
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
