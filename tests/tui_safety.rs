//! Acting safely in the terminal UI (issue 14, item 3): forms name their target, the selection
//! follows what was acted on, destructive and bulk actions confirm with a summary, a form's keys
//! never reach the view, text fields edit like a shell's line, number fields take a decimal
//! comma, and numbers are rounded for people. Driven by keys against a real demo lab and read
//! back from ratatui's TestBackend and the database.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::settled::{ctrl, press, reload, typ, wait_idle};
use common::*;
use crossterm::event::KeyCode;
use cuvette::tui::app::{App, Mode, View};
use cuvette::tui::keys;
use std::time::Duration;

fn scalar_f(lab: &Lab, sql: &str) -> f64 {
    rusqlite::Connection::open(&lab.db)
        .unwrap()
        .query_row(sql, [], |r| r.get(0))
        .unwrap()
}

fn scalar_s(lab: &Lab, sql: &str) -> String {
    rusqlite::Connection::open(&lab.db)
        .unwrap()
        .query_row(sql, [], |r| r.get(0))
        .unwrap()
}

/// The text of the focused form field, or panics when no form is open.
fn field(app: &App) -> String {
    match &app.mode {
        Mode::Form(f) => f.fields[f.focus].text.clone(),
        other => panic!("no form open: {other:?}"),
    }
}

fn both_sizes(app: &App) -> [String; 2] {
    [screen_at(app, 80, 24), screen_at(app, 160, 45)]
}

/// The shelf, with its first vial (the demo's vial 11, in Freezer F1) selected.
fn shelf(app: &mut App) -> i64 {
    press(app, KeyCode::Char('2'));
    assert_eq!(app.view, View::Shelf);
    app.vials[app.vial_selected].id
}

#[test]
fn dispose_confirms_with_a_summary_esc_changes_nothing_enter_disposes() {
    let (lab, mut app) = demo_ui();
    let vial = shelf(&mut app);
    let label = app.vials[app.vial_selected].label.clone();
    press(&mut app, KeyCode::Char('x'));
    for s in both_sizes(&app) {
        assert!(
            s.contains(&format!("Dispose of vial {label} (batch 5")),
            "the form names its vial: {s}"
        );
    }
    // No reason: refused before anything is asked.
    press(&mut app, KeyCode::Enter);
    assert!(
        app.message.as_ref().is_some_and(|m| m.0 && m.1.contains("reason")),
        "{:?}",
        app.message
    );
    assert!(matches!(app.mode, Mode::Form(_)));
    typ(&mut app, "cracked cap");
    press(&mut app, KeyCode::Enter);
    for s in both_sizes(&app) {
        assert!(s.contains(&format!("Dispose of vial {label}?")), "{s}");
        assert!(
            s.contains("1.55 mL left") && s.contains("why: cracked cap"),
            "the summary: {s}"
        );
        assert!(s.contains("y go ahead") && s.contains("n do not"), "{s}");
    }
    let before = lab.counts();
    press(&mut app, KeyCode::Esc);
    assert!(
        matches!(app.mode, Mode::Form(_)),
        "Esc goes back to the form, the reason kept"
    );
    assert_eq!(field(&app), "cracked cap");
    press(&mut app, KeyCode::Esc);
    assert_eq!(lab.counts(), before, "nothing changed");
    assert_eq!(
        scalar_s(&lab, &format!("SELECT status FROM vial WHERE id = {vial}")),
        "in_use"
    );
    // n declines as Esc does.
    press(&mut app, KeyCode::Char('x'));
    typ(&mut app, "cracked cap");
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Char('n'));
    press(&mut app, KeyCode::Esc);
    assert_eq!(lab.counts(), before);
    // Enter goes ahead.
    press(&mut app, KeyCode::Char('x'));
    typ(&mut app, "cracked cap");
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Enter);
    assert!(matches!(app.mode, Mode::Normal), "{:?}", app.mode);
    assert_eq!(
        scalar_s(&lab, &format!("SELECT status FROM vial WHERE id = {vial}")),
        "disposed"
    );
    assert!(
        app.message.as_ref().is_some_and(|m| !m.0 && m.1.contains("(disposed)")),
        "{:?}",
        app.message
    );
}

