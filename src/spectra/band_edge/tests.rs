//! The band edge's unit tests: the ratio recurrence and the side-by-side products against
//! their definitions, the energy grid against a smooth curve, and a noiseless two-transition
//! band edge fitted to its truth.

#[cfg(target_arch = "x86_64")]
use super::fit::normal::lanes;
use super::fit::normal::{dot, gaussian_column};
use super::*;

fn gaussians(nm: &[f64], bands: &[(f64, f64, f64)], bg: f64) -> Trace {
    let y = nm
        .iter()
        .map(|l| {
            let e = HC_EV_NM / l;
            bg + bands
                .iter()
                .map(|(a, c, s)| a * (-0.5 * ((e - c) / s).powi(2)).exp())
                .sum::<f64>()
        })
        .collect();
    Trace { nm: nm.to_vec(), y }
}

#[test]
fn the_ratio_recurrence_gives_the_gaussian_at_every_point() {
    // Against the definition exp(-(e-c)²/2σ²) evaluated directly, for a centre inside,
    // left of and right of the window, narrow and wide.
    for &(c, sigma) in &[(2.10, 0.012), (2.10, 0.35), (1.90, 0.05), (2.40, 0.05), (2.0004, 0.02)] {
        let (e0, h, m) = (2.0, 0.004, 120);
        let mut col = vec![0.0; m];
        gaussian_column(e0, h, c, sigma, &mut col);
        for (i, v) in col.iter().enumerate() {
            let e = e0 + i as f64 * h;
            let want = (-0.5 * ((e - c) / sigma).powi(2)).exp();
            assert!(
                (v - want).abs() <= 1e-12 * want.max(1e-300) + 1e-300,
                "c {c} σ {sigma} at {e}: {v} vs {want}"
            );
        }
    }
}

/// The fit's products side by side in AVX registers must be the one-at-a-time dot
/// products bit for bit (known truth: `dot`), so the fit gives the numbers it gave before
/// it was made faster.
#[test]
fn side_by_side_products_equal_one_at_a_time() {
    let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
    let mut next = || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    for m in [0usize, 1, 3, 4, 5, 7, 8, 39, 45, 61] {
        let x: Vec<f64> = (0..m).map(|_| next() * 1e3).collect();
        for targets in 1..=9 {
            let ys: Vec<Vec<f64>> = (0..targets).map(|_| (0..m).map(|_| next()).collect()).collect();
            let refs: Vec<&[f64]> = ys.iter().map(|y| &y[..]).collect();
            let want: Vec<u64> = refs.iter().map(|y| dot(&x, y).to_bits()).collect();
            let mut got = vec![0.0; targets];
            #[cfg(target_arch = "x86_64")]
            if std::is_x86_feature_detected!("avx") {
                // SAFETY: the CPU has AVX, checked just above.
                unsafe { lanes::products(&x, &refs, &mut got) };
                assert_eq!(got.iter().map(|v| v.to_bits()).collect::<Vec<_>>(), want, "m {m}");
            }
        }
    }
}

#[test]
fn an_even_energy_grid_keeps_the_values_of_a_smooth_curve() {
    let nm: Vec<f64> = (0..601).map(|i| 400.0 + 0.5 * i as f64).collect();
    let t = gaussians(&nm, &[(0.5, 2.2, 0.05)], 0.01);
    let g = energy_grid(&t).unwrap();
    for (i, v) in g.y.iter().enumerate() {
        let e = g.e(i as f64);
        let want = 0.01 + 0.5 * (-0.5 * ((e - 2.2) / 0.05f64).powi(2)).exp();
        assert!((v - want).abs() < 2e-3, "at {e} eV: {v} vs {want}");
    }
}

#[test]
fn a_noiseless_two_transition_band_edge_is_fitted_to_its_truth() {
    // Known truth: transitions at 2.10 and 2.28 eV, σ 50 and 70 meV.
    let nm: Vec<f64> = (0..301).map(|i| 400.0 + i as f64).collect();
    let t = gaussians(&nm, &[(0.30, 2.10, 0.05), (0.45, 2.28, 0.07)], 0.02);
    let found = first_transition(&t, &BandEdgeHint::default(), 2.0);
    let edge = found
        .edge
        .unwrap_or_else(|| panic!("no band edge: {:?}", found.warnings));
    assert_eq!(edge.method, "gaussian fit in energy");
    assert!((edge.centre_ev - 2.10).abs() < 0.003, "{edge:?}");
    assert!((edge.hwhm_ev / (0.05 * HWHM_PER_SIGMA) - 1.0).abs() < 0.05, "{edge:?}");
}
