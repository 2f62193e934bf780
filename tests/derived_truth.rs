//! Derived properties checked against published values and synthetic known truth (issue 12,
//! points 6-8): the quantum yield's inputs as the PL cuvette saw them, the pairing of sizing
//! curves with extinction laws, the short-wavelength extinction laws, core/shell sizing, the
//! reaction yield and the size dispersion estimate. Each check value names its source beside it.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;

use cuvette::derive::calibration::Calibration;
use cuvette::derive::engine::{self, BatchContext, Derived, ParentCore, SpectrumMeta};
use cuvette::derive::{extinction, qy, sizing, solvents, yields};
use cuvette::spectra::HC_EV_NM;
use cuvette::store::model::{AliquotRow, SpectrumRow};

fn close(got: f64, want: f64, rel: f64) {
    assert!(
        (got - want).abs() <= rel * want.abs().max(1e-300),
        "got {got}, want {want} (within {rel})"
    );
}

fn aliquot(path_cm: f64, dilution: f64) -> AliquotRow {
    AliquotRow {
        id: 1,
        batch_id: 1,
        minutes: Some(5.0),
        stage: None,
        dilution_factor: dilution,
        path_cm,
        solvent: "hexane".into(),
        taken_at: String::new(),
        voided: false,
        void_why: None,
    }
}

fn v(q: &str, value: f64) -> Derived {
    Derived {
        quantity: q.into(),
        value: Some(value),
        unit: String::new(),
        method: String::new(),
        warnings: vec![],
    }
}

fn get<'a>(values: &'a [Derived], q: &str) -> &'a Derived {
    values
        .iter()
        .find(|d| d.quantity == q)
        .unwrap_or_else(|| panic!("no {q} in {values:#?}"))
}

fn pl_meta(excitation_nm: f64, path_cm: Option<f64>) -> SpectrumMeta {
    SpectrumMeta {
        kind: "pl".into(),
        sha256: "x".into(),
        excitation_nm: Some(excitation_nm),
        x_unit: "nm".into(),
        path_cm,
        dilution_factor: None,
    }
}

/// A calibration with the invented demo lab's reference (rhodamine 6G in ethanol excited at
/// 480 nm; invented integral and absorbance).
fn cal_with_reference() -> Calibration {
    Calibration {
        qy_reference: Some(cuvette::derive::calibration::QyReference {
            dye: "rhodamine 6G".into(),
            solvent: "ethanol".into(),
            qy: 0.95,
            excitation_nm: 480.0,
            integral: 52000.0,
            abs_at_excitation: 0.05,
        }),
        ..Calibration::default()
    }
}

// ---------------------------------------------------------------- extinction laws

#[test]
fn leatherdale_2002_cross_section_becomes_the_molar_coefficient() {
    // Leatherdale, Woo, Mikulec & Bawendi, J. Phys. Chem. B 106, 7619 (2002), abstract: at
    // 350 nm C_abs = 5.501e5 a³ cm⁻¹ (a the radius in cm). ε = C N_A / (1000 ln 10).
    for d_nm in [2.5f64, 4.0, 6.0] {
        let a_cm = d_nm / 2.0 * 1e-7;
        let c_cm2 = 5.501e5 * a_cm.powi(3);
        let want = c_cm2 * 6.022_140_76e23 / (1000.0 * 10f64.ln());
        close(extinction::leatherdale2002_m1cm1(d_nm), want, 1e-12);
        let e = extinction::coefficient("leatherdale2002", "CdSe", d_nm, 550.0, None).unwrap();
        assert_eq!(e.at_nm, 350.0);
        close(e.extinction_m1cm1, want, 1e-12);
    }
    // D = 4 nm: 1.151e6 M⁻¹cm⁻¹ (the same formula worked by hand: 4.4008e-15 cm² x 2.6154e20).
    close(extinction::leatherdale2002_m1cm1(4.0), 1.151e6, 1e-3);
    // Volume scaling: doubling D multiplies ε by 8.
    close(
        extinction::leatherdale2002_m1cm1(6.0) / extinction::leatherdale2002_m1cm1(3.0),
        8.0,
        1e-12,
    );
    assert!(extinction::model_for("PbS", "leatherdale2002").is_err());
}

