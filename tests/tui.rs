//! The terminal UI (issue 6), rendered into ratatui's TestBackend at 80x24 and driven with key
//! events against a real temporary database.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
fn screen(app: &App) -> String {
    screen_at(app, 80, 24)
}

use common::settled::{press, typ};
use common::*;
use crossterm::event::KeyCode;
use cuvette::store::model;
use cuvette::tui::app::{App, View};
use cuvette::tui::{draw, keys};
use ratatui::Terminal;
use ratatui::backend::TestBackend;

fn demo_app() -> (Lab, App) {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let store = cuvette::lab::open(&lab.db, "Test Runner").unwrap();
    let app = App::new(store, keys::KeyMap::new(&Default::default()).unwrap());
    (lab, app)
}

#[test]
fn every_view_renders_its_content_at_80x24() {
    let (_lab, mut app) = demo_app();
    let s = screen(&app);
    assert!(
        s.contains("1 Batches") && s.contains("material") && s.contains("D nm"),
        "{s}"
    );
    assert!(s.contains("25 of 25 batches"), "{s}");
    assert!(s.contains("CS-261010-w"), "{s}");
    assert!(
        s.contains("q quit") && s.contains("/ search"),
        "footer from the key table: {s}"
    );
    // The batch sheet of the newest done CdSe batch.
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.view, View::Sheet);
    let s = screen(&app);
    assert!(
        s.contains("Batch 23") && s.contains("growth series") && s.contains("absorbance"),
        "{s}"
    );
    assert!(
        s.contains("cadmium oxide H330") && s.contains("SDS"),
        "hazards and the SDS notice shown: {s}"
    );
    assert!(
        s.contains("yu2003 v2"),
        "curve (in full) and calibration version shown: {s}"
    );
    press(&mut app, KeyCode::Char('p'));
    assert!(screen(&app).contains("PL (p: absorbance)"));
    press(&mut app, KeyCode::Char('2'));
    let s = screen(&app);
    assert!(
        s.contains("location") && s.contains("Fridge F2") && s.contains("owner"),
        "{s}"
    );
    press(&mut app, KeyCode::Char('3'));
    let s = screen(&app);
    assert!(s.contains("calibration versions") && s.contains("v2"), "{s}");
    press(&mut app, KeyCode::Char('4'));
    let s = screen(&app);
    assert!(s.contains("when (UTC)") && s.contains("create"), "{s}");
    press(&mut app, KeyCode::Char('?'));
    // The help pages through the whole key table at 80x24.
    let mut s = screen(&app);
    for _ in 0..6 {
        press(&mut app, KeyCode::PageDown);
        s.push_str(&screen(&app));
    }
    assert!(
        s.contains("keys") && s.contains("search with the query language") && s.contains("draw from the vial"),
        "help from the key table: {s}"
    );
    press(&mut app, KeyCode::Esc);
    assert!(!screen(&app).contains("search with the query language"));
}

#[test]
fn live_search_filters_and_reports_errors_in_place() {
    let (_lab, mut app) = demo_app();
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "material PbS");
    let s = screen(&app);
    assert!(s.contains("of 25 batches") && s.contains("PS-"), "{s}");
    assert!(!s.contains("CS-2605"), "{s}");
    typ(&mut app, " size>x");
    let s = screen(&app);
    assert!(
        s.contains("^ column 19: expected a number for size"),
        "the error under its column: {s}"
    );
    press(&mut app, KeyCode::Esc);
    // q outside a text field quits; inside one it is a letter.
    press(&mut app, KeyCode::Char('/'));
    press(&mut app, KeyCode::Char('q'));
    assert!(!app.quit);
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Char('q'));
    assert!(app.quit);
}

#[test]
fn no_color_draws_without_colours() {
    let (_lab, mut app) = demo_app();
    app.colour = false;
    let mut t = Terminal::new(TestBackend::new(80, 24)).unwrap();
    t.draw(|f| draw::draw(f, &app)).unwrap();
    let buf = t.backend().buffer();
    assert!(
        buf.content()
            .iter()
            .all(|c| c.fg == ratatui::style::Color::Reset && c.bg == ratatui::style::Color::Reset)
    );
}

