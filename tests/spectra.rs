//! Spectrum readers and analysis (issue 3), against references outside the project:
//! JCAMP-DX files written by hand to the rules of McDonald & Wilks, Appl. Spectrosc. 42, 151
//! (1988), and synthetic spectra built here from stated formulas with known peak, HWHM and
//! integral. The Savitzky-Golay tables are checked in `src/spectra/savgol.rs`.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance, analyze_pl, interpolate};
use cuvette::spectra::{ReadOptions, Trace, read_bytes};
use proptest::prelude::*;

fn read(text: &str) -> cuvette::Result<cuvette::spectra::RawSpectrum> {
    read_bytes("t.jdx", text.as_bytes(), &ReadOptions::default())
}

fn expected_ramp() -> Vec<f64> {
    (0..20).map(|i| (100 + 10 * i) as f64 * 0.001).collect()
}

#[test]
fn jcamp_affn_and_compressed_forms_read_the_same_values() {
    let affn = read(include_str!("data/affn.jdx")).unwrap();
    let dif = read(include_str!("data/difdup.jdx")).unwrap();
    let want = expected_ramp();
    for (s, form) in [(&affn, "AFFN"), (&dif, "DIF/DUP")] {
        assert_eq!(s.x.len(), 20, "{form}");
        assert_eq!(s.x[0], 400.0);
        assert_eq!(s.x[19], 419.0);
        for (a, b) in s.y.iter().zip(&want) {
            assert!((a - b).abs() < 1e-12, "{form}: {:?}", s.y);
        }
        assert_eq!(s.x_unit, "NANOMETERS");
        assert_eq!(s.y_unit.as_deref(), Some("ABSORBANCE"));
    }
    let names: Vec<&str> = dif.checks.iter().map(|c| c.name.as_str()).collect();
    assert!(
        names.contains(&"DIF Y-check") && names.contains(&"NPOINTS"),
        "{names:?}"
    );
    assert!(dif.checks.iter().all(|c| c.passed));
    // PAC and SQZ forms of the same table.
    let body = |lines: &str| {
        include_str!("data/affn.jdx").replace(
            "400 100 110 120 130 140\n405 150 160 170 180 190\n410 200 210 220 230 240\n415 250 260 270 280 290\n",
            lines,
        )
    };
    let pac = read(&body(
        "400+100+110+120+130+140\n405+150+160+170+180+190\n410+200+210+220+230+240\n415+250+260+270+280+290\n",
    ))
    .unwrap();
    let sqz = read(&body(
        "400A00A10A20A30A40\n405A50A60A70A80A90\n410B00B10B20B30B40\n415B50B60B70B80B90\n",
    ))
    .unwrap();
    assert_eq!(pac.y, affn.y);
    assert_eq!(sqz.y, affn.y);
}

#[test]
fn jcamp_blocks_and_xypoints_with_factors() {
    let text = include_str!("data/multi.jdx");
    // Issue 13: several spectra and no choice is refused with the list, never read as the first.
    let e = read(text).unwrap_err().to_string();
    assert_eq!(
        e,
        "t.jdx: the file holds 2 spectra: 1 'crude', 2 'washed'; choose one with --block N|TITLE"
    );
    let second = read_bytes(
        "m.jdx",
        text.as_bytes(),
        &ReadOptions {
            block: Some("2".into()),
            ..Default::default()
        },
    )
    .unwrap();
    assert_eq!(second.title.as_deref(), Some("washed"));
    // XFACTOR=2, YFACTOR=0.01 applied.
    assert_eq!(second.x[0], 400.0);
    assert!((second.y[7] - 0.27).abs() < 1e-12);
    let by_title = read_bytes(
        "m.jdx",
        text.as_bytes(),
        &ReadOptions {
            block: Some("washed".into()),
            ..Default::default()
        },
    )
    .unwrap();
    assert_eq!(by_title.x, second.x);
}

