//! Issue 13, points 1 and 3 for delimited text: a file of every shape labs export (invented
//! numbers, written here), each read to the right points with the right warnings, and each bad
//! variant refused with its line named; then the real CdSe growth series in
//! /work/shared/opendata/cdse-growth-series (MIT licence; read in place), one spectrum per
//! aliquot column. The values checked are the synthetic inputs themselves: reading must give
//! back exactly what was written.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use cuvette::spectra::quantity::{YQuantity, stated};
use cuvette::spectra::{RawSpectrum, ReadOptions, read_all, read_bytes};
use std::path::PathBuf;

fn opts() -> ReadOptions {
    ReadOptions::default()
}

fn one(name: &str, text: &str) -> RawSpectrum {
    read_bytes(name, text.as_bytes(), &opts()).unwrap_or_else(|e| panic!("{name}: {e}"))
}

fn refused(name: &str, text: &str) -> String {
    read_bytes(name, text.as_bytes(), &opts())
        .err()
        .unwrap_or_else(|| panic!("{name} must be refused"))
        .to_string()
}

fn has_warning(s: &RawSpectrum, part: &str) -> bool {
    s.warnings.iter().any(|w| w.contains(part))
}

/// Twelve invented points: x = 400, 402, ... nm; y = 0.1 + 0.01 i.
fn xs() -> Vec<f64> {
    (0..12).map(|i| 400.0 + 2.0 * f64::from(i)).collect()
}
fn ys() -> Vec<f64> {
    (0..12).map(|i| 0.1 + 0.01 * f64::from(i)).collect()
}
fn body(sep: &str) -> String {
    xs().iter()
        .zip(ys())
        .map(|(x, y)| format!("{x}{sep}{y:.2}\n"))
        .collect()
}

fn same_points(s: &RawSpectrum) {
    assert_eq!(s.x, xs());
    let want = ys();
    assert_eq!(s.y.len(), want.len());
    for (a, b) in s.y.iter().zip(&want) {
        assert!((a - b).abs() < 1e-12, "{a} vs {b}");
    }
}

// ---- header, data, then a trailing block ----

#[test]
fn a_trailing_block_after_the_data_is_recognised() {
    let text = format!(
        "Sample: QD-7\nOperator: invented\nWavelength (nm)\tIntensity (a.u.)\n{}##########\nIntegration time: 100 ms\nScans: 3\nY units: counts\n",
        body("\t")
    );
    let s = one("t.txt", &text);
    same_points(&s);
    assert!(s.format.contains("trailing block"), "{}", s.format);
    assert!(
        has_warning(&s, "4 lines below the data (from line 16) read as a trailing block"),
        "{:?}",
        s.warnings
    );
    // The header names the quantity; the trailing block's y units disagree and are reported.
    assert_eq!(s.y_unit.as_deref(), Some("Intensity (a.u.)"));
    assert!(has_warning(&s, "the file states y as 'counts'"), "{:?}", s.warnings);

    let titled = format!(
        "nm,A\n{}\nExtended information\nInstrument,bench 3\nSlit (nm),2\n",
        body(",")
    );
    let s = one("t.csv", &titled);
    same_points(&s);
    assert!(s.format.contains("trailing block"), "{}", s.format);

    // Bad variant: a word inside the data, above the trailing block.
    let bad = text.replace("406\t0.13", "406\tsaturated");
    assert_eq!(refused("t.txt", &bad), "t.txt line 7: non-numeric cell 'saturated'");
}

#[test]
fn notes_below_the_data_are_not_data() {
    let text = format!("nm,A\n{}\nDiluted 1:10 in toluene\n", body(","));
    let s = one("n.csv", &text);
    same_points(&s);
    assert!(s.format.contains("notes below the data"), "{}", s.format);
    // A row of numbers out past the notes is reported, never silently read or dropped.
    let extra = format!("{text}Blank\n900,0.5\n");
    let s = one("n.csv", &extra);
    same_points(&s);
    assert!(
        has_warning(&s, "line 17: a row of numbers outside the data block"),
        "{:?}",
        s.warnings
    );
    // A line of text wedged between rows of numbers is refused.
    let wedged = text.replace("406,0.13\n", "406,0.13\nlamp change\n");
    assert_eq!(
        refused("n.csv", &wedged),
        "n.csv line 6: non-numeric cell 'lamp change'"
    );
}

