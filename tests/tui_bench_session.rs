//! A first bench session in the terminal UI, key by key, as a new student would do it on an
//! empty lab: the first-run form, a new batch, an aliquot from two files found with the
//! picker (a path typed and Tab-completed, the preview read, absorbance and PL taken), a
//! folder watched while two more exports arrive, the watch stopped, the batch found again.
//! The files are the invented sample exports in `demo-db/samples/` (written from stated
//! formulas by its script; first exciton 520 nm at 2 min, 590 nm at 30 min). At the end the
//! database and the command line are asked what was logged.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;

use common::settled::{ctrl, press, typ, wait_until};
use common::{Lab, open_ui, scalar, screen_at};
use crossterm::event::KeyCode;
use cuvette::tui::app::{App, Mode, View};
use std::path::{Path, PathBuf};

fn samples() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-db/samples")
}

fn screen(app: &App) -> String {
    screen_at(app, 80, 24)
}

fn selected(app: &App) -> String {
    match &app.mode {
        Mode::Picker(p) => p.selected_entry().map(|e| e.name.clone()).unwrap_or_default(),
        _ => panic!("the picker is not open: {}", message(app)),
    }
}

fn message(app: &App) -> String {
    app.message.as_ref().map(|m| m.1.clone()).unwrap_or_default()
}

