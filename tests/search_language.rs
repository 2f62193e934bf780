//! The search language of issue 14, through the real binary: `cuvette find QUERY --json` on a
//! small lab built with the command line, where what each batch is was decided when it was
//! built, and on the demo lab for the quantities a small lab cannot carry (QY, concentration,
//! σ/D, PL FWHM), checked against the product values `find` itself reports for every batch.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use serde_json::Value;
use std::collections::BTreeSet;
use std::sync::OnceLock;

/// Four CdSe batches, built once for the whole file:
///
/// | name | by | started | status | first exciton | PL | vial |
/// |---|---|---|---|---|---|---|
/// | small | Maren Ostrowe | 2026-06-03 | done | 520 nm | 531 nm | 1.5 mL, Fridge A |
/// | large | Tobiah Quell | 2026-06-30 | growing | 590 nm | 601 nm | disposed, Glovebox 2 |
/// | bare | Maren Ostrowe | 2026-07-01 | failed | none | none | none |
/// | shell | Tobiah Quell | 2026-05-20 | done | 560 nm | none | 0.4 mL, Glovebox 2 |
struct Small {
    lab: Lab,
    /// `batch show --json` of each batch, by name.
    shown: Vec<(String, Value)>,
}

fn small() -> &'static Small {
    static S: OnceLock<Small> = OnceLock::new();
    S.get_or_init(|| {
        let lab = Lab::new();
        lab.ok(&["init"]);
        for p in ["Maren Ostrowe", "Tobiah Quell"] {
            lab.ok(&["person", "add", p]);
        }
        lab.ok(&["location", "add", "Fridge A", "--kind", "fridge"]);
        lab.ok(&["location", "add", "Glovebox 2", "--kind", "glovebox"]);
        // name, operator, started, status, notes; first exciton and PL peak, nm.
        type Plan<'a> = ([&'a str; 5], Option<f64>, Option<f64>);
        let batches: [Plan; 4] = [
            (
                [
                    "small",
                    "Maren Ostrowe",
                    "2026-06-03",
                    "done",
                    "washed twice; ZnSe:Mn trial",
                ],
                Some(520.0),
                Some(531.0),
            ),
            (
                ["large", "Tobiah Quell", "2026-06-30", "growing", "injected 12:30"],
                Some(590.0),
                Some(601.0),
            ),
            (
                [
                    "bare",
                    "Maren Ostrowe",
                    "2026-07-01",
                    "failed",
                    "precursor turned cloudy",
                ],
                None,
                None,
            ),
            (
                ["shell", "Tobiah Quell", "2026-05-20", "done", "thin ZnS shell grown"],
                Some(560.0),
                None,
            ),
        ];
        for ([name, by, started, status, notes], abs, pl) in batches {
            let id = lab
                .ok(&[
                    "batch",
                    "new",
                    "--material",
                    "CdSe",
                    "--name",
                    name,
                    "--operator",
                    by,
                    "--started",
                    started,
                    "--status",
                    status,
                    "--notes",
                    notes,
                    "--json",
                ])
                .json()["id"]
                .to_string();
            if let Some(peak) = abs {
                let a = lab.abs_file(&format!("{name}-abs.csv"), peak);
                let mut args = vec!["aliquot", "add", &id, "--abs", s(&a), "--minutes", "30"];
                let p = pl.map(|nm| lab.pl_file(&format!("{name}-pl.csv"), nm, 1e6));
                if let Some(p) = &p {
                    args.extend(["--pl", s(p), "--excitation-nm", "400"]);
                }
                lab.ok(&args);
            }
        }
        lab.ok(&[
            "vial",
            "new",
            "1",
            "--ml",
            "1.5",
            "--location",
            "Fridge A",
            "--label",
            "S1",
        ]);
        lab.ok(&[
            "vial",
            "new",
            "2",
            "--ml",
            "0.5",
            "--location",
            "Glovebox 2",
            "--label",
            "L1",
        ]);
        lab.ok(&["vial", "dispose", "L1", "--why", "spilled"]);
        lab.ok(&[
            "vial",
            "new",
            "4",
            "--ml",
            "0.4",
            "--location",
            "Glovebox 2",
            "--label",
            "Z1",
        ]);
        let shown = (1..=4)
            .map(|id| {
                let b = lab.ok(&["batch", "show", &id.to_string(), "--json"]).json();
                (b["name"].as_str().unwrap().to_string(), b)
            })
            .collect();
        Small { lab, shown }
    })
}

