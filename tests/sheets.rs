//! Workbooks (.xlsx, .ods) read as spectra: the small invented workbooks in tests/data/sheets/
//! (written once by tests/data/sheets/generate.py; every number in them is synthetic).
//!
//! The generator's series: k(i) = 100 + 5 i (20 - i) for i = 0..20, written as k/1000 (an
//! absorbance-like column) over 400, 410, ..., 600 nm. The tests rebuild the same floats.

#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

use cuvette::spectra::quantity::{self, YQuantity};
use cuvette::spectra::{self, RawSpectrum, ReadOptions, XUnit};

const N: usize = 21;

fn k(i: usize) -> f64 {
    (100 + 5 * i * (20 - i)) as f64
}

fn nm(i: usize) -> f64 {
    (400 + 10 * i) as f64
}

fn bytes(name: &str) -> Vec<u8> {
    let path = format!("{}/tests/data/sheets/{name}", env!("CARGO_MANIFEST_DIR"));
    std::fs::read(&path).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn read(name: &str, opts: &ReadOptions) -> cuvette::Result<Vec<RawSpectrum>> {
    spectra::read_all(name, &bytes(name), opts)
}

fn read_ok(name: &str, opts: &ReadOptions) -> Vec<RawSpectrum> {
    read(name, opts).unwrap_or_else(|e| panic!("{name}: {e}"))
}

fn refusal(name: &str, opts: &ReadOptions) -> String {
    match read(name, opts) {
        Ok(s) => panic!("{name}: read {} spectra, expected a refusal", s.len()),
        Err(e) => {
            let m = e.to_string();
            assert!(!m.contains('\n'), "one line: {m}");
            m
        }
    }
}

fn sheet(s: &str) -> ReadOptions {
    ReadOptions {
        sheet: Some(s.into()),
        ..ReadOptions::default()
    }
}

fn ys(scale: f64) -> Vec<f64> {
    (0..N).map(|i| scale * k(i) / 1000.0).collect()
}

fn xs() -> Vec<f64> {
    (0..N).map(nm).collect()
}

#[test]
fn one_sample_reads_to_its_points_in_both_formats() {
    for (file, kind) in [("one_sample.xlsx", "xlsx"), ("one_sample.ods", "ods")] {
        let all = read_ok(file, &ReadOptions::default());
        assert_eq!(all.len(), 1, "{file}");
        let s = &all[0];
        assert_eq!(s.x, xs(), "{file}");
        assert_eq!(s.y, ys(1.0), "{file}");
        assert_eq!(XUnit::parse(&s.x_unit), Some(XUnit::Nanometre), "{file}: {}", s.x_unit);
        assert!(s.format.starts_with(kind), "{file}: {}", s.format);
        assert!(s.format.contains("sheet 'Sheet1'"), "{file}: {}", s.format);
        // read_bytes takes a one-spectrum workbook as well.
        let one = spectra::read_bytes(file, &bytes(file), &ReadOptions::default()).expect("one spectrum");
        assert_eq!(one.y, ys(1.0));
        assert!(s.warnings.is_empty(), "{file}: {:?}", s.warnings);
    }
}

#[test]
fn samples_side_by_side_read_as_one_spectrum_each_with_its_header() {
    for file in ["side_by_side.xlsx", "side_by_side.ods"] {
        let all = read_ok(file, &ReadOptions::default());
        let labels: Vec<Option<&str>> = all.iter().map(|s| s.label.as_deref()).collect();
        assert_eq!(labels, vec![Some("2 min"), Some("5 min"), Some("10 min")], "{file}");
        for (j, s) in all.iter().enumerate() {
            assert_eq!(s.x, xs(), "{file}");
            assert_eq!(s.y, ys((j + 1) as f64), "{file} column {}", j + 1);
        }
        // One spectrum asked for without a column: refused, listing the columns.
        let e = spectra::read_bytes(file, &bytes(file), &ReadOptions::default())
            .map(|_| ())
            .expect_err("several spectra");
        assert!(e.to_string().contains("--column"), "{e}");
        // --column picks one, as for CSV.
        let opts = ReadOptions {
            column: Some("5 min".into()),
            ..ReadOptions::default()
        };
        let five = spectra::read_bytes(file, &bytes(file), &opts).expect("column by name");
        assert_eq!(five.y, ys(2.0));
    }
}

#[test]
fn x_y_pairs_per_sample_each_keep_their_own_x() {
    for file in ["xy_pairs.xlsx", "xy_pairs.ods"] {
        let all = read_ok(file, &ReadOptions::default());
        assert_eq!(all.len(), 2, "{file}");
        assert_eq!(all[0].label.as_deref(), Some("QD-A"));
        assert_eq!(all[0].x, xs());
        assert_eq!(all[0].y, ys(1.0));
        // QD-B: 15 points on its own grid, 405..545 nm, y = k/500 (the shorter column ends early).
        assert_eq!(all[1].label.as_deref(), Some("QD-B"));
        let x_b: Vec<f64> = (0..15).map(|i| (405 + 10 * i) as f64).collect();
        let y_b: Vec<f64> = (0..15).map(|i| k(i) / 500.0).collect();
        assert_eq!(all[1].x, x_b, "{file}");
        assert_eq!(all[1].y, y_b, "{file}");
        assert!(all[0].format.contains("pairs"), "{}", all[0].format);
    }
}

#[test]
fn a_header_with_units_gives_the_x_and_y_units() {
    for file in ["units_header.xlsx", "units_header.ods"] {
        let all = read_ok(file, &ReadOptions::default());
        assert_eq!(all.len(), 1, "{file}");
        let s = &all[0];
        assert_eq!(
            XUnit::parse(&s.x_unit),
            Some(XUnit::ElectronVolt),
            "{file}: {}",
            s.x_unit
        );
        assert_eq!(
            quantity::stated(s).quantity,
            YQuantity::Counts,
            "{file}: {:?}",
            s.y_unit
        );
        // 2.5 - 0.01 i, rounded to two places by the generator, then counts k(i) * 10.
        assert_eq!(s.x.len(), N);
        assert!(
            (s.x[0] - 2.5).abs() < 1e-12 && (s.x[20] - 2.3).abs() < 1e-12,
            "{:?}",
            s.x
        );
        let y: Vec<f64> = (0..N).map(|i| k(i) * 10.0).collect();
        assert_eq!(s.y, y, "{file}");
    }
}

#[test]
fn notes_under_the_data_are_not_read_as_points() {
    for file in ["notes_below.xlsx", "notes_below.ods"] {
        let all = read_ok(file, &ReadOptions::default());
        assert_eq!(all.len(), 1, "{file}");
        assert_eq!(all[0].x, xs(), "{file}");
        assert_eq!(all[0].y, ys(1.0), "{file}");
        // Sheet rows are called rows: the notes start at row 24 (data rows 2-22, an empty 23).
        let w = all[0].warnings.join("; ");
        assert!(w.contains("row 24") && !w.contains("line"), "{file}: {w}");
    }
}

#[test]
fn the_one_sheet_of_numbers_is_found_behind_a_cover_sheet() {
    for file in ["second_sheet.xlsx", "second_sheet.ods"] {
        let all = read_ok(file, &ReadOptions::default());
        assert_eq!(all.len(), 1);
        assert!(all[0].format.contains("sheet 'Data'"), "{}", all[0].format);
        assert_eq!(all[0].y, ys(1.0));
        // Asked for by name or number, the same sheet.
        assert_eq!(read_ok(file, &sheet("Data"))[0].y, ys(1.0));
        assert_eq!(read_ok(file, &sheet("2"))[0].y, ys(1.0));
        // The cover sheet, asked for, has no spectrum: refused, naming the sheet.
        let m = refusal(file, &sheet("Cover"));
        assert!(m.contains("sheet 'Cover'"), "{m}");
    }
}

#[test]
fn two_sheets_of_data_need_a_choice_and_the_message_lists_them() {
    for file in ["two_runs.xlsx", "two_runs.ods"] {
        let m = refusal(file, &ReadOptions::default());
        assert!(m.contains("1 'Run 1'") && m.contains("2 'Run 2'"), "{m}");
        assert!(m.contains("--sheet"), "{m}");
        assert_eq!(read_ok(file, &sheet("Run 2"))[0].y, ys(2.0));
        assert_eq!(
            read_ok(file, &sheet("run 2"))[0].y,
            ys(2.0),
            "names compare without case"
        );
        assert_eq!(read_ok(file, &sheet("1"))[0].y, ys(1.0));
        let m = refusal(file, &sheet("Run 3"));
        assert!(m.contains("no sheet 'Run 3'") && m.contains("2 'Run 2'"), "{m}");
        let m = refusal(file, &sheet("3"));
        assert!(m.contains("no sheet '3'"), "{m}");
    }
}

#[test]
fn a_formula_error_in_the_data_is_refused_with_its_sheet_and_row() {
    let m = refusal("formula_error.xlsx", &ReadOptions::default());
    // The generator put #DIV/0! in B10 (the ninth data row under the header).
    assert!(m.contains("sheet 'Sheet1' row 10: "), "{m}");
    assert!(m.contains("B10") && m.contains("#DIV/0!"), "{m}");
}

#[test]
fn a_zip_that_is_no_workbook_is_refused() {
    let m = refusal("not_a_workbook.xlsx", &ReadOptions::default());
    assert!(m.contains("not a workbook"), "{m}");
}

#[test]
fn a_truncated_workbook_is_refused_not_misread() {
    let b = bytes("one_sample.xlsx");
    let cut = &b[..b.len() / 2];
    let e = spectra::read_all("cut.xlsx", cut, &ReadOptions::default())
        .map(|_| ())
        .expect_err("truncated");
    let m = e.to_string();
    assert!(m.starts_with("cut.xlsx: "), "{m}");
    assert!(!m.contains('\n'), "{m}");
}

#[test]
fn password_protected_workbooks_are_refused() {
    for file in ["encrypted.xlsx", "encrypted.ods"] {
        let m = refusal(file, &ReadOptions::default());
        assert!(m.contains("password-protected"), "{file}: {m}");
    }
}

#[test]
fn an_empty_workbook_is_refused() {
    let m = refusal("empty.xlsx", &ReadOptions::default());
    assert!(m.contains("empty"), "{m}");
    let m = refusal("empty.xlsx", &sheet("Sheet1"));
    assert!(m.contains("sheet 'Sheet1'") && m.contains("empty"), "{m}");
}

#[test]
fn a_workbook_without_numbers_is_refused_listing_its_sheets() {
    let m = refusal("no_numbers.xlsx", &ReadOptions::default());
    assert!(m.contains("no sheet holds a column"), "{m}");
    assert!(m.contains("1 'Cover'") && m.contains("2 'Plan'"), "{m}");
}

#[test]
fn an_old_binary_office_file_is_refused_with_what_to_do() {
    // An OLE compound-file header with nothing in it: not an encrypted xlsx, not readable.
    let mut b = vec![0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];
    b.resize(512, 0);
    let e = spectra::read_all("old.xls", &b, &ReadOptions::default())
        .map(|_| ())
        .expect_err("ole");
    assert!(e.to_string().contains("save it as .xlsx"), "{e}");
}

#[test]
fn a_word_in_the_data_is_refused_with_its_sheet_and_row() {
    let m = refusal("word_in_data.xlsx", &ReadOptions::default());
    // The generator typed "see notes" into B12.
    assert!(m.contains("sheet 'Sheet1' row 12"), "{m}");
    assert!(!m.contains("line"), "{m}");
}

#[test]
fn repeated_cells_that_would_fill_memory_are_refused_before_they_are_expanded() {
    // repeated_cells.ods: under 1 kB standing for 96 million number cells. calamine expands every
    // ods sheet as it opens the file (about 6 GB for this one, measured by hand on the code before
    // this check); the repeats are counted first and the file refused.
    assert!(bytes("repeated_cells.ods").len() < 2_000);
    let m = refusal("repeated_cells.ods", &ReadOptions::default());
    assert!(m.contains("sheet 'Huge'") && m.contains("spans more than"), "{m}");
}

#[test]
fn empty_repeated_cells_around_the_data_cost_nothing() {
    // empty_repeats.ods: the spectrum, then a million formatted empty rows of 1,024 columns.
    let all = read_ok("empty_repeats.ods", &ReadOptions::default());
    assert_eq!(all.len(), 1);
    assert_eq!(all[0].x, xs());
    assert_eq!(all[0].y, ys(1.0));
}
