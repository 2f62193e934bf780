//! The demo lab's spectra are analysed back to the generator's truth: every aliquot's first
//! exciton within 3 nm of the peak the generator placed (issue 12). The sweep covers the
//! demo's materials, growth ranges, widths, heights and noise (see `demo::build`); failed
//! batches (widths doubled) are checked separately: they must still be found, only less
//! precisely, so a failure is the batch's, not the analysis's.

use cuvette::spectra::Trace;
use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance};

fn check(core: &str, peaks: (f64, f64), sigma: (f64, f64), a1: (f64, f64), noise: f64, tol_nm: f64) -> (usize, f64) {
    let mut rng = cuvette::lab::demo::Rng::new(5);
    let mut worst: f64 = 0.0;
    let mut n = 0;
    for i in 0..40 {
        let f = i as f64 / 39.0;
        let peak = peaks.0 + (peaks.1 - peaks.0) * f;
        let s = sigma.0 + (sigma.1 - sigma.0) * ((i * 7) % 40) as f64 / 39.0;
        let a = rng.range(a1.0, a1.1);
        let (x, y) = cuvette::lab::demo::absorbance(core, peak, s, a, noise, &mut rng);
        let r = analyze_absorbance(&Trace { nm: x, y }, &AnalysisSettings::default())
            .expect("a demo spectrum is analysable");
        let got = r.first_exciton_nm.unwrap_or(f64::NAN);
        let err = (got - peak).abs();
        assert!(
            err <= tol_nm,
            "{core}: generator's first exciton {peak:.1} nm (σ {s:.3} eV) read as {got:.1} nm ({:?})",
            r.warnings
        );
        worst = worst.max(err);
        n += 1;
    }
    (n, worst)
}

#[test]
fn every_demo_batch_is_sized_from_its_own_first_exciton() {
    // Growth from the first aliquot (final - span) to the end; widths from the narrowest to
    // the broadest a done batch reaches (σ_min x 1.8); heights and noise as the demo uses.
    let (n, worst) = check("CdSe", (445.0, 610.0), (0.036, 0.065), (0.035, 0.055), 0.0004, 3.0);
    eprintln!("CdSe: {n} spectra, worst |Δλ| {worst:.2} nm");
    let (n, worst) = check("PbS", (800.0, 1500.0), (0.045, 0.081), (0.12, 0.2), 0.0012, 3.0);
    eprintln!("PbS: {n} spectra, worst |Δλ| {worst:.2} nm");
}

/// InP's first transition is broad (σ 75-135 meV) on a strong continuum: the same 3 nm target
/// as the other materials (worst about 2 nm reached).
#[test]
fn demo_inp_batches_are_found_near_their_first_exciton() {
    let (n, worst) = check("InP", (475.0, 600.0), (0.075, 0.135), (0.035, 0.055), 0.0004, 3.0);
    eprintln!("InP: {n} spectra, worst |Δλ| {worst:.2} nm");
}

#[test]
fn failed_demo_batches_are_still_found_at_their_first_exciton() {
    let (n, worst) = check("CdSe", (470.0, 610.0), (0.08, 0.14), (0.035, 0.055), 0.0004, 5.0);
    eprintln!("CdSe (failed, broad): {n} spectra, worst |Δλ| {worst:.2} nm");
}
