//! The typed vocabularies (`cuvette::vocab`): every word of every vocabulary goes through text,
//! serde and SQLite and comes back as itself, with the very words the schema's CHECK
//! constraints list (schema/0001_initial.sql and 0005_corrections_and_provenance.sql are the
//! source of each expected list below); an unknown word is refused in one line naming the valid
//! ones, and on the command line it is a usage error that leaves the lab as it was.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;

use common::Lab;
use cuvette::vocab::{
    AmountUnit, BatchRelation, BatchStatus, ConcentrationSource, LocationKind, SpectrumKind, UnknownWord,
    VialEventKind, VialStatus, Vocabulary,
};
use std::fmt::Debug;

/// One vocabulary through Display, FromStr, serde and its word list, with the expected words.
fn round_trips<T>(expected: &[&str])
where
    T: Vocabulary + Debug + PartialEq + serde::Serialize + serde::de::DeserializeOwned,
{
    assert_eq!(T::WORDS, expected, "{}: the words on disk", T::WHAT);
    assert_eq!(T::ALL.len(), expected.len());
    for (v, w) in T::ALL.iter().zip(expected) {
        assert_eq!(v.to_string(), *w);
        assert_eq!(v.as_str(), *w);
        assert_eq!(T::from_str(w).unwrap(), *v);
        let json = serde_json::to_string(v).unwrap();
        assert_eq!(json, format!("\"{w}\""), "serde writes the bare word");
        assert_eq!(serde_json::from_str::<T>(&json).unwrap(), *v);
        // A width in a table's format lays the word out as it did the text.
        assert_eq!(format!("{v:<12}|"), format!("{w:<12}|"));
    }
    let e: UnknownWord = T::from_str("nonsense").unwrap_err();
    let msg = e.to_string();
    assert!(msg.contains("'nonsense'"), "{msg}");
    assert!(msg.contains(T::WHAT), "{msg}");
    for w in expected {
        assert!(msg.contains(w), "{msg} lacks {w}");
    }
    assert_eq!(msg.lines().count(), 1);
    assert!(serde_json::from_str::<T>("\"nonsense\"").is_err());
    // Case matters, as it did for the bare strings the CHECK constraints compare.
    if let Some(w) = expected.iter().find(|w| w.to_uppercase() != **w) {
        assert!(T::from_str(&w.to_uppercase()).is_err());
    }
}

#[test]
fn every_vocabulary_round_trips_through_text_and_serde() {
    round_trips::<BatchStatus>(&["planned", "growing", "done", "failed", "archived"]);
    round_trips::<BatchRelation>(&["shell", "fraction", "repeat"]);
    round_trips::<LocationKind>(&["freezer", "fridge", "glovebox", "shelf", "cabinet"]);
    round_trips::<VialStatus>(&["in_use", "empty", "disposed"]);
    round_trips::<AmountUnit>(&["mg", "g", "mL", "uL", "mmol", "umol"]);
    round_trips::<VialEventKind>(&["create", "draw", "move", "dispose", "reinstate", "measure", "handover"]);
    round_trips::<ConcentrationSource>(&["measured", "estimate", "entered", "recorded"]);
    round_trips::<SpectrumKind>(&["abs", "pl", "ple"]);
}

#[test]
fn the_spectra_kinds_are_the_stored_words() {
    // The spectra layer's own kinds name the same words.
    for k in SpectrumKind::ALL {
        let theirs = cuvette::spectra::quantity::SpectrumKind::parse(k.as_str()).unwrap();
        assert_eq!(theirs.as_str(), k.as_str());
    }
}

/// Every vocabulary as a bound parameter and a column: stored as TEXT, the bare word, and read
/// back as itself; a word outside it is a conversion error.
fn sqlite_round_trips<T>()
where
    T: Vocabulary + Debug + PartialEq + rusqlite::ToSql + rusqlite::types::FromSql,
{
    let c = rusqlite::Connection::open_in_memory().unwrap();
    for v in T::ALL {
        let (back, text, ty): (T, String, String) = c
            .query_row("SELECT ?1, ?1, typeof(?1)", [v], |r| {
                Ok((r.get(0)?, r.get(1)?, r.get(2)?))
            })
            .unwrap();
        assert_eq!(back, *v);
        assert_eq!(text, v.as_str());
        assert_eq!(ty, "text");
    }
    let bad = c.query_row("SELECT 'nonsense'", [], |r| r.get::<_, T>(0));
    let msg = bad.unwrap_err().to_string();
    assert!(msg.contains("nonsense") && msg.contains(T::WORDS[0]), "{msg}");
}