#[test]
fn a_lab_can_choose_leatherdale_and_the_concentration_uses_the_corrected_350_nm_absorbance() {
    let mut cal = Calibration::default();
    cal.extinction.insert("CdSe".into(), "leatherdale2002".into());
    cal.validate().unwrap();
    let stage1 = vec![
        v("first_exciton_nm", 550.0),
        v("first_exciton_abs", 0.1),
        v("hwhm_mev", 60.0),
        v("abs_350nm_corrected", 0.8),
    ];
    let (vals, sz, _) = engine::derive_values(
        &aliquot(1.0, 10.0),
        "CdSe",
        &[],
        &stage1,
        &cal,
        &BatchContext::default(),
    );
    let d = sz.unwrap().diameter_nm;
    let eps = extinction::leatherdale2002_m1cm1(d);
    // Beer-Lambert: c = A / (ε l) x dilution.
    close(
        get(&vals, "concentration_molar").value.unwrap(),
        0.8 / eps * 10.0,
        1e-12,
    );
    // yu2003 sizes by electron microscopy, as Leatherdale did: no pairing warning.
    assert!(
        !get(&vals, "extinction_m1cm1")
            .warnings
            .iter()
            .any(|w| w.contains("not one calibration"))
    );
}

#[test]
fn brus_diameters_with_yus_extinction_law_warn_and_say_how_far_the_concentration_moves() {
    let mut cal = Calibration::default();
    cal.curves.insert("CdSe".into(), "brus".into());
    let stage1 = vec![
        v("first_exciton_nm", 560.0),
        v("first_exciton_abs", 0.1),
        v("hwhm_mev", 60.0),
    ];
    let (vals, sz, _) = engine::derive_values(&aliquot(1.0, 1.0), "CdSe", &[], &stage1, &cal, &BatchContext::default());
    let d_brus = sz.unwrap().diameter_nm;
    let d_yu = sizing::size("yu2003", "CdSe", 560.0, None).unwrap().diameter_nm;
    // Yu et al. 2003's law, ε = 5857 D^2.65: the concentration goes as 1/ε.
    let ratio = 5857.0 * d_brus.powf(2.65) / (5857.0 * d_yu.powf(2.65));
    let w = &get(&vals, "extinction_m1cm1").warnings;
    let text = w
        .iter()
        .find(|w| w.contains("not one calibration"))
        .expect("pairing warning");
    assert!(text.contains(&format!("{ratio:.2}x")), "{text}");
    assert!(
        (ratio - 1.0).abs() > 0.3,
        "brus and yu2003 diameters differ a lot: {ratio}"
    );
    // The paper's own pair does not warn.
    let (vals, _, _) = engine::derive_values(
        &aliquot(1.0, 1.0),
        "CdSe",
        &[],
        &stage1,
        &Calibration::default(),
        &BatchContext::default(),
    );
    assert!(
        get(&vals, "extinction_m1cm1")
            .warnings
            .iter()
            .all(|w| !w.contains("not one calibration"))
    );
}

#[test]
fn pbs_uses_the_scatter_corrected_400_nm_absorbance_and_warns_when_it_is_too_high() {
    let cal = Calibration::default();
    // Moreels et al., ACS Nano 3, 3023 (2009): ε(400 nm) = 0.0233 d³ µM⁻¹cm⁻¹.
    let stage1 = vec![
        v("first_exciton_nm", 1200.0),
        v("first_exciton_abs", 0.2),
        v("hwhm_mev", 40.0),
        v("abs_400nm", 1.9),
        v("abs_400nm_corrected", 1.7),
    ];
    let (vals, sz, _) = engine::derive_values(&aliquot(1.0, 1.0), "PbS", &[], &stage1, &cal, &BatchContext::default());
    let d = sz.unwrap().diameter_nm;
    let c = get(&vals, "concentration_molar");
    close(c.value.unwrap(), 1.7 / (0.0233e6 * d.powi(3)), 1e-12);
    assert!(
        c.warnings.iter().any(|w| w.contains("too high to trust")),
        "{:?}",
        c.warnings
    );
    // A background as large as the absorbance leaves no concentration, with the reason.
    let stage1 = vec![
        v("first_exciton_nm", 1200.0),
        v("first_exciton_abs", 0.2),
        v("abs_400nm", 0.5),
        v("abs_400nm_corrected", -0.1),
    ];
    let (vals, _, _) = engine::derive_values(&aliquot(1.0, 1.0), "PbS", &[], &stage1, &cal, &BatchContext::default());
    let c = get(&vals, "concentration_molar");
    assert_eq!(c.value, None);
    assert!(c.warnings.iter().any(|w| w.contains("cannot be trusted")));
}

// ---------------------------------------------------------------- sizing