#[test]
fn a_bench_session_driven_by_keys_lands_in_the_database() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["location", "add", "Fridge A", "--kind", "fridge"]);
    let exports = lab.path("exports");
    std::fs::create_dir(&exports).unwrap();
    for (name, peak) in [("abs_02min.csv", 535.0), ("abs_05min.csv", 560.0)] {
        let (x, y) =
            cuvette::lab::demo::absorbance("CdSe", peak, 0.04, 0.1, 0.0005, &mut cuvette::lab::demo::Rng::new(1));
        std::fs::write(exports.join(name), csv(&x, &y)).unwrap();
    }
    let store = cuvette::lab::open(&lab.db, "Test Runner").unwrap();
    let mut app = App::new(store, keys::KeyMap::new(&Default::default()).unwrap());
    app.export_dir = exports.clone();
    // Log a batch.
    press(&mut app, KeyCode::Char('n'));
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "Key run");
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.view, View::Sheet, "{:?}", app.message);
    // Two aliquots from the export folder.
    for (down, minutes) in [(0, "2"), (1, "5")] {
        press(&mut app, KeyCode::Char('a'));
        for _ in 0..down {
            press(&mut app, KeyCode::Down);
        }
        press(&mut app, KeyCode::Enter);
        press(&mut app, KeyCode::Tab);
        // The minutes come from the file's name (abs_05min.csv), ready to check.
        match &app.mode {
            cuvette::tui::app::Mode::Form(f) => assert_eq!(f.fields[0].text, minutes),
            _ => panic!("no aliquot form: {:?}", app.message),
        }
        press(&mut app, KeyCode::Enter);
        assert!(
            app.message.as_ref().is_some_and(|m| !m.0 && m.1.contains("D ")),
            "{:?}",
            app.message
        );
    }
    // The derived diameter is on screen as the store has it.
    let c = rusqlite::Connection::open(&lab.db).unwrap();
    let d: f64 = c
        .query_row("SELECT value FROM derived_value WHERE quantity = 'diameter_nm' AND superseded_at IS NULL ORDER BY aliquot_id DESC LIMIT 1", [], |r| r.get(0))
        .unwrap();
    assert!(screen(&app).contains(&format!("{d:.2}")), "{}", screen(&app));
    // Put product into a vial.
    press(&mut app, KeyCode::Char('v'));
    typ(&mut app, "3");
    press(&mut app, KeyCode::Enter);
    // Search for the batch.
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "Key run");
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.hits.len(), 1);
    assert!(screen(&app).contains("Key run"));
    // Draw from the vial on the shelf.
    press(&mut app, KeyCode::Char('2'));
    press(&mut app, KeyCode::Char('d'));
    typ(&mut app, "0.5");
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "TEM");
    press(&mut app, KeyCode::Enter);
    assert!(
        app.message.as_ref().is_some_and(|m| m.1.contains("2.50 mL left")),
        "{:?}",
        app.message
    );
    // A bad draw is an on-screen message, not a crash, and changes nothing.
    press(&mut app, KeyCode::Char('d'));
    typ(&mut app, "99");
    press(&mut app, KeyCode::Enter);
    assert!(
        app.message
            .as_ref()
            .is_some_and(|m| m.0 && m.1.contains("only 2.5 mL left")),
        "{:?}",
        app.message
    );
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('q'));
    assert!(app.quit);
    drop(app);
    let st = cuvette::lab::open(&lab.db, "check").unwrap();
    let b = model::list_batches(&st.conn).unwrap();
    assert_eq!(b.len(), 1);
    assert_eq!(b[0].name, "Key run");
    let al = model::aliquots_of(&st.conn, b[0].id).unwrap();
    assert_eq!(
        al.iter().map(|a| a.minutes).collect::<Vec<_>>(),
        vec![Some(2.0), Some(5.0)]
    );
    let v = model::vials_of_batch(&st.conn, b[0].id).unwrap();
    assert_eq!(v[0].volume_ml, 2.5);
    let ev = model::vial_events(&st.conn, v[0].id).unwrap();
    assert_eq!(ev.last().unwrap().why.as_deref(), Some("TEM"));
}

#[test]
fn forms_and_the_file_picker_render_and_watching_a_folder_logs_new_exports() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let exports = lab.path("exports");
    std::fs::create_dir(&exports).unwrap();
    let (x, y) = cuvette::lab::demo::absorbance("CdSe", 540.0, 0.04, 0.1, 0.0005, &mut cuvette::lab::demo::Rng::new(1));
    std::fs::write(exports.join("abs_01min.csv"), csv(&x, &y)).unwrap();
    let store = cuvette::lab::open(&lab.db, "Test Runner").unwrap();
    let mut app = App::new(store, keys::KeyMap::new(&Default::default()).unwrap());
    app.export_dir = exports.clone();
    press(&mut app, KeyCode::Char('n'));
    let s = screen(&app);
    assert!(s.contains("New batch") && s.contains("material: CdSe"), "{s}");
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "Watched");
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Char('a'));
    let s = screen(&app);
    assert!(s.contains("choose export files") && s.contains("abs_01min.csv"), "{s}");
    press(&mut app, KeyCode::Esc);
    // Watch until stopped; a file that appears meanwhile becomes an aliquot.
    press(&mut app, KeyCode::Char('w'));
    assert!(screen(&app).contains("Watch a folder"));
    press(&mut app, KeyCode::Enter);
    assert!(
        app.message.as_ref().is_some_and(|m| m.1.contains("watching")),
        "{:?}",
        app.message
    );
    assert!(
        screen(&app).contains("● watching: 0 logged, W stops"),
        "{}",
        screen(&app)
    );
    assert!(screen_at(&app, 160, 45).contains("● watching exports/ → batch"));
    std::thread::sleep(std::time::Duration::from_millis(300));
    let (x, y) = cuvette::lab::demo::absorbance("CdSe", 552.0, 0.04, 0.1, 0.0005, &mut cuvette::lab::demo::Rng::new(2));
    std::fs::write(exports.join("abs_07min.csv"), csv(&x, &y)).unwrap();
    let start = std::time::Instant::now();
    while app.watching.as_ref().is_some_and(|w| w.logged == 0) && start.elapsed().as_secs() < 20 {
        app.poll_workers();
        std::thread::sleep(std::time::Duration::from_millis(100));
    }
    assert!(
        app.message.as_ref().is_some_and(|m| m.1.contains("first exciton")),
        "{:?}",
        app.message
    );
    press(&mut app, KeyCode::Char('W'));
    let start = std::time::Instant::now();
    while app.watching.is_some() && start.elapsed().as_secs() < 10 {
        app.poll_workers();
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
    assert!(app.watching.is_none(), "the watch did not stop");
    assert!(!screen(&app).contains("● watching"));
    let st = cuvette::lab::open(&lab.db, "check").unwrap();
    let b = model::list_batches(&st.conn).unwrap();
    let al = model::aliquots_of(&st.conn, b[0].id).unwrap();
    assert_eq!(al.len(), 1);
    assert_eq!(al[0].minutes, Some(7.0), "minutes taken from the file name");
}
