//! Adding an aliquot analyses the spectra it has just read in memory and writes them with
//! their values (issue 11, "compute before you write"). What it stores must be exactly what a
//! derivation from the stored spectra gives: `check`'s deep verification (every value derived
//! again from the BLOBs) finds nothing, and a full recompute changes nothing.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

use cuvette::lab::bench::{Door, SpectrumFile};
use cuvette::store::model::{NewAliquot, NewBatch};

fn samples(rel: &str) -> std::path::PathBuf {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-db/samples")
        .join(rel)
}

#[test]
fn values_computed_in_memory_are_those_the_stored_spectra_give() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = cuvette::lab::open(&dir.path().join("lab.db"), "Test Runner").unwrap();
    let batch = cuvette::lab::batches::log_batch(
        &mut store,
        &NewBatch {
            name: "CS-memory".into(),
            material: "CdSe".into(),
            status: Some(cuvette::vocab::BatchStatus::Growing),
            ..Default::default()
        },
    )
    .unwrap()
    .id;
    for (i, m) in ["02", "05", "10", "20"].iter().enumerate() {
        let files = [
            SpectrumFile {
                path: samples(&format!("growth/abs_{m}min.csv")),
                kind: "abs",
                ..Default::default()
            },
            SpectrumFile {
                path: samples(&format!("growth/pl_{m}min.csv")),
                kind: "pl",
                excitation_nm: Some(400.0),
                ..Default::default()
            },
        ];
        let a = NewAliquot {
            batch_id: batch,
            minutes: Some([2.0, 5.0, 10.0, 20.0][i]),
            stage: None,
            dilution_factor: 20.0,
            path_cm: 1.0,
            solvent: "hexane".into(),
            taken_at: None,
        };
        let s =
            cuvette::lab::bench::add_aliquot(&mut store, &a, &files, &Default::default(), &Door::default()).unwrap();
        assert!(s.diameter_nm.is_some(), "aliquot {m} min was sized");
    }
    let (checked, problems) = store
        .read(|tx| cuvette::lab::derivation::verify_values(tx, true))
        .unwrap();
    assert!(checked >= 4, "every aliquot verified ({checked})");
    assert!(
        problems.is_empty(),
        "stored values differ from the stored spectra's: {problems:?}"
    );
    let r = store
        .read(|tx| cuvette::lab::derivation::recompute(tx, true, true, |_, _| {}))
        .unwrap();
    assert_eq!(r.changed, 0, "a full recompute would change {} values", r.changed);
}
