//! Properties of the search language (issue 14): any text gives a query or a one-line error
//! that names a column inside the text, never a panic; text built from the language's own
//! words (fields, signs, units, dashes, dates, quotes, old forms) reaches every path of the
//! parser; the written forms of one range, and the units of one value, mean the same thing.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

use cuvette::search::{Clause, MAX_QUERY_CHARS, describe, filter, parse};
use proptest::prelude::*;

/// Parses `q` and checks what any text must give.
fn parse_or_one_line_error(q: &str) {
    let length = q.chars().count();
    match parse(q) {
        Ok(query) => {
            assert!(!describe(&query).is_empty());
            assert!(filter(&[], &query).is_empty());
        }
        Err(e) => {
            let text = e.to_string();
            assert_eq!(text.lines().count(), 1, "{q:?}: {text}");
            let column: usize = text
                .strip_prefix("query error at column ")
                .and_then(|rest| rest.split(':').next())
                .and_then(|n| n.parse().ok())
                .unwrap_or_else(|| panic!("{q:?}: no column in {text}"));
            assert!(
                (1..=length.min(MAX_QUERY_CHARS) + 1).contains(&column),
                "{q:?}: column {column} of {length} characters: {text}"
            );
        }
    }
}

/// The words of the language and what sits near them.
fn piece() -> impl Strategy<Value = String> {
    let words = prop::sample::select(vec![
        "size",
        "peak",
        "pl",
        "qy",
        "fwhm",
        "dispersion",
        "conc",
        "material",
        "by",
        "status",
        "at",
        "date",
        "recipe",
        "id",
        "stock",
        "to",
        "TO",
        "-",
        "--",
        ">",
        ">=",
        "<",
        "<=",
        "=",
        "≥",
        "≤",
        ">>",
        "nm",
        "%",
        "uM",
        "µM",
        "μM",
        "nM",
        "mM",
        "M",
        "pM",
        "eV",
        "\"",
        "\"ZnS shell\"",
        "\"\"",
        ":",
        "..",
        "size:",
        "size:3..4",
        "qy:..0.5",
        "by:\"A B\"",
        "done",
        "cooking",
        "CdSe",
        "CdSe:Mn",
        "µµ",
        "€",
        "2026-06-01",
        "2026-06",
        "2026",
        "2026-02-30",
        "2026-06-01-2026-06-30",
        "1,5",
        "3.5.4",
        "1e999",
        "2e-6",
        "-3",
        "3-",
        "3-4",
        "3-4-5",
        "0",
        ".5",
        "5.",
        "45%",
        "520nm",
    ])
    .prop_map(String::from);
    let number = (0u32..100_000, 0u32..4).prop_map(|(n, d)| format!("{}", n as f64 / 10f64.powi(d as i32)));
    prop_oneof![4 => words, 2 => number, 1 => "[a-zA-Z0-9.:%µ-]{1,8}"]
}

fn built_query() -> impl Strategy<Value = String> {
    prop::collection::vec((piece(), prop::sample::select(vec!["", " ", "  ", "\t"])), 0..12)
        .prop_map(|parts| parts.into_iter().map(|(p, gap)| format!("{p}{gap}")).collect())
}

/// A number of up to three decimals, written as people write it.
fn written() -> impl Strategy<Value = (f64, String)> {
    (0u32..5_000_000, 0u32..4).prop_map(|(n, d)| {
        let v = n as f64 / 10f64.powi(d as i32);
        (v, format!("{v}"))
    })
}

fn bounds(c: &Clause) -> (Option<f64>, Option<f64>) {
    match c {
        Clause::Numeric { lo, hi, .. } => (*lo, *hi),
        other => panic!("not numeric: {other:?}"),
    }
}

fn near(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (Some(a), Some(b)) => (a - b).abs() <= 1e-12 * a.abs().max(b.abs()).max(1e-15),
        (None, None) => true,
        _ => false,
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    #[test]
    fn any_text_gives_a_query_or_a_one_line_error(q in "\\PC{0,80}") {
        parse_or_one_line_error(&q);
    }

    #[test]
    fn text_of_the_languages_own_words_gives_a_query_or_a_one_line_error(q in built_query()) {
        parse_or_one_line_error(&q);
    }

    #[test]
    fn the_written_forms_of_a_range_mean_one_range((a, sa) in written(), (b, sb) in written()) {
        let forms = [
            format!("size {sa}-{sb}"),
            format!("size {sa} to {sb}"),
            format!("size {sa} - {sb}"),
            format!("size {sa} -{sb}"),
            format!("size {sa}- {sb}"),
            format!("size {sa}nm-{sb}nm"),
            format!("size {sa} nm to {sb} nm"),
            format!("size {sa} to {sb} nm"),
        ];
        for q in &forms {
            match parse(q) {
                Ok(p) if a <= b => prop_assert_eq!(bounds(&p.clauses[0]), (Some(a), Some(b)), "{}", q),
                Ok(p) => prop_assert!(false, "{q} parsed though empty: {p:?}"),
                Err(e) => {
                    prop_assert!(a > b, "{q}: {e}");
                    prop_assert!(e.to_string().starts_with("query error at column 6: the range"), "{q}: {e}");
                }
            }
        }
    }

    #[test]
    fn units_convert_to_the_stored_value((v, sv) in written()) {
        let conc = |q: String| bounds(&parse(&q).unwrap().clauses[0]).0;
        let molar = Some(v * 1e-6);
        let written_forms = [conc(format!("conc > {sv} uM")), conc(format!("conc > {sv}µM")), conc(format!("conc > {} nM", v * 1000.0))];
        for lo in written_forms {
            prop_assert!(near(lo, molar), "{:?} for {}", lo, sv);
        }
        let qy = |q: String| parse(&q).map(|p| bounds(&p.clauses[0]).0);
        let percent = qy(format!("qy >= {sv}%")).unwrap();
        prop_assert!(near(percent, Some(v / 100.0)), "{:?} for {}%", percent, sv);
        match qy(format!("qy >= {sv}")) {
            Ok(lo) => prop_assert!(v <= 1.0 && near(lo, Some(v))),
            Err(e) => prop_assert!(v > 1.0 && e.to_string().contains("QY is a fraction"), "{e}"),
        }
        let size = |q: String| bounds(&parse(&q).unwrap().clauses[0]);
        prop_assert_eq!(size(format!("size > {sv}")), size(format!("size>{sv}nm")));
        prop_assert_eq!(size(format!("size <= {sv} nm")), size(format!("size≤{sv}")));
    }

    #[test]
    fn a_value_alone_is_equal_at_the_precision_written((v, sv) in written()) {
        let (lo, hi) = bounds(&parse(&format!("peak {sv}")).unwrap().clauses[0]);
        let decimals = sv.split_once('.').map_or(0, |(_, d)| d.len()) as i32;
        let half = 0.5 * 10f64.powi(-decimals);
        prop_assert!(near(lo, Some(v - half)) && near(hi, Some(v + half)), "{sv}: {lo:?} {hi:?}");
    }
}
