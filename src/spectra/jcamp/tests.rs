//! Tests of the JCAMP-DX reader's inner steps: the ASDF tokens (the standard's own example),
//! AFFN exponents, a written number's last digit, forms missing a parenthesis, the line check.

use super::compressed::{Tok, form_names, line_tolerance, tokenize};
use super::labels::{Form, last_digit_unit, parse_form};

fn toks(line: &str) -> Vec<Tok> {
    tokenize("t", 1, line).unwrap().0
}

#[test]
fn tokenizes_the_asdf_forms() {
    // The standard's own illustration of one ordinate row written four ways
    // (McDonald & Wilks 1988, section on ASDF): values 1000 1020 1040 1040 1040.
    let affn = toks("100 1000 1020 1040 1040 1040");
    assert_eq!(affn.len(), 6);
    assert_eq!(toks("100+1000+1020+1040+1040+1040"), affn);
    assert_eq!(toks("100A000A020A040A040A040"), affn);
    assert_eq!(
        toks("100A000K0K0%U"),
        vec![
            Tok::Abs(100.0),
            Tok::Abs(1000.0),
            Tok::Dif(20.0),
            Tok::Dif(20.0),
            Tok::Dif(0.0),
            Tok::Dup(3)
        ]
    );
    let (_, first, forms) = tokenize("t", 1, "100.5A000K0 1040+1040").unwrap();
    assert_eq!(first, "100.5");
    assert_eq!(form_names(forms), "AFFN PAC SQZ DIF");
}

#[test]
fn affn_exponents_read() {
    assert_eq!(
        toks("400 1.5E-3 2.0e+1"),
        vec![Tok::Abs(400.0), Tok::Abs(0.0015), Tok::Abs(20.0)]
    );
}

#[test]
fn the_last_digit_of_a_written_number() {
    assert_eq!(last_digit_unit("400"), 1.0);
    assert!((last_digit_unit("400.25") - 0.01).abs() < 1e-15);
    assert!((last_digit_unit("-3.3E-1") - 0.01).abs() < 1e-15);
    assert_eq!(last_digit_unit("4.0E2"), 10.0);
}

#[test]
fn forms_with_a_parenthesis_missing_read_as_the_standard_spells_them() {
    let xy = Form::Equidistant {
        x: "X".into(),
        y: "Y".into(),
    };
    assert_eq!(parse_form("(X++(Y..Y))"), Some((xy.clone(), true)));
    assert_eq!(parse_form(" (X++(Y..Y)"), Some((xy.clone(), false)));
    assert_eq!(parse_form("X++(Y..Y))"), Some((xy, false)));
    assert_eq!(
        parse_form("(X++(R..R)), XYDATA"),
        Some((
            Form::Equidistant {
                x: "X".into(),
                y: "R".into()
            },
            true
        ))
    );
    assert_eq!(
        parse_form("(XYW..XYW)"),
        Some((
            Form::Groups {
                symbols: vec!['X', 'Y', 'W']
            },
            true
        ))
    );
    assert_eq!(parse_form("(X++(Y..Z))"), None);
    assert_eq!(parse_form("(XYZQ..XYZQ)"), None);
}

#[test]
fn the_line_check_allows_half_a_step() {
    // Written as finely as the step: half a step, so a whole-step shift fails.
    let (tol, fine) = line_tolerance(0.5, 0.1);
    assert!(fine && (tol - 0.25).abs() < 1e-9);
    // Written to whole units with a 0.5 step: rounding of half a unit comes on top.
    let (tol, fine) = line_tolerance(0.5, 1.0);
    assert!(!fine && (tol - 0.75).abs() < 1e-9);
}