#[test]
fn inp_range_follows_almeida_2023s_crystals() {
    // Almeida et al., Nano Lett. 23, 8697 (2023): edges about 1.5-4.1 nm, digitised from the
    // paper's figure. E(1S) = 1.33 + 9.128 L^-0.684 eV (L in Å) puts 4.1 nm at about 605 nm.
    assert_eq!(sizing::Curve::Almeida2023.valid_range_nm("InP"), [1.5, 4.1]);
    let e_41 = 1.33 + 9.128 * 41f64.powf(-0.684);
    close(HC_EV_NM / e_41, 605.0, 0.01);
    let inside = sizing::size("almeida2023", "InP", 560.0, None).unwrap();
    assert!(inside.warnings.is_empty(), "{:?}", inside.warnings);
    let outside = sizing::size("almeida2023", "InP", 640.0, None).unwrap();
    assert!(
        outside
            .warnings
            .iter()
            .any(|w| w.contains("outside almeida2023's range 1.5-4.1"))
    );
}

#[test]
fn a_shelled_batch_sizes_its_core_from_the_parent_and_warns_about_the_core_curve() {
    let cal = Calibration::default();
    let stage1 = vec![
        v("first_exciton_nm", 590.0),
        v("first_exciton_abs", 0.1),
        v("hwhm_mev", 60.0),
    ];
    let ctx = BatchContext {
        material: "CdSe/ZnS".into(),
        shell: Some("ZnS".into()),
        parent_core: Some(ParentCore {
            batch_id: 7,
            aliquot_id: Some(70),
            diameter_nm: Some(3.1),
            curve: Some("yu2003".into()),
        }),
    };
    let (vals, _, ext) = engine::derive_values(&aliquot(1.0, 1.0), "CdSe", &[], &stage1, &cal, &ctx);
    assert_eq!(get(&vals, "core_diameter_nm").value, Some(3.1));
    assert!(
        get(&vals, "diameter_nm")
            .warnings
            .iter()
            .any(|w| w.contains("core curve applied to a shelled crystal"))
    );
    // Yu's ε(D) takes the core's diameter: 5857 x 3.1^2.65.
    close(ext.unwrap().extinction_m1cm1, 5857.0 * 3.1f64.powf(2.65), 1e-12);
    // Without a sized parent, the core diameter is missing with its reason.
    let ctx = BatchContext {
        parent_core: None,
        ..ctx
    };
    let (vals, _, _) = engine::derive_values(&aliquot(1.0, 1.0), "CdSe", &[], &stage1, &cal, &ctx);
    let core = get(&vals, "core_diameter_nm");
    assert_eq!(core.value, None);
    assert!(core.warnings[0].contains("no sized parent core batch"));
}

// ---------------------------------------------------------------- dispersion

#[test]
fn size_dispersion_follows_the_curves_slope_in_energy() {
    // Moreels 2009 PbS, Eq. 4: E = 0.41 + 1/(0.0252 d² + 0.283 d); dE/dd analytically.
    let d = 5.0;
    let e = sizing::moreels2009_gap_ev(d);
    let g = 0.0252 * d * d + 0.283 * d;
    let de_dd = -(0.0504 * d + 0.283) / (g * g);
    let hwhm = 0.050;
    let sigma_e = hwhm / (2.0 * 2f64.ln()).sqrt();
    let want = 100.0 * sigma_e / de_dd.abs() / d;
    let at = |l: f64| sizing::size("moreels2009", "PbS", l, None).ok().map(|s| s.diameter_nm);
    let disp = sizing::size_dispersion(HC_EV_NM / e, hwhm, None, &at).unwrap();
    close(disp.sigma_over_d_pct, want, 2e-3);
    assert!(disp.warnings.is_empty(), "{:?}", disp.warnings);
    // Homogeneous HWHM taken out in quadrature: 50 meV measured, 30 meV homogeneous leaves
    // 40 meV (a 3-4-5 triangle), so σ/D scales by 0.8.
    let disp2 = sizing::size_dispersion(HC_EV_NM / e, hwhm, Some(0.030), &at).unwrap();
    close(disp2.inhomogeneous_hwhm_ev, 0.040, 1e-12);
    close(disp2.sigma_over_d_pct / disp.sigma_over_d_pct, 0.8, 1e-9);
    // Nothing left to convert is refused, not reported as zero.
    assert!(sizing::size_dispersion(HC_EV_NM / e, hwhm, Some(0.06), &at).is_err());
}

