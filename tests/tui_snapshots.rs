//! Snapshots of the terminal UI's screens (every view, form, confirmation, the file picker and
//! the watch's status line) drawn into ratatui's
//! TestBackend at 80x24 and 160x45 from a demo lab, so a change to any screen shows up as a
//! reviewable diff. The demo lab's own data are fixed; what the clock or the machine puts on
//! screen (audit and calibration times, temporary folders) is redacted before comparing.
//! Review changed snapshots as README's testing section says.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::settled::{press, typ, wait_idle};
use common::*;
use crossterm::event::KeyCode;
use cuvette::tui::app::{App, Mode, View};
use std::path::PathBuf;

/// Where forms are told the exports are: a fixed path, not the machine's working folder, so
/// the import and handover forms draw the same everywhere (nothing is read from it here).
const EXPORTS: &str = "/lab/exports";

/// The two terminal sizes every screen is kept at.
const SIZES: [(u16, u16); 2] = [(80, 24), (160, 45)];

/// True where `b` holds `YYYY-MM-DD` at `i`.
fn is_date(b: &[u8], i: usize) -> bool {
    let shape = b"dddd-dd-dd";
    i + shape.len() <= b.len()
        && shape.iter().enumerate().all(|(k, s)| match s {
            b'd' => b[i + k].is_ascii_digit(),
            c => b[i + k] == *c,
        })
}

/// The screen with the clock's marks made fixed: a date of the day the test runs (or the day
/// before, for a run across midnight UTC), and the time that follows it, have their digits
/// turned into `#`, keeping every column where it was. The demo's own dates are fixed in its
/// manifest (May to October 2026), so they stay as they are; a date of today can only come from
/// the clock (audit entries, calibration versions written as the demo was built). Temporary
/// folders become `<tmp>`. Trailing blanks are dropped, so the files stay clean in any editor.
fn redact(screen: &str, tmp: &std::path::Path) -> String {
    let now = chrono::Utc::now().date_naive();
    let days = [now, now - chrono::Duration::days(1)].map(|d| d.format("%Y-%m-%d").to_string());
    let text = screen.replace(tmp.to_str().unwrap(), "<tmp>");
    let b = text.as_bytes();
    let mut out = Vec::with_capacity(b.len());
    let mut i = 0;
    while i < b.len() {
        if is_date(b, i) && days.iter().any(|d| d.as_bytes() == &b[i..i + 10]) {
            // The date, then an optional ` HH:MM` or `THH:MM:SSZ`: digits only become `#`.
            let mut end = i + 10;
            if end < b.len() && (b[end] == b' ' || b[end] == b'T') && end + 6 <= b.len() {
                let t = &b[end + 1..end + 6];
                if t[0..2].iter().chain(&t[3..5]).all(u8::is_ascii_digit) && t[2] == b':' {
                    end += 6;
                    while end < b.len() && (b[end].is_ascii_digit() || b[end] == b':' || b[end] == b'Z') {
                        end += 1;
                    }
                }
            }
            out.extend(b[i..end].iter().map(|c| if c.is_ascii_digit() { b'#' } else { *c }));
            i = end;
        } else {
            out.push(b[i]);
            i += 1;
        }
    }
    let text = String::from_utf8(out).unwrap();
    text.lines().map(str::trim_end).collect::<Vec<_>>().join("\n") + "\n"
}

/// The reversed cells of the screen drawn without colour (the selected row, a form's cursor),
/// as `row R: cols A-B` lines: the text alone would not show what is selected.
fn reversed(app: &App, w: u16, h: u16) -> String {
    let mut t = ratatui::Terminal::new(ratatui::backend::TestBackend::new(w, h)).unwrap();
    t.draw(|f| cuvette::tui::draw::draw(f, app)).unwrap();
    let buf = t.backend().buffer();
    let mut out = String::new();
    for y in 0..h {
        let on = |x: u16| buf[(x, y)].modifier.contains(ratatui::style::Modifier::REVERSED);
        let mut spans = Vec::new();
        let mut x = 0;
        while x < w {
            if on(x) {
                let start = x;
                while x < w && on(x) {
                    x += 1;
                }
                spans.push(format!("{}-{}", start + 1, x));
            } else {
                x += 1;
            }
        }
        if !spans.is_empty() {
            out.push_str(&format!("row {}: cols {}\n", y + 1, spans.join(", ")));
        }
    }
    out
}

