//! The key table is behind every mode of the terminal UI: the views, the search box, the file
//! picker and its path line, forms, confirmations and the help. In each, a key rebound in
//! `keys.json` does the action (and the old key no longer does), the footer names the new key,
//! and so does the help; a rebinding onto another key of the same mode is refused with one
//! line naming both actions.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::settled::{ctrl, press, typ};
use common::*;
use crossterm::event::KeyCode;
use cuvette::tui::app::{App, Mode, View};
use cuvette::tui::keys::{self, KeyMap, Scope};

/// The demo lab's UI with these rebindings, read from a keys.json as the UI reads it.
fn ui_with(lab: &Lab, keys_json: &str) -> App {
    let file = lab.write("keys.json", keys_json);
    let keys = KeyMap::from_file(&file).unwrap();
    let store = cuvette::lab::open(&lab.db, "Test Runner").unwrap();
    let mut app = App::new(store, keys);
    app.export_dir = lab.dir.path().to_path_buf();
    app
}

fn footer(app: &App) -> String {
    screen_at(app, 160, 45)
        .lines()
        .last()
        .unwrap_or("")
        .trim_end()
        .to_string()
}

/// Every page of the help, as text.
fn help_pages(app: &mut App) -> String {
    press(app, KeyCode::Char('?'));
    let mut all = String::new();
    for _ in 0..8 {
        all.push_str(&screen_at(app, 80, 24));
        press(app, KeyCode::PageDown);
    }
    all
}

/// The footer of each mode is the key table's footer for that mode's scope.
#[test]
fn each_modes_footer_is_its_scope_in_the_table() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let mut app = ui_with(&lab, "{}");
    let check = |app: &App, scope: Scope| {
        assert_eq!(app.mode_scope(), scope);
        let f = footer(app);
        let entries = if scope.is_view() {
            app.keys.footer(scope)
        } else {
            app.keys.footer_in(scope)
        };
        if scope == Scope::Search {
            assert_eq!(f, app.keys.search_footer());
            return;
        }
        assert!(!entries.is_empty(), "{scope:?}");
        for (key, name) in entries {
            assert!(f.contains(&format!("{key} {name}")), "{scope:?}: {f}");
        }
    };
    check(&app, Scope::Batches);
    press(&mut app, KeyCode::Char('/'));
    check(&app, Scope::Search);
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('?'));
    check(&app, Scope::Help);
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.view, View::Sheet);
    check(&app, Scope::Sheet);
    press(&mut app, KeyCode::Char('a'));
    check(&app, Scope::Picker);
    press(&mut app, KeyCode::Char('/'));
    check(&app, Scope::PickerPath);
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('X'));
    check(&app, Scope::Form);
    typ(&mut app, "checking keys");
    press(&mut app, KeyCode::Enter);
    check(&app, Scope::Confirm);
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Esc);
    for (key, scope) in [('2', Scope::Shelf), ('3', Scope::Calibrations), ('4', Scope::Trail)] {
        press(&mut app, KeyCode::Char(key));
        check(&app, scope);
    }
}

