//! Search, the shelf and handover (issue 5), on the demo lab. Expected result sets are worked
//! out independently from each batch's `batch show --json` product values, so the query
//! language is checked against the record rather than against itself.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use serde_json::Value;
use std::collections::BTreeSet;
use std::sync::OnceLock;

struct Demo {
    lab: Lab,
    batches: Vec<Value>,
}

fn demo() -> &'static Demo {
    static D: OnceLock<Demo> = OnceLock::new();
    D.get_or_init(|| {
        let lab = Lab::new();
        lab.ok(&["demo"]);
        let list = lab.ok(&["batch", "list", "--json"]).json();
        let batches = list
            .as_array()
            .unwrap()
            .iter()
            .map(|b| lab.ok(&["batch", "show", &b["id"].to_string(), "--json"]).json())
            .collect();
        Demo { lab, batches }
    })
}

fn found(q: &str) -> BTreeSet<i64> {
    let d = demo();
    let v = d.lab.ok(&["find", q, "--json"]).json();
    v.as_array()
        .unwrap()
        .iter()
        .map(|h| h["id"].as_i64().unwrap())
        .collect()
}

fn expect(f: impl Fn(&Value) -> bool) -> BTreeSet<i64> {
    demo()
        .batches
        .iter()
        .filter(|b| f(b))
        .map(|b| b["id"].as_i64().unwrap())
        .collect()
}

fn prod(b: &Value, k: &str) -> Option<f64> {
    b["product"][k].as_f64()
}

#[test]
fn ranges_comparisons_and_fields_give_exact_sets() {
    let set = found("material CdSe size 2.9 to 3.2");
    assert_eq!(
        set,
        expect(|b| b["material"] == "CdSe" && prod(b, "diameter_nm").is_some_and(|d| (2.9..=3.2).contains(&d)))
    );
    assert!(!set.is_empty(), "the demo lab has CdSe near 3 nm");
    assert_eq!(found("qy > 50%"), expect(|b| prod(b, "qy").is_some_and(|q| q > 0.5)));
    assert_eq!(found("qy>0.5"), found("qy > 50%"));
    assert_eq!(
        found("peak <= 560 pl>530"),
        expect(|b| prod(b, "first_exciton_nm").is_some_and(|p| p <= 560.0)
            && prod(b, "pl_peak_nm").is_some_and(|p| p > 530.0))
    );
    assert_eq!(found("status failed"), expect(|b| b["status"] == "failed"));
    assert_eq!(found("by wren"), expect(|b| b["operator"] == "Wren Halloway"));
    assert_eq!(found("stock"), expect(|b| b["stock_ml"].as_f64().unwrap() > 0.0));
    assert_eq!(
        found("at freezer"),
        expect(|b| b["vials"]
            .as_array()
            .unwrap()
            .iter()
            .any(|v| v["status"] != "disposed" && v["location"] == "Freezer F1"))
    );
    assert_eq!(
        found("date 2026-06-01 to 2026-06-30"),
        expect(|b| {
            let d = &b["started_at"].as_str().unwrap()[..10];
            ("2026-06-01"..="2026-06-30").contains(&d)
        })
    );
    assert_eq!(
        found("material PbS size>=4"),
        expect(|b| b["material"] == "PbS" && prod(b, "diameter_nm").is_some_and(|d| d >= 4.0))
    );
}

#[test]
fn range_edges_are_inclusive_and_comparisons_strict() {
    let b = demo()
        .batches
        .iter()
        .find(|b| prod(b, "diameter_nm").is_some())
        .unwrap();
    let id = b["id"].as_i64().unwrap();
    let d = prod(b, "diameter_nm").unwrap();
    assert!(found(&format!("size {d} to {d}")).contains(&id));
    assert!(found(&format!("size {d}-{d}")).contains(&id));
    assert!(found(&format!("size <= {d}")).contains(&id));
    assert!(found(&format!("size>={d}")).contains(&id));
    assert!(!found(&format!("size>{d}")).contains(&id));
    assert!(!found(&format!("size<{d}")).contains(&id));
}

