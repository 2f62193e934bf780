//! The band-edge fit models the first excitonic transition as a Gaussian in energy (see
//! `spectra::band_edge`). Real first transitions are not always Gaussian: homogeneous
//! broadening adds Lorentzian wings (a Voigt profile, here its pseudo-Voigt approximation
//! η·L + (1-η)·G of equal FWHM; Ida, Ando & Toraya, J. Appl. Cryst. 33, 1311 (2000), from
//! memory) and a skewed size distribution or phonon side bands make the band asymmetric (here a
//! split Gaussian, a different σ on the red and blue sides, and an exponentially modified
//! Gaussian, a Gaussian convolved with a one-sided exponential). These tests generate such
//! bands here, on the same kind of band edge as `band_edge_truth.rs` (a Gaussian second
//! transition 0.15-0.30 eV above, a third one, a rising continuum and λ⁻⁴ scattering, seeded
//! noise at SNR 50 and 300, grids of 0.5-2 nm from 350 to 760 nm), and measure how far the
//! Gaussian model's first exciton and HWHM are from the band's own maximum and its own FWHM/2
//! in energy, both found numerically on the defined lineshape alone (no fit, no noise).
//!
//! Every lineshape sees the same cases (position, width, spacing, heights, grid, noise draws),
//! so the rows of the table differ by the lineshape only.
//!
//! What was measured (120 cases a row, SNR 50 and 300): the first exciton stays within 3 nm
//! of the band's maximum in 96-100 % of cases for every lineshape here; the split Gaussians
//! pull it 0.6-1.9 nm toward their broader side. The HWHM is where the Gaussian model is
//! biased: short by roughly 15-19 % x η for a pseudo-Voigt (-3 %, -7 %, -11 % at η 0.2, 0.4, 0.6)
//! and by 7 % for σb/σr 1.4, with p95 errors of 21-23 %; and those misfits are mostly rated
//! good with no warning (see `a_strongly_non_gaussian_misfit_is_never_silent`, ignored because
//! it fails today). The floors in `FLOORS` are against regression, not targets.
//!
//! Run with `--nocapture` to see the error tables.

use cuvette::spectra::Trace;
use cuvette::spectra::analysis::{AbsResult, AnalysisSettings, analyze_absorbance};

/// hc in eV·nm (CODATA 2018 exact h, c and e).
const HC_EV_NM: f64 = 1_239.841_984;
/// FWHM of a Gaussian over its σ, 2 √(2 ln 2).
const FWHM_PER_SIGMA: f64 = 2.354_820_045_030_949;
const CASES: usize = 120;

/// xorshift64* (Vigna, ACM TOMS 42 (2016), from memory) with Box-Muller normals: the same
/// seed gives the same spectra on every run and every lineshape.
struct Draws(u64);