#[test]
fn a_first_bench_session_from_an_empty_lab() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let incoming = lab.path("incoming");
    std::fs::create_dir(&incoming).unwrap();
    let mut app = open_ui(&lab);
    app.export_dir = lab.dir.path().to_path_buf();

    // First run: the lab is empty, so cuvette asks who is working and where vials go.
    app.offer_first_run();
    assert!(screen(&app).contains("A new lab"), "{}", screen(&app));
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "wren@example.org");
    press(&mut app, KeyCode::Enter);
    assert!(matches!(app.mode, Mode::Normal), "{}", message(&app));
    assert_eq!(
        scalar(&lab.db, "SELECT COUNT(*) FROM person WHERE name = 'Test Runner'"),
        1
    );
    assert_eq!(scalar(&lab.db, "SELECT COUNT(*) FROM location"), 1);

    // A new batch.
    press(&mut app, KeyCode::Char('n'));
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "QD-S1 first growth");
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.view, View::Sheet, "{}", message(&app));

    // An aliquot from files: the picker, a typed path completed with Tab.
    press(&mut app, KeyCode::Char('a'));
    assert!(matches!(app.mode, Mode::Picker(_)), "{}", message(&app));
    press(&mut app, KeyCode::Char('/'));
    ctrl(&mut app, 'u');
    typ(&mut app, &format!("{}/gro", samples().display()));
    press(&mut app, KeyCode::Tab);
    let Mode::Picker(p) = &app.mode else {
        panic!("picker closed")
    };
    assert!(p.path_text.ends_with("/growth/"), "{}", p.path_text);
    press(&mut app, KeyCode::Enter);
    // The folder opens on its first file (`..` above it), the files by name.
    assert_eq!(selected(&app), "abs_02min.csv");
    let s = screen(&app);
    assert!(s.contains("abs_02min.csv") && s.contains("first exciton"), "{s}");
    // The preview's first exciton is the generator's 520 nm, to a nanometre.
    let preview_nm: f64 = s
        .split("first exciton")
        .nth(1)
        .and_then(|t| t.split_whitespace().next())
        .and_then(|w| w.trim_end_matches("nm").parse().ok())
        .unwrap_or_else(|| panic!("no first exciton in the preview:\n{s}"));
    assert!((preview_nm - 520.0).abs() < 1.5, "{preview_nm}");
    press(&mut app, KeyCode::Enter);
    assert!(message(&app).contains("absorbance"), "{}", message(&app));
    // pl_02min.csv: past the four absorbance files.
    for _ in 0..4 {
        press(&mut app, KeyCode::Down);
    }
    assert_eq!(selected(&app), "pl_02min.csv");
    press(&mut app, KeyCode::Enter);
    assert!(message(&app).contains("PL"), "{}", message(&app));
    press(&mut app, KeyCode::Tab);
    let Mode::Form(f) = &app.mode else {
        panic!("no aliquot form: {}", message(&app))
    };
    assert_eq!(f.fields[0].text, "2", "minutes from the file's name");
    // The PL was excited at 480 nm (the samples' script): set it in the last field.
    for _ in 0..5 {
        press(&mut app, KeyCode::Tab);
    }
    ctrl(&mut app, 'u');
    typ(&mut app, "480");
    press(&mut app, KeyCode::Enter);
    assert!(message(&app).contains("D "), "{}", message(&app));
    // One timed aliquot: a rate of diameter needs two, a focusing verdict three.
    assert!(
        screen(&app).contains("growth: focusing needs 3 aliquots · D - nm/min"),
        "{}",
        screen(&app)
    );

    // Watch a folder; two exports of the 30 min aliquot arrive while it runs.
    press(&mut app, KeyCode::Char('w'));
    assert!(screen(&app).contains("Watch a folder"), "{}", screen(&app));
    ctrl(&mut app, 'u');
    typ(&mut app, &incoming.display().to_string());
    press(&mut app, KeyCode::Enter);
    assert!(app.watching.is_some(), "{}", message(&app));
    assert!(screen(&app).contains("● watching"), "{}", screen(&app));
    for name in ["abs_30min.csv", "pl_30min.csv"] {
        std::fs::copy(samples().join("arriving").join(name), incoming.join(name)).unwrap();
    }
    wait_until(&mut app, 30, |a| a.watching.as_ref().is_some_and(|w| w.logged >= 2));
    assert_eq!(app.watching.as_ref().map(|w| w.logged), Some(2), "{}", message(&app));
    press(&mut app, KeyCode::Char('W'));
    wait_until(&mut app, 10, |a| a.watching.is_none());
    assert!(app.watching.is_none(), "the watch did not stop");
    assert!(!screen(&app).contains("● watching"));

    // Find the batch again from the batch list.
    press(&mut app, KeyCode::Char('1'));
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "QD-S1");
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.hits.len(), 1);
    assert!(screen(&app).contains("QD-S1 first growth"), "{}", screen(&app));
    press(&mut app, KeyCode::Char('q'));
    assert!(app.quit);
    drop(app);

    // What the database holds: two aliquots, at 2 and 30 min, each with one absorbance and
    // one PL spectrum (the watch joined the two files of one time point into one aliquot).
    let c = rusqlite::Connection::open(&lab.db).unwrap();
    let mut q = c
        .prepare(
            "SELECT a.minutes, group_concat(s.kind, '+') FROM aliquot a JOIN spectrum s ON s.aliquot_id = a.id \
             GROUP BY a.id ORDER BY a.minutes",
        )
        .unwrap();
    let rows: Vec<(f64, String)> = q
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))
        .unwrap()
        .map(Result::unwrap)
        .collect();
    let kinds: Vec<(f64, Vec<&str>)> = rows
        .iter()
        .map(|(m, k)| {
            let mut k: Vec<&str> = k.split('+').collect();
            k.sort();
            (*m, k)
        })
        .collect();
    assert_eq!(kinds, vec![(2.0, vec!["abs", "pl"]), (30.0, vec!["abs", "pl"])]);
    // The command line finds the batch, its last aliquot's first exciton the 30 min 590 nm.
    let found = lab.ok(&["find", "QD-S1", "--json"]).json();
    let hits = found.as_array().or_else(|| found["hits"].as_array()).unwrap();
    assert_eq!(hits.len(), 1, "{found}");
    let text = hits[0].to_string();
    assert!(text.contains("QD-S1 first growth"), "{text}");
    let peak = hits[0]["peak_nm"]
        .as_f64()
        .or_else(|| hits[0]["first_exciton_nm"].as_f64());
    assert!(peak.is_some_and(|p| (p - 590.0).abs() < 1.5), "{text}");
}
