//! Photoluminescence analysis against known truth: spectra generated here as Gaussians in
//! energy, sampled in wavelength through the Jacobian I(λ) = I(E) hc/λ² (the standard
//! conversion; Mooney & Kambhampati, J. Phys. Chem. Lett. 4, 3316 (2013), from memory), on
//! sloped dark-count baselines with seeded Gaussian noise, on even and CCD-like grids, with
//! excitation lines, grid gaps and two-band (band-edge plus trap) emission.
//!
//! Truth for a Gaussian in energy, I(E) = A exp(-(E-E0)²/2σ²):
//! - ∫ I dE = ∫ I dλ = A σ √(2π) (the Jacobian keeps the integral);
//! - FWHM in energy = 2 √(2 ln 2) σ;
//! - I(λ) ∝ E² exp(-(E-E0)²/2σ²) peaks where E² - E0 E - 2σ² = 0, i.e.
//!   E* = (E0 + √(E0² + 8σ²))/2, a little blue of hc/E0 (derived here from the Jacobian);
//! - the FWHM in wavelength is found by bisection on the noiseless curve.
//!
//! Targets (issue 12): integral within 3 %, peak within 1 nm, FWHM within 10 %, on at least
//! 95 % of cases at SNR ≥ 25; an excitation line is never reported as the peak.
//! Run with `--nocapture` to see the error table.

use cuvette::spectra::Trace;
use cuvette::spectra::analysis::{AnalysisSettings, analyze_pl};
use cuvette::spectra::pl::PlResult;

/// hc in eV·nm (CODATA 2018 exact h, c and e).
const HC: f64 = 1_239.841_984;
const FWHM_PER_SIGMA: f64 = 2.354_820_045_030_949_3; // 2 √(2 ln 2)