#[test]
fn repeat_and_void_batch_confirm_first() {
    let (lab, mut app) = demo_ui();
    let batches = || scalar_f(&lab, "SELECT count(*) FROM batch");
    let n = batches();
    let id = app.hits[app.selected].id;
    press(&mut app, KeyCode::Char('r'));
    for s in both_sizes(&app) {
        assert!(
            s.contains(&format!("Repeat batch {id}")) && s.contains("(repeat)"),
            "{s}"
        );
        assert!(
            s.contains("status planned") && s.contains("itself does not change"),
            "{s}"
        );
    }
    press(&mut app, KeyCode::Esc);
    assert_eq!(batches(), n);
    assert_eq!(app.view, View::Batches);
    press(&mut app, KeyCode::Char('r'));
    press(&mut app, KeyCode::Char('y'));
    assert_eq!(batches(), n + 1.0);
    assert_eq!(app.view, View::Sheet);
    let new = app.sheet.as_ref().unwrap().batch.id;
    press(&mut app, KeyCode::Esc);
    assert_eq!(app.hits[app.selected].id, new, "the selection follows the new batch");
    // Voiding the open batch: a summary, Esc keeps it.
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Char('X'));
    assert!(screen_at(&app, 80, 24).contains(&format!("Void batch {new}")));
    typ(&mut app, "mislabelled");
    press(&mut app, KeyCode::Enter);
    let s = screen_at(&app, 80, 24);
    assert!(
        s.contains("0 aliquots, 0 vials") && s.contains("nothing is deleted"),
        "{s}"
    );
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Esc);
    let void = |lab: &Lab| {
        scalar_f(
            lab,
            &format!("SELECT count(*) FROM batch WHERE id = {new} AND voided_at IS NOT NULL"),
        )
    };
    assert_eq!(void(&lab), 0.0);
    press(&mut app, KeyCode::Char('X'));
    typ(&mut app, "mislabelled");
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Enter);
    assert_eq!(void(&lab), 1.0);
}

#[test]
fn voiding_an_aliquot_confirms_and_names_it() {
    let (lab, mut app) = demo_ui();
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Enter);
    let b = app.sheet.as_ref().unwrap().batch.id;
    let a = app.sheet.as_ref().unwrap().aliquots[0].id;
    press(&mut app, KeyCode::Char('x'));
    typ(&mut app, "PL logged as absorbance");
    press(&mut app, KeyCode::Enter);
    for s in both_sizes(&app) {
        assert!(
            s.contains(&format!("Void aliquot {a}?")) && s.contains(&format!("of batch {b}")),
            "{s}"
        );
        assert!(s.contains("x reinstates it"), "{s}");
    }
    let voided = |lab: &Lab| {
        scalar_f(
            lab,
            &format!("SELECT count(*) FROM aliquot WHERE id = {a} AND voided_at IS NOT NULL"),
        )
    };
    press(&mut app, KeyCode::Char('n'));
    press(&mut app, KeyCode::Esc);
    assert_eq!(voided(&lab), 0.0);
    press(&mut app, KeyCode::Char('x'));
    typ(&mut app, "PL logged as absorbance");
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Char('y'));
    assert_eq!(voided(&lab), 1.0);
}