// ---- begin/end markers under a long preamble ----

fn framed(data: &str) -> String {
    let mut s = String::from("Instrument settings\n");
    for i in 0..40 {
        s.push_str(&format!("Setting {i}: {}\n", i * 3));
    }
    // Settings lines that look like rows of numbers must not be taken as data.
    s.push_str("Range\t400\t422\nPixels\t12\n1\t2\n");
    s.push_str(">>>>> Begin spectral data <<<<<\n");
    s.push_str(data);
    s.push_str(">>>>> End spectral data <<<<<\n");
    s
}

#[test]
fn data_between_markers_is_read_whatever_the_preamble() {
    let s = one("m.txt", &framed(&body("\t")));
    same_points(&s);
    assert!(s.format.contains("framed by begin/end markers"), "{}", s.format);
    assert!(has_warning(&s, "x unit not stated; taken as nm"));
    // Without the end marker: read to the end, with a warning naming the begin marker's line.
    let open = framed(&body("\t")).replace(">>>>> End spectral data <<<<<\n", "");
    let s = one("m.txt", &open);
    same_points(&s);
    assert!(
        has_warning(&s, "line 45: the data begin marker has no end marker"),
        "{:?}",
        s.warnings
    );
    // Bad variant: a bad cell between the markers, named by its line in the file.
    let bad = framed(&body("\t").replace("404\t0.12", "404\t--"));
    assert_eq!(refused("m.txt", &bad), "m.txt line 48: non-numeric cell '--'");
}

// ---- a spreadsheet saved as CSV ----

#[test]
fn a_spreadsheet_saved_as_csv_reads_as_several_spectra() {
    let mut text = String::from("Wavelength (nm),Sample A,Sample B,,,\n");
    for (i, x) in xs().iter().enumerate() {
        let a = format!("\"{}\"", 0.2 + 0.01 * i as f64);
        // Sample B is two rows shorter: uneven column lengths.
        let b = if i < 10 {
            format!("{}", 0.5 - 0.01 * i as f64)
        } else {
            String::new()
        };
        text.push_str(&format!("{x},{a},{b},,,\n"));
        if i == 5 {
            text.push_str(",,,,,\n");
        }
    }
    text.push_str(",,,,,\n,,,,,\nNotes: measured in toluene,,,,,\n");
    let all = read_all("s.csv", text.as_bytes(), &opts()).unwrap();
    assert_eq!(all.len(), 2);
    assert_eq!(all[0].label.as_deref(), Some("Sample A"));
    assert_eq!(all[1].label.as_deref(), Some("Sample B"));
    assert_eq!(all[0].x, xs());
    assert!((all[0].y[3] - 0.23).abs() < 1e-12);
    assert_eq!(all[1].x.len(), 10);
    assert!((all[1].y[9] - 0.41).abs() < 1e-12);
    let f = &all[0].format;
    assert!(
        f.starts_with("csv (comma, decimal point; quoted numbers; 2 sample columns"),
        "{f}"
    );
    assert!(f.contains("notes below the data"), "{f}");
    assert!(
        has_warning(
            &all[1],
            "column 'Sample B' has 10 values, its x column 'Wavelength (nm)' has 12 (uneven column lengths)"
        ),
        "{:?}",
        all[1].warnings
    );

    // One spectrum without a choice is refused, listing the columns and the flag.
    let e = refused("s.csv", &text);
    assert_eq!(
        e,
        "s.csv: 2 y columns, so several spectra: 1 'Sample A', 2 'Sample B'; choose one with --column NAME|N (or read them all as a series)"
    );
    // --column by name or number.
    for pick in ["sample b", "2"] {
        let o = ReadOptions {
            column: Some(pick.into()),
            ..Default::default()
        };
        let s = read_bytes("s.csv", text.as_bytes(), &o).unwrap();
        assert_eq!(s.label.as_deref(), Some("Sample B"), "{pick}");
    }
    let o = ReadOptions {
        column: Some("Sample C".into()),
        ..Default::default()
    };
    let e = read_bytes("s.csv", text.as_bytes(), &o).unwrap_err().to_string();
    assert_eq!(
        e,
        "s.csv: no y column 'Sample C'; the y columns are 1 'Sample A', 2 'Sample B'"
    );

    // Bad variant: a y value with no x on its row.
    let bad = text.replace("404,\"0.22\"", ",\"0.22\"");
    assert_eq!(
        read_all("s.csv", bad.as_bytes(), &opts()).unwrap_err().to_string(),
        "s.csv line 4: column 'Sample A' has a value but its x column 'Wavelength (nm)' has none"
    );
}