#[test]
fn every_vocabulary_round_trips_through_sqlite_values() {
    sqlite_round_trips::<BatchStatus>();
    sqlite_round_trips::<BatchRelation>();
    sqlite_round_trips::<LocationKind>();
    sqlite_round_trips::<VialStatus>();
    sqlite_round_trips::<AmountUnit>();
    sqlite_round_trips::<VialEventKind>();
    sqlite_round_trips::<ConcentrationSource>();
    sqlite_round_trips::<SpectrumKind>();
}

/// The demo lab's vials, their histories and concentrations read back typed: every status,
/// event kind and source the demo writes is one of the vocabulary's words.
#[test]
fn the_demo_lab_reads_back_typed() {
    use cuvette::store::model;
    let lab = Lab::new();
    lab.ok(&["demo", "--no-ui"]);
    let mut store = cuvette::store::Store::open_read(&lab.db, "Test Runner").unwrap();
    let (vials, events) = store
        .read(|tx| {
            let vials = model::list_vials(tx, true)?;
            let mut events = Vec::new();
            for v in &vials {
                events.extend(model::vial_events(tx, v.id)?);
            }
            Ok((vials, events))
        })
        .unwrap();
    assert!(
        vials.iter().any(|v| v.status == VialStatus::Disposed),
        "the demo disposes a vial"
    );
    assert!(vials.iter().any(|v| v.status == VialStatus::InUse));
    assert!(events.iter().any(|e| e.kind == VialEventKind::Create));
    assert!(events.iter().any(|e| e.kind == VialEventKind::Dispose));
    assert!(vials.iter().any(|v| v.concentration_source.is_some()));
    // The JSON gives the same words.
    let shelf = lab.ok(&["shelf", "--all", "--json"]).json();
    let words: Vec<&str> = shelf
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|v| v["status"].as_str())
        .collect();
    assert!(words.contains(&"disposed") && words.contains(&"in_use"), "{words:?}");
}

/// Every word is written into its column of a real lab and read back typed: the CHECK
/// constraints accept exactly these words, and the typed reads give the same values.
#[test]
fn every_vocabulary_round_trips_through_sqlite() {
    use cuvette::store::model;
    let mut store = cuvette::lab::in_memory("Test Runner").unwrap();
    let parent = store
        .write(|tx, who| {
            for (i, k) in LocationKind::ALL.iter().enumerate() {
                model::add_location(tx, who, &format!("place {i}"), *k, None)?;
            }
            let parent = model::insert_batch(
                tx,
                who,
                &model::NewBatch {
                    name: "parent".into(),
                    material: "CdSe".into(),
                    ..Default::default()
                },
            )?;
            for (i, r) in BatchRelation::ALL.iter().enumerate() {
                model::insert_batch(
                    tx,
                    who,
                    &model::NewBatch {
                        name: format!("child {i}"),
                        material: "CdSe".into(),
                        parent_batch_id: Some(parent),
                        parent_relation: Some(*r),
                        ..Default::default()
                    },
                )?;
            }
            for s in BatchStatus::ALL {
                let row = model::set_batch_status(tx, who, parent, *s)?;
                assert_eq!(row.status, *s);
                assert_eq!(model::get_batch(tx, parent)?.status, *s);
            }
            Ok(parent)
        })
        .unwrap();
    let (locations, children) = store
        .read(|tx| Ok((model::list_locations(tx)?, model::children_of(tx, parent)?)))
        .unwrap();
    let mut kinds: Vec<LocationKind> = locations
        .iter()
        .filter(|l| l.name.starts_with("place "))
        .map(|l| l.kind)
        .collect();
    kinds.sort();
    let mut all = LocationKind::ALL.to_vec();
    all.sort();
    assert_eq!(kinds, all);
    let relations: Vec<Option<BatchRelation>> = children.iter().map(|c| c.2).collect();
    assert_eq!(
        relations,
        BatchRelation::ALL.iter().map(|r| Some(*r)).collect::<Vec<_>>()
    );
}

