//! The fuzz targets' seed corpus runs here too, so every seed is read on every test run: the
//! well-formed seeds must read, and nothing may panic.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance};
use cuvette::spectra::{ReadOptions, read_bytes};

#[test]
fn every_spectrum_seed_reads_and_analyses() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz/corpus/read_spectrum");
    let mut n = 0;
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        let bytes = std::fs::read(&p).unwrap();
        let raw =
            read_bytes("seed", &bytes, &ReadOptions::default()).unwrap_or_else(|e| panic!("{}: {e}", p.display()));
        let t = raw.to_trace("seed", None).unwrap();
        analyze_absorbance(&t, &AnalysisSettings::default()).unwrap();
        n += 1;
    }
    assert!(n >= 5);
}

#[test]
fn every_query_seed_parses_or_fails_cleanly() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz/corpus/parse_query");
    let mut parsed = 0;
    for e in std::fs::read_dir(dir).unwrap() {
        let text = std::fs::read_to_string(e.unwrap().path()).unwrap();
        if cuvette::search::parse(&text).is_ok() {
            parsed += 1;
        }
    }
    assert_eq!(parsed, 3, "three seeds are valid queries, one is not");
}
