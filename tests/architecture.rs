//! The layering rules, read off the source: SQL is spoken only in `src/store/`, and the store
//! imports nothing from the layers above it; the faces (`cli`, `tui`) write only through `lab`.
//! Files that still break a rule while a move is under way are listed here by name, and the
//! lists may only shrink: a new file that breaks one, or a file once cleared that starts again,
//! fails this test. The lists are empty: every file keeps the rules.

use std::path::{Path, PathBuf};

/// Files outside `src/store/` that still name rusqlite or run SQL (none).
const SQL_OUTSIDE_STORE_YET: &[&str] = &[];

/// Store files that still import a higher layer (none).
const STORE_IMPORTING_UP_YET: &[&str] = &[];

const SQL_MARKS: &[&str] = &[
    "rusqlite",
    ".prepare(",
    ".prepare_cached(",
    ".execute(",
    ".execute_batch(",
    ".query_row(",
    ".query_map(",
];

const HIGHER_LAYERS: &[&str] = &[
    "crate::derive",
    "crate::lab",
    "crate::report",
    "crate::search",
    "crate::cli",
    "crate::tui",
    "crate::lab::bench",
    "crate::lab::demo",
    "crate::lab::corrections",
];

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let p = e.path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

fn sources() -> Vec<(String, String)> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut files = Vec::new();
    rust_files(&root.join("src"), &mut files);
    files.sort();
    files
        .into_iter()
        .map(|p| {
            let rel = p
                .strip_prefix(root)
                .map(|r| r.to_string_lossy().replace('\\', "/"))
                .unwrap_or_default();
            let text = std::fs::read_to_string(&p).unwrap_or_default();
            (rel, text)
        })
        .collect()
}

#[test]
fn sql_is_spoken_only_in_the_store() {
    let all = sources();
    assert!(all.len() > 20, "the source tree was not found");
    let offenders: Vec<&str> = all
        .iter()
        .filter(|(path, text)| !path.starts_with("src/store/") && SQL_MARKS.iter().any(|m| text.contains(m)))
        .map(|(p, _)| p.as_str())
        .collect();
    let new: Vec<&&str> = offenders
        .iter()
        .filter(|p| !SQL_OUTSIDE_STORE_YET.contains(p))
        .collect();
    assert!(
        new.is_empty(),
        "SQL outside src/store/ in {new:?}: move it into a store function"
    );
    let cleared: Vec<&&str> = SQL_OUTSIDE_STORE_YET
        .iter()
        .filter(|p| !offenders.contains(p))
        .collect();
    assert!(
        cleared.is_empty(),
        "{cleared:?} no longer run SQL: take them off the list"
    );
}

#[test]
fn the_store_imports_no_higher_layer() {
    let all = sources();
    let offenders: Vec<&str> = all
        .iter()
        .filter(|(path, text)| path.starts_with("src/store/") && HIGHER_LAYERS.iter().any(|m| text.contains(m)))
        .map(|(p, _)| p.as_str())
        .collect();
    let new: Vec<&&str> = offenders
        .iter()
        .filter(|p| !STORE_IMPORTING_UP_YET.contains(p))
        .collect();
    assert!(new.is_empty(), "store files importing a higher layer: {new:?}");
    let cleared: Vec<&&str> = STORE_IMPORTING_UP_YET
        .iter()
        .filter(|p| !offenders.contains(p))
        .collect();
    assert!(
        cleared.is_empty(),
        "{cleared:?} import no higher layer now: take them off the list"
    );
}

#[test]
fn report_and_search_run_no_sql() {
    // Cleared in full: the views and the search language read through store functions.
    for (path, text) in sources() {
        if path.starts_with("src/report/") || path.starts_with("src/search/") {
            let mark = SQL_MARKS.iter().find(|m| text.contains(**m));
            assert!(mark.is_none(), "{path} contains {mark:?}");
        }
    }
}

/// Files of the two faces that still open a write transaction or call a store write function
/// themselves instead of a `lab` action (none).
const FACE_WRITING_YET: &[&str] = &[];

/// The store's write functions, and the store's own way into a write transaction.
const STORE_WRITES: &[&str] = &[
    ".write(|",
    "insert_batch(",
    "edit_batch(",
    "set_batch_status(",
    "insert_aliquot(",
    "insert_spectrum(",
    "insert_vial(",
    "draw_from_vial(",
    "move_vial(",
    "dispose_vial(",
    "add_person(",
    "add_material(",
    "add_reagent(",
    "add_location(",
    "save_recipe(",
    "meta_set(",
    "ui_setting_set(",
    "set_vial_concentration(",
    "void_aliquot(",
    "reinstate_aliquot(",
    "edit_aliquot(",
    "void_batch(",
    "reinstate_batch(",
    "reinstate_vial(",
    "hand_over(",
    "restore(",
    "restore_new(",
];

