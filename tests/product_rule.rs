//! The product-aliquot rule, defined once (the store's `batch_product` view) and seen the same
//! by the batch sheet, search and the recipe statistics: the aliquot marked as the product,
//! else the last timed aliquot of the growth series, else the last logged; a void aliquot never.
//! (The rule is the lab's own choice, common practice for a hot-injection series: the last
//! aliquot is the product that was worked up.)
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::Lab;

fn samples(rel: &str) -> String {
    format!("{}/demo-db/samples/{rel}", env!("CARGO_MANIFEST_DIR"))
}

fn product_id(lab: &Lab) -> Option<i64> {
    lab.ok(&["batch", "show", "1", "--json"]).json()["product"]["id"].as_i64()
}

#[test]
fn the_product_is_the_marked_aliquot_else_the_last_timed_one_never_a_void_one() {
    let lab = Lab::new();
    lab.ok(&["--create", "init"]);
    lab.ok(&["batch", "new", "--material", "CdSe", "--name", "CS-rule", "--json"]);
    let add = |m: &str, extra: &[&str]| -> i64 {
        let mut args = vec![
            "aliquot".to_string(),
            "add".into(),
            "1".into(),
            "--abs".into(),
            samples(&format!("growth/abs_{m}min.csv")),
            "--dilution".into(),
            "20".into(),
            "--solvent".into(),
            "hexane".into(),
            "--json".into(),
        ];
        args.extend(extra.iter().map(|s| s.to_string()));
        let a: Vec<&str> = args.iter().map(String::as_str).collect();
        lab.ok(&a).json()["id"].as_i64().unwrap()
    };
    let early = add("02", &["--minutes", "2"]);
    let late = add("10", &["--minutes", "10"]);
    // Logged after the timed ones, but without a time: the series' last timed aliquot stays
    // the product.
    let untimed = add("05", &["--stage", "washed"]);
    assert_eq!(product_id(&lab), Some(late), "the last timed aliquot");
    lab.ok(&["batch", "edit", "1", "--product-aliquot", &early.to_string()]);
    assert_eq!(product_id(&lab), Some(early), "the marked aliquot");
    lab.ok(&["aliquot", "void", &early.to_string(), "--why", "spilled"]);
    assert_eq!(product_id(&lab), Some(late), "a void marked aliquot does not count");
    lab.ok(&["aliquot", "void", &late.to_string(), "--why", "spilled"]);
    lab.ok(&[
        "aliquot",
        "void",
        &add("20", &["--minutes", "20"]).to_string(),
        "--why",
        "spilled",
    ]);
    assert_eq!(
        product_id(&lab),
        Some(untimed),
        "no timed aliquot left: the last logged"
    );
    // Search reads the same product: the batch is found by the untimed aliquot's diameter.
    let d = lab.ok(&["batch", "show", "1", "--json"]).json()["product"]["diameter_nm"]
        .as_f64()
        .unwrap();
    let q = format!("CdSe size {:.2} to {:.2}", d - 0.01, d + 0.01);
    let hits = lab.ok(&["find", &q, "--json"]).json();
    assert_eq!(hits.as_array().map(|h| h.len()), Some(1), "{q}: {hits}");
    assert!((hits[0]["diameter_nm"].as_f64().unwrap() - d).abs() < 1e-9);
}