#[test]
fn a_locally_flat_curve_warns() {
    // A synthetic curve almost flat in wavelength: D = 3 nm + 1e-4 nm per nm.
    let flat = |l: f64| Some(3.0 + 1e-4 * (l - 500.0));
    let disp = sizing::size_dispersion(500.0, 0.05, None, &flat).unwrap();
    assert!(
        disp.warnings.iter().any(|w| w.contains("locally flat")),
        "{:?}",
        disp.warnings
    );
}

#[test]
fn the_homogeneous_width_is_a_calibration_setting_off_by_default() {
    let mut cal = Calibration::default();
    assert!(cal.homogeneous_hwhm_mev.is_empty());
    let stage1 = vec![
        v("first_exciton_nm", 560.0),
        v("first_exciton_abs", 0.1),
        v("hwhm_mev", 60.0),
    ];
    let (off, _, _) = engine::derive_values(&aliquot(1.0, 1.0), "CdSe", &[], &stage1, &cal, &BatchContext::default());
    cal.set_homogeneous_hwhm("CdSe", Some(36.0));
    cal.validate().unwrap();
    let (on, _, _) = engine::derive_values(&aliquot(1.0, 1.0), "CdSe", &[], &stage1, &cal, &BatchContext::default());
    let (a, b) = (get(&off, "size_dispersion_pct"), get(&on, "size_dispersion_pct"));
    // √(60² - 36²) = 48: σ/D falls by 0.8.
    close(b.value.unwrap() / a.value.unwrap(), 0.8, 1e-9);
    assert!(a.method.contains("an estimate") && !a.method.contains("upper bound"));
    assert!(b.method.contains("36 meV"));
    cal.set_homogeneous_hwhm("CdSe", Some(-1.0));
    assert!(cal.validate().is_err());
}

// ---------------------------------------------------------------- quantum yield

#[test]
fn a_known_scatter_background_does_not_change_the_qy() {
    // Known truth: the crystals absorb 0.050 at 480 nm; scattering adds 0.012 there.
    let truth = 0.050;
    let bg = 0.012;
    let cuv = qy::Cuvettes {
        abs_path_cm: 1.0,
        abs_dilution: 1.0,
        pl_path_cm: Some(1.0),
        pl_dilution: None,
    };
    let e = qy::excitation_absorbance(480.0, truth + bg, bg, 0.001, cuv).unwrap();
    close(e.in_pl_cuvette, truth, 1e-12);
    let with = qy::single_point(40000.0, e.in_pl_cuvette, 52000.0, 0.05, 0.95, 1.3749, 1.3611).unwrap();
    let clean = qy::single_point(40000.0, truth, 52000.0, 0.05, 0.95, 1.3749, 1.3611).unwrap();
    close(with.qy, clean.qy, 1e-12);
    // Taken raw, the scatter counts as absorbed light: QY low by f(0.062)/f(0.050) - about 19 %.
    let raw = qy::single_point(40000.0, truth + bg, 52000.0, 0.05, 0.95, 1.3749, 1.3611).unwrap();
    close(
        raw.qy / clean.qy,
        qy::absorptance(truth) / qy::absorptance(truth + bg),
        1e-12,
    );
}

fn spectrum(kind: &str, x: Vec<f64>, y: Vec<f64>, excitation_nm: Option<f64>, path_cm: Option<f64>) -> SpectrumRow {
    SpectrumRow {
        id: 0,
        aliquot_id: Some(1),
        vial_id: None,
        kind: kind.into(),
        x_unit: "nm".into(),
        y_unit: None,
        npoints: x.len() as i64,
        x,
        y,
        file_name: format!("{kind}.csv"),
        sha256: kind.into(),
        excitation_nm,
        instrument: None,
        dilution_factor: None,
        path_cm,
        label: None,
    }
}

/// A CdSe-like absorbance: excitonic Gaussians in energy and a continuum, plus an optional
/// scattering background c + k/λ⁴ of known size.
fn cdse_abs(offset: f64, k_nm4: f64) -> (Vec<f64>, Vec<f64>) {
    let g = |e: f64, e0: f64, s: f64| (-(e - e0).powi(2) / (2.0 * s * s)).exp();
    let e1 = HC_EV_NM / 560.0;
    let x: Vec<f64> = (0..=600).map(|i| 300.0 + i as f64).collect();
    let y = x
        .iter()
        .map(|l| {
            let e = HC_EV_NM / l;
            let rise = 1.0 / (1.0 + (-(e - e1 - 0.25) / 0.12).exp());
            0.08 * g(e, e1, 0.05) + 0.04 * g(e, e1 + 0.18, 0.065) + 0.07 * rise + offset + k_nm4 / l.powi(4)
        })
        .collect();
    (x, y)
}