/// The names `find QUERY --json` returns, in order.
fn names(lab: &Lab, q: &str) -> Vec<String> {
    let v = lab.ok(&["find", q, "--json"]).json();
    v.as_array()
        .unwrap()
        .iter()
        .map(|h| h["name"].as_str().unwrap().to_string())
        .collect()
}

fn set(lab: &Lab, q: &str) -> BTreeSet<String> {
    names(lab, q).into_iter().collect()
}

fn these(names: &[&str]) -> BTreeSet<String> {
    names.iter().map(|n| n.to_string()).collect()
}

/// A product value of a batch of the small lab, from `batch show --json`.
fn product(name: &str, key: &str) -> Option<f64> {
    small()
        .shown
        .iter()
        .find(|(n, _)| n == name)
        .and_then(|(_, b)| b["product"][key].as_f64())
}

/// The batches of the small lab whose product value passes a test.
fn whose(key: &str, pass: impl Fn(f64) -> bool) -> BTreeSet<String> {
    small()
        .shown
        .iter()
        .filter(|(n, _)| product(n, key).is_some_and(&pass))
        .map(|(n, _)| n.clone())
        .collect()
}

#[test]
fn text_fields_stock_dates_and_free_words_find_what_was_built() {
    let lab = &small().lab;
    assert_eq!(set(lab, "material CdSe").len(), 4);
    assert!(set(lab, "material PbS").is_empty());
    assert_eq!(set(lab, "by \"Maren Ostrowe\""), these(&["small", "bare"]));
    assert_eq!(set(lab, "by quell"), these(&["large", "shell"]));
    assert_eq!(set(lab, "status done"), these(&["small", "shell"]));
    assert_eq!(set(lab, "status growing"), these(&["large"]));
    assert_eq!(set(lab, "at \"Fridge A\""), these(&["small"]));
    // The disposed vial no longer holds the large batch in the glovebox.
    assert_eq!(set(lab, "at glovebox"), these(&["shell"]));
    assert_eq!(set(lab, "stock"), these(&["small", "shell"]));
    assert_eq!(set(lab, "date 2026-06-01 to 2026-06-30"), these(&["small", "large"]));
    assert_eq!(set(lab, "date 2026-06-03"), these(&["small"]));
    assert_eq!(set(lab, "date 2026-06"), these(&["small", "large"]));
    assert_eq!(set(lab, "date >= 2026-06-30"), these(&["large", "bare"]));
    assert_eq!(set(lab, "date > 2026-06"), these(&["bare"]));
    assert_eq!(set(lab, "date < 2026-06"), these(&["shell"]));
    assert_eq!(set(lab, "date <= 2026-06-03"), these(&["small", "shell"]));
    assert_eq!(set(lab, "id 3"), these(&["bare"]));
    assert_eq!(set(lab, "id 2 to 3"), these(&["large", "bare"]));
    // Free words, typos forgiven, and phrases matched as written.
    assert_eq!(set(lab, "cloudy"), these(&["bare"]));
    assert_eq!(set(lab, "clowdy"), these(&["bare"]));
    assert_eq!(set(lab, "\"ZnS shell\""), these(&["shell"]));
    assert_eq!(set(lab, "ZnSe:Mn"), these(&["small"]));
    assert_eq!(set(lab, "12:30"), these(&["large"]));
    assert_eq!(set(lab, "\"status\""), BTreeSet::new(), "a quoted field word is a word");
    // Clauses narrow together.
    assert_eq!(set(lab, "by maren stock status done"), these(&["small"]));
    assert_eq!(set(lab, "STATUS Done By MAREN"), these(&["small"]));
}