#[test]
fn fuzzy_words_forgive_typos_and_a_query_can_match_nothing() {
    let wren = expect(|b| b["operator"] == "Wren Halloway");
    assert_eq!(found("Halloway"), wren);
    assert_eq!(found("Hallowya"), wren, "a transposed pair is one typo");
    assert_eq!(found("Haloway"), wren, "a dropped letter is one typo");
    let amine = found("oleylamine");
    assert_eq!(
        amine,
        expect(|b| b["recipe"].as_str().is_some_and(|r| r.contains("ZnS shell")))
    );
    assert!(found("material CdSe size>50").is_empty());
    assert!(found("zzyzx").is_empty());
    let o = demo().lab.ok(&["find", "zzyzx"]);
    assert!(o.stdout.contains("no batches match"));
}

#[test]
fn find_json_has_the_contract_keys() {
    let v = demo().lab.ok(&["find", "CdSe", "--json"]).json();
    let h = &v[0];
    for k in [
        "id",
        "name",
        "material",
        "diameter_nm",
        "first_exciton_nm",
        "qy",
        "stock_ml",
    ] {
        assert!(h.get(k).is_some(), "find lacks {k}");
    }
}

#[test]
fn bad_queries_name_the_column_and_change_nothing() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.refuses(
        &["find", "CdSe size>abc"],
        "query error at column 11: expected a number for size, got `abc`",
    );
    lab.refuses(
        &["find", "size:3.5..4"],
        "query error at column 1: `size:3.5..4` is the old form; write `size 3.5 to 4`",
    );
    lab.refuses(
        &["find", "size 4 to 3"],
        "query error at column 6: the range 4 to 3 is empty",
    );
    lab.refuses(&["find", "status cooking"], "unknown status 'cooking'");
    lab.refuses(&["find", "date 2026-02-30"], "expected a date YYYY-MM-DD");
    lab.refuses(&["find", "\"open quote"], "never closed");
}

#[test]
fn handover_is_all_or_nothing() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let owned_before = lab.ok(&["shelf", "--json"]).json();
    let counts = lab.counts();
    let out = lab.path("pack");
    let mut store = cuvette::lab::open(&lab.db, "Test Runner").unwrap();
    let e = cuvette::lab::handover::handover(
        &mut store,
        "Wren Halloway",
        "Juno Achterberg",
        &out,
        Some(2),
        &mut |_, _| {},
    )
    .unwrap_err();
    assert!(e.to_string().contains("stopped after 2 vials"));
    drop(store);
    assert_eq!(lab.counts(), counts, "a failed handover changes nothing");
    assert_eq!(lab.ok(&["shelf", "--json"]).json(), owned_before);
    assert!(!out.exists(), "and writes no pack");
    lab.refuses(
        &[
            "handover",
            "--from",
            "Nobody Here",
            "--to",
            "Juno Achterberg",
            "--out",
            s(&out),
        ],
        "person 'Nobody Here'",
    );
}

