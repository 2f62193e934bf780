//! The parser's unit tests: every form of condition, the refusals and their columns, the
//! bounds, and the old forms shown with their replacements.

use super::*;

fn num(field: Field, cmp: Cmp, lo: Option<f64>, hi: Option<f64>, strict_lo: bool, strict_hi: bool) -> Clause {
    Clause::Numeric {
        field,
        cmp,
        lo,
        hi,
        strict_lo,
        strict_hi,
    }
}

fn one(q: &str) -> Clause {
    let parsed = parse(q).unwrap_or_else(|e| panic!("{q}: {e}"));
    assert_eq!(parsed.clauses.len(), 1, "{q}: {parsed:?}");
    parsed.clauses[0].clone()
}

/// Numeric clauses compared with a hair of slack for decimal round-off.
fn close(a: &Clause, b: &Clause) -> bool {
    let near = |x: Option<f64>, y: Option<f64>| match (x, y) {
        (Some(x), Some(y)) => (x - y).abs() <= 1e-12 * x.abs().max(y.abs()).max(1e-12),
        (None, None) => true,
        _ => false,
    };
    match (a, b) {
        (
            Clause::Numeric {
                field: f1,
                cmp: c1,
                lo: l1,
                hi: h1,
                strict_lo: sl1,
                strict_hi: sh1,
            },
            Clause::Numeric {
                field: f2,
                cmp: c2,
                lo: l2,
                hi: h2,
                strict_lo: sl2,
                strict_hi: sh2,
            },
        ) => f1 == f2 && c1 == c2 && sl1 == sl2 && sh1 == sh2 && near(*l1, *l2) && near(*h1, *h2),
        _ => a == b,
    }
}

