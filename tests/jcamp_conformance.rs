//! JCAMP-DX conformance (issue 13, point 4): every shape real exports take, as invented test
//! files in tests/data/jcamp/ or written here, each read to the right points with the right
//! warnings, and the bad variants refused with their line named.
//!
//! The expected points are decoded by hand from the files by the rules of McDonald & Wilks,
//! Appl. Spectrosc. 42, 151 (1988) (ASDF characters, abscissae from FIRSTX, LASTX and NPOINTS,
//! the DIF Y-check) and of the 5.01 revision (link blocks, NTUPLES; Lampen et al., IUPAC
//! recommendations, 1999); the rule citations are from memory. All numbers are synthetic.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

use cuvette::spectra::jcamp::{MAX_FILE_POINTS, read_blocks, read_blocks_labelled};
use cuvette::spectra::{RawSpectrum, ReadOptions, read_bytes};

fn read(text: &str) -> cuvette::Result<RawSpectrum> {
    read_bytes("t.jdx", text.as_bytes(), &ReadOptions::default())
}

fn read_block(text: &str, block: &str) -> cuvette::Result<RawSpectrum> {
    read_bytes(
        "t.jdx",
        text.as_bytes(),
        &ReadOptions {
            block: Some(block.into()),
            ..Default::default()
        },
    )
}

fn err(r: cuvette::Result<RawSpectrum>) -> String {
    let e = r.expect_err("must be refused").to_string();
    assert!(!e.contains('\n'), "one line: {e}");
    e
}

fn close(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(p, q)| (p - q).abs() < 1e-9 * q.abs().max(1.0))
}

fn warned(s: &RawSpectrum, what: &str) -> bool {
    s.warnings.iter().any(|w| w.contains(what))
}

fn check<'a>(s: &'a RawSpectrum, name: &str) -> &'a cuvette::spectra::Check {
    s.checks
        .iter()
        .find(|c| c.name == name)
        .unwrap_or_else(|| panic!("no {name} check in {:?}", s.checks))
}

const ROUNDED: &str = include_str!("data/jcamp/rounded_steps.jdx");
const MIXED: &str = include_str!("data/jcamp/mixed_forms.jdx");
const REPEATED: &str = include_str!("data/jcamp/repeated_points.jdx");
const LINK: &str = include_str!("data/jcamp/link_two_spectra.jdx");
const NTUPLES: &str = include_str!("data/jcamp/uv_ntuples.jdx");
const AFFN: &str = include_str!("data/affn.jdx");

#[test]
fn rounded_deltax_and_rounded_line_abscissae_pass_their_checks() {
    // Step (503-500)/(10-1) = 1/3 nm; DELTAX=0.33 is that step rounded to the digits written,
    // and the lines give 501.3 and 502.7 for 501.333... and 502.666... (within half a step).
    let s = read(ROUNDED).unwrap();
    let want_x: Vec<f64> = (0..10).map(|i| 500.0 + i as f64 / 3.0).collect();
    let want_y: Vec<f64> = (0..10).map(|i| 0.2 + 0.01 * i as f64).collect();
    assert!(close(&s.x, &want_x), "{:?}", s.x);
    assert!(close(&s.y, &want_y), "{:?}", s.y);
    assert!(check(&s, "DELTAX").passed);
    assert!(check(&s, "FIRSTY").passed);
    assert!(s.checks.iter().all(|c| c.passed), "{:?}", s.checks);
    assert!(s.warnings.is_empty(), "{:?}", s.warnings);
    // A line abscissa one whole step off names the wrong point: refused on its line.
    let e = err(read(&ROUNDED.replace("501.3 240", "501.7 240")));
    assert!(e.starts_with("t.jdx line 17: abscissa check failed"), "{e}");
}

