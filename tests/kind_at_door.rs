//! Wrong input caught at the door (issue 10, point 5, spectral half): a file whose header or
//! values say it is not the kind it is being logged as is refused with a message naming the
//! mismatch unless `kind_as_is`; %T, T and reflectance exports are converted to absorbance when
//! the file says so; non-finite and absurd values are refused always; a folder watch infers the
//! kind from the same evidence or says it cannot.
//!
//! Inputs: synthetic spectra written here from stated formulas with invented numbers, and the
//! real CdSe growth series in /work/shared/opendata/cdse-growth-series (MIT licence; read in
//! place). Check values for conversions come from the definition of decadic absorbance,
//! A = -log10(T) (IUPAC Gold Book, "absorbance"), and for reflectance A = log10(1/R).
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use cuvette::spectra::quantity::{SpectrumKind, Verdict, YQuantity, admit, infer_kind, stated};
use cuvette::spectra::{RawSpectrum, ReadOptions, read_bytes};
use std::f64::consts::LOG10_2;

const ABS: SpectrumKind = SpectrumKind::Absorbance;
const PL: SpectrumKind = SpectrumKind::Pl;
const PLE: SpectrumKind = SpectrumKind::Ple;

/// A two-column CSV, x from 400 nm in steps of `step_nm`.
fn csv(preamble: &str, header: &str, ys: &[f64], step_nm: f64) -> String {
    let mut s = format!("{preamble}Wavelength (nm),{header}\n");
    for (i, y) in ys.iter().enumerate() {
        s.push_str(&format!("{},{y}\n", 400.0 + step_nm * i as f64));
    }
    s
}

fn read(name: &str, text: &str) -> RawSpectrum {
    read_bytes(name, text.as_bytes(), &ReadOptions::default()).unwrap()
}

fn nm_grid() -> Vec<f64> {
    (0..201).map(|i| 350.0 + 2.0 * i as f64).collect()
}

/// Synthetic absorbance (invented): a scattering/interband rise toward the blue plus an exciton
/// at 520 nm, A = 0.02 + 1.8 exp(-(nm - 350)/70) + 0.25 exp(-((nm - 520)/12)^2 / 2).
fn synthetic_abs(nm: f64) -> f64 {
    0.02 + 1.8 * (-(nm - 350.0) / 70.0).exp() + 0.25 * (-((nm - 520.0) / 12.0).powi(2) / 2.0).exp()
}

/// Synthetic PL in counts (invented): 40 + 12000 exp(-((nm - 540)/14)^2 / 2), whole numbers.
fn synthetic_pl(nm: f64) -> f64 {
    (40.0 + 12000.0 * (-((nm - 540.0) / 14.0).powi(2) / 2.0).exp()).round()
}

fn series(header: &str, f: impl Fn(f64) -> f64) -> String {
    let mut s = format!("nm,{header}\n");
    for nm in nm_grid() {
        s.push_str(&format!("{nm},{}\n", f(nm)));
    }
    s
}

fn refusal(v: Verdict) -> (String, bool) {
    match v {
        Verdict::Refuse { message, overridable } => (message, overridable),
        other => panic!("expected a refusal, got {other:?}"),
    }
}

fn converted(v: Verdict) -> (YQuantity, Vec<f64>) {
    match v {
        Verdict::Convert { from, absorbance, .. } => (from, absorbance),
        other => panic!("expected a conversion, got {other:?}"),
    }
}

fn accepted(v: Verdict) -> (Option<String>, Vec<String>) {
    match v {
        Verdict::Accept { y_unit, warnings } => (y_unit, warnings),
        other => panic!("expected acceptance, got {other:?}"),
    }
}

// ---- the three mismatches the issue names ----