#[test]
fn applying_a_recompute_previews_then_asks() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    lab.ok(&["calib", "set-curve", "CdSe", "jasieniak2009", "--why", "newer curve"]);
    let mut app = open_ui(&lab);
    let recomputes = |lab: &Lab| scalar_f(lab, "SELECT count(*) FROM audit_log WHERE action = 'recompute'");
    let runs = recomputes(&lab);
    assert!(!app.stale_batches.is_empty());
    press(&mut app, KeyCode::Char('3'));
    press(&mut app, KeyCode::Char('A'));
    wait_idle(&mut app);
    for s in both_sizes(&app) {
        assert!(
            s.contains("Recompute stale values?") && s.contains("stale aliquots"),
            "{s}"
        );
        assert!(s.contains("superseded"), "{s}");
    }
    press(&mut app, KeyCode::Esc);
    wait_idle(&mut app);
    assert_eq!(recomputes(&lab), runs, "declined: nothing recomputed");
    reload(&mut app);
    assert!(!app.stale_batches.is_empty());
    press(&mut app, KeyCode::Char('A'));
    wait_idle(&mut app);
    press(&mut app, KeyCode::Enter);
    wait_idle(&mut app);
    assert_eq!(recomputes(&lab), runs + 1.0);
    assert!(app.stale_batches.is_empty(), "{:?}", app.stale_batches);
    // With nothing stale, A says so and asks nothing.
    press(&mut app, KeyCode::Char('A'));
    wait_idle(&mut app);
    assert!(matches!(app.mode, Mode::Normal));
    assert!(
        app.message.as_ref().is_some_and(|m| m.1.contains("nothing is stale")),
        "{:?}",
        app.message
    );
}

#[test]
fn handover_confirms_with_the_counts_it_will_move() {
    let (lab, mut app) = demo_ui();
    shelf(&mut app);
    let from = app.vials[app.vial_selected].owner.clone().unwrap();
    let owned = |lab: &Lab| {
        scalar_f(
            lab,
            &format!(
                "SELECT count(*) FROM vial v JOIN person p ON p.id = v.owner_id WHERE p.name = '{from}' AND v.status <> 'disposed'"
            ),
        )
    };
    let vials = owned(&lab);
    assert!(vials > 0.0);
    let out = lab.path("packs");
    std::fs::create_dir(&out).unwrap();
    let fill = |app: &mut App| {
        press(app, KeyCode::Char('H'));
        assert_eq!(field(app), from, "from is the selected vial's owner");
        press(app, KeyCode::Tab);
        typ(app, "Ines Marlowe");
        press(app, KeyCode::Tab);
        ctrl(app, 'u');
        typ(app, out.to_str().unwrap());
        press(app, KeyCode::Enter);
    };
    fill(&mut app);
    for s in both_sizes(&app) {
        assert!(s.contains(&format!("Hand over from {from} to Ines Marlowe?")), "{s}");
        assert!(s.contains(&format!("{vials} vials and")), "{s}");
    }
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Esc);
    assert_eq!(owned(&lab), vials, "declined: nothing handed over");
    fill(&mut app);
    press(&mut app, KeyCode::Char('y'));
    wait_idle(&mut app);
    assert!(
        app.message.as_ref().is_some_and(|m| !m.0 && m.1.contains("handed")),
        "{:?}",
        app.message
    );
    assert_eq!(owned(&lab), 0.0);
    assert!(std::fs::read_dir(&out).unwrap().next().is_some(), "the pack is written");
}

#[test]
fn the_selection_follows_a_moved_vial() {
    let (lab, mut app) = demo_ui();
    let vial = shelf(&mut app);
    assert_eq!(app.vial_selected, 0);
    let label = app.vials[0].label.clone();
    press(&mut app, KeyCode::Char('m'));
    assert!(screen_at(&app, 80, 24).contains(&format!("Move vial {label} (batch 5")));
    typ(&mut app, "Glovebox GB-1");
    press(&mut app, KeyCode::Enter);
    assert!(app.message.as_ref().is_some_and(|m| !m.0), "{:?}", app.message);
    assert_eq!(
        scalar_s(
            &lab,
            &format!("SELECT l.name FROM vial v JOIN location l ON l.id = v.location_id WHERE v.id = {vial}")
        ),
        "Glovebox GB-1"
    );
    assert_ne!(app.vial_selected, 0, "the moved vial sorts under its new location");
    assert_eq!(app.vials[app.vial_selected].id, vial, "and the highlight went with it");
    // The next action acts on the same vial, not on whatever took its old row.
    press(&mut app, KeyCode::Char('d'));
    assert!(screen_at(&app, 80, 24).contains(&format!("Draw from vial {label}")));
}

