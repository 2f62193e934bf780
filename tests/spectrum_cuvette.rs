//! A spectrum's own cuvette logged wrong is corrected (`spectrum cuvette ID --path-cm
//! --dilution --why`), audited, and the aliquot's values follow: the absorbance in the PL
//! cuvette scales as path / dilution (Beer-Lambert), and the single-point quantum yield as
//! 1 / (1 - 10^-A) (Brouwer, Pure Appl. Chem. 83, 2213 (2011)). Bad corrections are refused
//! with one line and change nothing.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;

fn chain_number(lab: &Lab, aliquot: i64, quantity: &str) -> f64 {
    let e = lab.ok(&["explain", &aliquot.to_string(), "--json"]).json();
    e["chain"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["quantity"] == quantity)
        .and_then(|s| s["value"].as_f64())
        .unwrap_or_else(|| panic!("aliquot {aliquot} has no {quantity}"))
}

fn absorptance(a: f64) -> f64 {
    1.0 - 10f64.powf(-a)
}

#[test]
fn a_pl_cuvettes_dilution_corrected_moves_its_absorbance_and_quantum_yield_as_beer_lambert_says() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    // Rhodamine 101 in ethanol, QY 0.913 (Brouwer 2011).
    lab.ok(&[
        "calib",
        "set-reference",
        "--dye",
        "rhodamine 101",
        "--excitation-nm",
        "480",
        "--integral",
        "52000",
        "--abs",
        "0.05",
        "--why",
        "reference",
    ]);
    let b = lab
        .ok(&["batch", "new", "--material", "CdSe", "--name", "qy run", "--json"])
        .json()["id"]
        .as_i64()
        .unwrap();
    let abs = lab.abs_file("abs.csv", 560.0);
    let pl = lab.pl_file("pl.csv", 575.0, 30_000.0);
    let a = lab
        .ok(&[
            "aliquot",
            "add",
            &b.to_string(),
            "--abs",
            s(&abs),
            "--pl",
            s(&pl),
            "--excitation-nm",
            "480",
            "--pl-path-cm",
            "1",
            "--pl-dilution",
            "2",
            "--json",
        ])
        .json()["id"]
        .as_i64()
        .unwrap();
    let pl_spectrum = scalar(
        &lab.db,
        &format!("SELECT id FROM spectrum WHERE aliquot_id = {a} AND kind = 'pl'"),
    );
    let (a_pl, qy) = (
        chain_number(&lab, a, "abs_at_excitation_pl"),
        chain_number(&lab, a, "qy"),
    );

    // The PL sample was in fact diluted fourfold.
    let out = lab.ok(&[
        "spectrum",
        "cuvette",
        &pl_spectrum.to_string(),
        "--dilution",
        "4",
        "--why",
        "diluted 4x, logged as 2x",
        "--json",
    ]);
    assert_eq!(out.json()["aliquot_id"].as_i64(), Some(a));
    let (a_pl2, qy2) = (
        chain_number(&lab, a, "abs_at_excitation_pl"),
        chain_number(&lab, a, "qy"),
    );
    assert!(
        (a_pl2 / a_pl - 0.5).abs() < 1e-9,
        "A in the PL cuvette {a_pl} -> {a_pl2}"
    );
    let want = qy * absorptance(a_pl) / absorptance(a_pl2);
    assert!(
        (qy2 / want - 1.0).abs() < 1e-9,
        "QY {qy} -> {qy2}, Brouwer's single point gives {want}"
    );
    assert_eq!(
        scalar(
            &lab.db,
            &format!(
                "SELECT count(*) FROM audit_log WHERE entity = 'spectrum' AND entity_id = {pl_spectrum} AND action = 'cuvette'"
            )
        ),
        1
    );
    lab.ok(&["check", "--deep"]);

    let sp = pl_spectrum.to_string();
    lab.refuses(&["spectrum", "cuvette", &sp, "--why", "x"], "nothing to change");
    lab.refuses(
        &["spectrum", "cuvette", &sp, "--dilution", "0.5", "--why", "x"],
        "a dilution factor of 1 or more",
    );
    lab.refuses(
        &["spectrum", "cuvette", &sp, "--path-cm", "0", "--why", "x"],
        "path length",
    );
    lab.refuses(
        &["spectrum", "cuvette", &sp, "--path-cm", "500", "--why", "x"],
        "at most 100 cm",
    );
    lab.refuses(&["spectrum", "cuvette", "999", "--path-cm", "1", "--why", "x"], "999");
    assert_eq!(chain_number(&lab, a, "qy"), qy2, "a refused correction changes nothing");
}