#[test]
fn a_deltax_beyond_its_rounding_is_warned_about_and_the_step_is_derived() {
    let s = read(&ROUNDED.replace("##DELTAX=0.33", "##DELTAX=0.35")).unwrap();
    assert!((s.x[9] - 503.0).abs() < 1e-9);
    assert!(!check(&s, "DELTAX").passed);
    assert!(warned(&s, "line 12: ##DELTAX=0.35 disagrees"), "{:?}", s.warnings);
    // Without LASTX the written DELTAX is the step, said to be possibly rounded; the lines still
    // check it (0.33 * 4 = 1.32 puts the second line within half a step of 501.3).
    let s = read(&ROUNDED.replace("##LASTX=503\n", "")).unwrap();
    assert!((s.x[9] - (500.0 + 9.0 * 0.33)).abs() < 1e-9);
    assert!(warned(&s, "no ##LASTX="), "{:?}", s.warnings);
}

#[test]
fn line_abscissae_coarser_than_the_step_read_with_a_warning() {
    // Step 0.5 nm but the lines' X written to whole nm (the writer rounded 402.5 to 403):
    // the check can only allow half a step plus half a unit, and says it is weak.
    let text = "##TITLE=coarse\n##JCAMP-DX=5.01\n##XUNITS=NANOMETERS\n##YUNITS=ABSORBANCE\n##FIRSTX=400\n##LASTX=404.5\n##NPOINTS=10\n##XYDATA=(X++(Y..Y))\n400 1 2 3 4 5\n403 6 7 8 9 10\n##END=\n";
    let s = read(text).unwrap();
    assert_eq!(s.x[5], 402.5);
    assert_eq!(s.y, (1..=10).map(f64::from).collect::<Vec<_>>());
    assert!(warned(&s, "more coarsely than the step"), "{:?}", s.warnings);
}

#[test]
fn every_compressed_form_and_forms_mixed_on_one_line_decode() {
    // 600 100+107+114 121   AFFN then PAC: 100 107 114 121
    // 604A21TA30A40         SQZ, DUP (T = twice): 121 121 130 140
    // 608A50%TJ0            SQZ, DIF 0, DUP of the DIF, DIF +10: 150 150 150 160
    // 611A60J0J0J0J0        Y-check 160 (point 611), then 170 180 190 200
    // 615B00                Y-check 200
    let s = read(MIXED).unwrap();
    let want = [
        100., 107., 114., 121., 121., 121., 130., 140., 150., 150., 150., 160., 170., 180., 190., 200.,
    ];
    assert_eq!(s.y, want);
    assert_eq!(s.x, (600..=615).map(f64::from).collect::<Vec<_>>());
    assert!(s.format.contains("AFFN PAC SQZ DIF DUP"), "{}", s.format);
    assert_eq!(check(&s, "DIF Y-check").detail, "2 line-end ordinates verified");
    assert_eq!(s.y_unit.as_deref(), Some("COUNTS"));
    assert!(s.warnings.is_empty(), "{:?}", s.warnings);
    // A Y-check that does not repeat the last ordinate: refused on its line.
    let e = err(read(&MIXED.replace("611A60J0", "611A61J0")));
    assert_eq!(
        e,
        "t.jdx line 18: DIF Y-check failed: line starts with 161, previous line ended with 160"
    );
    // A character no ASDF form uses.
    let e = err(read(&MIXED.replace("604A21TA30A40", "604A21TA3#0A40")));
    assert!(e.starts_with("t.jdx line 16: unexpected character '#'"), "{e}");
    // A repeat count with nothing before it.
    let e = err(read(&MIXED.replace("604A21TA30A40", "604TA21A30A40")));
    assert!(
        e.starts_with("t.jdx line 16: a DUP count with nothing to repeat"),
        "{e}"
    );
}

#[test]
fn a_line_after_dif_without_its_y_check_reads_with_a_warning() {
    // The second line starts at the next point (612) instead of repeating 611.
    let text = MIXED.replace("611A60J0J0J0J0\n615B00\n", "612A70J0J0J0\n615B00\n");
    let s = read(&text).unwrap();
    assert_eq!(s.y[12..], [170., 180., 190., 200.]);
    assert!(warned(&s, "no Y-check: line 18"), "{:?}", s.warnings);
}