fn pl_trace() -> (Vec<f64>, Vec<f64>) {
    let e0 = HC_EV_NM / 575.0;
    let x: Vec<f64> = (0..=300).map(|i| 425.0 + i as f64).collect();
    let y = x
        .iter()
        .map(|l| 1000.0 * (-(HC_EV_NM / l - e0).powi(2) / (2.0 * 0.05f64.powi(2))).exp())
        .collect();
    (x, y)
}

#[test]
fn through_the_engine_a_scatter_background_of_known_size_leaves_the_qy_as_it_was() {
    let cal = cal_with_reference();
    let (px, py) = pl_trace();
    let run = |offset: f64, k: f64| {
        let (x, y) = cdse_abs(offset, k);
        let spectra = vec![
            spectrum("abs", x, y, None, None),
            spectrum("pl", px.clone(), py.clone(), Some(480.0), Some(1.0)),
        ];
        engine::compute(&aliquot(1.0, 1.0), "CdSe", &spectra, &cal, &BatchContext::default())
    };
    let clean = run(0.0, 0.0);
    // Scattering 0.01 + k/λ⁴ with k chosen to add 0.01 at 480 nm: 0.02 at excitation, a third
    // of the crystals' own absorbance there.
    let k = 0.01 * 480f64.powi(4);
    let scattered = run(0.01, k);
    let q0 = get(&clean.values, "qy").value.unwrap();
    let q1 = get(&scattered.values, "qy").value.unwrap();
    let raw = get(&scattered.values, "abs_at_excitation_measured").value.unwrap();
    let corrected = get(&scattered.values, "abs_at_excitation").value.unwrap();
    assert!(
        raw - corrected > 0.01,
        "the background came off: raw {raw}, corrected {corrected}"
    );
    // The correction removes the bias (raw, it would be about -25 %); what is left is the
    // background fit's own error.
    assert!(
        (q1 / q0 - 1.0).abs() < 0.05,
        "QY moved by {:.1} %",
        100.0 * (q1 / q0 - 1.0)
    );
    let sd = get(&scattered.values, "abs_at_excitation_sd").value.unwrap();
    assert!(sd >= 0.0 && sd.is_finite());
}

#[test]
fn the_pl_cuvette_has_its_own_path_and_never_borrows_the_absorbance_cuvettes() {
    let cal = cal_with_reference();
    let stage1 = vec![
        v("abs_at_excitation", 0.02),
        v("abs_at_excitation_measured", 0.02),
        v("abs_at_excitation_sd", 0.0005),
        v("pl_integral", 30000.0),
        v("pl_peak_nm", 575.0),
    ];
    // Absorbance in a 0.2 cm cuvette, PL in a recorded 1 cm one: A is five times larger there.
    let (vals, _, _) = engine::derive_values(
        &aliquot(0.2, 1.0),
        "CdSe",
        &[pl_meta(480.0, Some(1.0))],
        &stage1,
        &cal,
        &BatchContext::default(),
    );
    close(get(&vals, "abs_at_excitation_pl").value.unwrap(), 0.1, 1e-12);
    let q = get(&vals, "qy").value.unwrap();
    // Brouwer 2011: Φ = Φref (F/Fref) (fref/f) (n²/nref²), with hexane 1.3749 and ethanol 1.3611
    // (CRC Handbook, from memory).
    let want = 0.95 * (30000.0 / 52000.0) * (qy::absorptance(0.05) / qy::absorptance(0.1)) * 1.3749f64.powi(2)
        / 1.3611f64.powi(2);
    close(q, want, 1e-12);
    // Not recorded: 1 cm is taken (not the 0.2 cm of the absorbance cuvette), with a warning.
    let (vals, _, _) = engine::derive_values(
        &aliquot(0.2, 1.0),
        "CdSe",
        &[pl_meta(480.0, None)],
        &stage1,
        &cal,
        &BatchContext::default(),
    );
    let a = get(&vals, "abs_at_excitation_pl");
    close(a.value.unwrap(), 0.1, 1e-12);
    assert!(a.warnings.iter().any(|w| w.contains("not recorded")));
    // A recorded 0.5 cm PL cuvette with the absorbance in 1 cm: half.
    let (vals, _, _) = engine::derive_values(
        &aliquot(1.0, 1.0),
        "CdSe",
        &[pl_meta(480.0, Some(0.5))],
        &stage1,
        &cal,
        &BatchContext::default(),
    );
    close(get(&vals, "abs_at_excitation_pl").value.unwrap(), 0.01, 1e-12);
}