/// Snapshots the app's screen at both sizes as `NAME_80x24` and `NAME_160x45`: the text,
/// then where it is reversed.
fn snap(lab: &Lab, app: &mut App, name: &str) {
    // Without colour the selection is drawn reversed; NO_COLOR in the caller's environment
    // then changes nothing either.
    app.colour = false;
    for (w, h) in SIZES {
        app.size = (w, h);
        let s = format!(
            "{}-- reversed --\n{}",
            redact(&screen_at(app, w, h), lab.dir.path()),
            reversed(app, w, h)
        );
        insta::assert_snapshot!(format!("{name}_{w}x{h}"), s);
    }
}

/// A demo lab and its UI, with the exports folder fixed.
fn ui() -> (Lab, App) {
    let (lab, mut app) = demo_ui();
    app.export_dir = PathBuf::from(EXPORTS);
    (lab, app)
}

/// The sheet of the demo's batch 23 (a finished CdSe growth series), opened by `g 23`.
fn sheet_23(app: &mut App) {
    press(app, KeyCode::Char('1'));
    press(app, KeyCode::Char('g'));
    typ(app, "23");
    press(app, KeyCode::Enter);
    assert_eq!(app.view, View::Sheet);
    assert_eq!(app.sheet.as_ref().unwrap().batch.id, 23);
}

fn form_title(app: &App) -> String {
    match &app.mode {
        Mode::Form(f) => f.title.clone(),
        other => panic!("no form open: {other:?}"),
    }
}

fn assert_confirm(app: &App) {
    assert!(matches!(app.mode, Mode::Confirm(_)), "{:?} {:?}", app.mode, app.message);
}

// ---- views ----

#[test]
fn batches() {
    let (lab, mut app) = ui();
    assert_eq!(app.hits.len(), 25);
    snap(&lab, &mut app, "batches_plain");
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "size 3 to 4 qy >= 50%");
    assert!(app.query_error.is_none() && !app.hits.is_empty() && app.hits.len() < 25);
    snap(&lab, &mut app, "batches_query");
    // Pasted whole: typed letter by letter, `p`, `pe`... would each parse on the way.
    app.on_paste(" peak >");
    assert!(app.query_error.is_some());
    snap(&lab, &mut app, "batches_query_error");
}

#[test]
fn batch_sheet() {
    let (lab, mut app) = ui();
    sheet_23(&mut app);
    snap(&lab, &mut app, "sheet_growth");
    press(&mut app, KeyCode::Char('p'));
    assert!(app.show_pl);
    snap(&lab, &mut app, "sheet_pl");
}

#[test]
fn shelf() {
    let (lab, mut app) = ui();
    press(&mut app, KeyCode::Char('2'));
    assert_eq!(app.view, View::Shelf);
    snap(&lab, &mut app, "shelf_by_location");
    press(&mut app, KeyCode::Char('G'));
    snap(&lab, &mut app, "shelf_by_batch");
}

#[test]
fn calibrations_and_recompute() {
    let (lab, mut app) = ui();
    press(&mut app, KeyCode::Char('3'));
    snap(&lab, &mut app, "calibrations");
    press(&mut app, KeyCode::Char('c'));
    assert!(form_title(&app).contains("Choose a sizing curve"));
    snap(&lab, &mut app, "form_change_curve");
    drop(app);
    // A newer curve makes values stale: the preview and the recompute's confirmation then
    // have something to show.
    lab.ok(&["calib", "set-curve", "CdSe", "jasieniak2009", "--why", "newer curve"]);
    let mut app = open_ui(&lab);
    app.export_dir = PathBuf::from(EXPORTS);
    press(&mut app, KeyCode::Char('3'));
    press(&mut app, KeyCode::Char('p'));
    wait_idle(&mut app);
    assert!(app.preview.is_some());
    snap(&lab, &mut app, "calibrations_preview");
    press(&mut app, KeyCode::Char('A'));
    wait_idle(&mut app);
    assert_confirm(&app);
    snap(&lab, &mut app, "confirm_recompute");
}

#[test]
fn trail() {
    let (lab, mut app) = ui();
    press(&mut app, KeyCode::Char('4'));
    // The first draw from a vial: an entry with a before and an after.
    let draw = app.trail.iter().position(|r| r.action == "draw").unwrap();
    for _ in 0..draw {
        press(&mut app, KeyCode::Down);
    }
    assert_eq!(app.trail_selected, draw);
    snap(&lab, &mut app, "trail_draw_selected");
}

#[test]
fn help() {
    let (lab, mut app) = ui();
    press(&mut app, KeyCode::Char('?'));
    assert!(matches!(app.mode, Mode::Help));
    snap(&lab, &mut app, "help_first_page");
}