#[test]
fn text_fields_edit_like_a_line_with_a_visible_cursor() {
    let (_lab, mut app) = demo_ui();
    shelf(&mut app);
    press(&mut app, KeyCode::Char('d'));
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "TEM grid prep");
    ctrl(&mut app, 'w');
    assert_eq!(field(&app), "TEM grid ");
    ctrl(&mut app, 'w');
    assert_eq!(field(&app), "TEM ");
    press(&mut app, KeyCode::Home);
    typ(&mut app, "x");
    assert_eq!(field(&app), "xTEM ");
    press(&mut app, KeyCode::End);
    press(&mut app, KeyCode::Backspace);
    press(&mut app, KeyCode::Left);
    press(&mut app, KeyCode::Left);
    press(&mut app, KeyCode::Delete);
    assert_eq!(field(&app), "xTM");
    ctrl(&mut app, 'a');
    press(&mut app, KeyCode::Delete);
    ctrl(&mut app, 'e');
    typ(&mut app, " ok");
    assert_eq!(field(&app), "TM ok");
    press(&mut app, KeyCode::Right); // already at the end: stays
    for _ in 0..3 {
        press(&mut app, KeyCode::Left);
    }
    // The cursor is drawn where it is: the cell after "TM" is reversed.
    let mut t = ratatui::Terminal::new(ratatui::backend::TestBackend::new(80, 24)).unwrap();
    t.draw(|f| cuvette::tui::draw::draw(f, &app)).unwrap();
    let buf = t.backend().buffer().clone();
    let text = screen_at(&app, 80, 24);
    let (y, line) = text
        .lines()
        .enumerate()
        .find(|(_, l)| l.contains("why: TM ok"))
        .unwrap();
    let at = line.find("why: TM ok").unwrap();
    let x = line[..at].chars().count() + "why: TM".chars().count();
    assert_eq!(buf[(x as u16, y as u16)].symbol(), " ");
    assert!(
        buf[(x as u16, y as u16)]
            .modifier
            .contains(ratatui::style::Modifier::REVERSED),
        "cursor at {x},{y}"
    );
    assert!(
        !buf[(x as u16 + 1, y as u16)]
            .modifier
            .contains(ratatui::style::Modifier::REVERSED)
    );
    ctrl(&mut app, 'u');
    assert_eq!(field(&app), " ok", "Ctrl-U deletes back to the start");
    // No Ctrl-letter types its letter.
    for c in ['u', 'a', 'w', 'e', 'k', 'x'] {
        ctrl(&mut app, c);
    }
    assert!(!field(&app).contains(['u', 'a', 'w', 'e', 'x']), "{}", field(&app));
    // The search box edits the same way.
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('1'));
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "CdSe grown");
    ctrl(&mut app, 'w');
    assert_eq!(app.query, "CdSe ");
    ctrl(&mut app, 'a');
    typ(&mut app, "x");
    assert_eq!(app.query, "xCdSe ");
    ctrl(&mut app, 'u');
    ctrl(&mut app, 'e');
    ctrl(&mut app, 'u');
    assert_eq!(app.query, "");
}

#[test]
fn a_decimal_comma_is_read_as_a_decimal_point() {
    let (lab, mut app) = demo_ui();
    let vial = shelf(&mut app);
    let before = scalar_f(&lab, &format!("SELECT volume_ml FROM vial WHERE id = {vial}"));
    press(&mut app, KeyCode::Char('d'));
    typ(&mut app, "0,5");
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "TEM");
    press(&mut app, KeyCode::Enter);
    assert!(app.message.as_ref().is_some_and(|m| !m.0), "{:?}", app.message);
    let after = scalar_f(&lab, &format!("SELECT volume_ml FROM vial WHERE id = {vial}"));
    assert!((before - after - 0.5).abs() < 1e-9, "{before} -> {after}");
    // Two decimal marks: refused, named, nothing drawn.
    press(&mut app, KeyCode::Char('d'));
    typ(&mut app, "0,1.5");
    press(&mut app, KeyCode::Enter);
    assert!(
        app.message.as_ref().is_some_and(|m| m.0 && m.1.starts_with("mL:")),
        "{:?}",
        app.message
    );
    assert_eq!(
        scalar_f(&lab, &format!("SELECT volume_ml FROM vial WHERE id = {vial}")),
        after
    );
}