#[test]
fn a_repeated_last_point_is_read_once_and_a_conflicting_one_refused() {
    // Each AFFN line repeats the point that ended the line before (403 and 406): ten points.
    let s = read(REPEATED).unwrap();
    assert_eq!(s.x, (400..=409).map(f64::from).collect::<Vec<_>>());
    assert!(
        close(&s.y, &(10..=19).map(|v| v as f64 * 0.01).collect::<Vec<_>>()),
        "{:?}",
        s.y
    );
    assert!(warned(&s, "repeated points: line 12"), "{:?}", s.warnings);
    assert!(check(&s, "abscissa").detail.contains("2 repeated points read once"));
    // The same abscissa with another ordinate: which one is meant cannot be told.
    let e = err(read(&REPEATED.replace("403 13 14", "403 99 14")));
    assert!(
        e.starts_with("t.jdx line 12: line starts at x = 403, the abscissa of point 4 already read"),
        "{e}"
    );
    // The DIF Y-check repeat is not a duplicate: difdup.jdx has four and reads 20 points.
    let s = read(include_str!("data/difdup.jdx")).unwrap();
    assert_eq!(s.x.len(), 20);
    assert!(!warned(&s, "repeated"), "{:?}", s.warnings);
}

#[test]
fn peak_tables_read_as_stick_spectra() {
    let s = read(include_str!("data/jcamp/peaks_xy.jdx")).unwrap();
    assert_eq!(s.x, [512.5, 530.0, 547.5, 565.0, 582.5, 600.0, 617.5, 635.0]);
    assert_eq!(s.y, [1200., 3400., 9100., 15000., 8800., 2100., 640., 90.]);
    assert!(s.format.contains("PEAK TABLE (XY..XY)"), "{}", s.format);
    assert!(warned(&s, "a peak table"), "{:?}", s.warnings);
    assert!(check(&s, "NPOINTS").passed);
    let s = read(include_str!("data/jcamp/peaks_xyw.jdx")).unwrap();
    assert_eq!(s.x, [350., 400., 450., 500., 550., 575., 590., 610.]);
    assert!(
        close(&s.y, &[0.91, 0.62, 0.48, 0.39, 0.30, 0.52, 0.61, 0.15]),
        "{:?}",
        s.y
    );
    assert!(warned(&s, "(peak width W) is not kept"), "{:?}", s.warnings);
    // A group missing its width: which value belongs to which peak is in doubt.
    let bad = include_str!("data/jcamp/peaks_xyw.jdx").replace("450, 480, 14;", "450, 480;");
    let e = err(read(&bad));
    assert_eq!(
        e,
        "t.jdx line 10: PEAK TABLE line holds a group of 2 values where the form has 3"
    );
    // A count that disagrees with the table.
    let bad = include_str!("data/jcamp/peaks_xy.jdx").replace("##NPOINTS=8", "##NPOINTS=9");
    let e = err(read(&bad));
    assert!(
        e.starts_with("t.jdx line 8: inconsistent: ##NPOINTS=9 but 8 points in PEAK TABLE"),
        "{e}"
    );
}

#[test]
fn xypoints_leave_out_a_missing_ordinate_and_read_a_repeat_once() {
    let s = read(include_str!("data/jcamp/xypoints_odd.jdx")).unwrap();
    // XFACTOR=0.001: x in micrometres as the file states; YFACTOR=0.0001.
    assert!(close(&s.x, &[0.4, 0.41, 0.43, 0.45, 0.48, 0.5, 0.54, 0.6]), "{:?}", s.x);
    assert!(close(&s.y, &[0.9, 0.88, 0.85, 0.8, 0.76, 0.71, 0.66, 0.6]), "{:?}", s.y);
    assert_eq!(s.x_unit, "MICROMETERS");
    assert_eq!(s.y_unit.as_deref(), Some("TRANSMITTANCE"));
    assert!(warned(&s, "missing ordinates: line 11"), "{:?}", s.warnings);
    assert!(warned(&s, "repeated points: line 13"), "{:?}", s.warnings);
    let bad = include_str!("data/jcamp/xypoints_odd.jdx").replace("430 8500\n430 8500", "430 8500\n430 8400");
    let e = err(read(&bad));
    assert!(e.starts_with("t.jdx line 13: two ordinates for x = 0.43"), "{e}");
}