// ---- forms and confirmations ----

#[test]
fn new_batch_and_go_to_batch() {
    let (lab, mut app) = ui();
    press(&mut app, KeyCode::Char('n'));
    assert_eq!(form_title(&app), "New batch");
    snap(&lab, &mut app, "form_new_batch");
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('g'));
    typ(&mut app, "23");
    assert!(form_title(&app).contains("Open a batch by its id"));
    snap(&lab, &mut app, "form_go_to_batch");
}

#[test]
fn repeat_confirmation() {
    let (lab, mut app) = ui();
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Char('r'));
    assert_confirm(&app);
    snap(&lab, &mut app, "confirm_repeat");
}

#[test]
fn sheet_forms() {
    let (lab, mut app) = ui();
    sheet_23(&mut app);
    press(&mut app, KeyCode::Char('v'));
    assert!(form_title(&app).starts_with("New vial of batch 23"));
    snap(&lab, &mut app, "form_new_vial");
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('i'));
    assert!(form_title(&app).starts_with("Import a folder of exports"));
    snap(&lab, &mut app, "form_import");
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Char('e'));
    assert!(form_title(&app).starts_with("Correct aliquot"));
    snap(&lab, &mut app, "form_edit_aliquot");
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('M'));
    assert!(form_title(&app).starts_with("Move a spectrum"));
    snap(&lab, &mut app, "form_move_spectrum");
}

#[test]
fn void_and_reinstate_an_aliquot() {
    let (lab, mut app) = ui();
    sheet_23(&mut app);
    press(&mut app, KeyCode::Char('x'));
    assert!(form_title(&app).starts_with("Void aliquot"));
    snap(&lab, &mut app, "form_void_aliquot");
    typ(&mut app, "PL logged as absorbance");
    press(&mut app, KeyCode::Enter);
    assert_confirm(&app);
    snap(&lab, &mut app, "confirm_void_aliquot");
    press(&mut app, KeyCode::Char('y'));
    assert!(matches!(app.mode, Mode::Normal), "{:?}", app.message);
    // The voided aliquot stays in the table, marked; x on it now reinstates.
    press(&mut app, KeyCode::Char('x'));
    assert!(
        form_title(&app).starts_with("Reinstate aliquot"),
        "{}",
        form_title(&app)
    );
    snap(&lab, &mut app, "form_reinstate_aliquot");
}

#[test]
fn void_and_reinstate_a_batch() {
    let (lab, mut app) = ui();
    sheet_23(&mut app);
    press(&mut app, KeyCode::Char('X'));
    assert!(form_title(&app).starts_with("Void batch 23"));
    snap(&lab, &mut app, "form_void_batch");
    typ(&mut app, "mislabelled");
    press(&mut app, KeyCode::Enter);
    assert_confirm(&app);
    snap(&lab, &mut app, "confirm_void_batch");
    press(&mut app, KeyCode::Char('y'));
    assert!(matches!(app.mode, Mode::Normal), "{:?}", app.message);
    // A void batch leaves the list; g still opens it, and X there reinstates.
    sheet_23(&mut app);
    press(&mut app, KeyCode::Char('X'));
    assert!(
        form_title(&app).starts_with("Reinstate batch 23"),
        "{}",
        form_title(&app)
    );
    snap(&lab, &mut app, "form_reinstate_batch");
}

#[test]
fn shelf_forms() {
    let (lab, mut app) = ui();
    press(&mut app, KeyCode::Char('2'));
    press(&mut app, KeyCode::Char('d'));
    assert!(form_title(&app).starts_with("Draw from vial"));
    snap(&lab, &mut app, "form_draw");
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('m'));
    assert!(form_title(&app).starts_with("Move vial"));
    snap(&lab, &mut app, "form_move");
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Char('H'));
    assert!(form_title(&app).starts_with("Hand a person's vials"));
    snap(&lab, &mut app, "form_handover");
    press(&mut app, KeyCode::Tab);
    typ(&mut app, "Ines Marlowe");
    press(&mut app, KeyCode::Enter);
    assert_confirm(&app);
    // A wrapped line keeps its indent: the vial list's second line is not flush with the box.
    let s = screen_at(&app, 80, 24);
    let rows: Vec<&str> = s.lines().collect();
    let at = rows.iter().position(|r| r.contains("vials: ")).unwrap();
    let next = rows[at + 1].split('│').nth(1).unwrap_or("");
    assert!(next.starts_with("  "), "{}", rows[at + 1]);
    snap(&lab, &mut app, "confirm_handover");
}

