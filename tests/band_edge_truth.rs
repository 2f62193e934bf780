//! Known-truth checks of the first exciton and its width on synthetic spectra generated here.
//!
//! The spectra follow the published picture of a colloidal band edge: size-distributed
//! transitions, each a Gaussian in energy (Pesika, Stebe & Searson, Adv. Mater. 15, 1289
//! (2003), from memory), on a continuum that rises above the band edge and a Rayleigh-like
//! scattering background (∝ λ⁻⁴). Spacings (0.12-0.30 eV between the first and second
//! transition), widths (FWHM 40-140 meV), signal-to-noise ratios (10-300, the first
//! transition's height over the noise's standard deviation) and grids (0.5-2 nm) span what
//! a synthesis lab records; the truth is the first Gaussian's centre and HWHM.
//!
//! Run with `--nocapture` to see the error tables.

use cuvette::spectra::Trace;
use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance, analyze_absorbance_with};
use cuvette::spectra::band_edge::BandEdgeHint;

const HC: f64 = 1239.841984;

/// A deterministic generator (splitmix64 + Box-Muller), so every run sees the same cases.
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }
    fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.next()
    }
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.next().max(1e-300), self.next());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

fn gauss(e: f64, c: f64, s: f64) -> f64 {
    (-0.5 * ((e - c) / s).powi(2)).exp()
}

/// Every field is printed (through Debug) when a case misses its target.
#[derive(Debug, Clone)]
#[allow(dead_code)]
struct Case {
    e1: f64,
    sigma1: f64,
    spacing: f64,
    snr: f64,
    step_nm: f64,
    /// The noiseless composite has a maximum of its own near the first transition.
    resolved: bool,
}

/// A visible band edge (CdSe-like): three transitions, a continuum and scattering.
fn visible(rng: &mut Rng, snr: f64) -> (Trace, Case) {
    visible_with(rng, snr, (0.040, 0.140), (0.12, 0.30))
}

fn visible_with(rng: &mut Rng, snr: f64, fwhm_ev: (f64, f64), spacing_ev: (f64, f64)) -> (Trace, Case) {
    let e1 = rng.uniform(1.95, 2.55);
    let fwhm = rng.uniform(fwhm_ev.0, fwhm_ev.1);
    let sigma1 = fwhm / 2.354_820_045;
    let spacing = rng.uniform(spacing_ev.0, spacing_ev.1);
    let r2 = rng.uniform(0.5, 1.2);
    let sigma2 = sigma1 * rng.uniform(1.0, 1.5);
    let e3 = e1 + spacing + rng.uniform(0.25, 0.45);
    let a1 = rng.uniform(0.1, 0.8);
    let scatter = rng.uniform(0.0, 0.05) * a1;
    let step = [0.5, 1.0, 2.0][(rng.next() * 3.0) as usize % 3];
    let (lo, hi) = (350.0, 800.0);
    let n = ((hi - lo) / step) as usize + 1;
    let noise = a1 / snr;
    let composite = |e: f64| {
        a1 * (gauss(e, e1, sigma1)
            + r2 * gauss(e, e1 + spacing, sigma2)
            + 1.2 * gauss(e, e3, 2.0 * sigma1.max(0.04))
            + 1.5 / (1.0 + (-(e - e1 - spacing - 0.15) / 0.1).exp()))
    };
    let mut nm = Vec::with_capacity(n);
    let mut y = Vec::with_capacity(n);
    for i in 0..n {
        let l = lo + i as f64 * step;
        let e = HC / l;
        nm.push(l);
        y.push(composite(e) + scatter * (500.0 / l).powi(4) + noise * rng.normal());
    }
    // Resolved when the noiseless composite turns over within a σ of the first centre.
    let d = |e: f64| composite(e + 1e-4) - composite(e - 1e-4);
    let resolved = (0..200).any(|k| {
        let e = e1 - sigma1 + 2.0 * sigma1 * k as f64 / 200.0;
        d(e) > 0.0 && d(e + 0.01 * sigma1) <= 0.0
    });
    let case = Case {
        e1,
        sigma1,
        spacing,
        snr,
        step_nm: step,
        resolved,
    };
    (Trace { nm, y }, case)
}

struct Errors {
    nm: Vec<f64>,
    hwhm_rel: Vec<f64>,
}

fn quantile(v: &[f64], q: f64) -> f64 {
    let mut s = v.to_vec();
    s.sort_by(f64::total_cmp);
    if s.is_empty() {
        return f64::NAN;
    }
    s[((s.len() - 1) as f64 * q).round() as usize]
}