#[test]
fn counts_logged_as_absorbance_is_refused_naming_the_mismatch() {
    let raw = read("pl.csv", &series("Counts", synthetic_pl));
    let (msg, overridable) = refusal(admit("pl.csv", &raw, ABS, false));
    assert_eq!(
        msg,
        "pl.csv: its header says counts (a PL/intensity quantity) ('Counts'), but it is being logged as \
         absorbance; log it as PL (--pl), or say --kind-as-is to keep it as absorbance"
    );
    assert!(overridable);
    // An intensity header is the same mismatch.
    let raw = read("pl.csv", &series("Intensity (a.u.)", synthetic_pl));
    let (msg, _) = refusal(admit("pl.csv", &raw, ABS, false));
    assert!(
        msg.contains("its header says an intensity") && msg.contains("logged as absorbance"),
        "{msg}"
    );
    // A header that names excitation suggests PLE.
    let raw = read("x.csv", &series("Excitation (cps)", synthetic_abs));
    let (msg, _) = refusal(admit("x.csv", &raw, ABS, false));
    assert!(msg.contains("log it as PLE (--ple)"), "{msg}");
}

#[test]
fn counts_logged_as_absorbance_with_a_silent_header_are_refused_by_their_values() {
    // No y header at all; whole numbers in the thousands.
    let raw = read("x.csv", &series("20 s", synthetic_pl));
    assert_eq!(stated(&raw).quantity, YQuantity::Unknown);
    let (msg, overridable) = refusal(admit("x.csv", &raw, ABS, false));
    assert_eq!(
        msg,
        "x.csv: its values say it is not absorbance: they reach 12040 at point 96 (x = 540 nm), far above \
         any absorbance a spectrophotometer reads (about 4-6), with a peak at 540 nm as an emission spectrum \
         has, in whole numbers as detector counts are; log it as PL (--pl), or say --kind-as-is to keep it as \
         absorbance"
    );
    assert!(overridable);
    // An absorbance header does not make such values absorbance.
    let raw = read("x.csv", &series("Abs", synthetic_pl));
    let (msg, _) = refusal(admit("x.csv", &raw, ABS, false));
    assert!(
        msg.contains("its header says absorbance ('Abs'), but its values reach 12040"),
        "{msg}"
    );
    // Whole numbers in the thousands with no peak (a rising count) are counts too.
    let raw = read("x.csv", &series("", |nm| (synthetic_abs(nm) * 5000.0).round()));
    let (msg, _) = refusal(admit("x.csv", &raw, ABS, false));
    assert!(
        msg.contains("they are whole numbers, as detector counts are; log it as PL (--pl)"),
        "{msg}"
    );
}

#[test]
fn absorbance_logged_as_pl_is_refused() {
    // Header says absorbance: refused as PL and as PLE, whatever the values.
    let raw = read("a.csv", &series("Absorbance", synthetic_pl));
    let (msg, overridable) = refusal(admit("a.csv", &raw, PL, false));
    assert_eq!(
        msg,
        "a.csv: its header says absorbance ('Absorbance'), but it is being logged as PL; log it as \
         absorbance (--abs), or say --kind-as-is to keep it as PL"
    );
    assert!(overridable);
    let (msg, _) = refusal(admit("a.csv", &raw, PLE, false));
    assert!(msg.contains("being logged as PLE"), "{msg}");
    // JCAMP-DX ##YUNITS=ABSORBANCE says the same.
    let jdx = read("t.jdx", include_str!("data/affn.jdx"));
    let (msg, _) = refusal(admit("t.jdx", &jdx, PL, false));
    assert!(msg.contains("its header says absorbance ('ABSORBANCE')"), "{msg}");
    // Header silent: values on the absorbance scale rising to the blue are not a PL spectrum.
    let raw = read("a.csv", &series("20 s", synthetic_abs));
    let (msg, _) = refusal(admit("a.csv", &raw, PL, false));
    assert!(msg.contains("its values look like absorbance"), "{msg}");
    // ... but PLE rises toward the blue too, so it is accepted as PLE.
    accepted(admit("a.csv", &raw, PLE, false));
}