#[test]
fn x_y_column_pairs_read_each_sample_on_its_own_x() {
    let mut text = String::from("Wavelength (nm),QD-1,Wavelength (nm),QD-2\n");
    for i in 0..12 {
        let x2 = if i < 11 {
            format!("{}", 500 + 3 * i)
        } else {
            String::new()
        };
        let y2 = if i < 11 {
            format!("{}", 0.3 + 0.01 * f64::from(i))
        } else {
            String::new()
        };
        text.push_str(&format!("{},{},{x2},{y2}\n", 400 + 2 * i, 0.1 + 0.01 * f64::from(i)));
    }
    let all = read_all("p.csv", text.as_bytes(), &opts()).unwrap();
    assert_eq!(all.len(), 2);
    same_points(&all[0]);
    assert_eq!(all[1].x, (0..11).map(|i| f64::from(500 + 3 * i)).collect::<Vec<_>>());
    assert_eq!(all[1].label.as_deref(), Some("QD-2"));
    assert!(
        all[0].format.contains("x,y column pairs for 2 samples"),
        "{}",
        all[0].format
    );
    // Bad variant: the second sample's x goes back on itself.
    let bad = text.replace(",509,", ",499,");
    let e = read_all("p.csv", bad.as_bytes(), &opts()).unwrap_err().to_string();
    assert_eq!(e, "p.csv line 5: column 'QD-2': x is not monotonic (499 after 506)");
}

// ---- line endings and encodings ----

#[test]
fn cr_only_line_endings_read() {
    let text = format!("nm,A\n{}", body(",")).replace('\n', "\r");
    let s = one("cr.csv", &text);
    same_points(&s);
    assert!(s.format.contains("CR line endings"), "{}", s.format);
    assert!(has_warning(&s, "old CR-only line endings read"));
    let bad = text.replace("410,0.15", "410,0.1.5");
    assert_eq!(refused("cr.csv", &bad), "cr.csv line 7: non-numeric cell '0.1.5'");
}

fn utf16(text: &str, big_endian: bool) -> Vec<u8> {
    let mut v = if big_endian { vec![0xFE, 0xFF] } else { vec![0xFF, 0xFE] };
    for u in text.encode_utf16() {
        v.extend(if big_endian { u.to_be_bytes() } else { u.to_le_bytes() });
    }
    v
}

#[test]
fn utf16_with_a_byte_order_mark_reads() {
    let text = format!("Wavelength (nm)\tAbsorbance\r\n{}", body("\t").replace('\n', "\r\n"));
    for (be, name) in [(false, "UTF-16 LE"), (true, "UTF-16 BE")] {
        let s = read_bytes("u.txt", &utf16(&text, be), &opts()).unwrap();
        same_points(&s);
        assert!(s.format.contains(name), "{}", s.format);
        assert_eq!(s.y_unit.as_deref(), Some("Absorbance"));
        let bad = utf16(&text.replace("402\t0.11", "402\t0.11x"), be);
        let e = read_bytes("u.txt", &bad, &opts()).unwrap_err().to_string();
        assert_eq!(e, "u.txt line 3: non-numeric cell '0.11x'");
    }
}