/// The command line and the UI write only through `lab`: a face holding a write transaction of
/// its own is how the two drifted apart (a recompute from the UI was not audited).
#[test]
fn the_faces_write_only_through_lab() {
    let all = sources();
    let offenders: Vec<(&str, &str)> = all
        .iter()
        .filter(|(path, _)| path.starts_with("src/cli/") || path.starts_with("src/tui/"))
        .filter_map(|(path, text)| {
            // `store::model::` and `model::` calls; a lab function of the same name is fine.
            STORE_WRITES
                .iter()
                .find(|w| {
                    text.match_indices(**w).any(|(i, _)| {
                        let before = &text[..i];
                        w.starts_with('.')
                            || before.ends_with("model::")
                            || before.ends_with("store::handover::")
                            || before.ends_with("backup::")
                    })
                })
                .map(|w| (path.as_str(), *w))
        })
        .collect();
    let new: Vec<&(&str, &str)> = offenders
        .iter()
        .filter(|(p, _)| !FACE_WRITING_YET.contains(p))
        .collect();
    assert!(new.is_empty(), "faces writing outside lab: {new:?}");
    let cleared: Vec<&&str> = FACE_WRITING_YET
        .iter()
        .filter(|p| !offenders.iter().any(|(o, _)| o == *p))
        .collect();
    assert!(
        cleared.is_empty(),
        "{cleared:?} write only through lab now: take them off the list"
    );
}

/// The code of a file outside its `#[cfg(test)]` module: a test may build a lab through the
/// layers above to have something to look at.
fn non_test(text: &str) -> &str {
    match text.find("\n#[cfg(test)]") {
        Some(i) => &text[..i],
        None => text,
    }
}

/// Which layers each lower layer must not import. The faces call `lab` and `report`; `lab`
/// may use the views (`report`) to return what it wrote; `report` reads the store and
/// computes with `derive`, and never calls an action; `derive` and `spectra` are pure.
const LAYER_RULES: &[(&str, &[&str])] = &[
    // The vocabularies are the lowest layer: every layer may name them, and they name no other
    // (the error type aside, which turns an unknown word into a refusal).
    (
        "src/vocab/",
        &[
            "crate::spectra",
            "crate::derive",
            "crate::store",
            "crate::lab",
            "crate::report",
            "crate::search",
            "crate::cli",
            "crate::tui",
            "crate::hazards",
            "crate::paths",
            "crate::par",
            "crate::safe_text",
        ],
    ),
    // The register of the labs this process holds open sits beside the vocabularies: the store
    // writes to it and the readers ask it, so it names nothing of the project.
    (
        "src/open_labs.rs",
        &[
            "crate::spectra",
            "crate::derive",
            "crate::store",
            "crate::lab",
            "crate::report",
            "crate::search",
            "crate::cli",
            "crate::tui",
            "crate::vocab",
        ],
    ),
    (
        "src/spectra/",
        &[
            "crate::derive",
            "crate::store",
            "crate::lab",
            "crate::report",
            "crate::search",
            "crate::cli",
            "crate::tui",
        ],
    ),
    (
        "src/derive/",
        &[
            "crate::lab",
            "crate::report",
            "crate::search",
            "crate::cli",
            "crate::tui",
        ],
    ),
    (
        "src/search/",
        &["crate::lab", "crate::report", "crate::cli", "crate::tui"],
    ),
    ("src/report/", &["crate::lab", "crate::cli", "crate::tui"]),
    ("src/lab/", &["crate::cli", "crate::tui"]),
];

#[test]
fn each_layer_imports_only_the_layers_below_it() {
    let all = sources();
    let mut broken = Vec::new();
    for (path, text) in &all {
        let code = non_test(text);
        for (dir, forbidden) in LAYER_RULES {
            if path.starts_with(dir) {
                for f in *forbidden {
                    if code.contains(f) {
                        broken.push(format!("{path} names {f}"));
                    }
                }
            }
        }
    }
    assert!(broken.is_empty(), "layers importing upwards: {broken:#?}");
}

/// The science holds no connection: `derive` computes from rows and values handed to it.
#[test]
fn derive_holds_no_connection() {
    for (path, text) in sources() {
        if path.starts_with("src/derive/") {
            let code = non_test(&text);
            for word in ["store::Db", "store::Store", "Db,", "&Db", "&mut Store"] {
                assert!(!code.contains(word), "{path} names {word}");
            }
        }
    }
}