fn score(trace: &Trace, case: &Case, e: &mut Errors) -> Option<()> {
    let r = analyze_absorbance(trace, &AnalysisSettings::default()).ok()?;
    let got_nm = r.first_exciton_nm?;
    let got_hwhm = r.hwhm_ev?;
    if std::env::var_os("SHOW_FITS").is_some()
        && ((got_nm - HC / case.e1).abs() > 1.0 || (got_hwhm / (case.sigma1 * 1.177_410_022_5) - 1.0).abs() > 0.1)
    {
        eprintln!(
            "{case:?}\n   got {got_nm:.2} nm hwhm {got_hwhm:.4} (truth {:.4}) {:?}",
            case.sigma1 * 1.1774,
            r.band_edge
                .as_ref()
                .map(|b| (b.quality, b.fit_from_nm, b.fit_to_nm, &b.transitions))
        );
    }
    e.nm.push((got_nm - HC / case.e1).abs());
    e.hwhm_rel
        .push((got_hwhm / (case.sigma1 * 1.177_410_022_5) - 1.0).abs());
    Some(())
}

#[test]
fn first_exciton_and_hwhm_hold_on_overlapping_noisy_band_edges() {
    let mut rng = Rng(20261202);
    let mut table = Vec::new();
    let mut rates_at_25 = (0usize, 0usize, 0usize, 0usize, 0usize); // resolved ok/total, shoulder ok/total, hwhm ok
    let mut total_at_25 = 0usize;
    for &snr in &[10.0, 25.0, 50.0, 100.0, 300.0] {
        let mut res = Errors {
            nm: vec![],
            hwhm_rel: vec![],
        };
        let mut sh = Errors {
            nm: vec![],
            hwhm_rel: vec![],
        };
        let mut missed = 0;
        for _ in 0..120 {
            let (t, c) = visible(&mut rng, snr);
            let target = if c.resolved { &mut res } else { &mut sh };
            if score(&t, &c, target).is_none() {
                missed += 1;
                target.nm.push(f64::INFINITY);
                target.hwhm_rel.push(f64::INFINITY);
            }
            if snr >= 25.0 {
                let last = target.nm.len() - 1;
                let (dnm, dh) = (target.nm[last], target.hwhm_rel[last]);
                total_at_25 += 1;
                if c.resolved {
                    rates_at_25.1 += 1;
                    rates_at_25.0 += (dnm <= 1.0) as usize;
                } else {
                    rates_at_25.3 += 1;
                    rates_at_25.2 += (dnm <= 3.0) as usize;
                }
                rates_at_25.4 += (dh <= 0.10) as usize;
                if !(dnm <= if c.resolved { 1.0 } else { 3.0 }) || dh > 0.10 {
                    eprintln!("  off: {c:?} -> {dnm:.2} nm, hwhm {:.1} %", 100.0 * dh);
                }
            }
        }
        table.push(format!(
            "SNR {snr:>5}: resolved n={:>3} |Δλ| median {:.2} p95 {:.2} nm, HWHM median {:.1} % p95 {:.1} % | shoulder n={:>3} |Δλ| median {:.2} p95 {:.2} nm, HWHM median {:.1} % p95 {:.1} % | none found {missed}",
            res.nm.len(),
            quantile(&res.nm, 0.5),
            quantile(&res.nm, 0.95),
            100.0 * quantile(&res.hwhm_rel, 0.5),
            100.0 * quantile(&res.hwhm_rel, 0.95),
            sh.nm.len(),
            quantile(&sh.nm, 0.5),
            quantile(&sh.nm, 0.95),
            100.0 * quantile(&sh.hwhm_rel, 0.5),
            100.0 * quantile(&sh.hwhm_rel, 0.95),
        ));
    }
    for l in &table {
        eprintln!("{l}");
    }
    let (ro, rt, so, st, ho) = rates_at_25;
    let rate = |a: usize, b: usize| if b == 0 { 1.0 } else { a as f64 / b as f64 };
    eprintln!(
        "SNR ≥ 25: resolved within 1 nm {:.1} % of {rt}, shoulders within 3 nm {:.1} % of {st}, HWHM within 10 % {:.1} % of {total_at_25}",
        100.0 * rate(ro, rt),
        100.0 * rate(so, st),
        100.0 * rate(ho, total_at_25)
    );
    // The targets: 95 % of cases at SNR ≥ 25.
    assert!(rate(ro, rt) >= 0.95, "resolved within 1 nm: {ro}/{rt}");
    assert!(rate(so, st) >= 0.95, "shoulders within 3 nm: {so}/{st}");
    assert!(rate(ho, total_at_25) >= 0.95, "HWHM within 10 %: {ho}/{total_at_25}");
}

