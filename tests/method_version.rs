//! Values an earlier cuvette stored under an earlier analysis method: the method's version is
//! part of the stage-one inputs hash, so `check` tells such values apart (one line, with the
//! remedy) from a real inconsistency, and `recompute` derives them again with the current
//! method. The older lab is made by writing back the hash an earlier cuvette computed (the
//! same formula without the method) and an older reading of the first exciton.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use cuvette::derive::engine::{self, SpectrumMeta};

fn stored(db: &std::path::Path, aliquot: i64, quantity: &str) -> f64 {
    let c = rusqlite::Connection::open(db).unwrap();
    c.query_row(
        "SELECT value FROM derived_value WHERE aliquot_id = ?1 AND quantity = ?2 AND superseded_at IS NULL",
        rusqlite::params![aliquot, quantity],
        |r| r.get(0),
    )
    .unwrap()
}

#[test]
fn values_from_an_earlier_analysis_method_are_told_apart_and_recompute_brings_them_up_to_date() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let b = lab
        .ok(&["batch", "new", "--material", "CdSe", "--name", "old run", "--json"])
        .json()["id"]
        .as_i64()
        .unwrap();
    let abs = lab.abs_file("abs.csv", 560.0);
    let a = lab
        .ok(&["aliquot", "add", &b.to_string(), "--abs", s(&abs), "--json"])
        .json()["id"]
        .as_i64()
        .unwrap();
    lab.ok(&["check", "--deep"]);
    let current = stored(&lab.db, a, "first_exciton_nm");

    // The lab as an earlier cuvette left it: its spectral values under the hash without the
    // method, and a first exciton 0.4 nm from what today's method reads.
    {
        let c = rusqlite::Connection::open(&lab.db).unwrap();
        let version: i64 = c
            .query_row(
                "SELECT calibration_version FROM derived_value WHERE aliquot_id = ?1 AND superseded_at IS NULL LIMIT 1",
                [a],
                |r| r.get(0),
            )
            .unwrap();
        let cal = cuvette::lab::calibrations::get(&c, version).unwrap().body;
        let metas: Vec<SpectrumMeta> = cuvette::store::model::spectra_of_aliquot(&c, a)
            .unwrap()
            .iter()
            .map(SpectrumMeta::from)
            .collect();
        let before = engine::analysis_hash_before_method_versions(&metas, &cal);
        assert_ne!(
            before,
            engine::analysis_hash(&metas, &cal),
            "the method is part of the hash"
        );
        for q in engine::SPECTRAL {
            c.execute(
                "UPDATE derived_value SET inputs_hash = ?1 WHERE aliquot_id = ?2 AND quantity = ?3 AND superseded_at IS NULL",
                rusqlite::params![before, a, q],
            )
            .unwrap();
        }
        c.execute(
            "UPDATE derived_value SET value = value + 0.4 WHERE aliquot_id = ?1 AND quantity = 'first_exciton_nm' AND superseded_at IS NULL",
            [a],
        )
        .unwrap();
    }

    let o = lab.run(&["check", "--deep"]);
    let text = format!("{}{}", o.stdout, o.stderr);
    assert_ne!(o.code, 0, "an out-of-date value is a finding: {text}");
    assert!(text.contains("earlier version of cuvette's analysis"), "{text}");
    assert!(text.contains("cuvette recompute"), "{text}");
    assert!(
        !text.contains("is stored as"),
        "told apart from an inconsistency: {text}"
    );
    assert!(
        !text.contains("not marked stale"),
        "told apart from an inconsistency: {text}"
    );

    lab.ok(&["recompute"]);
    lab.ok(&["check", "--deep"]);
    assert_eq!(
        stored(&lab.db, a, "first_exciton_nm"),
        current,
        "derived again with today's method"
    );
}