#[test]
fn an_infrared_file_reads_but_is_not_analysed_as_uv_vis() {
    let mut t =
        String::from("##TITLE=IR test\n##JCAMP-DX=5.01\n##XUNITS=1/CM\n##YUNITS=TRANSMITTANCE\n##XYPOINTS=(XY..XY)\n");
    for i in 0..40 {
        t.push_str(&format!("{}, {:.3}\n", 4000 - i * 90, 0.9 - 0.001 * i as f64));
    }
    t.push_str("##END=\n");
    let s = read(&t).unwrap();
    assert_eq!(s.x.len(), 40);
    let e = s.to_trace("ir.jdx", None).unwrap_err().to_string();
    assert!(e.contains("not plausible for UV-Vis-NIR"), "{e}");
}

#[test]
fn bad_jcamp_files_are_refused_with_the_reason() {
    let dif = include_str!("data/difdup.jdx");
    let e = read(&dif.replace("409A90J0W", "409A91J0W")).unwrap_err().to_string();
    assert_eq!(
        e,
        "t.jdx line 14: DIF Y-check failed: line starts with 191, previous line ended with 190"
    );
    let e = read(&dif.replace("##END=\n", "")).unwrap_err().to_string();
    assert!(e.contains("truncated"), "{e}");
    let affn = include_str!("data/affn.jdx");
    let e = read(&affn.replace("415 250 260 270 280 290\n", ""))
        .unwrap_err()
        .to_string();
    assert!(e.contains("inconsistent: ##NPOINTS=20 but 15 points"), "{e}");
    let e = read(&affn.replace("410 200", "411 200")).unwrap_err().to_string();
    assert!(e.contains("abscissa check failed"), "{e}");
    // Issue 13: DELTAX may be rounded; one that disagrees is warned about and the step comes from
    // FIRSTX, LASTX and NPOINTS (which the line abscissae then check).
    let s = read(&affn.replace("##DELTAX=1", "##DELTAX=2")).unwrap();
    assert_eq!(s.x[19], 419.0);
    assert!(
        s.warnings.iter().any(|w| w.contains("##DELTAX=2 disagrees")),
        "{:?}",
        s.warnings
    );
    assert!(s.checks.iter().any(|c| c.name == "DELTAX" && !c.passed));
    let e = read(&affn.replace("##NPOINTS=20\n", "")).unwrap_err().to_string();
    assert!(e.contains("needs ##NPOINTS="), "{e}");
    let e = read(&affn.replace("410 200", "410 2?0")).unwrap_err().to_string();
    assert!(e.contains("missing value"), "{e}");
}

#[test]
fn every_bad_delimited_file_gets_a_message_naming_it() {
    let cases: &[(&str, &str)] = &[
        ("", "f.csv: the file is empty"),
        ("Wavelength (nm),Absorbance\n", "f.csv: header only: no rows of numbers"),
        (
            "400\n401\n402\n403\n",
            "f.csv: only one column of numbers; a spectrum needs x and y columns",
        ),
        (
            "nm,A\n400,0.1\n401,0.2\n402,high\n",
            "f.csv line 4: non-numeric cell 'high'",
        ),
        (
            "nm,A\n400,0.1\n401,NaN\n402,0.2\n403,0.2\n404,0.2\n405,0.2\n406,0.2\n407,0.1\n",
            "f.csv line 3: NaN or infinite value",
        ),
        (
            "nm,A\n400,0.1\n401,inf\n402,0.2\n403,0.2\n404,0.2\n405,0.2\n406,0.2\n407,0.1\n",
            "f.csv line 3: NaN or infinite value",
        ),
        (
            "nm,A\n400,0.1\n401,0.1\n401,0.2\n402,0.2\n403,0.2\n404,0.2\n405,0.2\n406,0.1\n",
            "f.csv line 4: duplicate x value 401",
        ),
        (
            "nm,A\n400,0.1\n401,0.1\n403,0.2\n402,0.2\n404,0.2\n405,0.2\n406,0.2\n407,0.1\n",
            "f.csv line 5: x is not monotonic (402 after 403)",
        ),
        (
            "nm,A\n400,0.1\n401,0.1\n402,0.2\n",
            "f.csv: too few points (3; at least 8 needed)",
        ),
    ];
    for (text, want) in cases {
        let e = read_bytes("f.csv", text.as_bytes(), &ReadOptions::default())
            .unwrap_err()
            .to_string();
        assert_eq!(&e, want, "for {text:?}");
    }
    // Values in metres read, but analysis refuses them.
    let m: String = (0..20).map(|i| format!("{:e},0.1\n", 4e-7 + i as f64 * 1e-9)).collect();
    let s = read_bytes("m.csv", m.as_bytes(), &ReadOptions::default()).unwrap();
    let e = s.to_trace("m.csv", None).unwrap_err().to_string();
    assert!(e.contains("not plausible for UV-Vis-NIR"), "{e}");
}

