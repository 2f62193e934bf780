//! Tests of the delimited reader on small texts: each delimiter, preamble and header, a bad
//! cell's line, the number forms, line endings, markers. The property tests that hold the
//! one-pass paths to the general ones are in `agree`.

use super::cells::Delim;
use super::lines::{Endings, split_lines};
use super::numbers::{Num, decimal_at, decimal_prefix, fast_decimal, parse_num};
use super::rows::{Oddities, TextRows, marker};
use super::*;

/// What the one-pass reading and the general walk make of one text, each as one string
/// (the spectra with the bits of every value, or the error): equal strings are the same
/// reading to the last bit.
fn fast_and_general(text: &str) -> (String, String) {
    let show = |r: Result<Vec<RawSpectrum>>| match r {
        Ok(v) => format!(
            "{:?}",
            v.iter()
                .map(|s| (s, s.x.iter().chain(&s.y).map(|v| v.to_bits()).collect::<Vec<_>>()))
                .collect::<Vec<_>>()
        ),
        Err(e) => e.to_string(),
    };
    (
        show(read_text("f.csv", text, None, &opts(), true)),
        show(read_text("f.csv", text, None, &opts(), false)),
    )
}

fn opts() -> ReadOptions {
    ReadOptions::default()
}

fn ramp(sep: &str, dc: bool) -> String {
    (0..10)
        .map(|i| {
            let x = format!("{}", 400 + i);
            let y = format!("{:.3}", 0.1 * i as f64);
            let y = if dc { y.replace('.', ",") } else { y };
            format!("{x}{sep}{y}\n")
        })
        .collect()
}

#[test]
fn reads_each_delimiter() {
    for (sep, dc) in [
        (",", false),
        ("\t", false),
        (";", false),
        ("   ", false),
        (";", true),
        ("\t", true),
    ] {
        let s = read("t", &format!("Wavelength (nm){sep}A\n{}", ramp(sep, dc)), &opts()).unwrap();
        assert_eq!(s.x.len(), 10, "sep {sep:?}");
        assert!((s.y[3] - 0.3).abs() < 1e-12, "sep {sep:?} dc {dc}");
        assert_eq!(s.x_unit, "nm");
    }
}

#[test]
fn preamble_and_header_are_skipped() {
    let text = format!(
        "Instrument: bench\nDate: 2026-01-01\n\nEnergy (eV),Abs\n{}",
        ramp(",", false)
    );
    let s = read("t", &text, &opts()).unwrap();
    assert_eq!(s.x_unit, "ev");
    assert_eq!(s.y_unit.as_deref(), Some("Abs"));
}

#[test]
fn bad_cell_names_its_line() {
    let text = "nm,A\n400,0.1\n401,0.2\n402,oops\n403,0.3\n";
    let e = read("f.csv", text, &opts()).unwrap_err().to_string();
    assert_eq!(e, "f.csv line 4: non-numeric cell 'oops'");
}

#[test]
fn numbers_read_each_way() {
    assert_eq!(parse_num("0.5", false), Num::Value(0.5));
    assert_eq!(parse_num("\"0.5\"", false), Num::Value(0.5));
    assert_eq!(parse_num("0,5", true), Num::Value(0.5));
    assert_eq!(parse_num("1,234.5", false), Num::Grouped(1234.5));
    assert_eq!(parse_num("1,234,567", false), Num::Grouped(1_234_567.0));
    assert_eq!(parse_num("1,234", false), Num::CommaGroup(1234.0));
    assert_eq!(parse_num("0,234", false), Num::Text);
    assert_eq!(parse_num("1.234,5", true), Num::Grouped(1234.5));
    assert_eq!(parse_num("1.234", true), Num::DotGroup);
    assert_eq!(parse_num("1,234", true), Num::CommaGroupLike(1.234));
    assert_eq!(parse_num("0,234", true), Num::Value(0.234));
    assert_eq!(parse_num("1e-3", true), Num::Value(0.001));
    assert_eq!(parse_num("12,3456", false), Num::Text);
}

#[test]
fn the_fast_path_gives_what_str_parse_gives() {
    // Deterministic pseudo-random decimals of every length the fast path takes and beyond.
    let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
    for _ in 0..200_000 {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        let digits = (state >> 60) as usize + 1;
        let point = (state >> 40) as usize % (digits + 1);
        let mut s = String::new();
        if state & 1 == 1 {
            s.push('-');
        }
        let mut r = state;
        for i in 0..digits {
            if i == point {
                s.push('.');
            }
            r = r.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            s.push(char::from(b'0' + (r >> 59) as u8 % 10));
        }
        let want: f64 = s.parse().unwrap();
        if let Some(got) = fast_decimal(s.as_bytes(), b'.') {
            assert_eq!(got.to_bits(), want.to_bits(), "{s}");
        }
    }
    assert_eq!(fast_decimal(b"599.9901733", b'.'), Some(599.9901733));
    assert_eq!(fast_decimal(b"1e3", b'.'), None);
    assert_eq!(fast_decimal(b"-", b'.'), None);
    assert_eq!(fast_decimal(b"1.2.3", b'.'), None);
}

#[test]
fn lines_end_any_way() {
    let (spans, e) = split_lines("a\rb\r\nc\nd");
    assert_eq!(spans.len(), 4);
    assert_eq!((e.cr, e.crlf, e.lf), (1, 1, 1));
    let (spans, e) = split_lines("a\r\nb\r\n\r\nc\r");
    assert_eq!(spans, vec![(0, 1), (3, 4), (6, 6), (8, 9)]);
    assert_eq!((e.cr, e.crlf, e.lf), (0, 4, 0));
    let (spans, e) = split_lines("a\rb\r");
    assert_eq!(spans, vec![(0, 1), (2, 3)]);
    assert_eq!(e.cr, 2);
}

#[test]
fn markers_are_recognised() {
    assert_eq!(marker(">>>>>Begin Spectral Data<<<<<"), Some(true));
    assert_eq!(marker("[End of Data]"), Some(false));
    assert_eq!(marker("Data points: 601"), None);
    assert_eq!(marker("400,0.5"), None);
}

mod agree;