/// A near-infrared scan to 2,500 nm (PbSe-like): the 1S transition at 1,280-1,450 nm, a
/// second one 0.2-0.3 eV above, a strong rise into the visible, and a detector whose noise
/// grows steeply beyond 1,800 nm, as InGaAs detectors' does near their cut-off (common
/// practice). The red end's noise must not be read as the first exciton.
#[test]
fn a_noisy_red_end_of_a_near_infrared_scan_is_not_the_first_exciton() {
    let mut rng = Rng(7);
    let mut worst: f64 = 0.0;
    for k in 0..40 {
        let l1 = rng.uniform(1280.0, 1450.0);
        let e1 = HC / l1;
        let sigma = rng.uniform(0.035, 0.06);
        let a1 = rng.uniform(0.05, 0.2);
        let step = if k % 2 == 0 { 1.0 } else { 2.0 };
        let n = ((2500.0 - 400.0) / step) as usize + 1;
        let mut nm = Vec::with_capacity(n);
        let mut y = Vec::with_capacity(n);
        for i in 0..n {
            let l = 400.0 + i as f64 * step;
            let e = HC / l;
            let red_noise = 1.0 + ((l - 1800.0).max(0.0) / 150.0).powi(2);
            let v = a1
                * (gauss(e, e1, sigma)
                    + 0.8 * gauss(e, e1 + 0.25, 1.4 * sigma)
                    + 0.15 * (e - e1 - 0.2).max(0.0).powi(2) * 40.0)
                + 0.002 * (1000.0 / l).powi(4)
                + a1 / 100.0 * red_noise * rng.normal();
            nm.push(l);
            y.push(v);
        }
        let r = analyze_absorbance(&Trace { nm, y }, &AnalysisSettings::default()).unwrap();
        let got = r.first_exciton_nm.unwrap_or(f64::NAN);
        worst = worst.max((got - l1).abs());
        assert!(
            (got - l1).abs() < 10.0,
            "case {k}: 1S at {l1:.0} nm read as {got:.0} nm ({:?})",
            r.warnings
        );
    }
    eprintln!("near-infrared 1S: worst |Δλ| {worst:.1} nm over 40 scans");
}

/// A detector or grating change leaves a small step in a visible scan (common practice: near
/// 800-900 nm on many double-beam instruments); it is not a first exciton.
#[test]
fn an_instrument_step_red_of_the_band_edge_is_not_the_first_exciton() {
    let mut rng = Rng(11);
    for k in 0..30 {
        let e1 = rng.uniform(2.0, 2.4);
        let sigma = rng.uniform(0.035, 0.055);
        let step_at = rng.uniform(860.0, 940.0);
        let step_size = rng.uniform(0.003, 0.02);
        let nm: Vec<f64> = (0..=700).map(|i| 300.0 + i as f64).collect();
        let y: Vec<f64> = nm
            .iter()
            .map(|&l| {
                let e = HC / l;
                0.3 * (gauss(e, e1, sigma) + 0.9 * gauss(e, e1 + 0.18, 1.3 * sigma))
                    + 0.4 / (1.0 + (-(e - e1 - 0.4) / 0.1).exp())
                    + if l > step_at { step_size } else { 0.0 }
                    + 0.0008 * rng.normal()
            })
            .collect();
        let r = analyze_absorbance(&Trace { nm, y }, &AnalysisSettings::default()).unwrap();
        let got = r.first_exciton_nm.unwrap_or(f64::NAN);
        assert!(
            (got - HC / e1).abs() < 2.0,
            "case {k}: step at {step_at:.0} nm, exciton {:.0} nm read as {got:.0}",
            HC / e1
        );
    }
}

/// CdSe's bulk gap is about 1.74 eV (about 713 nm; textbook value, from memory): a feature at
/// 800 nm cannot be its first exciton, and the material's hint refuses it.
#[test]
fn nothing_redder_than_the_bulk_gap_is_taken_as_a_first_exciton() {
    let nm: Vec<f64> = (0..=500).map(|i| 400.0 + i as f64).collect();
    let e1 = HC / 800.0;
    let y: Vec<f64> = nm
        .iter()
        .map(|&l| {
            let e = HC / l;
            0.3 * (gauss(e, e1, 0.04) + gauss(e, e1 + 0.2, 0.05)) + 0.3 / (1.0 + (-(e - e1 - 0.4) / 0.1).exp())
        })
        .collect();
    let t = Trace { nm, y };
    let open = analyze_absorbance(&t, &AnalysisSettings::default()).unwrap();
    assert!((open.first_exciton_nm.unwrap() - 800.0).abs() < 1.0);
    let hint = BandEdgeHint {
        material: Some("CdSe".into()),
        expected_nm: Some((450.0, 700.0)),
        bulk_gap_nm: Some(HC / 1.74),
    };
    let r = analyze_absorbance_with(&t, &AnalysisSettings::default(), &hint).unwrap();
    assert!(r.first_exciton_nm.is_none_or(|p| p < 713.0), "{:?}", r.first_exciton_nm);
    assert!(
        r.warnings.iter().any(|w| w.contains("bulk band gap")),
        "{:?}",
        r.warnings
    );
}