/// SplitMix64 (Steele, Lea & Flood, OOPSLA 2014): a tiny deterministic generator.
struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.uniform()
    }
    /// Box-Muller.
    fn normal(&mut self) -> f64 {
        let u1 = self.uniform().max(1e-300);
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

/// A Gaussian band in energy: centre E0 (eV), σ (eV), amplitude A of I(E).
#[derive(Clone, Copy, Debug)]
struct Band {
    e0: f64,
    sigma: f64,
    a: f64,
}

impl Band {
    fn with_fwhm(e0: f64, fwhm_ev: f64, a: f64) -> Band {
        Band {
            e0,
            sigma: fwhm_ev / FWHM_PER_SIGMA,
            a,
        }
    }
    /// I(λ) = I(E) hc/λ².
    fn at_nm(&self, l: f64) -> f64 {
        let e = HC / l;
        self.a * (-(e - self.e0).powi(2) / (2.0 * self.sigma * self.sigma)).exp() * HC / (l * l)
    }
    fn integral(&self) -> f64 {
        self.a * self.sigma * (2.0 * std::f64::consts::PI).sqrt()
    }
    fn fwhm_mev(&self) -> f64 {
        1000.0 * FWHM_PER_SIGMA * self.sigma
    }
    /// The maximum of I(λ), from E² - E0 E - 2σ² = 0.
    fn peak_nm(&self) -> f64 {
        HC / (0.5 * (self.e0 + (self.e0 * self.e0 + 8.0 * self.sigma * self.sigma).sqrt()))
    }
    fn height(&self) -> f64 {
        self.at_nm(self.peak_nm())
    }
    /// FWHM of I(λ) by bisection on each side of its peak.
    fn fwhm_nm(&self) -> f64 {
        let p = self.peak_nm();
        let h = 0.5 * self.height();
        let side = |dir: f64| {
            let (mut near, mut far) = (p, p + dir * 20.0 * self.sigma * p * p / HC);
            for _ in 0..200 {
                let mid = 0.5 * (near + far);
                if self.at_nm(mid) > h {
                    near = mid;
                } else {
                    far = mid;
                }
            }
            0.5 * (near + far)
        };
        side(1.0) - side(-1.0)
    }
    /// Wavelengths where the band is `k` σ from its centre in energy (blue, red).
    fn span_nm(&self, k: f64) -> (f64, f64) {
        (HC / (self.e0 + k * self.sigma), HC / (self.e0 - k * self.sigma))
    }
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    Plain,
    Ccd,
    ExcitationLine,
    LineOnBand,
    Gap,
    TwoBand,
}

const KINDS: [Kind; 6] = [
    Kind::Plain,
    Kind::Ccd,
    Kind::ExcitationLine,
    Kind::LineOnBand,
    Kind::Gap,
    Kind::TwoBand,
];

struct Case {
    kind: Kind,
    snr: f64,
    step: f64,
    edge: Band,
    trap: Option<Band>,
    /// Injected narrow lines (nm) and whether each must be found: its sampled height is at
    /// least 12 noise deviations (a 0.5 nm line on a 2 nm grid may fall between points) and,
    /// on a band, the band is at least 15 nm wide and the line a quarter of its height (a
    /// weaker line, or one on a narrower band, is not told apart from the band's top; it must
    /// then only not be taken for the peak).
    lines: Vec<(f64, bool)>,
    /// Injected gap (from, to) in nm.
    gap: Option<(f64, f64)>,
    trace: Trace,
}

/// One synthetic spectrum of the given kind; every number drawn from `rng`.
fn make_case(kind: Kind, rng: &mut Rng) -> Case {
    // Two-band spectra are visible band-edge emitters (CdSe-like) with their trap band in
    // the red, so that the scan can cover both as a chemist's would.
    let peak = if kind == Kind::TwoBand {
        rng.range(450.0, 620.0)
    } else {
        rng.range(450.0, 750.0)
    };
    let fwhm_ev = rng.range(0.040, 0.140);
    let edge = Band::with_fwhm(HC / peak, fwhm_ev, 1.0);
    let edge = Band {
        a: 1000.0 / edge.height(),
        ..edge
    };
    let height = edge.height();
    // Trap emission (invented but typical shape): 0.3-0.45 eV red, 200-320 meV wide,
    // 10-50 % of the band edge's height.
    let trap = (kind == Kind::TwoBand).then(|| {
        let t = Band::with_fwhm(edge.e0 - rng.range(0.3, 0.45), rng.range(0.20, 0.32), 1.0);
        Band {
            a: rng.range(0.1, 0.5) * height / t.height(),
            ..t
        }
    });
    let snr = (10f64.ln() + rng.uniform() * (300f64.ln() - 10f64.ln())).exp();
    let step = rng.range(0.5, 2.0);
    // The scan covers the emission (6σ of the band edge; 5σ of a trap band, whose Gaussian
    // blue tail reaches under and past the band edge) plus margins a lab would leave.
    let (mut lo, mut hi) = edge.span_nm(6.0);
    if let Some(t) = trap {
        lo = lo.min(t.span_nm(5.0).0);
        hi = hi.max(t.span_nm(5.0).1);
    }
    lo -= rng.range(15.0, 80.0);
    hi += rng.range(20.0, 120.0);
    let lo = lo.max(300.0);
    // Dark counts: offset 0-50 % of the peak, slope up to ±4 % of the peak per 100 nm.
    let offset = rng.range(0.0, 0.5) * height;
    let slope = rng.range(-0.04, 0.04) * height / 100.0;
    let mid = 0.5 * (lo + hi);
    let mut nm = Vec::new();
    if kind == Kind::Ccd {
        // A CCD's pixel-to-wavelength map is a low-order polynomial: step rising by 20-60 %.
        let grow = rng.range(0.2, 0.6);
        let npx = ((hi - lo) / (step * (1.0 + 0.5 * grow))).ceil() as usize;
        let b = step * grow / npx as f64;
        for i in 0..=npx {
            let x = lo + step * i as f64 + 0.5 * b * (i * i) as f64 + 0.01 * step * (0.7 * i as f64).sin();
            if x > hi {
                break;
            }
            nm.push(x);
        }
    } else {
        let n = ((hi - lo) / step).floor() as usize;
        nm.extend((0..=n).map(|i| lo + step * i as f64));
    }
    let mut gap = None;
    if kind == Kind::Gap {
        // 5-25 nm missing (and at least 5 steps, "much larger than the step"), anywhere from
        // the blue end to past the band edge's red half.
        let width = rng.range(5.0, 25.0).max(5.0 * step);
        let at = rng.range(lo + 5.0, edge.peak_nm() + 2.0 * edge.fwhm_nm());
        gap = Some((at, at + width));
        nm.retain(|&x| x < at || x > at + width);
        let first_after = nm.iter().copied().find(|&x| x > at + width).unwrap_or(hi);
        let last_before = nm.iter().copied().rev().find(|&x| x < at).unwrap_or(lo);
        gap = gap.map(|_| (last_before, first_after));
    }
    let mut lines = Vec::new();
    // Narrow lines: Gaussian, FWHM 0.5-2 nm (a fluorimeter's slit or a laser), 0.5-50 x the
    // PL height.
    let line =
        |at: f64, fw: f64, h: f64| move |l: f64| h * (-(l - at).powi(2) / (2.0 * (fw / FWHM_PER_SIGMA).powi(2))).exp();
    let mut line_fns: Vec<Box<dyn Fn(f64) -> f64>> = Vec::new();
    match kind {
        Kind::ExcitationLine => {
            let at = lo + rng.range(2.0, 15.0);
            let h = (0.5f64.ln() + rng.uniform() * (50f64.ln() - 0.5f64.ln())).exp() * height;
            line_fns.push(Box::new(line(at, rng.range(0.5, 2.0), h)));
            lines.push(at);
            if 2.0 * at < hi - 5.0 {
                line_fns.push(Box::new(line(2.0 * at, rng.range(0.5, 2.0), 0.1 * h)));
                lines.push(2.0 * at);
            }
        }
        Kind::LineOnBand => {
            // A narrow line on the band itself (a Raman line, a stray laser line), taller than
            // the band so it would win a plain maximum search.
            let at = edge.peak_nm() + rng.range(-0.8, 0.8) * edge.fwhm_nm();
            line_fns.push(Box::new(line(at, rng.range(0.5, 2.0), rng.range(0.5, 3.0) * height)));
            lines.push(at);
        }
        _ => {}
    }
    let sigma_noise = height / snr;
    let band_wide = edge.fwhm_nm() >= 15.0;
    let lines: Vec<(f64, bool)> = lines
        .iter()
        .zip(&line_fns)
        .map(|(&at, f)| {
            let seen = nm.iter().map(|&l| f(l)).fold(0.0, f64::max);
            let on_band = kind == Kind::LineOnBand;
            (
                at,
                seen >= 12.0 * sigma_noise && (!on_band || (band_wide && seen >= 0.25 * height)),
            )
        })
        .collect();
    let y: Vec<f64> = nm
        .iter()
        .map(|&l| {
            let mut v = edge.at_nm(l) + offset + slope * (l - mid);
            if let Some(t) = trap {
                v += t.at_nm(l);
            }
            for f in &line_fns {
                v += f(l);
            }
            v + sigma_noise * rng.normal()
        })
        .collect();
    Case {
        kind,
        snr,
        step,
        edge,
        trap,
        lines,
        gap,
        trace: Trace { nm, y },
    }
}

struct Errors {
    kind: Kind,
    snr: f64,
    /// A gap within one FWHM of the band-edge peak: the data there are missing, so only the
    /// warning is required; such cases are tabulated apart from the targets.
    gap_in_band: bool,
    integral_rel: f64,
    integral_e_rel: f64,
    peak_nm: f64,
    fwhm_nm_rel: f64,
    fwhm_mev_rel: f64,
}

fn errors_of(c: &Case, r: &PlResult) -> Errors {
    let total = c.edge.integral() + c.trap.map_or(0.0, |t| t.integral());
    let nan = f64::NAN;
    let (p, w) = (c.edge.peak_nm(), c.edge.fwhm_nm());
    Errors {
        kind: c.kind,
        snr: c.snr,
        gap_in_band: c.gap.is_some_and(|(a, b)| b > p - w && a < p + w),
        integral_rel: r.pl_integral / total - 1.0,
        integral_e_rel: r.pl_integral_energy / total - 1.0,
        peak_nm: r.pl_peak_nm.map_or(nan, |p| p - c.edge.peak_nm()),
        fwhm_nm_rel: r.pl_fwhm_nm.map_or(nan, |w| w / c.edge.fwhm_nm() - 1.0),
        fwhm_mev_rel: r.pl_fwhm_mev.map_or(nan, |w| w / c.edge.fwhm_mev() - 1.0),
    }
}

/// (rate within `limit`, median |e|, 95th percentile |e|); a missing value counts as a miss.
fn stats(v: &[f64], limit: f64) -> (f64, f64, f64) {
    if v.is_empty() {
        return (f64::NAN, f64::NAN, f64::NAN);
    }
    let within = v.iter().filter(|e| e.abs() <= limit).count() as f64 / v.len() as f64;
    let mut a: Vec<f64> = v
        .iter()
        .map(|e| if e.is_nan() { f64::INFINITY } else { e.abs() })
        .collect();
    a.sort_by(f64::total_cmp);
    let q = |p: f64| a[((p * (a.len() - 1) as f64).round() as usize).min(a.len() - 1)];
    (within, q(0.5), q(0.95))
}

fn median_signed(v: &[f64]) -> f64 {
    let mut a: Vec<f64> = v.iter().copied().filter(|e| e.is_finite()).collect();
    a.sort_by(f64::total_cmp);
    a[a.len() / 2]
}

fn table(title: &str, rows: &[&Errors]) -> String {
    let col = |f: fn(&Errors) -> f64| rows.iter().map(|e| f(e)).collect::<Vec<_>>();
    let (ir, im, ip) = stats(&col(|e| e.integral_rel), 0.03);
    let (er, em, ep) = stats(&col(|e| e.integral_e_rel), 0.03);
    let (pr, pm, pp) = stats(&col(|e| e.peak_nm), 1.0);
    let (wr, wm, wp) = stats(&col(|e| e.fwhm_nm_rel), 0.10);
    let (vr, vm, vp) = stats(&col(|e| e.fwhm_mev_rel), 0.10);
    format!(
        "{title:<22} {:>4} | integral {:>5.1}% {:>5.2}% {:>5.2}% | int(E) {:>5.1}% {:>5.2}% {:>5.2}% | peak {:>5.1}% {:>5.2} {:>5.2} nm | FWHM nm {:>5.1}% {:>5.1}% {:>5.1}% | FWHM meV {:>5.1}% {:>5.1}% {:>5.1}%",
        rows.len(),
        100.0 * ir,
        100.0 * im,
        100.0 * ip,
        100.0 * er,
        100.0 * em,
        100.0 * ep,
        100.0 * pr,
        pm,
        pp,
        100.0 * wr,
        100.0 * wm,
        100.0 * wp,
        100.0 * vr,
        100.0 * vm,
        100.0 * vp,
    )
}

const CASES_PER_KIND: usize = 120;

#[test]
fn pl_meets_the_known_truth_targets_on_hard_synthetic_spectra() {
    let mut rng = Rng(20_261_202);
    let set = AnalysisSettings::default();
    let mut all = Vec::new();
    // Failures that must not happen at all: a line taken for the peak, a band-edge or trap
    // band not found.
    let mut line_misses = Vec::new();
    // Lines that had to be found and were not (reported as a rate).
    let mut lines_missed: Vec<String> = Vec::new();
    let mut lines_required = 0usize;
    // Two-band cases: (trap SNR, trap peak error / trap FWHM, trap integral error, band-edge
    // integral error, trap FWHM error).
    let mut trap_rows: Vec<(f64, f64, f64, f64, f64)> = Vec::new();
    for round in 0..CASES_PER_KIND {
        for kind in KINDS {
            let c = make_case(kind, &mut rng);
            let r = analyze_pl(&c.trace, &set).unwrap_or_else(|e| panic!("case {round} {kind:?}: {e}"));
            let peak = r.pl_peak_nm.unwrap_or(f64::NAN);
            // An injected line is never the reported peak, and is named in a warning.
            let truth = c.edge.peak_nm();
            for &(l, must) in &c.lines {
                lines_required += usize::from(must);
                if (peak - truth).abs() > 1.0 && (peak - l).abs() < (peak - truth).abs() {
                    line_misses.push(format!(
                        "{kind:?} line {l:.1} reported as the peak {peak:.1} (truth {truth:.1})"
                    ));
                }
                let found = r.narrow_lines.iter().find(|x| (x.nm - l).abs() < 1.0);
                match found {
                    None if must => lines_missed.push(format!(
                        "{kind:?} snr {:.0} step {:.2} band FWHM {:.1} nm at {truth:.1}: line at {l:.1} nm not found",
                        c.snr,
                        c.step,
                        c.edge.fwhm_nm()
                    )),
                    None => {}
                    Some(x) => {
                        let named = format!("{:.1} nm", x.nm);
                        assert!(
                            r.warnings
                                .iter()
                                .any(|w| w.contains("narrow line") && w.contains(&named)),
                            "{:?}",
                            r.warnings
                        );
                    }
                }
            }
            if let Some((a, b)) = c.gap {
                assert!(
                    r.grid_gaps
                        .iter()
                        .any(|g| (g.from_nm - a).abs() < 1e-9 && (g.to_nm - b).abs() < 1e-9),
                    "gap {a}-{b} not reported: {:?}",
                    r.grid_gaps
                );
                assert!(r.warnings.iter().any(|w| w.contains("gap in the wavelength grid")));
            }
            if let Some(t) = c.trap {
                let trap_snr = t.height() * c.snr / c.edge.height();
                // A trap band below 8 noise deviations is not required to be found.
                if r.bands.len() < 2 && trap_snr < 8.0 {
                    all.push((errors_of(&c, &r), c, r));
                    continue;
                }
                if r.bands.len() < 2 {
                    line_misses.push(format!(
                        "two-band case (SNR {:.0}, trap {:.2} of the band edge at {:.0} nm) found {:?}",
                        c.snr,
                        t.height() / c.edge.height(),
                        t.peak_nm(),
                        r.bands
                    ));
                    all.push((errors_of(&c, &r), c, r));
                    continue;
                }
                let Some(be) = r.bands.iter().find(|b| b.role == "band_edge") else {
                    line_misses.push(format!("no band-edge band: {:?}", r.bands));
                    continue;
                };
                if (be.peak_nm - c.edge.peak_nm()).abs() > 3.0 {
                    line_misses.push(format!(
                        "two-band SNR {:.0}: band edge {:.1} nm taken at {:.1} nm; bands {:?}; scan {:.0}-{:.0}; {:?}",
                        c.snr,
                        c.edge.peak_nm(),
                        be.peak_nm,
                        r.bands
                            .iter()
                            .map(|b| (b.peak_nm.round(), b.height.round()))
                            .collect::<Vec<_>>(),
                        c.trace.nm[0],
                        c.trace.nm[c.trace.nm.len() - 1],
                        r.warnings
                    ));
                }
                let got = r.bands.iter().filter(|b| b.role != "band_edge").min_by(|a, b| {
                    (a.peak_nm - t.peak_nm())
                        .abs()
                        .total_cmp(&(b.peak_nm - t.peak_nm()).abs())
                });
                match got {
                    None => line_misses.push(format!("trap at {:.1} nm not found: {:?}", t.peak_nm(), r.bands)),
                    Some(b) => trap_rows.push((
                        trap_snr,
                        (b.peak_nm - t.peak_nm()) / t.fwhm_nm(),
                        b.integral / t.integral() - 1.0,
                        be.integral / c.edge.integral() - 1.0,
                        b.fwhm_mev.map_or(f64::NAN, |w| w / t.fwhm_mev() - 1.0),
                    )),
                }
            }
            all.push((errors_of(&c, &r), c, r));
        }
    }
    let errs: Vec<&Errors> = all.iter().map(|(e, _, _)| e).collect();
    let high: Vec<&Errors> = errs
        .iter()
        .copied()
        .filter(|e| e.snr >= 25.0 && !e.gap_in_band)
        .collect();
    let low: Vec<&Errors> = errs
        .iter()
        .copied()
        .filter(|e| e.snr < 25.0 && !e.gap_in_band)
        .collect();
    let holed: Vec<&Errors> = errs
        .iter()
        .copied()
        .filter(|e| e.snr >= 25.0 && e.gap_in_band)
        .collect();
    println!("\nPL known truth: rate within target, median |error|, 95th percentile |error|");
    println!("targets: integral 3 %, peak 1 nm, FWHM 10 %");
    println!("{}", table("all, SNR >= 25", &high));
    println!("{}", table("all, SNR 10-25", &low));
    for kind in KINDS {
        let rows: Vec<&Errors> = high.iter().copied().filter(|e| e.kind == kind).collect();
        println!("{}", table(&format!("{kind:?}, SNR >= 25"), &rows));
    }
    for (name, lo, hi) in [("trap SNR >= 25", 25.0, f64::INFINITY), ("trap SNR < 25", 0.0, 25.0)] {
        let rows: Vec<&(f64, f64, f64, f64, f64)> = trap_rows.iter().filter(|r| r.0 >= lo && r.0 < hi).collect();
        if rows.is_empty() {
            continue;
        }
        let (p1, pm, pp) = stats(&rows.iter().map(|r| r.1).collect::<Vec<_>>(), 0.05);
        let (t1, tm, tp) = stats(&rows.iter().map(|r| r.2).collect::<Vec<_>>(), 0.05);
        let (b1, bm, bp) = stats(&rows.iter().map(|r| r.3).collect::<Vec<_>>(), 0.03);
        let (w1, wm, wp) = stats(&rows.iter().map(|r| r.4).collect::<Vec<_>>(), 0.10);
        println!(
            "two-band, {name:<14} {:>4} | trap peak/FWHM within 5 %: {:>5.1}% med {:.3} p95 {:.3} | trap integral within 5 %: {:>5.1}% med {:.3} p95 {:.3} | band-edge integral within 3 %: {:>5.1}% med {:.3} p95 {:.3} | trap FWHM within 10 %: {:>5.1}% med {:.3} p95 {:.3}",
            rows.len(),
            100.0 * p1,
            pm,
            pp,
            100.0 * t1,
            tm,
            tp,
            100.0 * b1,
            bm,
            bp,
            100.0 * w1,
            wm,
            wp
        );
    }
    println!(
        "{}",
        table(
            "gap within 1 FWHM of the peak (data missing; warned, not a target), SNR >= 25",
            &holed
        )
    );
    let ints: Vec<f64> = high.iter().map(|e| e.integral_rel).collect();
    println!(
        "median signed integral error at SNR >= 25: {:+.3} %",
        100.0 * median_signed(&ints)
    );
    for (e, c, r) in &all {
        if e.snr >= 25.0
            && !e.gap_in_band
            && (e.integral_rel.abs() > 0.03 || !(e.peak_nm.abs() <= 1.0) || !(e.fwhm_nm_rel.abs() <= 0.1))
        {
            println!(
                "miss {:?} snr {:.0} step {:.2} peak {:.0} fwhm {:.0} meV: int {:+.2}% peak {:+.2} fwhm {:+.1}% | scan {:.0}-{:.0} region {:?}-{:?} base {:.1} slope {:.3} {} trap {:?} | {:?}",
                e.kind,
                c.snr,
                c.step,
                c.edge.peak_nm(),
                c.edge.fwhm_mev(),
                100.0 * e.integral_rel,
                e.peak_nm,
                100.0 * e.fwhm_nm_rel,
                c.trace.nm[0],
                c.trace.nm[c.trace.nm.len() - 1],
                r.emission_from_nm,
                r.emission_to_nm,
                r.baseline,
                r.baseline_slope_per_nm,
                r.baseline_model,
                c.trap.map(|t| (t.peak_nm(), t.fwhm_nm(), t.span_nm(4.0))),
                r.warnings
            );
        }
    }
    let found_rate = 1.0 - lines_missed.len() as f64 / lines_required.max(1) as f64;
    println!(
        "narrow lines that had to be found: {lines_required}, found {:.1} %; missed: {lines_missed:#?}",
        100.0 * found_rate
    );
    assert!(line_misses.is_empty(), "{line_misses:#?}");
    assert!(lines_required > 150, "{lines_required} lines required");
    assert!(found_rate >= 0.98, "{lines_missed:#?}");
    let rate = |f: fn(&Errors) -> f64, limit: f64| {
        high.iter().filter(|e| f(e).abs() <= limit).count() as f64 / high.len() as f64
    };
    assert!(high.len() > 300, "{} cases at SNR >= 25", high.len());
    let r_int = rate(|e| e.integral_rel, 0.03);
    let r_int_e = rate(|e| e.integral_e_rel, 0.03);
    let r_peak = rate(|e| e.peak_nm, 1.0);
    let r_fwhm = rate(|e| e.fwhm_nm_rel, 0.10);
    let r_fwhm_e = rate(|e| e.fwhm_mev_rel, 0.10);
    assert!(r_int >= 0.95, "integral within 3 % on {:.1} %", 100.0 * r_int);
    assert!(
        r_int_e >= 0.95,
        "energy integral within 3 % on {:.1} %",
        100.0 * r_int_e
    );
    assert!(r_peak >= 0.95, "peak within 1 nm on {:.1} %", 100.0 * r_peak);
    assert!(r_fwhm >= 0.95, "FWHM (nm) within 10 % on {:.1} %", 100.0 * r_fwhm);
    assert!(r_fwhm_e >= 0.95, "FWHM (meV) within 10 % on {:.1} %", 100.0 * r_fwhm_e);
    // The old constant baseline biased the integral by +1.4 to +2.5 % from noise alone.
    let bias = median_signed(&ints);
    assert!(bias.abs() < 0.005, "median integral error {:+.3} %", 100.0 * bias);
}

/// A noiseless band on a baseline rising 2 % of the peak per 100 nm: the constant baseline
/// of old read this as +8.6 % integral (issue 12). Truth: A σ √(2π) for a Gaussian in energy.
#[test]
fn a_sloped_dark_baseline_is_fitted_not_integrated() {
    let band = Band::with_fwhm(HC / 560.0, 0.09, 1.0);
    let band = Band {
        a: 1000.0 / band.height(),
        ..band
    };
    let nm: Vec<f64> = (0..=400).map(|i| 430.0 + 0.75 * i as f64).collect();
    let y: Vec<f64> = nm.iter().map(|&l| band.at_nm(l) + 200.0 + 0.2 * (l - 430.0)).collect();
    let r = analyze_pl(&Trace { nm, y }, &AnalysisSettings::default()).unwrap();
    let err = r.pl_integral / band.integral() - 1.0;
    assert!(err.abs() < 0.002, "integral off by {:.3} %", 100.0 * err);
    assert!(
        (r.baseline_slope_per_nm - 0.2).abs() < 1e-3,
        "{}",
        r.baseline_slope_per_nm
    );
    // Under the peak the line is 200 + 0.2 (560 - 430) = 226.
    assert!(
        (r.baseline - (200.0 + 0.2 * (r.pl_peak_nm.unwrap() - 430.0))).abs() < 0.5,
        "{}",
        r.baseline
    );
    // The peak is the zero of a local cubic's slope over about one FWHM; on a band skewed
    // in wavelength (a Gaussian in energy) it is within a few hundredths of a nm, well
    // inside the 1 nm target.
    assert!(
        (r.pl_peak_nm.unwrap() - band.peak_nm()).abs() < 0.25,
        "{:?} vs {}",
        r.pl_peak_nm,
        band.peak_nm()
    );
    assert!(r.warnings.is_empty(), "{:?}", r.warnings);
}

/// A band whose red half lies past the end of the scan keeps today's warning.
#[test]
fn emission_cut_by_the_scan_end_is_a_lower_bound() {
    let band = Band::with_fwhm(HC / 600.0, 0.10, 1.0);
    let nm: Vec<f64> = (0..=300).map(|i| 500.0 + 0.5 * i as f64).collect();
    let y: Vec<f64> = nm.iter().map(|&l| band.at_nm(l) + 5.0).collect();
    let r = analyze_pl(&Trace { nm, y }, &AnalysisSettings::default()).unwrap();
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("not fully inside the scanned range")),
        "{:?}",
        r.warnings
    );
    assert!(r.pl_integral < band.integral());
}