#[test]
fn percent_t_logged_as_absorbance_is_refused_when_only_its_values_say_so() {
    // %T = 100 * 10^-A of the synthetic absorbance, under a header that says nothing.
    let raw = read(
        "t.csv",
        &series("sample 1", |nm| 100.0 * 10f64.powf(-synthetic_abs(nm))),
    );
    let (msg, overridable) = refusal(admit("t.csv", &raw, ABS, false));
    assert!(
        msg.contains(
            "fall toward the blue, as a %T does; if it is %T, give its y column a %T header and it will be converted"
        ),
        "{msg}"
    );
    assert!(overridable);
    // A %T header: converted, not refused (next test); %T logged as PL is refused.
    let raw = read("t.csv", &series("%T", |nm| 100.0 * 10f64.powf(-synthetic_abs(nm))));
    let (msg, _) = refusal(admit("t.csv", &raw, PL, false));
    assert!(
        msg.contains("its header says %T (a per cent transmittance) ('%T'), but it is being logged as PL")
            && msg.contains("--abs) and it will be converted"),
        "{msg}"
    );
}

// ---- conversions when the file says so ----

#[test]
fn percent_t_is_converted_as_minus_log10_t() {
    // A = -log10(T): T = 100 % gives 0, 50 % gives log10 2 = 0.30103, 10 % gives 1, 1 % gives 2
    // (IUPAC Gold Book, "absorbance").
    let ys = [100.0, 50.0, 10.0, 1.0, 20.0, 30.0, 40.0, 60.0];
    let raw = read("t.csv", &csv("", "%T", &ys, 10.0));
    let (from, a) = converted(admit("t.csv", &raw, ABS, false));
    assert_eq!(from, YQuantity::TransmittancePercent);
    for (i, want) in [(0, 0.0), (1, LOG10_2), (2, 1.0), (3, 2.0)] {
        assert!((a[i] - want).abs() < 1e-12, "point {i}: {} vs {want}", a[i]);
    }
    // Analysis converts the stored raw values the same way.
    let t = raw.to_trace("t.csv", None).unwrap();
    assert_eq!(t.y, a);
    // "T" with values above 1.5 is per cent too; a preamble "Y axis: %T" line says the same.
    let raw = read("t.csv", &csv("", "T", &ys, 10.0));
    assert_eq!(converted(admit("t.csv", &raw, ABS, false)).1, a);
    let raw = read("t.csv", &csv("Y axis: %T\n", "20 s", &ys, 10.0));
    assert_eq!(raw.y_unit.as_deref(), Some("%T"));
    assert_eq!(converted(admit("t.csv", &raw, ABS, false)).1, a);
}

#[test]
fn transmittance_fraction_is_converted() {
    // T = 0.1 gives A = 1, T = 0.01 gives 2, T = 0.5 gives 0.30103 (A = -log10 T).
    let ys = [0.1, 0.01, 0.5, 0.9, 0.8, 0.7, 0.6, 0.95];
    let raw = read("t.csv", &csv("", "Transmittance", &ys, 10.0));
    let (from, a) = converted(admit("t.csv", &raw, ABS, false));
    assert_eq!(from, YQuantity::TransmittanceFraction);
    for (i, want) in [(0, 1.0), (1, 2.0), (2, LOG10_2)] {
        assert!((a[i] - want).abs() < 1e-12, "point {i}: {} vs {want}", a[i]);
    }
    // JCAMP-DX ##YUNITS=TRANSMITTANCE, as a fraction.
    let jdx = include_str!("data/affn.jdx").replace("##YUNITS=ABSORBANCE", "##YUNITS=TRANSMITTANCE");
    assert!(jdx.contains("TRANSMITTANCE"));
    let raw = read("t.jdx", &jdx);
    let (from, a) = converted(admit("t.jdx", &raw, ABS, false));
    assert_eq!(from, YQuantity::TransmittanceFraction);
    for (t, a) in raw.y.iter().zip(&a) {
        assert!((a + t.log10()).abs() < 1e-12);
    }
}