/// As the width or the spacing changes smoothly, the first exciton moves smoothly: the
/// assignment never jumps from the first transition to the second (which lies 25-50 nm
/// bluer here), and a noiseless band edge stays within the shoulder tolerance (3 nm).
#[test]
fn the_assignment_does_not_jump_as_width_and_spacing_change() {
    let nm: Vec<f64> = (0..=450).map(|i| 350.0 + i as f64).collect();
    let e1 = 2.15;
    let mut worst: f64 = 0.0;
    let mut beyond_3 = 0;
    for j in 0..=10 {
        let sigma = (0.040 + 0.10 * j as f64 / 10.0) / 2.354_820_045;
        let mut previous: Option<f64> = None;
        for k in 0..=40 {
            let spacing = 0.12 + 0.18 * k as f64 / 40.0;
            let y: Vec<f64> = nm
                .iter()
                .map(|&l| {
                    let e = HC / l;
                    0.3 * (gauss(e, e1, sigma) + 1.0 * gauss(e, e1 + spacing, 1.2 * sigma))
                        + 0.4 / (1.0 + (-(e - e1 - spacing - 0.2) / 0.1).exp())
                })
                .collect();
            let r = analyze_absorbance(&Trace { nm: nm.clone(), y }, &AnalysisSettings::default()).unwrap();
            let got = r.first_exciton_nm.unwrap();
            let err = (got - HC / e1).abs();
            worst = worst.max(err);
            beyond_3 += (err > 3.0) as usize;
            assert!(
                err < 6.0,
                "spacing {spacing:.3} eV, σ {sigma:.3} eV: first exciton {got:.1} nm, truth {:.1}",
                HC / e1
            );
            if let Some(p) = previous {
                assert!(
                    (got - p).abs() < 2.0,
                    "a jump of {:.1} nm at spacing {spacing:.3} eV, σ {sigma:.3} eV",
                    got - p
                );
            }
            previous = Some(got);
        }
    }
    eprintln!("smooth sweep: worst |Δλ| {worst:.2} nm, {beyond_3} of 451 beyond 3 nm");
    assert!(beyond_3 <= 451 / 20, "{beyond_3} of 451 beyond 3 nm");
}

/// Broad band edges (FWHM 140-280 meV, as for InP or a wide size distribution) where the first
/// transition is mostly a shoulder on the second.
#[test]
fn broad_band_edges_and_shoulders() {
    let mut rng = Rng(99);
    let (mut within, mut total, mut hw) = (0usize, 0usize, 0usize);
    let mut errs = Vec::new();
    let (mut shoulders, mut shoulders_within) = (0, 0);
    for &snr in &[25.0, 50.0, 100.0, 300.0] {
        for _ in 0..60 {
            let (t, c) = visible_with(&mut rng, snr, (0.14, 0.28), (0.20, 0.35));
            shoulders += (!c.resolved) as usize;
            let r = analyze_absorbance(&t, &AnalysisSettings::default()).unwrap();
            total += 1;
            let (Some(got), Some(h)) = (r.first_exciton_nm, r.hwhm_ev) else {
                errs.push(f64::INFINITY);
                continue;
            };
            let d = (got - HC / c.e1).abs();
            errs.push(d);
            within += (d <= 3.0) as usize;
            if !c.resolved {
                shoulders_within += (d <= 3.0) as usize;
            }
            hw += ((h / (c.sigma1 * 1.177_410_022_5) - 1.0).abs() <= 0.10) as usize;
        }
    }
    eprintln!("broad, shoulders alone: {shoulders_within} of {shoulders} within 3 nm");
    eprintln!(
        "broad: {shoulders} of {total} shoulders; within 3 nm {:.1} %, HWHM within 10 % {:.1} %, |Δλ| median {:.2} p95 {:.2} nm",
        100.0 * within as f64 / total as f64,
        100.0 * hw as f64 / total as f64,
        quantile(&errs, 0.5),
        quantile(&errs, 0.95)
    );
    // The targets, as on ordinary widths: 95 % of cases (all at SNR ≥ 25). Reached
    // with little room on the first-exciton rate (about 95.4 %, 229 of 240).
    assert!(within as f64 >= 0.95 * total as f64, "{within}/{total} within 3 nm");
    // The shoulders on their own: 20 of 25 measured (80 %, below the 95 % target); the misses
    // are 3.3-4.1 nm on bands of σ ≈ 0.11 eV whose second transition lies within about 2σ,
    // where the fitted second transition takes up the continuum. A floor against regression.
    assert!(
        shoulders_within >= 18,
        "{shoulders_within}/{shoulders} shoulders within 3 nm"
    );
    assert!(hw as f64 >= 0.95 * total as f64, "{hw}/{total} HWHM within 10 %");
}