#[test]
fn a_form_with_a_missing_parenthesis_reads_with_a_warning() {
    let s = read(&AFFN.replace("##XYDATA=(X++(Y..Y))", "##XYDATA=(X++(Y..Y)")).unwrap();
    assert_eq!(s.x.len(), 20);
    assert!(
        warned(&s, "line 14: ##XYDATA= form written '(X++(Y..Y)', read as (X++(Y..Y))"),
        "{:?}",
        s.warnings
    );
    let s = read(&AFFN.replace("##XYDATA=(X++(Y..Y))", "##XYDATA=X++(Y..Y))")).unwrap();
    assert_eq!(s.x.len(), 20);
    // A form that names no shape the standard has is refused on its line.
    let e = err(read(&AFFN.replace("##XYDATA=(X++(Y..Y))", "##XYDATA=(X++(Y..Z))")));
    assert_eq!(e, "t.jdx line 14: unsupported XYDATA form '(X++(Y..Z))'");
}

#[test]
fn several_spectra_are_listed_never_read_as_the_first() {
    let e = err(read(LINK));
    assert_eq!(
        e,
        "t.jdx: the file holds 2 spectra: 1 'aliquot 7 absorbance', 2 'aliquot 7 emission'; choose one with --block N|TITLE"
    );
    let abs = read_block(LINK, "1").unwrap();
    assert_eq!(abs.title.as_deref(), Some("aliquot 7 absorbance"));
    assert!(
        close(&abs.y, &[0.31, 0.33, 0.36, 0.40, 0.43, 0.41, 0.38, 0.35]),
        "{:?}",
        abs.y
    );
    let pl = read_block(LINK, "aliquot 7 EMISSION").unwrap();
    assert_eq!(pl.x, [560., 562., 564., 566., 568., 570., 572., 574.]);
    assert_eq!(pl.y_unit.as_deref(), Some("COUNTS"));
    // The data type is carried as a check and in the format.
    assert_eq!(
        check(&pl, "DATA TYPE").detail,
        "FLUORESCENCE SPECTRUM (as ##DATA TYPE= states)"
    );
    assert!(
        pl.format.contains("FLUORESCENCE SPECTRUM; block 4 of 4"),
        "{}",
        pl.format
    );
    let e = err(read_block(LINK, "3"));
    assert!(e.starts_with("t.jdx: block 3 asked for; the file has 2 spectra"), "{e}");
    let e = err(read_block(LINK, "washed"));
    assert!(
        e.contains("no block titled 'washed'; the file holds: 1 'aliquot 7 absorbance'"),
        "{e}"
    );
    // Every spectrum, each with its block title as label.
    let all = read_blocks_labelled("t.jdx", LINK, &ReadOptions::default()).unwrap();
    let labels: Vec<&str> = all.iter().map(|(l, _)| l.as_str()).collect();
    assert_eq!(labels, ["aliquot 7 absorbance", "aliquot 7 emission"]);
    assert_eq!(all[1].1.y, pl.y);
}