#[test]
fn reflectance_is_converted_as_log10_one_over_r() {
    // R = 25 % gives log10 4 = 0.60206; R = 10 % gives 1 (A = log10(1/R)).
    let ys = [25.0, 10.0, 50.0, 60.0, 70.0, 80.0, 85.0, 90.0];
    let raw = read("r.csv", &csv("", "%R", &ys, 10.0));
    let (from, a) = converted(admit("r.csv", &raw, ABS, false));
    assert_eq!(from, YQuantity::ReflectancePercent);
    assert!((a[0] - 2.0 * LOG10_2).abs() < 1e-12, "{}", a[0]);
    assert!((a[1] - 1.0).abs() < 1e-12, "{}", a[1]);
    let v = admit("r.csv", &raw, ABS, false);
    assert!(
        v.warnings().iter().any(|w| w.contains("not Beer-Lambert")),
        "{:?}",
        v.warnings()
    );
    // A reflectance fraction, and the same numbers through to_trace.
    let raw = read(
        "r.csv",
        &csv("", "Reflectance", &[0.25, 0.1, 0.5, 0.6, 0.7, 0.8, 0.85, 0.9], 10.0),
    );
    let (from, a) = converted(admit("r.csv", &raw, ABS, false));
    assert_eq!(from, YQuantity::ReflectanceFraction);
    assert!((a[0] - 2.0 * LOG10_2).abs() < 1e-12);
    assert_eq!(raw.to_trace("r.csv", None).unwrap().y, a);
    // Kubelka-Munk is not converted: refused as absorbance.
    let raw = read("k.csv", &csv("", "Kubelka-Munk", &[0.2; 8], 10.0));
    let (msg, _) = refusal(admit("k.csv", &raw, ABS, false));
    assert!(msg.contains("Kubelka-Munk") && msg.contains("not converted"), "{msg}");
}

#[test]
fn a_percent_t_header_over_values_no_transmittance_has_is_refused_even_as_is() {
    let raw = read("t.csv", &series("%T", synthetic_pl));
    let (msg, overridable) = refusal(admit("t.csv", &raw, ABS, true));
    assert!(
        msg.contains("outside what a %T can be (-10..200); it cannot be converted"),
        "{msg}"
    );
    assert!(!overridable);
}

// ---- the user overrules ----

#[test]
fn kind_as_is_keeps_a_mismatched_file_with_a_warning() {
    let raw = read("pl.csv", &series("Counts", synthetic_pl));
    let (y_unit, warnings) = accepted(admit("pl.csv", &raw, ABS, true));
    assert_eq!(y_unit.as_deref(), Some("Counts"));
    assert!(
        warnings
            .iter()
            .any(|w| w.starts_with("kept as absorbance (--kind-as-is) although its header says counts")),
        "{warnings:?}"
    );
    let raw = read("a.csv", &series("Absorbance", synthetic_abs));
    let (_, warnings) = accepted(admit("a.csv", &raw, PL, true));
    assert!(
        warnings.iter().any(|w| w.contains("kept as PL (--kind-as-is)")),
        "{warnings:?}"
    );
    // A %T label set aside on a PL file is not stored, so analysis does not convert it.
    let raw = read("t.csv", &series("%T", |nm| 100.0 * 10f64.powf(-synthetic_abs(nm))));
    let (y_unit, _) = accepted(admit("t.csv", &raw, PL, true));
    assert_eq!(y_unit, None);
}

// ---- values no instrument gives ----