/// A saturated excitation line at the very start of the scan (the scan starts on its
/// flank), as when a fluorimeter scans from just above the excitation wavelength.
#[test]
fn an_excitation_line_cut_by_the_scan_start_is_excluded() {
    let band = Band::with_fwhm(HC / 620.0, 0.08, 1.0);
    let band = Band {
        a: 1000.0 / band.height(),
        ..band
    };
    let nm: Vec<f64> = (0..=500).map(|i| 451.0 + 0.5 * i as f64).collect();
    let y: Vec<f64> = nm
        .iter()
        .map(|&l| band.at_nm(l) + 30.0 + 40_000.0 * (-(l - 450.0).powi(2) / (2.0 * 0.6f64.powi(2))).exp())
        .collect();
    let r = analyze_pl(&Trace { nm, y }, &AnalysisSettings::default()).unwrap();
    assert!(
        (r.pl_peak_nm.unwrap() - band.peak_nm()).abs() < 0.2,
        "{:?}",
        r.pl_peak_nm
    );
    assert!(r.narrow_lines.iter().any(|l| l.nm < 453.0), "{:?}", r.narrow_lines);
    let err = r.pl_integral / band.integral() - 1.0;
    assert!(err.abs() < 0.005, "integral off by {:.3} %", 100.0 * err);
}