#[test]
fn a_forms_keys_never_reach_the_view() {
    let (lab, mut app) = demo_ui();
    let vial = shelf(&mut app);
    // As a person at the keyboard has it (tui::run sets the same, shorter, hold).
    app.settle = Duration::from_secs(600);
    // Inside a form every letter and digit is text, view keys included.
    press(&mut app, KeyCode::Char('d'));
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "q1234?/x");
    assert!(!app.quit);
    assert_eq!(field(&app), "q1234?/x");
    // Esc closes a form on purpose: the next key acts at once.
    press(&mut app, KeyCode::Esc);
    // Typing on as a form closes on Enter: held back, shown, not taken as keys (q would quit,
    // 1 would leave the shelf, x would open a disposal).
    press(&mut app, KeyCode::Char('d'));
    assert!(matches!(app.mode, Mode::Form(_)));
    typ(&mut app, "0.1");
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "TEM");
    press(&mut app, KeyCode::Enter);
    assert!(matches!(app.mode, Mode::Normal));
    typ(&mut app, " grid1xq");
    press(&mut app, KeyCode::Enter);
    assert!(!app.quit);
    assert_eq!(app.view, View::Shelf);
    assert!(matches!(app.mode, Mode::Normal), "{:?}", app.mode);
    assert_eq!(app.held_back, " grid1xq⏎");
    assert!(screen_at(&app, 80, 24).contains("held back \" grid1xq⏎\""));
    // A doubled Enter does not confirm a disposal unseen.
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('x'));
    typ(&mut app, "cracked");
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Enter);
    assert!(matches!(app.mode, Mode::Confirm(_)), "{:?}", app.mode);
    assert_eq!(
        scalar_s(&lab, &format!("SELECT status FROM vial WHERE id = {vial}")),
        "in_use"
    );
    // Once settled, keys act again.
    app.settle = Duration::ZERO;
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('1'));
    assert_eq!(app.view, View::Batches);
    assert!(app.held_back.is_empty());
    // A paste with a line break goes into the field whole and submits nothing.
    press(&mut app, KeyCode::Char('2'));
    press(&mut app, KeyCode::Char('d'));
    press(&mut app, KeyCode::Tab);
    app.on_paste("TEM\ngrid q");
    assert_eq!(field(&app), "TEM grid q");
}

#[test]
fn every_form_names_what_it_acts_on() {
    let (_lab, mut app) = demo_ui();
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Enter);
    let b = app.sheet.as_ref().unwrap().batch.id;
    let name = app.sheet.as_ref().unwrap().batch.name.clone();
    for (key, title) in [
        ('v', format!("New vial of batch {b} {name}")),
        ('i', format!("Import a folder of exports into batch {b} {name}")),
        ('w', format!("Watch a folder for batch {b} {name}")),
        ('e', "Correct aliquot".to_string()),
        ('M', "Move a spectrum".to_string()),
        ('X', format!("Void batch {b} ({name})")),
    ] {
        press(&mut app, KeyCode::Char(key));
        for s in both_sizes(&app) {
            assert!(s.contains(&title), "{key}: {s}");
        }
        press(&mut app, KeyCode::Esc);
    }
    press(&mut app, KeyCode::Char('a'));
    assert!(screen_at(&app, 80, 24).contains(&format!("Add an aliquot to batch {b}")));
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('3'));
    press(&mut app, KeyCode::Char('c'));
    assert!(
        screen_at(&app, 80, 24).contains("calibration v3 after v2"),
        "{}",
        screen_at(&app, 80, 24)
    );
}