/// The bytes stored are the bare words: a vocabulary column reads back as the TEXT it always was,
/// and a word outside the vocabulary in a file is a conversion error, not a panic.
#[test]
fn the_stored_bytes_are_the_words() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["location", "add", "Fridge A", "--kind", "fridge"]);
    lab.ok(&[
        "batch",
        "new",
        "--material",
        "CdSe",
        "--name",
        "b",
        "--status",
        "growing",
    ]);
    let c = rusqlite::Connection::open(&lab.db).unwrap();
    let kind: String = c.query_row("SELECT kind FROM location", [], |r| r.get(0)).unwrap();
    assert_eq!(kind, "fridge");
    let status: String = c.query_row("SELECT status FROM batch", [], |r| r.get(0)).unwrap();
    assert_eq!(status, "growing");
    let t: String = c
        .query_row("SELECT typeof(status) FROM batch", [], |r| r.get(0))
        .unwrap();
    assert_eq!(t, "text");
    let shown = lab.ok(&["batch", "show", "1", "--json"]).json();
    assert_eq!(shown["status"], "growing");
}

#[test]
fn the_searched_quantities_are_one_table() {
    use cuvette::vocab::{SEARCHED_QUANTITIES, Stage};
    // The fields the query language names for numbers (README's query table).
    let fields: Vec<&str> = SEARCHED_QUANTITIES.iter().map(|q| q.search_field).collect();
    assert_eq!(fields, ["size", "peak", "pl", "qy", "fwhm", "dispersion", "conc"]);
    for q in SEARCHED_QUANTITIES {
        assert!(
            cuvette::search::FIELD_NAMES.iter().any(|(n, _)| *n == q.search_field),
            "{} is not a search field",
            q.search_field
        );
        // Stage one is exactly what the engine computes from the spectra alone.
        let spectral = cuvette::derive::engine::SPECTRAL.contains(&q.name);
        assert_eq!(q.stage == Stage::One, spectral, "{}", q.name);
    }
    let thresholds = cuvette::lab::derivation::THRESHOLD_FIELDS;
    assert_eq!(thresholds, SEARCHED_QUANTITIES);
    assert_eq!(
        cuvette::vocab::quantity::searched_by("size").map(|q| q.name),
        Some("diameter_nm")
    );
}

/// A command line refusal of an unknown word: exit 2 (a usage error, README's exit table), one
/// line naming the word and every valid one, and the lab exactly as it was.
fn usage_error(lab: &Lab, args: &[&str], word: &str, valid: &[&str]) {
    let before = lab.counts();
    let o = lab.run(args);
    assert_eq!(o.code, 2, "{args:?}: {}{}", o.stderr, o.stdout);
    let msg = o.stderr.trim();
    assert_eq!(msg.lines().count(), 1, "not one line: {msg}");
    assert!(msg.contains(&format!("'{word}'")), "{msg}");
    for w in valid {
        assert!(msg.contains(w), "{msg} lacks {w}");
    }
    assert!(!msg.contains("panicked"));
    assert!(o.stdout.is_empty(), "{}", o.stdout);
    assert_eq!(lab.counts(), before, "{args:?} changed the lab");
}

#[test]
fn an_unknown_word_on_the_command_line_is_a_usage_error() {
    let lab = Lab::new();
    lab.ok(&["demo", "--no-ui"]);
    let shown = lab.ok(&["batch", "show", "1", "--json"]).stdout;
    usage_error(
        &lab,
        &["batch", "set-status", "1", "nonsense"],
        "nonsense",
        BatchStatus::WORDS,
    );
    usage_error(
        &lab,
        &[
            "batch",
            "new",
            "--material",
            "CdSe",
            "--name",
            "x",
            "--status",
            "cooking",
        ],
        "cooking",
        BatchStatus::WORDS,
    );
    usage_error(
        &lab,
        &[
            "batch",
            "new",
            "--material",
            "CdSe",
            "--name",
            "x",
            "--parent",
            "1",
            "--relation",
            "cousin",
        ],
        "cousin",
        BatchRelation::WORDS,
    );
    usage_error(
        &lab,
        &["batch", "list", "--status", "cooking"],
        "cooking",
        BatchStatus::WORDS,
    );
    usage_error(
        &lab,
        &["location", "add", "Roof", "--kind", "volcano"],
        "volcano",
        LocationKind::WORDS,
    );
    assert_eq!(lab.ok(&["batch", "show", "1", "--json"]).stdout, shown);
    // The words themselves are taken.
    let done = lab.ok(&["batch", "set-status", "1", "done", "--json"]).json();
    assert_eq!(done["status"], "done");
    lab.ok(&["location", "add", "Roof", "--kind", "shelf"]);
}