#[test]
fn a_rebound_key_works_and_is_shown_in_the_search_box_help_and_forms() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let mut app = ui_with(
        &lab,
        r#"{"search-done": "ctrl-d", "close-help": "x", "save": "ctrl-s", "confirm": "Y"}"#,
    );
    // The search box: Ctrl-D leaves it, Enter no longer does, and the footer says so.
    press(&mut app, KeyCode::Char('/'));
    assert_eq!(footer(&app), "type a query · Ctrl-D/Esc leave the search box");
    typ(&mut app, "PbS");
    press(&mut app, KeyCode::Enter);
    assert!(matches!(app.mode, Mode::Search));
    ctrl(&mut app, 'd');
    assert!(matches!(app.mode, Mode::Normal));
    assert_eq!(app.query, "PbS");
    // The help: x closes it, Esc no longer does, its title and footer name x.
    press(&mut app, KeyCode::Char('?'));
    let s = screen_at(&app, 80, 24);
    assert!(s.contains("x or ? closes"), "{s}");
    assert!(footer(&app).contains("x close-help"), "{}", footer(&app));
    press(&mut app, KeyCode::Esc);
    assert!(matches!(app.mode, Mode::Help));
    press(&mut app, KeyCode::Char('x'));
    assert!(matches!(app.mode, Mode::Normal));
    // A form: Ctrl-S saves, Enter does not; a confirmation: Y goes ahead.
    press(&mut app, KeyCode::Char('1'));
    press(&mut app, KeyCode::Enter);
    let sheet = app.sheet.as_ref().unwrap().batch.id;
    press(&mut app, KeyCode::Char('X'));
    assert!(footer(&app).contains("Ctrl-S save"), "{}", footer(&app));
    typ(&mut app, "a key test");
    press(&mut app, KeyCode::Enter);
    assert!(matches!(app.mode, Mode::Form(_)), "Enter no longer saves");
    ctrl(&mut app, 's');
    assert!(matches!(app.mode, Mode::Confirm(_)), "{:?}", app.message);
    assert!(footer(&app).contains("Y confirm"), "{}", footer(&app));
    press(&mut app, KeyCode::Char('y'));
    assert!(matches!(app.mode, Mode::Confirm(_)), "y is no longer the confirm key");
    press(&mut app, KeyCode::Char('Y'));
    assert!(matches!(app.mode, Mode::Normal), "{:?}", app.message);
    assert_eq!(
        scalar(
            &lab.db,
            &format!("SELECT count(*) FROM batch WHERE id = {sheet} AND voided_at IS NOT NULL")
        ),
        1
    );
    // The help lists every rebinding under its mode.
    let help = help_pages(&mut app);
    for line in [
        "Ctrl-D leave the search box",
        "x close the help",
        "Ctrl-S save",
        "Y go ahead",
    ] {
        assert!(help.contains(line), "{line}: {help}");
    }
}

#[test]
fn a_rebound_key_works_and_is_shown_in_the_picker_and_its_path_line() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    for name in ["abs_01min.csv", "abs_02min.csv", "abs_03min.csv"] {
        lab.abs_file(name, 540.0);
    }
    let mut app = ui_with(&lab, r#"{"pick-down": "n", "complete-path": "ctrl-t"}"#);
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Char('a'));
    let selected = |app: &App| match &app.mode {
        Mode::Picker(p) => p.selected,
        other => panic!("no picker: {other:?}"),
    };
    let at = selected(&app);
    press(&mut app, KeyCode::Char('n'));
    assert_eq!(selected(&app), at + 1, "n moves down the folder");
    press(&mut app, KeyCode::Down);
    assert_eq!(selected(&app), at + 1, "↓ no longer does");
    // The path line: Ctrl-T completes, and its hint and footer say so.
    press(&mut app, KeyCode::Char('/'));
    let s = screen_at(&app, 160, 45);
    assert!(
        s.contains("Ctrl-T completes · Enter goes there · Esc back to the list"),
        "{s}"
    );
    assert!(footer(&app).contains("Ctrl-T complete-path"), "{}", footer(&app));
    typ(&mut app, "abs_0");
    ctrl(&mut app, 't');
    let Mode::Picker(p) = &app.mode else {
        panic!("the picker closed: {:?}", app.message)
    };
    assert_eq!(p.completions.len(), 3, "three names fit: {:?}", p.completions);
    press(&mut app, KeyCode::Tab);
    let Mode::Picker(p) = &app.mode else {
        panic!("the picker closed")
    };
    assert!(
        p.path_text.ends_with("/abs_0") && p.completions.len() == 3,
        "Tab no longer completes: {}",
        p.path_text
    );
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Esc);
    let help = help_pages(&mut app);
    assert!(help.contains("n the entry below"), "{help}");
    assert!(help.contains("Ctrl-T complete the path"), "{help}");
}

/// A keys.json that puts two actions of one mode on one key is refused with one line naming
/// both, before the UI starts; the shipped keys load.
#[test]
fn a_keys_file_with_a_conflict_is_refused_naming_both_actions() {
    let lab = Lab::new();
    let file = lab.write("keys.json", r#"{"draw": "m"}"#);
    let e = match KeyMap::from_file(&file) {
        Err(e) => e,
        Ok(_) => panic!("draw on m was taken"),
    };
    assert_eq!(e.lines().count(), 1, "{e}");
    assert!(e.contains("draw and move would both be m (shelf)"), "{e}");
    let file = lab.write("keys.json", r#"{"draw": "D"}"#);
    let k = KeyMap::from_file(&file).unwrap();
    assert!(
        k.footer(Scope::Shelf)
            .iter()
            .any(|(key, name)| key == "D" && *name == "draw")
    );
    assert!(keys::KeyMap::new(&Default::default()).is_ok());
}
