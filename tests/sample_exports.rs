//! The sample exports under `demo-db/samples/`: every file reads, names the format it was
//! read as, and its first exciton (absorbance) or PL peak lies where the generator put it.
//! The files are invented data written by `demo-db/samples/generate.py` from formulas stated
//! in its opening note; the expected wavelengths below are that note's table (λ1 per sample)
//! and its PL rule λ_PL = λ1 + 15 nm − 4 nm (λ1 − 520 nm)/70 nm. A reader that misreads a
//! column, a decimal mark, an encoding or a unit moves a peak by far more than the
//! tolerances here. The last test rewrites the files with the script and compares bytes, so
//! the committed samples are what the stated formulas give.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;

use common::Lab;
use std::path::{Path, PathBuf};

fn samples() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-db/samples")
}

/// λ1 of the generator's table, nm.
fn first_exciton_nm(sample: &str) -> f64 {
    match sample {
        "2 min" => 520.0,
        "5 min" => 545.0,
        "10 min" => 565.0,
        "20 min" => 580.0,
        "30 min" => 590.0,
        "washed" => 589.0,
        other => panic!("no sample {other}"),
    }
}

fn pl_peak_nm(sample: &str) -> f64 {
    let l1 = first_exciton_nm(sample);
    l1 + 15.0 - 4.0 * (l1 - 520.0) / 70.0
}

/// (file under samples/, the sample it holds, words of the format it must be read as).
const ABSORBANCE: &[(&str, &str, &str)] = &[
    ("growth/abs_02min.csv", "2 min", "csv"),
    ("growth/abs_05min.csv", "5 min", "csv"),
    ("growth/abs_10min.csv", "10 min", "csv"),
    ("growth/abs_20min.csv", "20 min", "csv"),
    ("washed/abs_washed.csv", "washed", "csv"),
    ("arriving/abs_30min.csv", "30 min", "csv"),
    ("formats/plain.csv", "10 min", "csv"),
    ("formats/tab_separated.txt", "5 min", "tab"),
    ("formats/decimal_comma.csv", "20 min", "decimal comma"),
    ("formats/jcamp.jdx", "2 min", "JCAMP-DX"),
    ("formats/markers.txt", "washed", "markers"),
    ("formats/trailing_info.csv", "30 min", "trailing block"),
    ("formats/percent_t.csv", "10 min", "csv"),
    ("formats/energy_ev.csv", "20 min", "csv"),
    ("formats/utf16.txt", "5 min", "UTF-16"),
    ("formats/workbook.xlsx", "20 min", "xlsx"),
    ("formats/workbook.ods", "washed", "ods"),
];

const PHOTOLUMINESCENCE: &[(&str, &str)] = &[
    ("growth/pl_02min.csv", "2 min"),
    ("growth/pl_05min.csv", "5 min"),
    ("growth/pl_10min.csv", "10 min"),
    ("growth/pl_20min.csv", "20 min"),
    ("washed/pl_washed.csv", "washed"),
    ("arriving/pl_30min.csv", "30 min"),
];

fn path_of(rel: &str) -> String {
    samples().join(rel).to_string_lossy().into_owned()
}

#[test]
fn every_absorbance_sample_reads_as_its_format_with_its_first_exciton() {
    let lab = Lab::new();
    for &(rel, sample, format) in ABSORBANCE {
        let file = path_of(rel);
        let read = lab.ok(&["read", &file, "--json"]).json();
        let said = read["format"].as_str().unwrap();
        assert!(said.contains(format), "{rel}: read as {said}, not {format}");
        let a = lab.ok(&["analyze", "--kind", "abs", "--json", &file]).json();
        let nm = a["first_exciton_nm"].as_f64().unwrap();
        let want = first_exciton_nm(sample);
        // The higher transitions and the rising continuum add under 0.5 nm (generate.py's
        // note); noise and the 1 nm grid the rest.
        assert!(
            (nm - want).abs() < 1.5,
            "{rel}: first exciton {nm:.2} nm, generated at {want}"
        );
        assert!(a["warnings"].as_array().unwrap().is_empty(), "{rel}: {}", a["warnings"]);
    }
}