impl Draws {
    fn new(seed: u64) -> Draws {
        // A zero state is the generator's one fixed point.
        Draws(seed.wrapping_mul(0x2545_F491_4F6C_DD1D) | 1)
    }
    fn unit(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        (self.0.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 / (1u64 << 53) as f64
    }
    fn between(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }
    fn normal(&mut self) -> f64 {
        let u = self.unit().max(f64::MIN_POSITIVE);
        let v = self.unit();
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

fn gaussian(e: f64, centre: f64, sigma: f64) -> f64 {
    (-0.5 * ((e - centre) / sigma).powi(2)).exp()
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Lineshape {
    Gaussian,
    /// η is the Lorentzian fraction; both parts have the FWHM of the case's Gaussian.
    PseudoVoigt {
        eta: f64,
    },
    /// σ_blue/σ_red, with (σ_red + σ_blue)/2 the case's σ, so the FWHM is the Gaussian's.
    Split {
        blue_over_red: f64,
    },
    /// An exponential tail of length τ = k σ_g to the blue (or red) of a Gaussian of σ_g,
    /// σ_g scaled so the FWHM is the case's Gaussian's.
    Emg {
        tau_over_sigma: f64,
        blue_tail: bool,
    },
}

impl Lineshape {
    fn label(self) -> String {
        match self {
            Lineshape::Gaussian => "gaussian (control)".into(),
            Lineshape::PseudoVoigt { eta } => format!("pseudo-Voigt η {eta:.1}"),
            Lineshape::Split { blue_over_red } => format!("split σb/σr {blue_over_red:.2}"),
            Lineshape::Emg {
                tau_over_sigma,
                blue_tail,
            } => format!(
                "EMG τ/σ {tau_over_sigma:.1} {} tail",
                if blue_tail { "blue" } else { "red" }
            ),
        }
    }
}

/// An exponentially modified Gaussian in units of its σ_g (x = (E - E0)/σ_g), tabulated by a
/// first-order recursive filter (the exact convolution of the piecewise-constant Gaussian with
/// the exponential), normalised to a maximum of 1. Beyond the table the tail side decays as
/// the exponential alone (the Gaussian is below 1e-20 there) and the other side is zero.
struct EmgTable {
    x0: f64,
    step: f64,
    k: f64,
    blue_tail: bool,
    v: Vec<f64>,
}

impl EmgTable {
    fn new(k: f64, blue_tail: bool) -> EmgTable {
        let step = 0.002;
        let (x0, x1) = (-10.0, 10.0 + 8.0 * k);
        let n = ((x1 - x0) / step) as usize + 1;
        let decay = (-step / k).exp();
        // The tail runs away from the Gaussian: toward larger x for a blue tail. A red tail is
        // the mirror image, x → -x, read off the same table.
        let mut v = vec![0.0; n];
        let mut acc = 0.0;
        for (i, slot) in v.iter_mut().enumerate() {
            let x = x0 + i as f64 * step;
            acc = decay * acc + (1.0 - decay) * gaussian(x, 0.0, 1.0);
            *slot = acc;
        }
        let top = v.iter().copied().fold(0.0, f64::max);
        v.iter_mut().for_each(|y| *y /= top);
        EmgTable {
            x0,
            step,
            k,
            blue_tail,
            v,
        }
    }
    fn at(&self, x: f64) -> f64 {
        let x = if self.blue_tail { x } else { -x };
        let f = (x - self.x0) / self.step;
        if f <= 0.0 {
            return 0.0;
        }
        let last = self.v.len() - 1;
        if f >= last as f64 {
            return self.v[last] * (-(f - last as f64) * self.step / self.k).exp();
        }
        let i = f as usize;
        let t = f - i as f64;
        self.v[i] * (1.0 - t) + self.v[i + 1] * t
    }
}

/// The first transition of one case: its lineshape at unit height.
struct Band<'a> {
    shape: Lineshape,
    centre_ev: f64,
    sigma_ev: f64,
    emg: Option<&'a EmgTable>,
    /// σ_g of the EMG, so its FWHM is that of a Gaussian of `sigma_ev`.
    emg_sigma_ev: f64,
}

impl Band<'_> {
    fn at(&self, e: f64) -> f64 {
        let d = e - self.centre_ev;
        match self.shape {
            Lineshape::Gaussian => gaussian(e, self.centre_ev, self.sigma_ev),
            Lineshape::PseudoVoigt { eta } => {
                let half = 0.5 * FWHM_PER_SIGMA * self.sigma_ev;
                eta / (1.0 + (d / half).powi(2)) + (1.0 - eta) * gaussian(e, self.centre_ev, self.sigma_ev)
            }
            Lineshape::Split { blue_over_red } => {
                let red = 2.0 * self.sigma_ev / (1.0 + blue_over_red);
                let s = if d < 0.0 { red } else { red * blue_over_red };
                gaussian(e, self.centre_ev, s)
            }
            Lineshape::Emg { .. } => self.emg.map_or(0.0, |t| t.at(d / self.emg_sigma_ev)),
        }
    }
}

/// The band's maximum and its FWHM/2 in energy, found on the lineshape alone: a dense scan
/// and golden-section search for the maximum, bisection for each half-maximum crossing.
fn truth(f: &dyn Fn(f64) -> f64, near_ev: f64, scale_ev: f64) -> (f64, f64) {
    let h = scale_ev / 100.0;
    let best = (-400..=400)
        .map(|i| near_ev + i as f64 * h)
        .max_by(|a, b| f(*a).total_cmp(&f(*b)))
        .unwrap_or(near_ev);
    let (mut a, mut b) = (best - h, best + h);
    let g = 0.5 * (5f64.sqrt() - 1.0);
    while b - a > 1e-10 {
        let (c, d) = (b - g * (b - a), a + g * (b - a));
        if f(c) > f(d) { b = d } else { a = c }
    }
    let peak = 0.5 * (a + b);
    let half = 0.5 * f(peak);
    let crossing = |towards: f64| {
        let (mut inside, mut outside) = (peak, peak + towards * scale_ev);
        while f(outside) > half {
            outside += towards * scale_ev;
        }
        for _ in 0..80 {
            let mid = 0.5 * (inside + outside);
            if f(mid) > half { inside = mid } else { outside = mid }
        }
        0.5 * (inside + outside)
    };
    (peak, 0.5 * (crossing(1.0) - crossing(-1.0)))
}

/// One band edge: the geometry every lineshape shares.
#[derive(Debug, Clone)]
struct Case {
    centre_ev: f64,
    sigma_ev: f64,
    spacing_ev: f64,
    second_over_first: f64,
    second_sigma_ev: f64,
    third_above_ev: f64,
    height: f64,
    scatter: f64,
    step_nm: f64,
    snr: f64,
    noise_seed: u64,
}

fn draw_case(seed: u64, snr: f64) -> Case {
    let mut d = Draws::new(seed);
    let sigma_ev = d.between(0.040, 0.070);
    let height = d.between(0.1, 0.8);
    Case {
        centre_ev: d.between(2.0, 2.55),
        sigma_ev,
        spacing_ev: d.between(0.15, 0.30),
        second_over_first: d.between(0.5, 1.2),
        second_sigma_ev: sigma_ev * d.between(1.0, 1.4),
        third_above_ev: d.between(0.25, 0.45),
        height,
        scatter: d.between(0.0, 0.05) * height,
        step_nm: [0.5, 1.0, 2.0][(d.unit() * 3.0) as usize % 3],
        snr,
        noise_seed: seed ^ 0xA5A5_5A5A_0F0F_F0F0,
    }
}

/// A case's spectrum with the given first transition, and the truth for it: the first
/// transition's maximum (eV) and its FWHM/2 (eV). The second transition sits `spacing_ev`
/// above that maximum.
fn spectrum(case: &Case, shape: Lineshape, emg: Option<&EmgTable>, emg_unit_hwhm: f64) -> (Trace, f64, f64) {
    let band = Band {
        shape,
        centre_ev: case.centre_ev,
        sigma_ev: case.sigma_ev,
        emg,
        emg_sigma_ev: 0.5 * FWHM_PER_SIGMA * case.sigma_ev / emg_unit_hwhm,
    };
    let (peak_ev, hwhm_ev) = truth(&|e| band.at(e), case.centre_ev, case.sigma_ev);
    let e2 = peak_ev + case.spacing_ev;
    let e3 = e2 + case.third_above_ev;
    let a1 = case.height;
    let noise = a1 / case.snr;
    let mut draws = Draws::new(case.noise_seed);
    let (lo, hi) = (350.0, 760.0);
    let n = ((hi - lo) / case.step_nm).round() as usize + 1;
    let (mut nm, mut y) = (Vec::with_capacity(n), Vec::with_capacity(n));
    for i in 0..n {
        let l = lo + i as f64 * case.step_nm;
        let e = HC_EV_NM / l;
        let clean = a1
            * (band.at(e)
                + case.second_over_first * gaussian(e, e2, case.second_sigma_ev)
                + 1.2 * gaussian(e, e3, 2.0 * case.sigma_ev)
                + 1.5 / (1.0 + (-(e - e2 - 0.15) / 0.1).exp()))
            + case.scatter * (500.0 / l).powi(4);
        nm.push(l);
        y.push(clean + noise * draws.normal());
    }
    (Trace { nm, y }, peak_ev, hwhm_ev)
}

/// A misfit the user is told about: a poor or fallback band edge, or the residual warning.
fn flagged(r: &AbsResult) -> bool {
    r.band_edge.as_ref().is_none_or(|b| b.quality != "good")
        || r.warnings.iter().any(|w| w.contains("structure in the residual"))
}

#[derive(Default)]
struct Row {
    dnm: Vec<f64>,
    /// got/truth - 1, signed; NaN where no HWHM was given.
    hwhm_rel: Vec<f64>,
    good: usize,
    poor: usize,
    fallback: usize,
    none: usize,
    /// got - truth in nm, signed.
    signed_nm: Vec<f64>,
    /// Cases beyond 3 nm or 15 % that carry no flag.
    silent: Vec<String>,
    /// Of those, the ones with no warning of any kind.
    silent_without_any_warning: usize,
    /// The largest |Δλ| and |HWHM error| among cases carrying no flag.
    unflagged_worst_nm: f64,
    unflagged_worst_hwhm: f64,
}

fn quantile(v: &[f64], q: f64) -> f64 {
    let mut s: Vec<f64> = v.iter().copied().filter(|x| !x.is_nan()).collect();
    if s.is_empty() {
        return f64::NAN;
    }
    s.sort_by(f64::total_cmp);
    s[((s.len() - 1) as f64 * q).round() as usize]
}

fn share(v: &[f64], ok: impl Fn(f64) -> bool) -> f64 {
    v.iter().filter(|x| ok(**x)).count() as f64 / v.len().max(1) as f64
}

impl Row {
    fn within_3nm(&self) -> f64 {
        share(&self.dnm, |d| d <= 3.0)
    }
    fn hwhm_within(&self, rel: f64) -> f64 {
        share(&self.hwhm_rel, |h| h.abs() <= rel)
    }
    fn hwhm_bias(&self) -> f64 {
        quantile(&self.hwhm_rel, 0.5)
    }
    fn line(&self, label: &str, snr: f64) -> String {
        let abs: Vec<f64> = self.hwhm_rel.iter().map(|h| h.abs()).collect();
        let n = self.dnm.len() as f64;
        format!(
            "{label:<24} SNR {snr:>3}: |Δλ| median {:>5.2} p95 {:>5.2} max {:>6.2} nm, ≤3 nm {:>5.1} % | HWHM bias {:>+6.1} %, |err| median {:>5.1} % p95 {:>5.1} %, ≤15 % {:>5.1} % | good {:>5.1} % poor {:>5.1} % fallback {:>5.1} % none {} | silent misfits {} ({} with no warning at all) | unflagged worst {:.2} nm {:.1} % | Δλ signed median {:+.2} nm",
            quantile(&self.dnm, 0.5),
            quantile(&self.dnm, 0.95),
            quantile(&self.dnm, 1.0),
            100.0 * self.within_3nm(),
            100.0 * self.hwhm_bias(),
            100.0 * quantile(&abs, 0.5),
            100.0 * quantile(&abs, 0.95),
            100.0 * self.hwhm_within(0.15),
            100.0 * self.good as f64 / n,
            100.0 * self.poor as f64 / n,
            100.0 * self.fallback as f64 / n,
            self.none,
            self.silent.len(),
            self.silent_without_any_warning,
            self.unflagged_worst_nm,
            100.0 * self.unflagged_worst_hwhm,
            quantile(&self.signed_nm, 0.5),
        )
    }
}

fn measure(shape: Lineshape, snr: f64) -> Row {
    let emg = match shape {
        Lineshape::Emg {
            tau_over_sigma,
            blue_tail,
        } => Some(EmgTable::new(tau_over_sigma, blue_tail)),
        _ => None,
    };
    // The EMG's FWHM/2 at σ_g = 1 scales σ_g to the case's FWHM (the shape is scale-free).
    let unit_hwhm = emg.as_ref().map_or(1.0, |t| truth(&|x| t.at(x), 0.0, 1.0).1);
    let mut row = Row::default();
    for k in 0..CASES {
        let case = draw_case(0x5EED_0000 + k as u64 * 7919 + snr as u64, snr);
        let (trace, peak_ev, hwhm_ev) = spectrum(&case, shape, emg.as_ref(), unit_hwhm);
        let Ok(r) = analyze_absorbance(&trace, &AnalysisSettings::default()) else {
            row.none += 1;
            row.dnm.push(f64::INFINITY);
            row.hwhm_rel.push(f64::NAN);
            continue;
        };
        match r.band_edge.as_ref().map(|b| b.quality) {
            Some("good") => row.good += 1,
            Some("poor") => row.poor += 1,
            Some(_) => row.fallback += 1,
            None => row.none += 1,
        }
        let dnm = r
            .first_exciton_nm
            .map_or(f64::INFINITY, |got| (got - HC_EV_NM / peak_ev).abs());
        let rel = r.hwhm_ev.map_or(f64::NAN, |got| got / hwhm_ev - 1.0);
        row.dnm.push(dnm);
        row.hwhm_rel.push(rel);
        if let Some(got) = r.first_exciton_nm {
            row.signed_nm.push(got - HC_EV_NM / peak_ev);
        }
        let off = dnm > 3.0 || !(rel.abs() <= 0.15);
        if !flagged(&r) {
            row.unflagged_worst_nm = row.unflagged_worst_nm.max(dnm);
            row.unflagged_worst_hwhm =
                row.unflagged_worst_hwhm
                    .max(if rel.is_nan() { f64::INFINITY } else { rel.abs() });
        }
        if off && !flagged(&r) {
            row.silent_without_any_warning += r.warnings.is_empty() as usize;
            row.silent.push(format!(
                "{case:?}\n    truth {:.2} nm HWHM {:.1} meV; got {:?} nm HWHM {:?} eV, (quality, residual/noise, rms/height) {:?}, warnings {:?}",
                HC_EV_NM / peak_ev,
                1e3 * hwhm_ev,
                r.first_exciton_nm,
                r.hwhm_ev,
                r.band_edge
                    .as_ref()
                    .map(|b| (b.quality, b.residual_over_noise, b.residual_rms / b.height)),
                r.warnings,
            ));
        }
    }
    row
}

const PV2: Lineshape = Lineshape::PseudoVoigt { eta: 0.2 };
const PV4: Lineshape = Lineshape::PseudoVoigt { eta: 0.4 };
const PV6: Lineshape = Lineshape::PseudoVoigt { eta: 0.6 };
const SPLIT_07: Lineshape = Lineshape::Split { blue_over_red: 0.7 };
const SPLIT_085: Lineshape = Lineshape::Split { blue_over_red: 0.85 };
const SPLIT_12: Lineshape = Lineshape::Split { blue_over_red: 1.2 };
const SPLIT_14: Lineshape = Lineshape::Split { blue_over_red: 1.4 };
const EMG_BLUE_05: Lineshape = Lineshape::Emg {
    tau_over_sigma: 0.5,
    blue_tail: true,
};
const EMG_BLUE_10: Lineshape = Lineshape::Emg {
    tau_over_sigma: 1.0,
    blue_tail: true,
};
const EMG_RED_05: Lineshape = Lineshape::Emg {
    tau_over_sigma: 0.5,
    blue_tail: false,
};

const SHAPES: [Lineshape; 11] = [
    Lineshape::Gaussian,
    PV2,
    PV4,
    PV6,
    SPLIT_085,
    SPLIT_12,
    SPLIT_07,
    SPLIT_14,
    EMG_BLUE_05,
    EMG_RED_05,
    EMG_BLUE_10,
];

#[test]
fn the_truth_is_found_on_the_lineshape_itself() {
    // Closed forms where they exist: a pseudo-Voigt of equal-FWHM parts and a split Gaussian
    // peak at their centre, with FWHM/2 = 1.1774 σ and 1.1774 (σr + σb)/2.
    let shapes = [Lineshape::Gaussian, PV6, SPLIT_07, SPLIT_14];
    for shape in shapes {
        let band = Band {
            shape,
            centre_ev: 2.2,
            sigma_ev: 0.05,
            emg: None,
            emg_sigma_ev: 0.0,
        };
        let (peak, hwhm) = truth(&|e| band.at(e), 2.21, 0.05);
        assert!((peak - 2.2).abs() < 1e-6, "{shape:?}: peak {peak}");
        assert!(
            (hwhm - 0.5 * FWHM_PER_SIGMA * 0.05).abs() < 1e-6,
            "{shape:?}: hwhm {hwhm}"
        );
    }
    // An EMG's mode lies toward its tail and its FWHM exceeds the Gaussian's; with τ → 0 it is
    // the Gaussian (the table's step, 0.002 σ, bounds how close).
    let t = EmgTable::new(1.0, true);
    let (mode, hwhm) = truth(&|x| t.at(x), 0.0, 1.0);
    assert!(mode > 0.1 && hwhm > 1.2, "mode {mode}, hwhm {hwhm}");
    let red = EmgTable::new(1.0, false);
    let (mode_red, hwhm_red) = truth(&|x| red.at(x), 0.0, 1.0);
    assert!((mode_red + mode).abs() < 1e-6 && (hwhm_red - hwhm).abs() < 1e-6);
    let narrow = EmgTable::new(0.01, true);
    let (m0, h0) = truth(&|x| narrow.at(x), 0.0, 1.0);
    assert!(
        (m0 - 0.01).abs() < 0.005 && (h0 - 0.5 * FWHM_PER_SIGMA).abs() < 0.005,
        "{m0} {h0}"
    );
}

/// Floors against regression for one row, each set a little below what was measured (the
/// measured value, 120 cases, seeds as in `measure`, is in the comment beside it): the share of
/// first excitons within 3 nm of the band's maximum, the share of HWHM within 15 % of its
/// FWHM/2, and ceilings on the median signed HWHM error and the median signed Δλ (the bias).
struct Floor {
    shape: Lineshape,
    snr: f64,
    within_3nm: f64,
    hwhm_within_15: f64,
    hwhm_bias: f64,
    nm_bias: f64,
}

const fn floor(
    shape: Lineshape,
    snr: f64,
    within_3nm: f64,
    hwhm_within_15: f64,
    hwhm_bias: f64,
    nm_bias: f64,
) -> Floor {
    Floor {
        shape,
        snr,
        within_3nm,
        hwhm_within_15,
        hwhm_bias,
        nm_bias,
    }
}

#[rustfmt::skip]
const FLOORS: [Floor; 22] = [
    //                                  ≤3 nm  ≤15 %  |HWHM bias|  |Δλ bias| nm   measured: ≤3 nm, ≤15 %, HWHM bias, Δλ bias
    floor(Lineshape::Gaussian, 50.0,    0.975, 0.965, 0.02,        0.5),      // 100 %, 99.2 %, +0.1 %, -0.09 nm
    floor(Lineshape::Gaussian, 300.0,   0.975, 0.965, 0.02,        0.5),      // 100 %, 99.2 %, +0.2 %, -0.06 nm
    floor(PV2, 50.0,                    0.975, 0.95,  0.05,        0.5),      // 100 %, 97.5 %, -3.0 %, +0.07 nm
    floor(PV2, 300.0,                   0.975, 0.95,  0.05,        0.5),      // 100 %, 98.3 %, -3.2 %, +0.08 nm
    floor(PV4, 50.0,                    0.965, 0.915, 0.09,        0.5),      // 99.2 %, 94.2 %, -6.5 %, +0.20 nm
    floor(PV4, 300.0,                   0.975, 0.94,  0.09,        0.5),      // 100 %, 96.7 %, -7.0 %, +0.25 nm
    // Biased: Lorentzian wings go into the second transition and the background, and the
    // Gaussian takes the core, narrower than the band's FWHM.
    floor(PV6, 50.0,                    0.975, 0.84,  0.13,        0.6),      // 100 %, 86.7 %, -10.5 %, +0.34 nm
    floor(PV6, 300.0,                   0.975, 0.825, 0.135,       0.6),      // 100 %, 85.0 %, -11.3 %, +0.40 nm
    floor(SPLIT_085, 50.0,              0.955, 0.955, 0.04,        1.0),      // 98.3 %, 98.3 %, +1.9 %, +0.70 nm
    floor(SPLIT_085, 300.0,             0.975, 0.975, 0.04,        1.0),      // 100 %, 100 %, +1.8 %, +0.72 nm
    floor(SPLIT_12, 50.0,               0.975, 0.94,  0.05,        1.0),      // 100 %, 96.7 %, -2.8 %, -0.64 nm
    floor(SPLIT_12, 300.0,              0.975, 0.94,  0.05,        1.0),      // 100 %, 96.7 %, -3.2 %, -0.63 nm
    // Biased in position: the Gaussian's centre leans to the broader side, redder here.
    floor(SPLIT_07, 50.0,               0.93,  0.915, 0.05,        2.3),      // 95.8 %, 94.2 %, +3.0 %, +1.76 nm
    floor(SPLIT_07, 300.0,              0.965, 0.925, 0.05,        2.3),      // 99.2 %, 95.0 %, +2.9 %, +1.85 nm
    // Biased: the broad blue side is shared with the second transition, the HWHM is short.
    floor(SPLIT_14, 50.0,               0.975, 0.755, 0.09,        1.5),      // 100 %, 78.3 %, -6.4 %, -1.00 nm
    floor(SPLIT_14, 300.0,              0.965, 0.775, 0.09,        1.5),      // 99.2 %, 80.0 %, -6.8 %, -0.94 nm
    floor(EMG_BLUE_05, 50.0,            0.975, 0.965, 0.035,       0.5),      // 100 %, 99.2 %, -1.6 %, -0.10 nm
    floor(EMG_BLUE_05, 300.0,           0.975, 0.975, 0.035,       0.5),      // 100 %, 100 %, -1.5 %, -0.04 nm
    floor(EMG_RED_05, 50.0,             0.975, 0.965, 0.02,        0.5),      // 100 %, 99.2 %, +0.2 %, +0.05 nm
    floor(EMG_RED_05, 300.0,            0.975, 0.965, 0.02,        0.5),      // 100 %, 99.2 %, +0.0 %, +0.09 nm
    floor(EMG_BLUE_10, 50.0,            0.975, 0.95,  0.08,        0.6),      // 100 %, 97.5 %, -6.2 %, +0.10 nm
    floor(EMG_BLUE_10, 300.0,           0.975, 0.975, 0.08,        0.6),      // 100 %, 100 %, -6.0 %, +0.22 nm
];

fn measure_all() -> Vec<(Lineshape, f64, Row)> {
    let mut rows = Vec::new();
    for shape in SHAPES {
        for snr in [50.0, 300.0] {
            rows.push((shape, snr, measure(shape, snr)));
        }
    }
    eprintln!("first transition FWHM as a Gaussian of σ 40-70 meV, second 0.15-0.30 eV above; {CASES} cases a row");
    for (shape, snr, row) in &rows {
        eprintln!("{}", row.line(&shape.label(), *snr));
    }
    rows
}

/// The strongly non-Gaussian bands of the issue, at high signal.
const STRONG: [Lineshape; 2] = [PV6, SPLIT_14];

#[test]
fn the_gaussian_model_against_non_gaussian_first_transitions() {
    let rows = measure_all();
    for f in &FLOORS {
        let (_, _, row) = rows
            .iter()
            .find(|(s, n, _)| *s == f.shape && *n == f.snr)
            .expect("every floor names a measured row");
        let label = format!("{} SNR {}", f.shape.label(), f.snr);
        assert!(row.none == 0, "{label}: {} spectra without a first exciton", row.none);
        assert!(
            row.within_3nm() >= f.within_3nm,
            "{label}: {:.1} % within 3 nm, floor {:.1} %",
            100.0 * row.within_3nm(),
            100.0 * f.within_3nm
        );
        assert!(
            row.hwhm_within(0.15) >= f.hwhm_within_15,
            "{label}: {:.1} % of HWHM within 15 %, floor {:.1} %",
            100.0 * row.hwhm_within(0.15),
            100.0 * f.hwhm_within_15
        );
        assert!(
            row.hwhm_bias().abs() <= f.hwhm_bias,
            "{label}: HWHM bias {:+.1} %, ceiling {:.1} %",
            100.0 * row.hwhm_bias(),
            100.0 * f.hwhm_bias
        );
        let nm_bias = quantile(&row.signed_nm, 0.5);
        assert!(
            nm_bias.abs() <= f.nm_bias,
            "{label}: Δλ bias {nm_bias:+.2} nm, ceiling {:.1} nm",
            f.nm_bias
        );
    }
    // What holds of "a misfit is never silent" for the strong bands at SNR 300: a first
    // exciton the analysis does not flag (quality good, no residual warning) is within 3 nm of
    // the band's maximum (measured: worst unflagged 1.81 nm for η 0.6, 2.62 nm for σb/σr 1.4),
    // and its HWHM within 40 % (measured: worst unflagged 33.7 % and 29.1 %, both short). The
    // stricter claim, unflagged HWHM within 15 %, does not hold: see the ignored test below.
    for shape in STRONG {
        let (_, _, row) = rows
            .iter()
            .find(|(s, n, _)| *s == shape && *n == 300.0)
            .expect("measured");
        assert!(
            row.unflagged_worst_nm <= 3.0,
            "{}: an unflagged first exciton {:.2} nm off",
            shape.label(),
            row.unflagged_worst_nm
        );
        assert!(
            row.unflagged_worst_hwhm <= 0.40,
            "{}: an unflagged HWHM {:.1} % off",
            shape.label(),
            100.0 * row.unflagged_worst_hwhm
        );
    }
}

/// The claim in full: for a strongly non-Gaussian first transition at SNR 300 the
/// result is within 3 nm and 15 % or it is flagged. It fails today (measured: 18 of 120
/// pseudo-Voigt η 0.6 and 22 of 120 σb/σr 1.4 cases have an HWHM 15-34 % short, rated good
/// with no residual warning; 36 of the 40 carry no warning at all). Their residual is 1.6-12.5
/// times the local noise but only 0.6-1.8 % of the band's height, under the fit's 2 % bar for
/// "poor", and in 18 of the 40 (14 of the 18 η 0.6) under 4 x the noise as well: the residual cannot see a
/// Gaussian that fits the core while the second transition and the background take the wings.
/// Kept as the failing test a change to the flags would start from; run with `--ignored`.
#[test]
#[ignore = "fails today: HWHM misfits of strongly non-Gaussian bands pass as good (see its comment)"]
fn a_strongly_non_gaussian_misfit_is_never_silent() {
    let mut silent = Vec::new();
    for shape in STRONG {
        let row = measure(shape, 300.0);
        for s in &row.silent {
            eprintln!("silent misfit, {}: {s}", shape.label());
        }
        silent.push((shape.label(), row.silent.len()));
    }
    assert!(
        silent.iter().all(|(_, n)| *n == 0),
        "silent misfits of {CASES} cases: {silent:?}"
    );
}