#[test]
fn the_contract_forms_parse_to_their_meaning() {
    use Cmp::*;
    use Field::*;
    let cases: &[(&str, Clause)] = &[
        ("size 3.5-4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
        ("size 3.5 to 4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
        ("size 3.5 TO 4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
        ("size 3.5 - 4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
        ("size 3.5 -4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
        ("size 3.5- 4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
        ("size 3.5nm-4nm", num(Size, Range, Some(3.5), Some(4.0), false, false)),
        (
            "size 3.5 nm to 4 nm",
            num(Size, Range, Some(3.5), Some(4.0), false, false),
        ),
        ("size > 3.2", num(Size, Gt, Some(3.2), None, true, false)),
        ("size>3.2", num(Size, Gt, Some(3.2), None, true, false)),
        ("size >= 3", num(Size, Ge, Some(3.0), None, false, false)),
        ("size ≥ 3", num(Size, Ge, Some(3.0), None, false, false)),
        ("size<=3", num(Size, Le, None, Some(3.0), false, false)),
        ("qy < 0.3", num(Qy, Lt, None, Some(0.3), false, true)),
        ("qy >= 45%", num(Qy, Ge, Some(0.45), None, false, false)),
        ("qy>=45 %", num(Qy, Ge, Some(0.45), None, false, false)),
        ("QY 40-60%", num(Qy, Range, Some(0.4), Some(0.6), false, false)),
        ("qy 0.4 to 0.6", num(Qy, Range, Some(0.4), Some(0.6), false, false)),
        ("qy 1", num(Qy, Eq, Some(0.5), Some(1.5), false, true)),
        ("peak 520 nm", num(Peak, Eq, Some(519.5), Some(520.5), false, true)),
        ("peak 520nm", num(Peak, Eq, Some(519.5), Some(520.5), false, true)),
        ("pl < 620", num(Pl, Lt, None, Some(620.0), false, true)),
        ("fwhm <= 30 nm", num(Fwhm, Le, None, Some(30.0), false, false)),
        ("dispersion < 8 %", num(Dispersion, Lt, None, Some(8.0), false, true)),
        ("dispersion<8", num(Dispersion, Lt, None, Some(8.0), false, true)),
        ("conc > 2 uM", num(Conc, Gt, Some(2e-6), None, true, false)),
        ("conc > 2 µM", num(Conc, Gt, Some(2e-6), None, true, false)),
        ("conc>2μM", num(Conc, Gt, Some(2e-6), None, true, false)),
        ("conc > 2000 nM", num(Conc, Gt, Some(2e-6), None, true, false)),
        ("conc > 2e-6", num(Conc, Gt, Some(2e-6), None, true, false)),
        ("conc 1 to 2 mM", num(Conc, Range, Some(1e-3), Some(2e-3), false, false)),
        ("conc 2e-6-3e-6", num(Conc, Range, Some(2e-6), Some(3e-6), false, false)),
        ("id 12", num(Id, Eq, Some(12.0), Some(12.0), false, false)),
        ("id 10 to 20", num(Id, Range, Some(10.0), Some(20.0), false, false)),
        // Equal at the precision written, as the earlier language had it.
        ("size 3.5", num(Size, Eq, Some(3.45), Some(3.55), false, true)),
        ("size 3.50", num(Size, Eq, Some(3.495), Some(3.505), false, true)),
        ("size = 3.5", num(Size, Eq, Some(3.45), Some(3.55), false, true)),
        ("size 4", num(Size, Eq, Some(3.5), Some(4.5), false, true)),
        ("qy 45%", num(Qy, Eq, Some(0.445), Some(0.455), false, true)),
        ("qy 0.45", num(Qy, Eq, Some(0.445), Some(0.455), false, true)),
        ("conc 2 uM", num(Conc, Eq, Some(1.5e-6), Some(2.5e-6), false, true)),
        ("conc 2.5e-6", num(Conc, Eq, Some(2.45e-6), Some(2.55e-6), false, true)),
    ];
    for (q, want) in cases {
        let got = one(q);
        assert!(close(&got, want), "{q}: got {got:?}, want {want:?}");
    }
}

#[test]
fn text_fields_dates_stock_and_words() {
    let text = |field, value: &str| Clause::Text {
        field,
        value: value.into(),
    };
    let date = |lo: Option<&str>, hi: Option<&str>, strict_lo, strict_hi| Clause::Date {
        lo: lo.map(String::from),
        hi: hi.map(String::from),
        strict_lo,
        strict_hi,
    };
    let cases: &[(&str, Clause)] = &[
        ("material CdSe", text(Field::Material, "CdSe")),
        ("Material CdSe/ZnS", text(Field::Material, "CdSe/ZnS")),
        ("material ZnSe:Mn", text(Field::Material, "ZnSe:Mn")),
        ("by \"Wren Halloway\"", text(Field::By, "Wren Halloway")),
        ("by wren", text(Field::By, "wren")),
        ("status done", text(Field::Status, "done")),
        ("at freezer", text(Field::At, "freezer")),
        ("recipe \"ZnS shell\"", text(Field::Recipe, "ZnS shell")),
        ("stock", Clause::Stock),
        ("STOCK", Clause::Stock),
        (
            "date 2026-06-01",
            date(Some("2026-06-01"), Some("2026-06-01"), false, false),
        ),
        (
            "date 2026-06-01 to 2026-06-30",
            date(Some("2026-06-01"), Some("2026-06-30"), false, false),
        ),
        (
            "date 2026-06",
            date(Some("2026-06-01"), Some("2026-06-30"), false, false),
        ),
        (
            "date 2024-02",
            date(Some("2024-02-01"), Some("2024-02-29"), false, false),
        ),
        (
            "date 2026-12",
            date(Some("2026-12-01"), Some("2026-12-31"), false, false),
        ),
        ("date 2026", date(Some("2026-01-01"), Some("2026-12-31"), false, false)),
        (
            "date 2026-06 to 2026-08",
            date(Some("2026-06-01"), Some("2026-08-31"), false, false),
        ),
        ("date > 2026-06", date(Some("2026-06-30"), None, true, false)),
        ("date >= 2026-06", date(Some("2026-06-01"), None, false, false)),
        ("date<2026-06", date(None, Some("2026-06-01"), false, true)),
        ("date <= 2026-06", date(None, Some("2026-06-30"), false, false)),
        (
            "date 2026-6-1",
            date(Some("2026-06-01"), Some("2026-06-01"), false, false),
        ),
        ("CdSe", Clause::Word("cdse".into())),
        ("\"ZnS shell\"", Clause::Word("zns shell".into())),
        // A quoted field word is a word to search for.
        ("\"size\"", Clause::Word("size".into())),
        // A word with a colon that names no field is text (doping is written `CdSe:Mn`).
        ("CdSe:Mn", Clause::Word("cdse:mn".into())),
        ("to", Clause::Word("to".into())),
        ("...", Clause::Word("...".into())),
    ];
    for (q, want) in cases {
        assert_eq!(&one(q), want, "{q}");
    }
    let q = parse("CdSe size 3.5 to 4 qy >= 50% stock by wren oleylamine").unwrap();
    assert_eq!(q.clauses.len(), 6);
    assert_eq!(q.words(), ["cdse", "oleylamine"]);
    assert_eq!(parse("").unwrap(), Query::default());
    assert_eq!(parse("  \"\"  ").unwrap(), Query::default());
}

#[test]
fn errors_name_the_column_and_what_is_wrong() {
    let cases: &[(&str, &str)] = &[
        (
            "size 5-3",
            "query error at column 6: the range 5 to 3 is empty: its low end is above its high end",
        ),
        (
            "size 5 to 3",
            "query error at column 6: the range 5 to 3 is empty: its low end is above its high end",
        ),
        ("qy >", "query error at column 5: expected a number after `qy >`"),
        ("qy>", "query error at column 4: expected a number after `qy >`"),
        (
            "size abc",
            "query error at column 6: expected a number for size, got `abc`",
        ),
        (
            "CdSe size>abc",
            "query error at column 11: expected a number for size, got `abc`",
        ),
        (
            "size:3.5..4",
            "query error at column 1: `size:3.5..4` is the old form; write `size 3.5 to 4`",
        ),
        (
            "CdSe peak:..560",
            "query error at column 6: `peak:..560` is the old form; write `peak <= 560`",
        ),
        (
            "size:3..",
            "query error at column 1: `size:3..` is the old form; write `size >= 3`",
        ),
        (
            "material:CdSe",
            "query error at column 1: `material:CdSe` is the old form; write `material CdSe`",
        ),
        (
            "qy:>0.5",
            "query error at column 1: `qy:>0.5` is the old form; write `qy > 0.5`",
        ),
        (
            "by:\"Ilse Varga\"",
            "query error at column 1: `by:` is the old form; write `by \"Ilse Varga\"`",
        ),
        (
            "size 3..4",
            "query error at column 6: `3..4` is the old form; write `size 3 to 4`",
        ),
        (
            "date:2026-06-01..2026-06-30",
            "query error at column 1: `date:2026-06-01..2026-06-30` is the old form; write `date 2026-06-01 to 2026-06-30`",
        ),
        (
            "3..4",
            "query error at column 1: `3..4` is the old range form; a range follows its field and takes `to`, as in `size 3.5 to 4`",
        ),
        (
            "qy > 50",
            "query error at column 6: QY is a fraction: write `qy > 0.5` or `qy > 50%` (`qy > 50` would be 5000 %)",
        ),
        (
            "qy 45",
            "query error at column 4: QY is a fraction: write `qy 0.45` or `qy 45%` (`qy 45` would be 4500 %)",
        ),
        (
            "qy 40 to 60",
            "query error at column 4: QY is a fraction: write 0.4 or 40% for 40 per cent (a bare 40 would be 4000 %)",
        ),
        (
            "conc > 2",
            "query error at column 8: conc without a unit is mol/L, so `conc > 2` would be 2 M; write the unit: `conc > 2 uM` (or nM, mM)",
        ),
        (
            "size -3",
            "query error at column 6: size is never negative; a dash joins the two ends of a range, as in `size 3-4`",
        ),
        (
            "size > -3",
            "query error at column 8: size is never negative; a dash joins the two ends of a range, as in `size 3-4`",
        ),
        (
            "size 3-4-5",
            "query error at column 9: a range has two ends: one dash or one `to`",
        ),
        ("size 3 to", "query error at column 10: expected a number after `3 to`"),
        ("size 3 -", "query error at column 9: expected a number after `3 -`"),
        (
            "size > 3 to 4",
            "query error at column 10: a comparison takes one number; a range is written without it, as in `size 3.5 to 4`",
        ),
        (
            "size > 3-4",
            "query error at column 9: a comparison takes one number; a range is written without it, as in `size 3.5 to 4`",
        ),
        (
            "size 3 um",
            "query error at column 8: `um` is not a unit of size (size takes nm)",
        ),
        (
            "size 3%",
            "query error at column 7: `%` is not a unit of size (size takes nm)",
        ),
        (
            "qy > 0.5 nm",
            "query error at column 10: `nm` is not a unit of qy (qy takes a fraction or %)",
        ),
        (
            "peak 2.3eV",
            "query error at column 9: `eV` is not a unit of peak (peak takes nm)",
        ),
        (
            "id 3 nm",
            "query error at column 6: `nm` is not a unit of id (id takes no unit)",
        ),
        (
            "id 3.5",
            "query error at column 4: id is a whole batch number, got `3.5`",
        ),
        (
            "peak 1,100",
            "query error at column 7: `1,100`: write numbers without commas, with a point for decimals (`3.5`, `1100`)",
        ),
        ("size 1e999", "query error at column 6: the number `1e999` is too large"),
        (
            "size 3.5.4",
            "query error at column 6: expected a number for size, got `3.5.4`",
        ),
        (
            "size \"3\"",
            "query error at column 6: expected a number after `size`, got `3`",
        ),
        (
            "size >> 3",
            "query error at column 7: expected a number after `size >`, got `>`",
        ),
        (
            "size",
            "query error at column 5: expected a condition after `size`, as in `size 3.5 to 4` (quote \"size\" to search for the word itself)",
        ),
        (
            "CdSe material",
            "query error at column 14: expected a value after `material`, as in `material CdSe` (quote \"material\" to search for the word itself)",
        ),
        (
            "material > CdSe",
            "query error at column 10: material takes a value, not a comparison: write `material CdSe`",
        ),
        (
            "at stock",
            "query error at column 4: expected a value for at, found the word `stock` that starts a condition of its own; quote a value that is such a word: `at \"stock\"`",
        ),
        (
            "by \"\"",
            "query error at column 4: expected a value for by, got an empty phrase",
        ),
        (
            "status cooking",
            "query error at column 8: unknown status 'cooking' (use one of planned, growing, done, failed, archived)",
        ),
        (
            "> 3",
            "query error at column 1: `>` needs a field before it, as in `size > 3.2`",
        ),
        (
            "date 2026-06-01-2026-06-30",
            "query error at column 6: dates have dashes of their own: write a range of dates with `to`, as in `date 2026-06-01 to 2026-06-30`",
        ),
        (
            "date 2026-06-01 - 2026-06-30",
            "query error at column 17: dates have dashes of their own: write a range of dates with `to`, as in `date 2026-06-01 to 2026-06-30`",
        ),
        (
            "date 2026-02-30",
            "query error at column 6: expected a date YYYY-MM-DD (or YYYY-MM, YYYY), got `2026-02-30`",
        ),
        (
            "date 2026-13",
            "query error at column 6: expected a date YYYY-MM-DD (or YYYY-MM, YYYY), got `2026-13`",
        ),
        (
            "date 26-06-01",
            "query error at column 6: expected a date YYYY-MM-DD (or YYYY-MM, YYYY), got `26-06-01`",
        ),
        (
            "date 2026-06-30 to 2026-06-01",
            "query error at column 6: the range 2026-06-30 to 2026-06-01 is empty: its first day is after its last",
        ),
        (
            "date > 2026-06 to 2026-07",
            "query error at column 16: a comparison takes one date; a range is written without it, as in `date 2026-06-01 to 2026-06-30`",
        ),
        ("date >", "query error at column 7: expected a date after `date >`"),
        (
            "CdSe \"open",
            "query error at column 6: a quote is opened but never closed",
        ),
        // Columns count characters, not bytes: "µµ" is four bytes.
        (
            "µµ size abc",
            "query error at column 9: expected a number for size, got `abc`",
        ),
        (
            "conc > 1µµM",
            "query error at column 9: `µµM` is not a unit of conc (conc takes M, mM, uM (µM), nM or pM; mol/L when none is written)",
        ),
    ];
    for (q, want) in cases {
        match parse(q) {
            Ok(p) => panic!("{q} parsed: {p:?}"),
            Err(e) => assert_eq!(&e.to_string(), want, "{q}"),
        }
    }
}

#[test]
fn lengths_are_bounded() {
    let e = parse(&"a ".repeat(300)).unwrap_err().to_string();
    assert!(e.contains("column 501") && e.contains("600 characters long"), "{e}");
    let e = parse(&format!("CdSe {}", "w".repeat(65))).unwrap_err().to_string();
    assert!(e.contains("column 6") && e.contains("65 characters long"), "{e}");
    let many = (0..17).map(|i| format!("w{i}")).collect::<Vec<_>>().join(" ");
    assert!(
        parse(&many)
            .unwrap_err()
            .to_string()
            .contains("more than 16 free words")
    );
    // Field conditions are not free words: many of them pass.
    let fields = "size > 1 ".repeat(40);
    assert_eq!(parse(&fields).unwrap().clauses.len(), 40);
}