/// A resolved first exciton: a Gaussian in energy (E0, σ) on a background rising to the UV
/// that is negligible on the red side, plus noise. Then the peak is at hc/E0 and the
/// low-energy half maximum at E0 - σ√(2 ln 2).
fn resolved(e0: f64, sigma: f64, noise: f64, seed: u64) -> Trace {
    let mut rng = cuvette::lab::demo::Rng::new(seed);
    let nm: Vec<f64> = (0..601).map(|i| 300.0 + i as f64).collect();
    let y = nm
        .iter()
        .map(|l| {
            let e = HC / l;
            0.3 * (-(e - e0).powi(2) / (2.0 * sigma * sigma)).exp()
                + 0.05 * ((e - e0 - 0.35) / 0.12).exp().min(20.0)
                + noise * rng.normal()
        })
        .collect();
    Trace { nm, y }
}

#[test]
fn resolved_first_exciton_peak_and_hwhm_match_the_formula() {
    for (e0, sigma) in [(2.25, 0.045), (2.10, 0.06), (2.40, 0.05)] {
        let t = resolved(e0, sigma, 0.0008, 11);
        let r = analyze_absorbance(&t, &AnalysisSettings::default()).unwrap();
        let peak = HC / e0;
        let half = HC / (e0 - sigma * (2.0f64.ln() * 2.0).sqrt());
        assert!(!r.shoulder);
        assert!(
            (r.first_exciton_nm.unwrap() - peak).abs() < 0.5,
            "peak {:?} vs {peak}",
            r.first_exciton_nm
        );
        assert!(
            (r.hwhm_nm.unwrap() - (half - peak)).abs() < 0.02 * (half - peak) + 0.3,
            "hwhm {:?} vs {}",
            r.hwhm_nm,
            half - peak
        );
        assert!(
            (r.first_exciton_abs.unwrap() - 0.3).abs() < 0.01,
            "{:?}",
            r.first_exciton_abs
        );
        assert!(r.warnings.is_empty(), "{:?}", r.warnings);
    }
}

#[test]
fn a_shoulder_is_found_by_the_second_derivative_and_flagged() {
    // A weak exciton on a steep continuum: no local maximum, only an inflection.
    let e0 = 2.2;
    let nm: Vec<f64> = (0..601).map(|i| 300.0 + i as f64).collect();
    let y: Vec<f64> = nm
        .iter()
        .map(|l| {
            let e = HC / l;
            0.12 * (-(e - e0).powi(2) / (2.0 * 0.07f64.powi(2))).exp()
                + 0.4 / (1.0 + (-(e - e0 - 0.05) / 0.06).exp()) * (1.0 + (e - e0).max(0.0))
        })
        .collect();
    let t = Trace { nm, y };
    let r = analyze_absorbance(&t, &AnalysisSettings::default()).unwrap();
    assert!(r.shoulder, "{r:?}");
    assert!(
        (r.first_exciton_nm.unwrap() - HC / e0).abs() < 8.0,
        "{:?} vs {}",
        r.first_exciton_nm,
        HC / e0
    );
    assert!(r.warnings.iter().any(|w| w.contains("shoulder")));
}