#[test]
fn sizes_and_peaks_in_every_written_form() {
    let lab = &small().lab;
    let d = |n: &str| product(n, "diameter_nm").unwrap();
    let (small_d, shell_d, large_d) = (d("small"), d("shell"), d("large"));
    // Sizing curves put a redder first exciton on a larger dot (Yu et al., Chem. Mater. 15,
    // 2854 (2003), the CdSe curve cuvette uses).
    assert!(small_d < shell_d && shell_d < large_d, "{small_d} {shell_d} {large_d}");
    let mid = (small_d + shell_d) / 2.0;
    let above_mid = whose("diameter_nm", |v| v > mid);
    assert_eq!(above_mid, these(&["shell", "large"]));
    for q in [
        format!("size > {mid}"),
        format!("size>{mid}"),
        format!("size > {mid} nm"),
        format!("size>{mid}nm"),
    ] {
        assert_eq!(set(lab, &q), above_mid, "{q}");
    }
    for q in [format!("size >= {shell_d}"), format!("size ≥ {shell_d}")] {
        assert_eq!(set(lab, &q), these(&["shell", "large"]), "{q}");
    }
    assert_eq!(set(lab, &format!("size < {shell_d}")), these(&["small"]));
    assert_eq!(set(lab, &format!("size <= {shell_d}")), these(&["small", "shell"]));
    // Inclusive ranges in each written form, their ends exactly on product values.
    for q in [
        format!("size {small_d}-{shell_d}"),
        format!("size {small_d} to {shell_d}"),
        format!("size {small_d} - {shell_d}"),
        format!("size {small_d} -{shell_d}"),
        format!("size {small_d}nm-{shell_d}nm"),
        format!("size {small_d} nm to {shell_d} nm"),
        format!("size {small_d} to {shell_d} nm"),
    ] {
        assert_eq!(set(lab, &q), these(&["small", "shell"]), "{q}");
    }
    // Equal at the precision written: one decimal is a window of ±0.05 nm.
    let one_decimal = format!("{:.1}", large_d);
    let window: f64 = one_decimal.parse().unwrap();
    assert_eq!(
        set(lab, &format!("size {one_decimal}")),
        whose("diameter_nm", |v| v >= window - 0.05 && v < window + 0.05)
    );
    assert!(set(lab, &format!("size {one_decimal}")).contains("large"));
    // First exciton and PL peak, with and without nm.
    let exciton = |n: &str| product(n, "first_exciton_nm").unwrap();
    let cut = (exciton("shell") + exciton("large")) / 2.0;
    assert_eq!(set(lab, &format!("peak > {cut} nm")), these(&["large"]));
    assert_eq!(set(lab, &format!("peak<={cut}")), these(&["small", "shell"]));
    let pl = |n: &str| product(n, "pl_peak_nm").unwrap();
    assert_eq!(
        set(lab, &format!("pl {} to {}", pl("small"), pl("large"))),
        these(&["small", "large"])
    );
    assert_eq!(set(lab, &format!("pl > {}", pl("small"))), these(&["large"]));
    // Batches without the value never pass a numeric filter.
    assert!(!set(lab, "size > 0").contains("bare"));
    assert!(!set(lab, "pl > 0").contains("shell"));
    // Fields and free words together: the free word ranks, the fields narrow.
    assert_eq!(names(lab, &format!("washed size < {shell_d}")), ["small"]);
}

