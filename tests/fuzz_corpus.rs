//! The fuzz targets' seed corpus runs here too, so every seed is read on every test run: the
//! well-formed seeds must read, the seeds named `bad_*` must be refused with an error, and
//! nothing may panic.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance, analyze_pl};
use cuvette::spectra::{RawSpectrum, ReadOptions, delimited, read_bytes};
use std::path::{Path, PathBuf};

fn seeds(target: &str) -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz/corpus").join(target);
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir).unwrap().map(|e| e.unwrap().path()).collect();
    v.sort();
    v
}

fn is_bad(p: &Path) -> bool {
    p.file_name().unwrap().to_string_lossy().starts_with("bad_")
}

fn check_read(p: &Path, r: cuvette::Result<RawSpectrum>) {
    if is_bad(p) {
        let e = r
            .err()
            .unwrap_or_else(|| panic!("{} must be refused", p.display()))
            .to_string();
        assert!(!e.contains('\n'), "{e}");
        return;
    }
    let raw = r.unwrap_or_else(|e| panic!("{}: {e}", p.display()));
    let t = raw.to_trace("seed", None).unwrap();
    analyze_absorbance(&t, &AnalysisSettings::default()).unwrap();
    analyze_pl(&t, &AnalysisSettings::default()).unwrap();
}

#[test]
fn every_spectrum_seed_reads_and_analyses() {
    let all = seeds("read_spectrum");
    for p in &all {
        let bytes = std::fs::read(p).unwrap();
        check_read(p, read_bytes("seed", &bytes, &ReadOptions::default()));
    }
    assert!(all.len() >= 8 && all.iter().any(|p| is_bad(p)));
}

#[test]
fn every_delimited_seed_reads_and_analyses() {
    // The first byte is the target's column and unit choice, decoded as the target does; these
    // seeds use the defaults or choices their files answer (three_columns_ws: x in column 1,
    // y in column 3).
    let all = seeds("read_delimited");
    for p in &all {
        let bytes = std::fs::read(p).unwrap();
        let (&choice, rest) = bytes.split_first().unwrap();
        let opts = ReadOptions {
            x_col: (choice & 0x03 != 0).then(|| usize::from(choice & 0x03) - 1),
            y_col: (choice & 0x0c != 0).then_some(usize::from((choice >> 2) & 0x03) + 1),
            x_unit: (choice >> 4 == 1).then(|| "eV".to_string()),
            ..Default::default()
        };
        check_read(p, delimited::read("seed", &String::from_utf8_lossy(rest), &opts));
    }
    assert!(all.len() >= 5 && all.iter().any(|p| is_bad(p)));
}

#[test]
fn every_query_seed_parses_or_fails_cleanly() {
    let mut parsed = 0;
    for p in seeds("parse_query") {
        let text = std::fs::read_to_string(p).unwrap();
        if cuvette::search::parse(&text).is_ok() {
            parsed += 1;
        }
    }
    // q1-q3, q7, q9 and q11 are valid queries; q4-q6, q8, q10 and q13-q15 (an old form, a bare
    // QY above 1, a dash range of dates) are not.
    assert_eq!(parsed, 6);
}

#[test]
fn every_evaluation_seed_runs_against_a_lab() {
    use cuvette::store::model;
    let mut st = cuvette::lab::in_memory("tester").unwrap();
    st.write(|tx, who| {
        for (name, notes) in [("µµ-probe", "washed twice"), ("T1", "ZnS shell grown at 240 °C")] {
            model::insert_batch(
                tx,
                who,
                &model::NewBatch {
                    name: name.into(),
                    material: "CdSe".into(),
                    notes: Some(notes.into()),
                    ..Default::default()
                },
            )?;
        }
        Ok(())
    })
    .unwrap();
    let facts = st.read(|tx| cuvette::search::load_facts(tx)).unwrap();
    let mut found = 0;
    for p in seeds("eval_query") {
        let text = std::fs::read_to_string(p).unwrap();
        if let Ok(q) = cuvette::search::parse(&text) {
            found += cuvette::search::filter(&facts, &q).len();
        }
    }
    // Only q12 can match here (the others ask for values these batches lack): it finds the
    // probe by a multi-byte name and a typo.
    assert_eq!(found, 1);
}