#[test]
fn absurd_and_non_finite_values_are_refused_even_as_is() {
    let mut ys: Vec<f64> = nm_grid().iter().map(|&nm| synthetic_abs(nm)).collect();
    ys[5] = 1e308;
    let raw = read("big.csv", &csv("", "Abs", &ys, 2.0));
    for as_is in [false, true] {
        let (msg, overridable) = refusal(admit("big.csv", &raw, ABS, as_is));
        assert_eq!(
            msg,
            "big.csv: point 6 (x = 410 nm) has y = 1e308, beyond what any instrument reports (|y| > 1e12)"
        );
        assert!(!overridable);
        // Whatever the kind.
        assert!(!refusal(admit("big.csv", &raw, PL, as_is)).1);
    }
    // Finite, below 1e12, but no absorbance: refused as absorbance even with kind-as-is.
    ys[5] = 5e6;
    let raw = read("big.csv", &csv("", "Abs", &ys, 2.0));
    let (msg, overridable) = refusal(admit("big.csv", &raw, ABS, true));
    assert_eq!(
        msg,
        "big.csv: point 6 (x = 410 nm) has absorbance 5e6: no absorbance is that large (|A| > 1e6)"
    );
    assert!(!overridable);
    // Non-finite: the readers refuse the line; the door refuses the point of any spectrum.
    let text = csv("", "Abs", &ys, 2.0).replace("410,5000000", "410,NaN");
    let e = read_bytes("nan.csv", text.as_bytes(), &ReadOptions::default()).unwrap_err();
    assert_eq!(e.to_string(), "nan.csv line 7: NaN or infinite value");
    let mut raw = read("ok.csv", &series("Abs", synthetic_abs));
    raw.y[3] = f64::INFINITY;
    for as_is in [false, true] {
        let (msg, overridable) = refusal(admit("inf.csv", &raw, ABS, as_is));
        assert_eq!(msg, "inf.csv: point 4 (x = 356 nm) has y = inf, not a finite number");
        assert!(!overridable);
    }
    raw.y[3] = f64::NAN;
    assert!(refusal(admit("nan.csv", &raw, PL, true)).0.contains("y = NaN"));
}

#[test]
fn the_verdict_becomes_a_typed_error() {
    let raw = read("pl.csv", &series("Counts", synthetic_pl));
    let e = admit("pl.csv", &raw, ABS, false).into_result().unwrap_err();
    assert!(matches!(e, cuvette::Error::Invalid(_)));
    assert!(e.to_string().starts_with("pl.csv: its header says counts"));
    assert!(admit("pl.csv", &raw, PL, false).into_result().is_ok());
}

// ---- real spectra pass as what they are ----

/// Every aliquot column of a real file, read as the y column.
fn columns(dir: &std::path::Path, name: &str) -> Vec<RawSpectrum> {
    let path = dir.join(name);
    let text = std::fs::read_to_string(&path).unwrap();
    let ncols = text
        .trim_start_matches('\u{feff}')
        .lines()
        .next()
        .unwrap()
        .split(',')
        .count();
    (2..=ncols)
        .map(|c| {
            let opts = ReadOptions {
                y_col: Some(c),
                ..ReadOptions::default()
            };
            cuvette::spectra::read_file(&path, &opts).unwrap().0
        })
        .collect()
}

const REAL_ABS: [&str; 3] = ["Run 1 UV-Vis.csv", "Run 2 UV-Vis.csv", "Run 3 UV-Vis.csv"];
const REAL_PL: [&str; 2] = ["Run 2 FL emission.csv", "Run 3 FL emission.csv"];

#[test]
fn real_absorbance_passes_as_absorbance_and_is_refused_as_pl() {
    let Some(dir) = common::cdse_series_dir() else { return };
    for name in REAL_ABS {
        let cols = columns(&dir, name);
        assert!(cols.len() >= 14, "{name}");
        for (i, raw) in cols.iter().enumerate() {
            let (_, warnings) = accepted(admit(name, raw, ABS, false));
            assert!(warnings.is_empty(), "{name} column {}: {warnings:?}", i + 2);
            let (msg, _) = refusal(admit(name, raw, PL, false));
            assert!(
                msg.contains("its values look like absorbance"),
                "{name} column {}: {msg}",
                i + 2
            );
        }
    }
}

#[test]
fn real_pl_passes_as_pl_and_is_refused_as_absorbance() {
    let Some(dir) = common::cdse_series_dir() else { return };
    for name in REAL_PL {
        let cols = columns(&dir, name);
        assert!(cols.len() >= 14, "{name}");
        for (i, raw) in cols.iter().enumerate() {
            let (_, warnings) = accepted(admit(name, raw, PL, false));
            assert!(warnings.is_empty(), "{name} column {}: {warnings:?}", i + 2);
            let (msg, _) = refusal(admit(name, raw, ABS, false));
            assert!(
                msg.contains("as an emission spectrum has; log it as PL (--pl)"),
                "{name} column {}: {msg}",
                i + 2
            );
        }
    }
}