#[test]
fn qy_conc_dispersion_and_fwhm_match_the_values_find_reports() {
    let lab = Lab::new();
    lab.ok(&["demo", "--no-ui"]);
    let all = lab.ok(&["find", "", "--json"]).json();
    let all = all.as_array().unwrap();
    assert!(all.len() > 10, "the demo lab has its batches");
    let ids = |q: &str| -> BTreeSet<i64> {
        lab.ok(&["find", q, "--json"])
            .json()
            .as_array()
            .unwrap()
            .iter()
            .map(|h| h["id"].as_i64().unwrap())
            .collect()
    };
    let expect = |key: &str, pass: &dyn Fn(f64) -> bool| -> BTreeSet<i64> {
        all.iter()
            .filter(|h| h[key].as_f64().is_some_and(pass))
            .map(|h| h["id"].as_i64().unwrap())
            .collect()
    };
    let qy_ge_45 = expect("qy", &|q| q >= 0.45);
    assert!(
        !qy_ge_45.is_empty() && qy_ge_45.len() < all.len(),
        "a filter that splits the lab"
    );
    for q in ["qy >= 45%", "qy>=45%", "qy >= 45 %", "qy >= 0.45", "qy≥0.45"] {
        assert_eq!(ids(q), qy_ge_45, "{q}");
    }
    assert_eq!(ids("qy < 0.3"), expect("qy", &|q| q < 0.3));
    assert_eq!(ids("qy 20-40%"), expect("qy", &|q| (0.2..=0.4).contains(&q)));
    assert_eq!(ids("qy 0.2 to 0.4"), ids("qy 20 to 40%"));
    let molar = expect("concentration_molar", &|c| c > 2e-6);
    assert!(!molar.is_empty());
    for q in [
        "conc > 2 uM",
        "conc > 2 µM",
        "conc>2uM",
        "conc > 2000 nM",
        "conc > 0.002 mM",
        "conc > 2e-6",
    ] {
        assert_eq!(ids(q), molar, "{q}");
    }
    assert_eq!(ids("dispersion < 8 %"), expect("size_dispersion_pct", &|d| d < 8.0));
    assert_eq!(ids("dispersion < 8"), ids("dispersion < 8 %"));
    assert_eq!(ids("fwhm <= 30 nm"), expect("pl_fwhm_nm", &|w| w <= 30.0));
}

#[test]
fn find_json_keeps_its_keys() {
    let lab = &small().lab;
    let v = lab.ok(&["find", "status done", "--json"]).json();
    let keys: BTreeSet<&str> = v[0].as_object().unwrap().keys().map(String::as_str).collect();
    let want: BTreeSet<&str> = [
        "id",
        "name",
        "material",
        "status",
        "operator",
        "started_at",
        "recipe",
        "notes",
        "locations",
        "stock_ml",
        "diameter_nm",
        "first_exciton_nm",
        "pl_peak_nm",
        "pl_fwhm_nm",
        "size_dispersion_pct",
        "qy",
        "concentration_molar",
        "score",
    ]
    .into_iter()
    .collect();
    assert_eq!(keys, want);
}

#[test]
fn bad_queries_are_one_line_errors_naming_the_column_and_change_nothing() {
    let lab = &small().lab;
    for (q, said) in [
        ("size 5-3", "query error at column 6: the range 5 to 3 is empty"),
        ("qy >", "query error at column 5: expected a number after `qy >`"),
        (
            "size abc",
            "query error at column 6: expected a number for size, got `abc`",
        ),
        (
            "size:3.5..4",
            "query error at column 1: `size:3.5..4` is the old form; write `size 3.5 to 4`",
        ),
        (
            "CdSe material:PbS",
            "query error at column 6: `material:PbS` is the old form; write `material PbS`",
        ),
        (
            "pl 600..620",
            "query error at column 4: `600..620` is the old form; write `pl 600 to 620`",
        ),
        ("qy > 50", "QY is a fraction: write `qy > 0.5` or `qy > 50%`"),
        ("date 2026-06-01-2026-06-30", "write a range of dates with `to`"),
        ("size", "query error at column 5: expected a condition after `size`"),
        ("conc > 2", "write the unit: `conc > 2 uM`"),
        ("\"open", "query error at column 1: a quote is opened but never closed"),
    ] {
        lab.refuses(&["find", q], said);
    }
}