#[test]
fn qy_warns_without_detector_correction_outside_the_dyes_range_and_on_both_inner_filters() {
    let mut cal = cal_with_reference();
    let stage1 = vec![
        v("abs_at_excitation", 0.15),
        v("abs_at_excitation_measured", 0.15),
        v("abs_at_excitation_sd", 0.001),
        v("abs_at_pl_band", 0.08),
        v("pl_integral", 30000.0),
        v("pl_peak_nm", 575.0),
    ];
    let metas = [pl_meta(480.0, Some(1.0))];
    let (vals, _, _) = engine::derive_values(
        &aliquot(1.0, 1.0),
        "CdSe",
        &metas,
        &stage1,
        &cal,
        &BatchContext::default(),
    );
    let w = &get(&vals, "qy").warnings;
    assert!(w.iter().any(|w| w.contains("no detector correction applied")), "{w:?}");
    assert!(w.iter().any(|w| w.contains("inner-filter effects likely")), "{w:?}");
    assert!(w.iter().any(|w| w.contains("emission side")), "{w:?}");
    assert!(!w.iter().any(|w| w.contains("recommended range")), "{w:?}");
    // The reference excited at 400 nm: outside rhodamine 6G's band (from memory, 450-530 nm).
    if let Some(r) = cal.qy_reference.as_mut() {
        r.excitation_nm = 400.0;
    }
    cal.detector_correction = Some(cuvette::derive::calibration::DetectorCorrection {
        name: "flat".into(),
        nm: vec![300.0, 1000.0],
        factor: vec![1.0, 1.0],
    });
    let metas = [pl_meta(400.0, Some(1.0))];
    let (vals, _, _) = engine::derive_values(
        &aliquot(1.0, 1.0),
        "CdSe",
        &metas,
        &stage1,
        &cal,
        &BatchContext::default(),
    );
    let w = &get(&vals, "qy").warnings;
    assert!(
        w.iter().any(|w| w.contains("outside rhodamine 6G's recommended range")),
        "{w:?}"
    );
    assert!(!w.iter().any(|w| w.contains("no detector correction")), "{w:?}");
    // Every shipped dye has a range and says where it comes from.
    for d in solvents::DYES {
        assert!(d.excitation_nm.0 < d.excitation_nm.1, "{}", d.name);
        assert!(!d.excitation_source.is_empty(), "{}", d.name);
    }
}

#[test]
fn qy_uncertainty_follows_the_absorbance_noise() {
    // σΦ/Φ = |d ln f/dA| σA with f = 1 - 10^-A: at A = 0.05, d ln f/dA = ln10·10^-A / f.
    let a: f64 = 0.05;
    let sd = 0.002;
    let q = qy::single_point_with_sd(40000.0, a, sd, 52000.0, 0.05, 0.95, 1.0, 1.0).unwrap();
    let rel = 10f64.ln() * 10f64.powf(-a) / (1.0 - 10f64.powf(-a)) * sd;
    close(q.qy_sd.unwrap(), q.qy * rel, 1e-12);
}

#[test]
fn gradient_method_recovers_a_known_yield_and_wants_four_dilutions() {
    // Williams, Winfield & Miller, Analyst 108, 1067 (1983): Φ = Φref (Grad/Grad_ref)(n²/nref²).
    // Known truth: the sample gives 0.6 of the reference's PL per unit absorbance, same solvent.
    let abs = [0.02, 0.04, 0.06, 0.08, 0.095];
    let reference: Vec<(f64, f64)> = abs.iter().map(|a| (*a, 1.0e6 * a)).collect();
    let sample: Vec<(f64, f64)> = abs.iter().map(|a| (*a, 0.6e6 * a)).collect();
    let r = qy::gradient(&sample, &reference, 0.95, 1.3749, 1.3749).unwrap();
    close(r.qy, 0.95 * 0.6, 1e-12);
    assert!(r.warnings.is_empty(), "{:?}", r.warnings);
    // Three dilutions: the same number, with a warning.
    let r3 = qy::gradient(&sample[..3], &reference, 0.95, 1.3749, 1.3749).unwrap();
    close(r3.qy, 0.95 * 0.6, 1e-12);
    assert!(
        r3.warnings.iter().any(|w| w.contains("at least 4")),
        "{:?}",
        r3.warnings
    );
    // The refractive-index ratio: toluene sample against an ethanol reference (CRC, from memory).
    let rt = qy::gradient(&sample, &reference, 0.95, 1.4961, 1.3611).unwrap();
    close(rt.qy, 0.95 * 0.6 * 1.4961f64.powi(2) / 1.3611f64.powi(2), 1e-12);
    // A dilution above 0.1 warns of the inner filter; a bent series warns of non-linearity.
    let bent: Vec<(f64, f64)> = [0.02, 0.05, 0.1, 0.2, 0.3]
        .iter()
        .map(|a| (*a, 1e6 * qy::absorptance(*a).powi(2)))
        .collect();
    let rb = qy::gradient(&bent, &reference, 0.95, 1.0, 1.0).unwrap();
    assert!(rb.warnings.iter().any(|w| w.contains("inner-filter")));
    assert!(
        rb.warnings
            .iter()
            .any(|w| w.contains("not linear") || w.contains("misses the origin")),
        "{:?}",
        rb.warnings
    );
    // A single reference point: through the origin, said so.
    let rs = qy::gradient_single_reference(&sample, 0.05, 0.05e6, 0.95, 1.0, 1.0).unwrap();
    close(rs.qy, 0.95 * 0.6, 1e-12);
    assert!(rs.warnings.iter().any(|w| w.contains("one point")));
}