#[test]
fn the_handover_pack_holds_every_vial_and_batch_with_plots() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let shelf = lab.ok(&["shelf", "--json"]).json();
    let wren_vials: BTreeSet<i64> = shelf
        .as_array()
        .unwrap()
        .iter()
        .filter(|v| v["owner"] == "Wren Halloway")
        .map(|v| v["id"].as_i64().unwrap())
        .collect();
    let wren_batches: BTreeSet<i64> = shelf
        .as_array()
        .unwrap()
        .iter()
        .filter(|v| v["owner"] == "Wren Halloway")
        .map(|v| v["batch_id"].as_i64().unwrap())
        .collect();
    assert!(!wren_vials.is_empty());
    let out = lab.path("pack");
    let r = lab
        .ok(&[
            "handover",
            "--from",
            "Wren Halloway",
            "--to",
            "Juno Achterberg",
            "--out",
            s(&out),
            "--json",
        ])
        .json();
    assert_eq!(r["vials"].as_u64().unwrap() as usize, wren_vials.len());
    let html = std::fs::read_to_string(out.join("index.html")).unwrap();
    let doc = scraper::Html::parse_document(&html);
    let sel = |q: &str| scraper::Selector::parse(q).unwrap();
    let vials: BTreeSet<i64> = doc
        .select(&sel("tr.vial"))
        .map(|e| e.value().attr("data-vial-id").unwrap().parse().unwrap())
        .collect();
    assert_eq!(vials, wren_vials);
    let sections: BTreeSet<i64> = doc
        .select(&sel("section.batch"))
        .map(|e| e.value().attr("data-batch-id").unwrap().parse().unwrap())
        .collect();
    assert!(wren_batches.is_subset(&sections), "{wren_batches:?} vs {sections:?}");
    for s in doc.select(&sel("section.batch")) {
        assert!(
            s.select(&sel("svg")).next().is_some(),
            "each batch section has its plots"
        );
    }
    let labels = doc.select(&sel("div.label")).count();
    assert_eq!(labels, wren_vials.len());
    assert!(html.contains("safety data sheet"));
    assert!(
        !html.contains("src=\"http")
            && !html.contains("href=\"http")
            && !html.contains("<link")
            && !html.contains("<script"),
        "the pack needs no network"
    );
    let csv = std::fs::read_to_string(out.join("inventory.csv")).unwrap();
    assert_eq!(csv.lines().count(), wren_vials.len() + 1);
    let after = lab.ok(&["shelf", "--json"]).json();
    assert!(
        after
            .as_array()
            .unwrap()
            .iter()
            .filter(|v| wren_vials.contains(&v["id"].as_i64().unwrap()))
            .all(|v| v["owner"] == "Juno Achterberg")
    );
    // Writing the pack twice into the same folder is refused.
    lab.refuses(
        &[
            "handover",
            "--from",
            "Juno Achterberg",
            "--to",
            "Wren Halloway",
            "--out",
            s(&out),
        ],
        "already exists",
    );
}

#[test]
fn plot_and_export_write_real_files() {
    let d = demo();
    let svg = d.lab.path("b1.svg");
    d.lab.ok(&["plot", "1", "--out", s(&svg)]);
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(text.starts_with("<svg"));
    for label in [
        "Wavelength (nm)",
        "Absorbance",
        "Diameter (nm)",
        "Time after injection (min)",
        "0.5 min",
    ] {
        assert!(text.contains(label), "plot lacks '{label}'");
    }
    let dir = d.lab.path("si");
    d.lab.ok(&["export", "--format", "csv", "--out", s(&dir)]);
    let values = std::fs::read_to_string(dir.join("derived_values.csv")).unwrap();
    assert!(values.lines().next().unwrap().contains("calibration_version"));
    assert!(values.lines().count() > 100);
    d.lab.ok(&["export", "--format", "json", "--out", s(&dir)]);
    let v: Value = serde_json::from_str(&std::fs::read_to_string(dir.join("cuvette-export.json")).unwrap()).unwrap();
    assert_eq!(v["batches"].as_array().unwrap().len(), d.batches.len());
}

#[test]
fn recipe_stats_are_the_mean_and_spread_of_product_values() {
    let d = demo();
    let recipe = "CdSe hot injection (oleate/TOP-Se)";
    let v = d.lab.ok(&["recipe", "stats", recipe, "--json"]).json();
    let diam: Vec<f64> = d
        .batches
        .iter()
        .filter(|b| b["recipe"] == recipe && b["status"] != "failed")
        .filter_map(|b| prod(b, "diameter_nm"))
        .collect();
    let mean = diam.iter().sum::<f64>() / diam.len() as f64;
    let sd = (diam.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (diam.len() - 1) as f64).sqrt();
    assert_eq!(v["diameter_nm"]["n"], diam.len());
    assert!((v["diameter_nm"]["mean"].as_f64().unwrap() - mean).abs() < 1e-9);
    assert!((v["diameter_nm"]["sd"].as_f64().unwrap() - sd).abs() < 1e-9);
    assert_eq!(
        v["failed"].as_u64().unwrap() as usize,
        d.batches
            .iter()
            .filter(|b| b["recipe"] == recipe && b["status"] == "failed")
            .count()
    );
}