#[test]
fn numbers_on_screen_are_rounded_for_people() {
    let (lab, mut app) = demo_ui();
    let vial = shelf(&mut app);
    // The demo's vial 11 holds 3.7 mL less its draws: 1.55 mL, the decimal difference (a draw
    // no longer keeps the binary round-off 1.5500000000000003).
    let j = lab.ok(&["shelf", "--json"]).json();
    let row = j.as_array().unwrap().iter().find(|r| r["id"] == vial).unwrap().clone();
    let ml = row["volume_ml"].as_f64().unwrap();
    assert_eq!(ml, 1.55, "the decimal volume left: {row}");
    let um = row["concentration_molar"].as_f64().unwrap() * 1e6;
    let nmol = row["nanomoles_left"].as_f64().unwrap();
    assert!((50.0..60.0).contains(&um) && (80.0..90.0).contains(&nmol), "{row}");
    // Worked by hand for two-digit values: three figures leave one decimal.
    let (um3, nmol3) = (format!("{um:.1}"), format!("{nmol:.1}"));
    for s in both_sizes(&app) {
        assert!(!s.contains(&format!("{um:.2}")), "{s}");
        // (The label's end is cut at 80 columns: a layout matter, left to item 4.)
        let line = s
            .lines()
            .find(|l| l.contains("CSZ-260601-"))
            .unwrap_or_else(|| panic!("{s}"));
        assert!(
            line.contains(" 1.55 ") && line.contains(&format!(" {um3} ")),
            "volume to 0.01 mL, µM to 3 figures: {line}"
        );
        assert!(line.contains(&format!(" {nmol3} ")), "nanomoles to 3 figures: {line}");
    }
    // Drawn volumes read the same way in the message, and the status is a word.
    press(&mut app, KeyCode::Char('d'));
    typ(&mut app, "0,45");
    press(&mut app, KeyCode::Enter);
    let stored = scalar_f(&lab, &format!("SELECT volume_ml FROM vial WHERE id = {vial}"));
    assert!((stored - 1.1).abs() < 1e-9, "{stored}");
    assert!(
        app.message
            .as_ref()
            .is_some_and(|m| m.1.contains("1.10 mL left at Freezer F1 (in use)")),
        "{:?}",
        app.message
    );
}

#[test]
fn the_help_pages_at_80x24_and_shows_every_key() {
    let (_lab, mut app) = demo_ui();
    press(&mut app, KeyCode::Char('?'));
    let first = screen_at(&app, 80, 24);
    assert!(first.contains("lines 1-") && first.contains("PgDn more"), "{first}");
    let mut all = first.clone();
    for _ in 0..8 {
        press(&mut app, KeyCode::PageDown);
        all.push_str(&screen_at(&app, 80, 24));
    }
    for b in keys::DEFAULT_KEYS {
        // Each help text shows whole on some page (none is cut at 80 columns).
        assert!(all.contains(b.help), "{} missing: {}", b.name, b.help);
    }
    press(&mut app, KeyCode::Esc);
    assert!(matches!(app.mode, Mode::Normal));
    // At 160x45 it shows in two columns on fewer pages; the box is never wider than the screen.
    app.size = (160, 45);
    press(&mut app, KeyCode::Char('?'));
    let wide = screen_at(&app, 160, 45);
    assert!(wide.contains("anywhere") && wide.contains("batch sheet"), "{wide}");
}

/// The first-run form's "your name" stood for nothing: writes stayed signed with the login
/// name ("root") although the form had just added the person. Now the person named there
/// signs the writes that follow (unless the writer was chosen with --as, $CUVETTE_USER or a
/// remembered name), and a new batch is theirs.
#[test]
fn the_first_run_name_signs_the_writes_that_follow() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let mut app = open_ui(&lab);
    app.offer_first_run();
    ctrl(&mut app, 'u');
    typ(&mut app, "Maren Okafor");
    press(&mut app, KeyCode::Enter);
    assert!(
        app.message
            .as_ref()
            .is_some_and(|m| m.1.contains("signed Maren Okafor")),
        "{:?}",
        app.message
    );
    press(&mut app, KeyCode::Char('n'));
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "first of hers");
    press(&mut app, KeyCode::Enter);
    drop(app);
    let c = rusqlite::Connection::open(&lab.db).unwrap();
    let op: String = c
        .query_row(
            "SELECT p.name FROM batch b JOIN person p ON p.id = b.operator_id WHERE b.name = 'first of hers'",
            [],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(op, "Maren Okafor");
    let who: String = c
        .query_row("SELECT who FROM audit_log ORDER BY id DESC LIMIT 1", [], |r| r.get(0))
        .unwrap();
    assert_eq!(who, "Maren Okafor");

    // A writer chosen on purpose keeps signing; the person is still added.
    let lab = Lab::new();
    lab.ok(&["init"]);
    let mut app = open_ui(&lab);
    app.writer.chosen = true;
    app.offer_first_run();
    ctrl(&mut app, 'u');
    typ(&mut app, "Maren Okafor");
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.store.actor, "Test Runner");
}