/// Photon-counting noise is not the same everywhere: a detector that counts N photons has a
/// standard deviation of √N (Poisson statistics), so the top of a bright band is several
/// times noisier than the dark floor beside it. A point that rises one or two of the band's
/// own deviations above its neighbours is noise there, not a narrow line; a real line on the
/// band (a Raman or stray laser line as tall as the band) must still be found. Shot noise
/// drawn as a Gaussian of variance N, the normal limit of Poisson counts.
#[test]
fn shot_noise_on_a_bright_band_is_not_a_narrow_line() {
    let mut rng = Rng(0x5107_2026);
    let mut false_lines = Vec::new();
    let mut peak_misses = Vec::new();
    let mut lines_missed = Vec::new();
    let mut bright_cases = 0;
    for case in 0..600 {
        let peak = rng.range(500.0, 680.0);
        let band = Band::with_fwhm(HC / peak, rng.range(0.06, 0.14), 1.0);
        let counts = (300f64.ln() + rng.uniform() * (30_000f64.ln() - 300f64.ln())).exp();
        let band = Band {
            a: counts / band.height(),
            ..band
        };
        let dark = rng.range(5.0, 50.0);
        let (lo, hi) = band.span_nm(6.0);
        let step = [0.5, 1.0, 2.0][case % 3];
        let n = ((hi - lo + 60.0) / step).floor() as usize;
        let nm: Vec<f64> = (0..=n).map(|i| lo - 20.0 + step * i as f64).collect();
        // Every third case also carries a line as tall as the band, 1 nm wide, near its top.
        let line_at = (case % 3 == 1).then(|| band.peak_nm() + rng.range(-0.4, 0.4) * band.fwhm_nm());
        let y: Vec<f64> = nm
            .iter()
            .map(|&l| {
                let mut mean = dark + band.at_nm(l);
                if let Some(at) = line_at {
                    mean += counts * (-(l - at).powi(2) / (2.0 * (1.0 / FWHM_PER_SIGMA).powi(2))).exp();
                }
                (mean + mean.sqrt() * rng.normal()).round().max(0.0)
            })
            .collect();
        let r = analyze_pl(&Trace { nm, y }, &AnalysisSettings::default()).unwrap();
        match line_at {
            None if !r.narrow_lines.is_empty() => false_lines.push(format!(
                "case {case}: {counts:.0} counts at {:.1} nm, step {step}: {:?}",
                band.peak_nm(),
                r.narrow_lines.iter().map(|l| l.nm).collect::<Vec<_>>()
            )),
            Some(at) if !r.narrow_lines.iter().any(|l| (l.nm - at).abs() < 2.0) => {
                lines_missed.push(format!("case {case}: line at {at:.1} nm, {counts:.0} counts"))
            }
            _ => {}
        }
        // The band's own peak, with or without the line (the line is taken out).
        let miss = (r.pl_peak_nm.unwrap_or(f64::NAN) - band.peak_nm()).abs();
        bright_cases += usize::from(counts > 1000.0);
        if !(miss < 1.0) && counts > 1000.0 {
            peak_misses.push(format!("case {case}: peak off by {miss:.2} nm at {counts:.0} counts"));
        }
    }
    // 400 spectra without a line, about 400 local maxima each on the finer grids: a rare
    // coincidence of a few deviations on a band's top may still pass (before the noise was
    // read at the candidate's level, one spectrum in four had a false line; now 6 of 400).
    let no_line = (0..600).filter(|c| c % 3 != 1).count();
    assert!(
        false_lines.len() * 50 <= no_line,
        "shot noise read as lines in {} of {no_line}:\n{}",
        false_lines.len(),
        false_lines.join("\n")
    );
    // A 1 nm line on a 1 or 2 nm grid may be sampled well below its top; at a few hundred
    // counts such a line is near any threshold that spares the band's own noise.
    assert!(
        lines_missed.len() * 50 <= 600 - no_line,
        "real lines missed in {} of {}:\n{}",
        lines_missed.len(),
        600 - no_line,
        lines_missed.join("\n")
    );
    // The target: the peak within 1 nm on at least 95 % of spectra at SNR ≥ 25
    // (above 1000 counts a Poisson band's SNR is over 30).
    let bright = bright_cases.max(1);
    assert!(
        peak_misses.len() * 20 <= bright,
        "{} of {bright}:\n{}",
        peak_misses.len(),
        peak_misses.join("\n")
    );
}