// ---- the folder watch's inference ----

#[test]
fn real_files_are_inferred_by_name_and_by_shape_alone() {
    let Some(dir) = common::cdse_series_dir() else { return };
    for name in REAL_ABS {
        for raw in columns(&dir, name) {
            let by_name = infer_kind(name, &raw);
            assert_eq!(by_name.kind, Some(ABS), "{name}: {}", by_name.evidence);
            assert_eq!(by_name.evidence, "its name suggests absorbance");
            let by_shape = infer_kind("aliquot_07.csv", &raw);
            assert_eq!(by_shape.kind, Some(ABS), "{name}: {}", by_shape.evidence);
            assert!(by_shape.evidence.contains("rising toward the blue"));
        }
    }
    for name in REAL_PL {
        for raw in columns(&dir, name) {
            let by_name = infer_kind(name, &raw);
            assert_eq!(by_name.kind, Some(PL), "{name}: {}", by_name.evidence);
            let by_shape = infer_kind("aliquot_07.csv", &raw);
            assert_eq!(by_shape.kind, Some(PL), "{name}: {}", by_shape.evidence);
            assert!(by_shape.evidence.contains("a peak of"));
        }
    }
}

#[test]
fn inference_reads_the_header_first_and_checks_it_through_the_door() {
    let abs = read("x.csv", &series("Absorbance", synthetic_abs));
    let i = infer_kind("aliquot_3.csv", &abs);
    assert_eq!(
        (i.kind, i.evidence.as_str()),
        (Some(ABS), "its header says absorbance ('Absorbance')")
    );
    let pl = read("x.csv", &series("PL (counts)", synthetic_pl));
    assert_eq!(infer_kind("aliquot_3.csv", &pl).kind, Some(PL));
    let ple = read("x.csv", &series("Counts", synthetic_abs));
    assert_eq!(infer_kind("cdse_ple_05min.csv", &ple).kind, Some(PLE));
    assert_eq!(infer_kind("cdse_pl5.csv", &pl).kind, Some(PL));
    // A %T header: absorbance (it will be converted).
    let t = read("t.csv", &series("%T", |nm| 100.0 * 10f64.powf(-synthetic_abs(nm))));
    assert_eq!(infer_kind("t.csv", &t).kind, Some(ABS));
}

#[test]
fn ambiguous_or_contradictory_files_give_no_kind() {
    // A normalised peak (at most 1, an interior maximum): a PL scaled to 1 or an absorbance band;
    // no header, no name: the watcher must ask.
    let peak = read(
        "x.csv",
        &series("20 s", |nm| (-((nm - 540.0) / 14.0).powi(2) / 2.0).exp()),
    );
    let i = infer_kind("sample_3.csv", &peak);
    assert_eq!(i.kind, None);
    assert_eq!(
        i.evidence,
        "neither its header, its name nor the shape of its values says absorbance, PL or PLE"
    );
    // Header says counts, name says absorbance.
    let pl = read("x.csv", &series("Counts", synthetic_pl));
    let i = infer_kind("abs_05min.csv", &pl);
    assert_eq!(i.kind, None);
    assert!(i.evidence.contains("its name suggests absorbance"), "{}", i.evidence);
    // Counts rising to the blue with no word for PL or PLE.
    let ple = read("x.csv", &series("Counts", |nm| (synthetic_abs(nm) * 1000.0).round()));
    let i = infer_kind("sample_3.csv", &ple);
    assert_eq!(i.kind, None);
    assert!(i.evidence.contains("PL or PLE cannot be told"), "{}", i.evidence);
    // The name says absorbance, the values are counts: the door refuses, so no kind.
    let counts = read("x.csv", &series("20 s", synthetic_pl));
    let i = infer_kind("abs_05min.csv", &counts);
    assert_eq!(i.kind, None);
    assert!(
        i.evidence
            .starts_with("its name suggests absorbance, but logging it as absorbance is refused: its values"),
        "{}",
        i.evidence
    );
    // Absurd values give no kind whatever the name.
    let mut raw = read("x.csv", &series("Abs", synthetic_abs));
    raw.y[0] = 1e300;
    assert_eq!(infer_kind("abs_01.csv", &raw).kind, None);
}