#[test]
fn dispose_and_reinstate_a_vial() {
    let (lab, mut app) = ui();
    press(&mut app, KeyCode::Char('2'));
    let vial = app.vials[app.vial_selected].id;
    press(&mut app, KeyCode::Char('x'));
    assert!(form_title(&app).starts_with("Dispose of vial"));
    snap(&lab, &mut app, "form_dispose");
    typ(&mut app, "cracked cap");
    press(&mut app, KeyCode::Enter);
    assert_confirm(&app);
    snap(&lab, &mut app, "confirm_dispose");
    press(&mut app, KeyCode::Char('y'));
    assert!(matches!(app.mode, Mode::Normal), "{:?}", app.message);
    // t lists disposed vials too; u on the disposed one asks why it comes back.
    press(&mut app, KeyCode::Char('t'));
    let at = app.vials.iter().position(|v| v.id == vial).unwrap();
    while app.vial_selected < at {
        press(&mut app, KeyCode::Down);
    }
    while app.vial_selected > at {
        press(&mut app, KeyCode::Up);
    }
    press(&mut app, KeyCode::Char('u'));
    assert!(form_title(&app).contains("vial"), "{}", form_title(&app));
    snap(&lab, &mut app, "form_reinstate_vial");
}

// ---- getting spectra in ----

/// An exports folder in the lab's temporary folder: a sub-folder, an absorbance and a PL
/// export written from the harness's stated formulas, so the previews are the same everywhere.
fn exports(lab: &Lab) -> PathBuf {
    let dir = lab.path("exports");
    std::fs::create_dir_all(dir.join("run-2")).unwrap();
    std::fs::rename(lab.abs_file("abs_02min.csv", 545.0), dir.join("abs_02min.csv")).unwrap();
    std::fs::rename(lab.pl_file("pl_02min.csv", 556.0, 5e5), dir.join("pl_02min.csv")).unwrap();
    dir
}

#[test]
fn file_picker_and_the_aliquot_form() {
    let (lab, mut app) = ui();
    app.export_dir = exports(&lab);
    sheet_23(&mut app);
    press(&mut app, KeyCode::Char('a'));
    assert!(matches!(app.mode, Mode::Picker(_)), "{:?}", app.message);
    snap(&lab, &mut app, "picker_folder_selected");
    press(&mut app, KeyCode::Down);
    snap(&lab, &mut app, "picker_preview_absorbance");
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Enter);
    snap(&lab, &mut app, "picker_both_taken");
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "ab");
    press(&mut app, KeyCode::Tab);
    snap(&lab, &mut app, "picker_typing_a_path");
    press(&mut app, KeyCode::Esc);
    press(&mut app, KeyCode::Tab);
    assert!(form_title(&app).contains("Add an aliquot to batch 23"));
    snap(&lab, &mut app, "form_add_aliquot");
}

#[test]
fn watch_form_and_the_status_line_while_watching() {
    let (lab, mut app) = ui();
    let folder = exports(&lab);
    app.export_dir = folder.clone();
    sheet_23(&mut app);
    press(&mut app, KeyCode::Char('w'));
    assert!(form_title(&app).contains("Watch a folder for batch 23"));
    snap(&lab, &mut app, "form_watch");
    press(&mut app, KeyCode::Enter);
    assert!(app.watching.is_some(), "{:?}", app.message);
    snap(&lab, &mut app, "sheet_watching");
    press(&mut app, KeyCode::Char('W'));
    let start = std::time::Instant::now();
    while app.watching.is_some() && start.elapsed().as_secs() < 10 {
        app.poll_workers();
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
    assert!(app.watching.is_none());
}

#[test]
fn first_run_on_an_empty_lab() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let mut app = open_ui(&lab);
    app.export_dir = PathBuf::from(EXPORTS);
    app.offer_first_run();
    assert!(form_title(&app).contains("A new lab"));
    snap(&lab, &mut app, "form_first_run");
}

#[test]
fn redaction_keeps_columns_and_fixed_dates() {
    let today = chrono::Utc::now().format("%Y-%m-%d").to_string();
    let tmp = std::path::Path::new("/tmp/xyz");
    let s = format!("│{today} 07:31 a│ 2026-10-10 09:30 │{today}T07:31:05Z│/tmp/xyz/lab.db   ");
    assert_eq!(
        redact(&s, tmp),
        "│####-##-## ##:## a│ 2026-10-10 09:30 │####-##-##T##:##:##Z│<tmp>/lab.db\n"
    );
}