#[test]
fn doubtful_absorbance_gets_warnings() {
    let mut t = resolved(2.25, 0.045, 0.0008, 5);
    for v in &mut t.y {
        *v *= 10.0;
    }
    let r = analyze_absorbance(&t, &AnalysisSettings::default()).unwrap();
    assert!(r.warnings.iter().any(|w| w.contains("saturated")), "{:?}", r.warnings);
    let mut t = resolved(2.25, 0.045, 0.0008, 5);
    for v in &mut t.y {
        *v *= 0.02;
    }
    let r = analyze_absorbance(&t, &AnalysisSettings::default()).unwrap();
    assert!(
        r.first_exciton_nm.is_none()
            || r.warnings
                .iter()
                .any(|w| w.contains("low signal") || w.contains("no excitonic")),
        "{r:?}"
    );
    // A peak right at the end of the scan.
    let t = resolved(2.25, 0.045, 0.0008, 5);
    let cut = Trace {
        nm: t.nm[..260].to_vec(),
        y: t.y[..260].to_vec(),
    };
    let r = analyze_absorbance(&cut, &AnalysisSettings::default()).unwrap();
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("edge") || w.contains("HWHM not measured")),
        "{:?}",
        r.warnings
    );
}

#[test]
fn pl_peak_width_and_integrals_match_a_gaussian_in_energy() {
    // I(E) = A exp(-(E-E0)²/2σ²) has ∫ I dE = A σ √(2π) and FWHM 2√(2 ln 2) σ; sampled in
    // wavelength as I(λ) = I(E) hc/λ², its integral over λ is the same number.
    let (a, e0, sigma) = (1000.0, 2.15, 0.05);
    let nm: Vec<f64> = (0..=400).map(|i| 420.0 + i as f64 * 0.75).collect();
    let y: Vec<f64> = nm
        .iter()
        .map(|l| {
            let e = HC / l;
            a * (-(e - e0).powi(2) / (2.0 * sigma * sigma)).exp() * HC / (l * l)
        })
        .collect();
    let r = analyze_pl(&Trace { nm, y }, &AnalysisSettings::default()).unwrap();
    let integral = a * sigma * (2.0 * std::f64::consts::PI).sqrt();
    assert!(
        (r.pl_integral - integral).abs() < 0.002 * integral,
        "{} vs {integral}",
        r.pl_integral
    );
    assert!(
        (r.pl_integral_energy - integral).abs() < 0.002 * integral,
        "{} vs {integral}",
        r.pl_integral_energy
    );
    assert!((r.pl_peak_ev.unwrap() - e0).abs() < 0.001, "{:?}", r.pl_peak_ev);
    let fwhm_mev = 2.0 * (2.0f64 * 2.0f64.ln()).sqrt() * sigma * 1000.0;
    assert!(
        (r.pl_fwhm_mev.unwrap() - fwhm_mev).abs() < 0.01 * fwhm_mev,
        "{:?} vs {fwhm_mev}",
        r.pl_fwhm_mev
    );
    assert!(r.warnings.is_empty(), "{:?}", r.warnings);
}

#[test]
fn interpolation_is_linear_and_bounded() {
    let t = Trace {
        nm: vec![400.0, 410.0, 420.0],
        y: vec![0.0, 1.0, 0.0],
    };
    assert_eq!(interpolate(&t, 405.0), Some(0.5));
    assert_eq!(interpolate(&t, 420.0), Some(0.0));
    assert_eq!(interpolate(&t, 421.0), None);
}

#[test]
fn the_same_spectrum_in_other_shapes_reads_alike() {
    let t = resolved(2.25, 0.045, 0.0, 1);
    let asc: String = t.nm.iter().zip(&t.y).map(|(x, y)| format!("{x},{y}\n")).collect();
    let desc: String =
        t.nm.iter()
            .zip(&t.y)
            .rev()
            .map(|(x, y)| format!("{x};{}\n", format!("{y}").replace('.', ",")))
            .collect();
    let ev: String =
        t.nm.iter()
            .zip(&t.y)
            .rev()
            .map(|(x, y)| format!("{}\t{y}\n", HC / x))
            .collect();
    let a = read_bytes(
        "a.csv",
        format!("Wavelength (nm),A\n{asc}").as_bytes(),
        &ReadOptions::default(),
    )
    .unwrap();
    let d = read_bytes(
        "d.csv",
        format!("Instrument: bench 2\nWellenlänge (nm);Extinktion\n{desc}").as_bytes(),
        &ReadOptions::default(),
    )
    .unwrap();
    let e = read_bytes(
        "e.txt",
        format!("Energy (eV)\tA\n{ev}").as_bytes(),
        &ReadOptions::default(),
    )
    .unwrap();
    let set = AnalysisSettings::default();
    let pa = analyze_absorbance(&a.to_trace("a", None).unwrap(), &set)
        .unwrap()
        .first_exciton_nm
        .unwrap();
    let pd = analyze_absorbance(&d.to_trace("d", None).unwrap(), &set)
        .unwrap()
        .first_exciton_nm
        .unwrap();
    let pe = analyze_absorbance(&e.to_trace("e", None).unwrap(), &set)
        .unwrap()
        .first_exciton_nm
        .unwrap();
    assert!((pa - pd).abs() < 1e-9, "{pa} {pd}");
    assert!((pa - pe).abs() < 0.3, "{pa} {pe}");
    assert_eq!(d.x[0], 900.0, "read in the file's own order");
}