// ---- decimal comma and thousands separators ----

#[test]
fn a_decimal_comma_reads() {
    let text = format!("Wellenlänge (nm);Extinktion\n{}", body(";").replace('.', ","));
    let s = one("dc.csv", &text);
    same_points(&s);
    assert!(s.format.contains("semicolon, decimal comma"), "{}", s.format);
    assert!(has_warning(&s, "decimal comma read"));
}

#[test]
fn thousands_separators_read_where_they_cannot_be_misread() {
    // Counts with comma thousands in a tab file whose x has decimal points: unambiguous.
    let mut text = String::from("Wavelength (nm)\tCounts\n");
    for i in 0..12 {
        text.push_str(&format!(
            "{}.5\t{}\n",
            500 + i,
            ["980", "1,234", "12,345", "2,001"][i % 4]
        ));
    }
    let s = one("k.txt", &text);
    assert_eq!(s.y[1], 1234.0);
    assert_eq!(s.y[2], 12345.0);
    assert_eq!(s.x[0], 500.5);
    assert!(
        has_warning(&s, "thousands separators read (first on line 3: '1,234')"),
        "{:?}",
        s.warnings
    );
    assert_eq!(stated(&s).quantity, YQuantity::Counts);
    // "1,234.5" and "1,234,567" cannot be misread either.
    let t2 = text.replace("12,345", "1,234,567").replace("\t980", "\t1,000.5");
    let s = one("k.txt", &t2);
    assert_eq!(s.y[2], 1_234_567.0);
    assert_eq!(s.y[0], 1000.5);

    // Bad: nothing in the data says whether the comma is decimal or thousands.
    let bad = text.replace(".5\t", "\t");
    assert_eq!(
        refused("k.txt", &bad),
        "k.txt line 3: '1,234' could be 1.234 (a decimal comma) or 1234 (a thousands separator); nothing else in the data says which"
    );
    // Bad: a decimal-comma file whose counts column holds whole numbers and "1,234".
    let mut dc = String::from("nm;Counts\n");
    for i in 0..12 {
        dc.push_str(&format!("{},5;{}\n", 500 + i, ["980", "1,234", "2,345"][i % 3]));
    }
    assert_eq!(
        refused("dc.csv", &dc),
        "dc.csv line 3: '1,234' could be 1.234 (a decimal comma) or 1234 (a thousands separator): this column also holds whole numbers (line 2), as counts are written"
    );
    // But "1,234" among decimals with commas is a decimal.
    let ok = dc.replace(";980", ";0,980");
    let s = one("dc.csv", &ok);
    assert!((s.y[1] - 1.234).abs() < 1e-12);
    // Bad: a dot in a decimal-comma file, which could be either.
    let dot = ok.replace(";2,345", ";2.345");
    assert_eq!(
        refused("dc.csv", &dot),
        "dc.csv line 4: '2.345' could be 2.345 (a decimal point) or 2345 (a thousands separator) in a file with decimal commas"
    );
    // "1.234,5" in a decimal-comma file cannot be misread.
    let grouped = ok.replace(";2,345", ";1.234,5");
    let s = one("dc.csv", &grouped);
    assert_eq!(s.y[2], 1234.5);
    assert!(has_warning(
        &s,
        "thousands separators read (first on line 4: '1.234,5')"
    ));
}

// ---- quantities and units ----