/// `/` in the picker opens the path line on the current folder; typing an absolute path
/// straight away appended it ("/tmp/lab//work/…"). A `/` or `~` typed first starts anew;
/// anything else continues the folder shown (a name inside it).
#[test]
fn a_path_typed_from_its_root_replaces_the_folder_shown() {
    let (_lab, mut app) = demo_ui();
    press(&mut app, KeyCode::Char('1'));
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Char('a'));
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "/tmp");
    let Mode::Picker(p) = &app.mode else {
        panic!("no picker: {:?}", app.message)
    };
    assert_eq!(p.path_text, "/tmp");
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "sub");
    let Mode::Picker(p) = &app.mode else {
        panic!("no picker")
    };
    assert!(
        p.path_text.ends_with("/sub") && p.path_text.len() > 4,
        "{}",
        p.path_text
    );
}

/// A PL file with no excitation wavelength was refused naming a command-line flag
/// (`--excitation-nm`) with the cursor left where it was; the form now names its own field
/// and puts the cursor in it.
#[test]
fn a_pl_file_without_excitation_sends_the_cursor_to_that_field() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let mut app = open_ui(&lab);
    press(&mut app, KeyCode::Char('n'));
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "no excitation yet");
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Char('a'));
    press(&mut app, KeyCode::Char('/'));
    typ(
        &mut app,
        concat!(env!("CARGO_MANIFEST_DIR"), "/demo-db/samples/growth/"),
    );
    press(&mut app, KeyCode::Enter);
    for _ in 0..4 {
        press(&mut app, KeyCode::Down);
    }
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Tab);
    press(&mut app, KeyCode::Enter);
    let Mode::Form(f) = &app.mode else {
        panic!("the form closed: {:?}", app.message)
    };
    assert_eq!(f.fields[f.focus].label, "excitation nm");
    let m = app.message.as_ref().unwrap();
    assert!(
        m.0 && m.1.starts_with("excitation nm:") && !m.1.contains("--"),
        "{:?}",
        m
    );
    assert_eq!(scalar(&lab.db, "SELECT COUNT(*) FROM aliquot"), 0);
}

/// A batch sheet showed its reagents' hazard codes and the standing notice, but not the
/// cautions `batch show` prints for the material itself: a CdSe batch logged without a
/// recipe said nothing of cadmium. Both sizes show it, with the notice to follow the SDS.
#[test]
fn a_cadmium_batch_sheet_says_cadmium_is_toxic() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["batch", "new", "--material", "CdSe", "--name", "no recipe"]);
    let mut app = open_ui(&lab);
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.view, View::Sheet, "{:?}", app.message);
    for s in both_sizes(&app) {
        // Read as running text: the foot wraps at words.
        let text = s.split_whitespace().collect::<Vec<_>>().join(" ");
        assert!(text.contains("Cadmium compounds are toxic and carcinogenic"), "{s}");
        assert!(text.contains("SDS and your lab's safety rules"), "{s}");
    }
}