#[test]
fn a_link_file_with_one_spectrum_reads_it_and_a_wrong_block_count_is_warned() {
    let one = LINK.replace("##DATA TYPE=FLUORESCENCE SPECTRUM", "##DATA TYPE=INFORMATION");
    let cut = one.find("##XYDATA=(X++(Y..Y))\n560").unwrap();
    let one = format!("{}##END=\n##END=\n", &one[..cut]);
    let s = read(&one).unwrap();
    assert_eq!(s.title.as_deref(), Some("aliquot 7 absorbance"));
    assert!(!warned(&s, "##BLOCKS="), "{:?}", s.warnings);
    let s = read_block(&LINK.replace("##BLOCKS=3", "##BLOCKS=4"), "1").unwrap();
    assert!(warned(&s, "line 4: ##BLOCKS=4 but the link block"), "{:?}", s.warnings);
    // A block left open is a truncated file, named.
    let e = err(read_block(
        &LINK.replacen("##END=\n##TITLE=aliquot 7 emission", "##TITLE=aliquot 7 emission", 1),
        "1",
    ));
    assert!(
        e.contains("truncated JCAMP-DX file: the block 'aliquot 7 absorbance'"),
        "{e}"
    );
}

#[test]
fn ntuples_pages_read_as_spectra_picked_by_page() {
    let e = err(read(NTUPLES));
    assert!(
        e.contains("2 spectra: 1 'growth kinetics, two scans (synthetic), page T=0', 2 'growth kinetics, two scans (synthetic), page T=5'"),
        "{e}"
    );
    let first = read_block(NTUPLES, "T=0").unwrap();
    assert_eq!(first.x, (450..=459).map(f64::from).collect::<Vec<_>>());
    assert!(close(
        &first.y,
        &(0..10).map(|i| 0.1 + 0.01 * i as f64).collect::<Vec<_>>()
    ));
    assert_eq!(first.x_unit, "NANOMETERS");
    assert_eq!(first.y_unit.as_deref(), Some("ABSORBANCE"));
    assert!(check(&first, "FIRSTY").passed);
    let second = read_block(NTUPLES, "2").unwrap();
    assert!(
        close(&second.y, &(0..10).map(|i| 0.2 + 0.01 * i as f64).collect::<Vec<_>>()),
        "{:?}",
        second.y
    );
    assert!(check(&second, "DIF Y-check").passed);
    assert!(
        second.format.contains("NTUPLES page T=5, ABSORBANCE against X"),
        "{}",
        second.format
    );
    let all = read_blocks("t.jdx", NTUPLES, &ReadOptions::default()).unwrap();
    assert_eq!(all.len(), 2);
    // An NMR-style NTUPLES of one page (real part against frequency) reads without a choice.
    let s = read(include_str!("data/jcamp/nmr_ntuples_one_page.jdx")).unwrap();
    assert_eq!(s.x, [1000., 900., 800., 700., 600., 500., 400., 300.]);
    assert_eq!(s.y, [5., 9., 20., 60., 140., 60., 20., 9.]);
    assert_eq!(s.x_unit, "HZ");
    assert_eq!(s.y_unit.as_deref(), Some("ARBITRARY UNITS"));
}

#[test]
fn ntuples_without_a_spectrum_are_refused_with_the_reason() {
    let e = err(read(include_str!("data/jcamp/ntuples_no_table.jdx")));
    assert_eq!(
        e,
        "t.jdx line 4: the ##NTUPLES= block 'NTUPLES of a structure list, no data table (synthetic)' holds no ##PAGE= with a ##DATA TABLE=, so no spectrum can be read from it"
    );
    // A table naming a variable the block does not declare.
    let e = err(read_block(
        &NTUPLES.replace("(X++(Y..Y)), XYDATA\n450 100", "(X++(Q..Q)), XYDATA\n450 100"),
        "1",
    ));
    assert!(
        e.starts_with("t.jdx line 19: NTUPLES: the data table names variable 'Q'"),
        "{e}"
    );
    // A "spectrum" against a dependent variable is no spectrum against an x.
    let e = err(read_block(
        &NTUPLES.replace("(X++(Y..Y)), XYDATA\n450 100", "(Y++(X..X)), XYDATA\n450 100"),
        "1",
    ));
    assert!(e.contains("is a DEPENDENT variable"), "{e}");
    // No SYMBOL list: the variables cannot be told apart.
    let e = err(read_block(&NTUPLES.replace("##SYMBOL=X, Y, T\n", ""), "1"));
    assert_eq!(
        e,
        "t.jdx line 7: NTUPLES without ##SYMBOL=: its variables cannot be told apart"
    );
}