#[test]
fn analyze_and_read_commands_print_the_contract_keys() {
    let lab = Lab::new();
    let a = lab.abs_file("a.csv", 550.0);
    let p = lab.pl_file("p.csv", 560.0, 5000.0);
    let bad = lab.write("bad.csv", "nm,A\n1,2\n");
    let o = lab.run(&[
        "analyze",
        s(&a),
        s(&bad),
        "--kind",
        "abs",
        "--json",
        "--material",
        "CdSe",
    ]);
    assert_eq!(o.code, 1, "a refused file makes the command end non-zero");
    let lines: Vec<serde_json::Value> = o.stdout.lines().map(|l| serde_json::from_str(l).unwrap()).collect();
    assert_eq!(lines.len(), 2);
    for k in [
        "file",
        "first_exciton_nm",
        "first_exciton_abs",
        "hwhm_nm",
        "shoulder",
        "warnings",
        "diameter_nm",
        "extinction_m1cm1",
        "concentration_molar",
    ] {
        assert!(lines[0].get(k).is_some(), "abs line lacks {k}");
    }
    assert!(lines[1]["error"].as_str().unwrap().contains("too few points"));
    assert!(o.stderr.contains("bad.csv"), "{}", o.stderr);
    let o = lab.ok(&["analyze", s(&p), "--kind", "pl", "--json"]);
    let v: serde_json::Value = serde_json::from_str(o.stdout.trim()).unwrap();
    for k in ["file", "pl_peak_nm", "pl_fwhm_nm", "pl_integral", "warnings"] {
        assert!(v.get(k).is_some(), "pl line lacks {k}");
    }
    // The generator adds a dark-count baseline with noise, so allow a few per cent here; the
    // integral itself is checked exactly on a noiseless Gaussian above.
    assert!((v["pl_integral"].as_f64().unwrap() - 5000.0).abs() < 250.0, "{v}");
    let dir = lab.path("exports");
    std::fs::create_dir(&dir).unwrap();
    for i in 0..5 {
        lab_abs_in(&dir, i);
    }
    let o = lab.ok(&["analyze", s(&dir), "--kind", "abs", "--json"]);
    assert_eq!(o.stdout.lines().count(), 5);
    let jdx = lab.write("t.jdx", include_str!("data/difdup.jdx"));
    let r = lab.ok(&["read", s(&jdx), "--json"]).json();
    for k in [
        "format", "title", "x_unit", "y_unit", "npoints", "x", "y", "checks", "warnings",
    ] {
        assert!(r.get(k).is_some(), "read lacks {k}");
    }
    assert_eq!(r["npoints"], 20);
    assert_eq!(r["x_unit"], "NANOMETERS");
    assert_eq!(r["checks"][0]["passed"], true);
}