#[test]
fn percent_transmittance_and_energy_axes_are_converted() {
    let lab = Lab::new();
    let t = lab.ok(&["read", &path_of("formats/percent_t.csv"), "--json"]).json();
    assert_eq!(t["y_unit"], "%T");
    let e = lab.ok(&["read", &path_of("formats/energy_ev.csv"), "--json"]).json();
    assert_eq!(e["x_unit"], "ev");
    // `read` shows the file's own axis (1.66 to 3.10 eV); the analysis works in wavelength
    // through λ = hc/E (hc = 1239.841984 eV nm, CODATA 2018), so its first exciton is the
    // generator's 580 nm and not a number near 2.
    let x: Vec<f64> = e["x"].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect();
    assert_eq!((x[0], x[x.len() - 1]), (1.66, 3.10));
    let a = lab
        .ok(&["analyze", "--kind", "abs", "--json", &path_of("formats/energy_ev.csv")])
        .json();
    let nm = a["first_exciton_nm"].as_f64().unwrap();
    assert!((nm - 580.0).abs() < 1.5, "{nm}");
    // %T is turned into absorbance, A = 2 − log10 %T: read as %T, the first exciton would be
    // a transmission minimum's opposite, a maximum of %T far from 565 nm.
    let a = lab
        .ok(&["analyze", "--kind", "abs", "--json", &path_of("formats/percent_t.csv")])
        .json();
    let a_peak = a["first_exciton_abs"].as_f64().unwrap();
    assert!((0.2..0.4).contains(&a_peak), "absorbance at the first exciton {a_peak}");
}

#[test]
fn two_samples_side_by_side_are_named_and_either_can_be_read() {
    let lab = Lab::new();
    let file = path_of("formats/side_by_side.csv");
    let refused = lab.run(&["read", &file, "--json"]);
    assert_ne!(refused.code, 0);
    assert!(
        refused.stderr.contains("'5 min'")
            && refused.stderr.contains("'10 min'")
            && refused.stderr.contains("--column"),
        "{}",
        refused.stderr
    );
    assert_eq!(refused.stderr.trim().lines().count(), 1, "{}", refused.stderr);
    for (column, sample) in [("5 min", "5 min"), ("2", "10 min")] {
        let a = lab
            .ok(&["analyze", "--kind", "abs", "--json", "--column", column, &file])
            .json();
        let nm = a["first_exciton_nm"].as_f64().unwrap();
        let want = first_exciton_nm(sample);
        assert!(
            (nm - want).abs() < 1.5,
            "column {column}: {nm:.2} nm, generated at {want}"
        );
    }
}

#[test]
fn every_pl_sample_has_its_peak_and_no_false_lines() {
    let lab = Lab::new();
    for &(rel, sample) in PHOTOLUMINESCENCE {
        let a = lab.ok(&["analyze", "--kind", "pl", "--json", &path_of(rel)]).json();
        let nm = a["pl_peak_nm"].as_f64().unwrap();
        let want = pl_peak_nm(sample);
        // A Gaussian in energy written against wavelength without the Jacobian: its top in
        // nm is at hc/E0, the local fit over about one FWHM sees the skew (up to ~1.3 nm).
        assert!(
            (nm - want).abs() < 2.0,
            "{rel}: PL peak {nm:.2} nm, generated at {want:.2}"
        );
        // Shot noise on the band's top (σ = √N counts) is not an excitation line.
        assert!(
            a["narrow_lines"].as_array().unwrap().is_empty(),
            "{rel}: {}",
            a["narrow_lines"]
        );
    }
}

#[test]
fn the_generator_writes_exactly_the_committed_files() {
    let out = tempfile::tempdir().unwrap();
    let run = std::process::Command::new("python3")
        .arg(samples().join("generate.py"))
        .arg(out.path())
        .output()
        .expect("python3 is needed to check demo-db/samples (the CI installs it)");
    assert!(run.status.success(), "{}", String::from_utf8_lossy(&run.stderr));
    let mut compared = 0;
    for rel in ABSORBANCE
        .iter()
        .map(|r| r.0)
        .chain(PHOTOLUMINESCENCE.iter().map(|r| r.0))
        .chain(["formats/side_by_side.csv"])
    {
        let made = std::fs::read(out.path().join(rel)).unwrap();
        let kept = std::fs::read(samples().join(rel)).unwrap();
        assert!(made == kept, "{rel}: the committed file is not what generate.py writes");
        compared += 1;
    }
    // Every file the script writes is one of those checked above.
    let listed = String::from_utf8_lossy(&run.stdout)
        .lines()
        .filter(|l| l.contains('/'))
        .count();
    assert_eq!(listed, compared);
}