/// A narrow line on a band's steep flank (a Raman or stray line where the emission falls):
/// the points beside it are all higher on one side and lower on the other, so it must be
/// judged against the band's level at the line, not against the uphill side. Poisson-like
/// counts (σ = √N) on 0.5, 1 and 2 nm grids, bands of 12-35 nm FWHM, a line 1 nm (or one
/// step) wide at the band's half height or further out, 0.3-0.5 of the band's height. Before
/// the two sides were read apart, 64 of these 180 were missed.
#[test]
fn a_narrow_line_on_a_bands_flank_is_found() {
    let mut rng = Rng(0xf1a4_2026);
    let mut missed = Vec::new();
    let mut cases = 0;
    for case in 0..180 {
        let fwhm_nm = [12.0, 25.0, 35.0][case % 3];
        let peak = rng.range(520.0, 650.0);
        // Width in energy from the width in wavelength near the peak: ΔE ≈ hc Δλ / λ².
        let band = Band::with_fwhm(HC / peak, HC * fwhm_nm / (peak * peak), 1.0);
        let counts = rng.range(3_000.0, 20_000.0);
        let band = Band {
            a: counts / band.height(),
            ..band
        };
        let step: f64 = [0.5, 1.0, 2.0][(case / 3) % 3];
        // A line is seen through the slits at least a step wide (a 1 nm line on a 2 nm grid
        // may fall between points and is no line in the data).
        let line_fwhm = step.max(1.0);
        let side = if case % 2 == 0 { 1.0 } else { -1.0 };
        let at = band.peak_nm() + side * rng.range(0.5, 0.75) * band.fwhm_nm();
        let line_h = rng.range(0.3, 0.5) * counts;
        let (lo, hi) = band.span_nm(6.0);
        let n = ((hi - lo + 60.0) / step).floor() as usize;
        let nm: Vec<f64> = (0..=n).map(|i| lo - 20.0 + step * i as f64).collect();
        let y: Vec<f64> = nm
            .iter()
            .map(|&l| {
                let mean = 20.0
                    + band.at_nm(l)
                    + line_h * (-(l - at).powi(2) / (2.0 * (line_fwhm / FWHM_PER_SIGMA).powi(2))).exp();
                (mean + mean.sqrt() * rng.normal()).round().max(0.0)
            })
            .collect();
        let r = analyze_pl(&Trace { nm, y }, &AnalysisSettings::default()).unwrap();
        cases += 1;
        if !r.narrow_lines.iter().any(|l| (l.nm - at).abs() < 2.0) {
            missed.push((
                step,
                format!("case {case}: FWHM {fwhm_nm} nm, step {step}, line at {at:.1} nm ({line_h:.0} counts)"),
            ));
        }
    }
    let text = missed.iter().map(|m| m.1.as_str()).collect::<Vec<_>>().join("\n");
    // On a 0.5 nm grid every line is found. On coarser grids a band of 12 nm is six to twelve
    // points and a line one point wide on its flank is near what any threshold can tell from
    // the band's own noise: this detector misses 25 of the 180 there (the one of the previous
    // release, without the shot-noise guard, 21: measured on this same set).
    assert!(missed.iter().all(|m| m.0 > 0.5), "{text}");
    assert!(
        missed.len() * 100 <= 15 * cases,
        "{} of {cases} missed:\n{text}",
        missed.len()
    );
}