/// An aliquot with PL but no QY showed only `-`: nothing said the lab has no QY reference
/// yet, which is all a relative QY needs. The sheet now says so and how to set one.
#[test]
fn a_sheet_with_pl_and_no_qy_reference_says_how_to_get_a_qy() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["batch", "new", "--material", "CdSe", "--name", "no reference"]);
    let samples = concat!(env!("CARGO_MANIFEST_DIR"), "/demo-db/samples/growth");
    lab.ok(&[
        "aliquot",
        "add",
        "1",
        "--abs",
        &format!("{samples}/abs_02min.csv"),
        "--pl",
        &format!("{samples}/pl_02min.csv"),
        "--excitation-nm",
        "480",
        "--minutes",
        "2",
    ]);
    let mut app = open_ui(&lab);
    press(&mut app, KeyCode::Enter);
    for s in both_sizes(&app) {
        let text = s.split_whitespace().collect::<Vec<_>>().join(" ");
        assert!(
            text.contains("QY needs the lab's QY reference: calib set-reference"),
            "{s}"
        );
    }
    // With a reference set, the hint goes.
    lab.ok(&[
        "calib",
        "set-reference",
        "--dye",
        "rhodamine 6G",
        "--solvent",
        "ethanol",
        "--qy",
        "0.95",
        "--excitation-nm",
        "480",
        "--integral",
        "52000",
        "--abs",
        "0.05",
        "--why",
        "bench reference",
    ]);
    lab.ok(&["recompute"]);
    let mut app = open_ui(&lab);
    press(&mut app, KeyCode::Enter);
    assert!(
        !screen_at(&app, 160, 45).contains("QY needs"),
        "{}",
        screen_at(&app, 160, 45)
    );
}

/// The first-run name became the writer unchecked: a 120-character name signed the audit
/// log, where `--as` or $CUVETTE_USER refuse any name over 80 characters. The form refuses
/// it the same way and nothing is written.
#[test]
fn a_first_run_name_over_80_characters_is_refused() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let before = scalar(&lab.db, "SELECT COUNT(*) FROM audit_log");
    let mut app = open_ui(&lab);
    app.offer_first_run();
    ctrl(&mut app, 'u');
    typ(&mut app, &"x".repeat(120));
    press(&mut app, KeyCode::Enter);
    let m = app.message.as_ref().unwrap();
    assert!(m.0 && m.1.starts_with("your name:") && m.1.contains("80"), "{m:?}");
    assert_eq!(app.store.actor, "Test Runner");
    assert_eq!(scalar(&lab.db, "SELECT COUNT(*) FROM audit_log"), before);
}

/// A search box holding a query with an error keeps the last good results, but on the lab as it
/// is now: after a recompute (or any reload) the list's numbers are the new ones. They used to
/// stay the numbers from before, with their stale marks gone.
#[test]
fn a_list_under_a_query_with_an_error_shows_the_lab_as_it_is_now() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    lab.ok(&["calib", "set-curve", "CdSe", "jasieniak2009", "--why", "newer curve"]);
    let mut app = open_ui(&lab);
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "size 3-4 qy >");
    press(&mut app, KeyCode::Enter);
    assert!(app.query_error.is_some(), "the query has an error");
    lab.ok(&["recompute"]);
    reload(&mut app);
    assert!(!app.hits.is_empty());
    for h in &app.hits {
        let now = app.facts.iter().find(|f| f.id == h.id).unwrap();
        assert_eq!(
            serde_json::to_value(&h.facts).unwrap(),
            serde_json::to_value(now).unwrap(),
            "batch {} is listed with the numbers from before the recompute",
            h.id
        );
    }
}

/// A message answers the person's last action: an error from a form put away, or from an
/// action on another view, no longer stands on the status line through what comes next.
#[test]
fn an_old_message_does_not_stand_under_the_next_action() {
    let (_lab, mut app) = demo_ui();
    // Something the lab refuses: going to a batch that is not there.
    press(&mut app, KeyCode::Char('g'));
    typ(&mut app, "99999");
    press(&mut app, KeyCode::Enter);
    wait_idle(&mut app);
    let said = app.message.clone();
    assert!(said.as_ref().is_some_and(|m| m.0), "an error: {said:?}");
    // The form comes back with the text; put away, it takes the error with it.
    assert!(matches!(app.mode, Mode::Form(_)));
    press(&mut app, KeyCode::Esc);
    assert!(app.message.is_none(), "still shown after Esc: {:?}", app.message);
    // A view's answer goes when the person moves on to another view.
    press(&mut app, KeyCode::Char('3'));
    press(&mut app, KeyCode::Char('A'));
    wait_idle(&mut app);
    assert!(
        app.message.as_ref().is_some_and(|m| m.1.contains("nothing is stale")),
        "{:?}",
        app.message
    );
    press(&mut app, KeyCode::Char('2'));
    assert!(app.message.is_none(), "still shown on the shelf: {:?}", app.message);
}