// ---- the readers keep what the file says about y ----

#[test]
fn delimited_headers_and_preamble_lines_state_the_quantity() {
    let ys: Vec<f64> = (0..10).map(|i| 0.1 * i as f64).collect();
    for (header, want) in [
        ("Abs", YQuantity::Absorbance),
        ("A", YQuantity::Absorbance),
        ("OD", YQuantity::Absorbance),
        ("Absorbance (a.u.)", YQuantity::Absorbance),
        ("%T", YQuantity::TransmittancePercent),
        ("T", YQuantity::TransmittanceFraction),
        ("Transmittance", YQuantity::TransmittanceFraction),
        ("R", YQuantity::ReflectanceFraction),
        ("%R", YQuantity::ReflectancePercent),
        ("Reflectance", YQuantity::ReflectanceFraction),
        ("Counts", YQuantity::Counts),
        ("CPS", YQuantity::CountsPerSecond),
        ("counts/s", YQuantity::CountsPerSecond),
        ("Intensity (a.u.)", YQuantity::ArbitraryIntensity),
        ("PL", YQuantity::ArbitraryIntensity),
        ("Emission", YQuantity::ArbitraryIntensity),
        ("a.u.", YQuantity::Unknown),
        ("Sample A", YQuantity::Unknown),
        ("20 s", YQuantity::Unknown),
    ] {
        let raw = read("h.csv", &csv("", header, &ys, 1.0));
        assert_eq!(stated(&raw).quantity, want, "header {header:?}");
    }
    // A preamble line speaks when the header does not; a header that names a quantity wins.
    let raw = read("p.csv", &csv("Instrument: bench\nYUnits: Counts\n", "20 s", &ys, 1.0));
    assert_eq!(raw.y_unit.as_deref(), Some("Counts"));
    let raw = read("p.csv", &csv("Y axis = CPS\n", "", &ys, 1.0));
    assert_eq!(stated(&raw).quantity, YQuantity::CountsPerSecond);
    let raw = read("p.csv", &csv("YUnits: counts\n", "Abs", &ys, 1.0));
    assert_eq!(raw.y_unit.as_deref(), Some("Abs"));
    assert!(
        raw.warnings.iter().any(|w| w.contains("the header was used")),
        "{:?}",
        raw.warnings
    );
    // A header time is kept as the file gave it, as before.
    let raw = read("p.csv", &csv("", "20 s", &ys, 1.0));
    assert_eq!(raw.y_unit.as_deref(), Some("20 s"));
}

#[test]
fn file_names_suggest_a_kind_only_when_they_agree() {
    use cuvette::spectra::quantity::kind_from_name;
    for (name, want) in [
        ("abs_05min.csv", Some(ABS)),
        ("abs05min.csv", Some(ABS)),
        ("Run 1 UV-Vis.csv", Some(ABS)),
        ("cdse_uvvis_t5.txt", Some(ABS)),
        ("pl_05min.csv", Some(PL)),
        ("pl5.csv", Some(PL)),
        ("Run 2 FL emission.csv", Some(PL)),
        ("ple_washed.csv", Some(PLE)),
        ("excitation_540nm.csv", Some(PLE)),
        // "sample" holds the letters "ple" but is no PLE.
        ("sample_05min.csv", None),
        ("aliquot_07.csv", None),
        ("abs_and_pl_05min.csv", None),
    ] {
        assert_eq!(kind_from_name(name), want, "{name}");
    }
}