// ---------------------------------------------------------------- reaction yield

#[test]
fn formulas_give_their_handbook_molar_masses() {
    // Molar masses from standard atomic weights (CRC Handbook values, from memory):
    // cadmium acetate 230.50 g/mol, tris(trimethylsilyl)phosphine 250.54, CdSe 191.37.
    close(yields::molar_mass("Cd(CH3COO)2").unwrap(), 230.50, 1e-3);
    close(yields::molar_mass("((CH3)3Si)3P").unwrap(), 250.54, 1e-3);
    close(yields::molar_mass("CdSe").unwrap(), 191.37, 1e-3);
    assert!(yields::element_counts("Cd(CH3").is_err());
    assert!(yields::element_counts("Xx2").is_err());
    assert!(yields::element_counts("").is_err());
}

#[test]
fn reaction_yield_counts_formula_units_against_the_limiting_precursor() {
    // The invented demo lab's CdSe recipe: CdO 0.2 mmol, Se 1.0 mmol, 1.2 + 10 + 1.0 mL liquids.
    let line = |reagent: &str, formula: &str, amount: f64, unit: &str, role: &str| yields::RecipeAmount {
        reagent: reagent.into(),
        formula: Some(formula.into()),
        amount,
        unit: unit.into(),
        role: Some(role.into()),
    };
    let lines = vec![
        line("cadmium oxide", "CdO", 0.2, "mmol", "precursor"),
        line("oleic acid", "C18H34O2", 1.2, "mL", "ligand"),
        line("1-octadecene", "C18H36", 10.0, "mL", "solvent"),
        line("selenium", "Se", 1.0, "mmol", "precursor"),
        line("trioctylphosphine", "P(C8H17)3", 1.0, "mL", "ligand"),
    ];
    let y = engine::reaction_yield_from("CdSe", 3.0, 1e-5, &lines);
    // By hand: ρ 5.81 g/cm³, M 191.37 g/mol (handbook, from memory); V = 12.2 mL.
    let per = 5.81 * std::f64::consts::PI / 6.0 * (3e-7f64).powi(3) / 191.37 * 6.022_140_76e23;
    let crystals = 1e-5 * 12.2e-3 * 6.022_140_76e23;
    let product_mmol = crystals * per / 6.022_140_76e23 * 1e3;
    close(y.formula_units_per_crystal.unwrap(), per, 1e-9);
    close(y.product_mmol.unwrap(), product_mmol, 1e-9);
    close(y.yield_fraction.unwrap(), product_mmol / 0.2, 1e-9);
    assert_eq!(y.limiting_element.as_deref(), Some("Cd"));
    assert_eq!(y.limiting_reagents, vec!["cadmium oxide".to_string()]);
    close(y.reaction_volume_ml.unwrap(), 12.2, 1e-12);
    // A mass converts through the formula: 25.68 mg CdO (128.41 g/mol) is 0.2 mmol.
    let mut by_mass = lines.clone();
    by_mass[0] = line("cadmium oxide", "CdO", 25.682, "mg", "precursor");
    close(
        engine::reaction_yield_from("CdSe", 3.0, 1e-5, &by_mass)
            .limiting_mmol
            .unwrap(),
        0.2,
        1e-3,
    );
    // No selenium precursor: no yield, and the reason.
    let y = engine::reaction_yield_from("CdSe", 3.0, 1e-5, &lines[..3]);
    assert_eq!(y.yield_fraction, None);
    assert!(y.warnings[0].contains("supplies Se"));
}