fn lab_abs_in(dir: &std::path::Path, i: usize) {
    let (x, y) = cuvette::lab::demo::absorbance(
        "CdSe",
        520.0 + 10.0 * i as f64,
        0.04,
        0.1,
        0.0005,
        &mut cuvette::lab::demo::Rng::new(i as u64),
    );
    std::fs::write(dir.join(format!("abs_{i:02}min.csv")), csv(&x, &y)).unwrap();
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    #[test]
    fn no_reader_panics_on_arbitrary_bytes(bytes in proptest::collection::vec(any::<u8>(), 0..600)) {
        let _ = read_bytes("fuzz", &bytes, &ReadOptions::default());
    }

    #[test]
    fn no_reader_panics_on_jcamp_like_text(lines in proptest::collection::vec("[#A-Za-z0-9=+\\-., ?%@$()]{0,40}", 0..30)) {
        let text = format!("##TITLE=x\n##XYDATA=(X++(Y..Y))\n{}\n##END=\n", lines.join("\n"));
        let _ = read_bytes("fuzz", text.as_bytes(), &ReadOptions::default());
    }

    #[test]
    fn analysis_finds_a_gaussian_peak_and_never_panics(e0 in 1.9f64..2.6, sigma in 0.03f64..0.07, noise in 0.0f64..0.002, seed in 0u64..1000) {
        let t = resolved(e0, sigma, noise, seed);
        let r = analyze_absorbance(&t, &AnalysisSettings::default()).unwrap();
        let peak = r.first_exciton_nm.unwrap();
        prop_assert!((peak - HC / e0).abs() < 2.0, "peak {} vs {}", peak, HC / e0);
        prop_assert!(r.hwhm_nm.unwrap() > 0.0);
        // Analysis never changes its input.
        prop_assert_eq!(t.y.len(), 601);
    }

    #[test]
    fn analysis_of_arbitrary_finite_data_returns_without_panicking(ys in proptest::collection::vec(-1.0f64..3.0, 20..200)) {
        let nm: Vec<f64> = (0..ys.len()).map(|i| 400.0 + i as f64).collect();
        let t = Trace { nm, y: ys };
        let _ = analyze_absorbance(&t, &AnalysisSettings::default());
        let _ = analyze_pl(&t, &AnalysisSettings::default());
    }
}

#[test]
fn the_user_can_name_the_columns_and_the_block() {
    let lab = Lab::new();
    // nm, a reference channel, then the sample: the sample is column 3.
    let (x, y) = cuvette::lab::demo::absorbance("CdSe", 560.0, 0.04, 0.1, 0.0005, &mut cuvette::lab::demo::Rng::new(4));
    let text: String = std::iter::once("nm;reference;sample\n".to_string())
        .chain(x.iter().zip(&y).map(|(a, b)| format!("{a};0.01;{b}\n")))
        .collect();
    let f = lab.write("three.csv", &text);
    // Two y columns and no choice: each analysed as its own spectrum with its label, never the
    // file read as its first column (issue 13); `read` without a choice refuses, naming both.
    let both = lab.ok(&["analyze", s(&f), "--kind", "abs", "--json"]);
    let lines: Vec<serde_json::Value> = both.stdout.lines().map(|l| serde_json::from_str(l).unwrap()).collect();
    let labels: Vec<&str> = lines.iter().map(|v| v["label"].as_str().unwrap()).collect();
    assert_eq!(labels, ["reference", "sample"], "{}", both.stdout);
    assert!((lines[1]["first_exciton_nm"].as_f64().unwrap() - 560.0).abs() < 1.5);
    let wrong = lab.run(&["read", s(&f)]);
    assert_eq!(wrong.code, 1);
    assert!(
        wrong.stderr.contains("1 'reference', 2 'sample'") && wrong.stderr.contains("--column NAME|N"),
        "{}",
        wrong.stderr
    );
    let o = lab.ok(&["analyze", s(&f), "--kind", "abs", "--y-col", "3", "--json"]);
    let v: serde_json::Value = serde_json::from_str(o.stdout.trim()).unwrap();
    assert!((v["first_exciton_nm"].as_f64().unwrap() - 560.0).abs() < 1.5, "{v}");
    lab.ok(&["init"]);
    lab.ok(&["batch", "new", "--material", "CdSe", "--name", "cols"]);
    let a = lab
        .ok(&[
            "aliquot",
            "add",
            "1",
            "--abs",
            s(&f),
            "--y-col",
            "3",
            "--minutes",
            "1",
            "--json",
        ])
        .json();
    assert!((a["first_exciton_nm"].as_f64().unwrap() - 560.0).abs() < 1.5, "{a}");
    let m = lab.write("m.jdx", include_str!("data/multi.jdx"));
    let r = lab.ok(&["read", s(&m), "--block", "washed", "--json"]).json();
    assert_eq!(r["title"], "washed");
}
