//! Tests of the table path on hand-made grids: labelled samples, x,y pairs, a word in the
//! data, units from the header.

use super::units::unit_from_header;
use super::*;

fn n(v: f64) -> Cell {
    Cell::Number(v)
}
fn t(s: &str) -> Cell {
    Cell::Text(s.into())
}

fn grid(rows: Vec<Vec<Cell>>) -> Grid {
    let lines = (1..=rows.len()).collect();
    Grid {
        rows,
        lines,
        metadata: Vec::new(),
    }
}

#[test]
fn two_samples_read_as_two_labelled_spectra() {
    let mut rows = vec![vec![t("Wavelength (nm)"), t("20 s"), t("40 s")]];
    for i in 0..10 {
        rows.push(vec![n(500.0 + f64::from(i)), n(0.1), n(0.2)]);
    }
    let s = spectra_from_grid("g", "sheet", &grid(rows.clone()), &ReadOptions::default()).unwrap();
    assert_eq!(s.len(), 2);
    assert_eq!(s[1].label.as_deref(), Some("40 s"));
    assert_eq!(s[0].x_unit, "nm");
    assert_eq!(s[0].format, "sheet (2 sample columns)");
    let opts = ReadOptions {
        column: Some("40 S".into()),
        ..Default::default()
    };
    let one = spectra_from_grid("g", "sheet", &grid(rows.clone()), &opts).unwrap();
    assert_eq!(one.len(), 1);
    assert_eq!(one[0].y[0], 0.2);
    let opts = ReadOptions {
        column: Some("3".into()),
        ..Default::default()
    };
    let e = spectra_from_grid("g", "sheet", &grid(rows), &opts)
        .unwrap_err()
        .to_string();
    assert_eq!(e, "g: no y column '3'; the y columns are 1 '20 s', 2 '40 s'");
}

#[test]
fn x_y_pairs_each_take_their_own_x() {
    let mut rows = vec![vec![t("nm"), t("A"), t("nm"), t("B")]];
    for i in 0..10 {
        let short = if i < 9 { n(700.0 + f64::from(i)) } else { Cell::Empty };
        let short_y = if i < 9 { n(1.0) } else { Cell::Empty };
        rows.push(vec![n(500.0 + f64::from(i)), n(0.5), short, short_y]);
    }
    let s = spectra_from_grid("g", "sheet", &grid(rows), &ReadOptions::default()).unwrap();
    assert_eq!(s.len(), 2);
    assert_eq!(s[1].x[0], 700.0);
    assert_eq!(s[1].x.len(), 9);
    assert!(s[0].format.contains("x,y column pairs for 2 samples"));
}

#[test]
fn a_word_in_the_data_names_its_row() {
    let mut rows = vec![vec![t("nm"), t("A")]];
    for i in 0..10 {
        rows.push(vec![n(500.0 + f64::from(i)), if i == 4 { t("oops") } else { n(0.1) }]);
    }
    let e = spectra_from_grid("g", "sheet", &grid(rows), &ReadOptions::default())
        .unwrap_err()
        .to_string();
    assert_eq!(e, "g line 6: non-numeric cell 'oops'");
}

#[test]
fn header_units_are_read() {
    assert_eq!(unit_from_header("Raman shift (1/cm)").as_deref(), Some("1/cm"));
    assert_eq!(unit_from_header("Energy [eV]").as_deref(), Some("ev"));
    assert_eq!(unit_from_header("Wavelength (µm)").as_deref(), Some("µm"));
    assert_eq!(unit_from_header("Sample seven"), None);
    assert_eq!(unit_from_header("Wavenumber / cm-1").as_deref(), Some("cm-1"));
}