#[test]
fn batch_show_json_carries_the_reaction_yield() {
    let lab = common::Lab::new();
    lab.ok(&["demo"]);
    let v = lab.ok(&["batch", "show", "1", "--json"]).json();
    let y = &v["reaction_yield"];
    assert!(y.is_object(), "{v}");
    assert!(y["warnings"].is_array());
    assert!(y.get("yield_fraction").is_some());
    assert!(y["method"].as_str().unwrap().contains("limiting precursor"));
}

#[test]
fn gradient_qy_runs_over_a_dilution_series_logged_as_aliquots() {
    use cuvette::store::model;
    let mut store = cuvette::lab::in_memory("Test Runner").unwrap();
    let (px, shape) = pl_trace();
    // Known truth: the sample gives `k` PL counts·nm per unit absorbance (in the PL cuvette),
    // against the reference's 52000 / 0.05; same solvent as the reference (ethanol).
    let k = 0.6 * 52000.0 / 0.05;
    let area: f64 = shape.iter().sum::<f64>();
    let ids = store
        .write(|tx, who| {
            calibration_with_reference(tx, who)?;
            let _ = model::add_material(tx, who, "CdSe", "CdSe", None);
            let b = model::insert_batch(
                tx,
                who,
                &model::NewBatch {
                    name: "dilutions".into(),
                    material: "CdSe".into(),
                    ..Default::default()
                },
            )?;
            let mut ids = Vec::new();
            for (i, scale) in [1.0, 0.75, 0.5, 0.3, 0.15].iter().enumerate() {
                let a = model::insert_aliquot(
                    tx,
                    who,
                    &model::NewAliquot {
                        batch_id: b,
                        minutes: None,
                        stage: Some(format!("dilution {i}")),
                        dilution_factor: 1.0,
                        path_cm: 1.0,
                        solvent: "ethanol".into(),
                        taken_at: None,
                    },
                )?;
                let (x, y0) = cdse_abs(0.0, 0.0);
                let y: Vec<f64> = y0.iter().map(|v| v * scale).collect();
                let a_ex = cuvette::spectra::analysis::interpolate(
                    &cuvette::spectra::Trace {
                        nm: x.clone(),
                        y: y.clone(),
                    },
                    480.0,
                )
                .unwrap();
                let py: Vec<f64> = shape.iter().map(|s| s * k * a_ex / area).collect();
                for (kind, xs, ys, ex, path) in [
                    ("abs", x.clone(), y.clone(), None, None),
                    ("pl", px.clone(), py, Some(480.0), Some(1.0)),
                ] {
                    model::insert_spectrum(
                        tx,
                        who,
                        &model::NewSpectrum {
                            aliquot_id: Some(a),
                            vial_id: None,
                            kind: kind.into(),
                            x_unit: "nm".into(),
                            y_unit: None,
                            x: xs,
                            y: ys,
                            file_name: format!("{kind}{i}.csv"),
                            sha256: format!("{kind}{i}"),
                            excitation_nm: ex,
                            instrument: None,
                            dilution_factor: None,
                            path_cm: path,
                            label: None,
                        },
                    )?;
                }
                cuvette::lab::derivation::derive_aliquot(tx, a)?;
                ids.push(a);
            }
            Ok(ids)
        })
        .unwrap();
    let q = cuvette::report::yields::gradient_qy(&store.conn, &ids).unwrap();
    // Williams et al. 1983 with one reference point through the origin: Φ = 0.95 · 0.6. The
    // spectra hold no scattering, so what is left (about +6 % today) is the absorbance
    // analysis taking part of the exciton's red tail for background.
    assert!((q.qy / (0.95 * 0.6) - 1.0).abs() < 0.08, "QY {} against 0.57", q.qy);
    assert!(q.warnings.iter().any(|w| w.contains("one point")), "{:?}", q.warnings);
    assert!(!q.warnings.iter().any(|w| w.contains("at least 4")), "{:?}", q.warnings);
    let q3 = cuvette::report::yields::gradient_qy(&store.conn, &ids[..3]).unwrap();
    assert!(
        q3.warnings.iter().any(|w| w.contains("at least 4")),
        "{:?}",
        q3.warnings
    );
    assert!(cuvette::report::yields::gradient_qy(&store.conn, &[]).is_err());
}

fn calibration_with_reference(tx: &rusqlite::Connection, who: &str) -> cuvette::Result<()> {
    let body = cal_with_reference();
    cuvette::lab::calibrations::save(tx, who, "reference for the test", &body)?;
    Ok(())
}