#[test]
fn the_y_quantity_comes_from_the_header_or_a_metadata_line() {
    let cases = [
        ("Absorbance", YQuantity::Absorbance),
        ("Optical density", YQuantity::Absorbance),
        ("OD", YQuantity::Absorbance),
        ("%T", YQuantity::TransmittancePercent),
        ("Transmittance", YQuantity::TransmittanceFraction),
        ("Reflectance", YQuantity::ReflectanceFraction),
        ("Counts", YQuantity::Counts),
        ("Counts per second", YQuantity::CountsPerSecond),
        ("CPS", YQuantity::CountsPerSecond),
        ("Intensity (a.u.)", YQuantity::ArbitraryIntensity),
    ];
    for (label, want) in cases {
        let s = one("q.csv", &format!("nm,{label}\n{}", body(",")));
        assert_eq!(stated(&s).quantity, want, "header {label}");
        let s = one("q.csv", &format!("Y units: {label}\nnm,Sample 4\n{}", body(",")));
        assert_eq!(stated(&s).quantity, want, "metadata {label}");
        assert_eq!(s.label.as_deref(), Some("Sample 4"));
    }
}

#[test]
fn the_x_unit_comes_from_the_header_a_metadata_line_or_nowhere() {
    for (header, unit) in [
        ("Wavelength (nm)", "nm"),
        ("Energy (eV)", "ev"),
        ("Wavenumber (cm-1)", "cm-1"),
        ("Wavelength [um]", "um"),
        ("Raman shift / 1/cm", "1/cm"),
    ] {
        let s = one("x.csv", &format!("{header},A\n{}", body(",")));
        assert_eq!(s.x_unit, unit, "{header}");
        assert!(!has_warning(&s, "x unit not stated"));
    }
    let s = one("x.csv", &format!("# X units: eV\n# Y units: Abs\n{}", body(",")));
    assert_eq!(s.x_unit, "ev");
    assert_eq!(s.y_unit.as_deref(), Some("Abs"));
    let s = one("x.csv", &body(","));
    assert_eq!(s.x_unit, "nm");
    assert!(has_warning(&s, "x unit not stated; taken as nm"));
}

// ---- not JCAMP-DX ----

#[test]
fn a_markdown_heading_does_not_make_a_file_jcamp() {
    let text = format!("## Results\n\nAbsorbance of run 4 (synthetic)\n\nnm A\n{}", body(" "));
    let s = one("notes.md", &text);
    same_points(&s);
    assert!(s.format.starts_with("delimited text (whitespace"), "{}", s.format);
    // A real JCAMP-DX record still goes to the JCAMP-DX reader (and its errors).
    let e = refused("x.jdx", "##TITLE=t\n##JCAMP-DX=5.01\n##END=\n");
    assert!(!e.contains("rows of numbers"), "{e}");
}

// ---- real published data ----

#[test]
fn the_cdse_growth_series_reads_one_spectrum_per_aliquot() {
    let Some(dir) = common::cdse_series_dir() else { return };
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "csv"))
        .collect();
    files.sort();
    assert_eq!(files.len(), 5);
    for p in &files {
        let bytes = std::fs::read(p).unwrap();
        let name = p.display().to_string();
        // The header line as the file holds it (past a UTF-8 BOM, before CRLF).
        let text = String::from_utf8(bytes.clone()).unwrap();
        let header: Vec<String> = text
            .trim_start_matches('\u{feff}')
            .lines()
            .next()
            .unwrap()
            .trim_end()
            .split(',')
            .map(|c| c.trim().to_string())
            .collect();
        let rows = text.lines().filter(|l| !l.trim().is_empty()).count() - 1;
        let all = read_all(&name, &bytes, &opts()).unwrap();
        assert_eq!(all.len(), header.len() - 1, "{name}");
        for (s, h) in all.iter().zip(&header[1..]) {
            assert_eq!(s.label.as_deref(), Some(h.as_str()), "{name}");
            assert_eq!(s.x.len(), rows, "{name} {h}");
            assert_eq!(s.x_unit, "nm");
        }
        let e = read_bytes(&name, &bytes, &opts()).unwrap_err().to_string();
        assert!(e.contains(&format!("{} y columns", header.len() - 1)), "{e}");
        assert!(e.contains(&format!("1 '{}', 2 '{}'", header[1], header[2])), "{e}");
        assert!(e.contains("--column NAME|N"), "{e}");
    }
}