#[test]
fn factors_and_firsty_are_checked() {
    // FIRSTY written rounded (0.2004 for 0.2 when YFACTOR is 0.001) passes: half of YFACTOR.
    let s = read(&ROUNDED.replace("##FIRSTY=0.2", "##FIRSTY=0.2004")).unwrap();
    assert!(check(&s, "FIRSTY").passed);
    // A FIRSTY that does not match puts the ordinate scale in doubt.
    let e = err(read(&ROUNDED.replace("##FIRSTY=0.2", "##FIRSTY=200")));
    assert!(e.starts_with("t.jdx line 13: FIRSTY check failed: ##FIRSTY=200"), "{e}");
    let e = err(read(&ROUNDED.replace("##YFACTOR=0.001", "##YFACTOR=0")));
    assert_eq!(
        e,
        "t.jdx line 9: ##YFACTOR=0 is not a usable factor (it must not be zero)"
    );
    let e = err(read(&ROUNDED.replace("##XFACTOR=1", "##XFACTOR=one")));
    assert_eq!(e, "t.jdx line 8: ##XFACTOR= is not a number: 'one'");
    // XFACTOR scales the line abscissae: the same table written in units of 0.01 nm.
    let scaled = ROUNDED
        .replace("##XFACTOR=1", "##XFACTOR=0.01")
        .replace("500 200", "50000 200")
        .replace("501.3 240", "50133 240")
        .replace("502.7 280", "50267 280");
    assert_eq!(read(&scaled).unwrap().x, read(ROUNDED).unwrap().x);
}

#[test]
fn units_and_data_types_are_carried_as_the_file_states_them() {
    for (xu, yu) in [
        ("NANOMETERS", "ABSORBANCE"),
        ("MICROMETERS", "TRANSMITTANCE"),
        ("1/CM", "COUNTS"),
        ("eV", "ARBITRARY UNITS"),
    ] {
        let text = AFFN
            .replace("##XUNITS=NANOMETERS", &format!("##XUNITS={xu}"))
            .replace("##YUNITS=ABSORBANCE", &format!("##YUNITS={yu}"));
        let s = read(&text).unwrap();
        assert_eq!(s.x_unit, xu);
        assert_eq!(s.y_unit.as_deref(), Some(yu));
        assert_eq!(
            check(&s, "DATA TYPE").detail,
            "UV/VIS SPECTRUM (as ##DATA TYPE= states)"
        );
    }
    // No XUNITS: read as nm, and said so.
    let s = read(&AFFN.replace("##XUNITS=NANOMETERS\n", "")).unwrap();
    assert_eq!(s.x_unit, "nm");
    assert!(warned(&s, "states no x unit"), "{:?}", s.warnings);
}

#[test]
fn the_points_of_all_blocks_together_are_bounded() {
    // Five blocks, each a million repeated points from one line ("S000000" = 1,000,000).
    let block = |k: usize| {
        format!(
            "##TITLE=b{k}\n##JCAMP-DX=5.01\n##XUNITS=NANOMETERS\n##FIRSTX=400\n##LASTX=1400\n##NPOINTS=1000000\n##XYDATA=(X++(Y..Y))\n400A0S000000\n##END=\n"
        )
    };
    let text: String = (1..=5).map(block).collect();
    let e = read_blocks("t.jdx", &text, &ReadOptions::default())
        .unwrap_err()
        .to_string();
    assert_eq!(
        e,
        format!(
            "t.jdx line 42: ##NPOINTS=1000000 takes the file's spectra past the {MAX_FILE_POINTS} points one file may hold"
        )
    );
    // One block chosen is read on its own.
    assert_eq!(read_block(&text, "b5").unwrap().y.len(), 1_000_000);
}
