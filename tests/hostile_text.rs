//! Outputs that cannot be turned against their reader (issue 10, point 8): names, notes and
//! labels full of terminal escapes, formula starts and markup reach the UI, the text and JSON
//! output, the CSV files, the SVG plots and the handover pack harmless; output files are never
//! clobbered or written through a symlink without `--force`; `demo` keeps real work.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use cuvette::safe_text::is_hazard;
use cuvette::store::Store;
use cuvette::tui::app::App;
use cuvette::tui::{draw, keys};
use ratatui::Terminal;
use ratatui::backend::TestBackend;

/// Sets the terminal title (OSC 0), writes the clipboard (OSC 52), clears the screen (CSI 2 J),
/// opens an 8-bit CSI (U+009B) and reverses the text direction (U+202E).
const ESCAPES: &str = "\u{1b}]0;pwned\u{7}|\u{1b}]52;c;ZWNobyBoaQ==\u{7}|\u{1b}[2J|\u{9b}31m|\u{202e}lmth";

fn hostile(prefix: &str) -> String {
    format!("{prefix} {ESCAPES}")
}

/// A lab whose person, location, batch, notes, aliquot stage and vial label and position are
/// all hostile. Batch 1 has a timed and a staged aliquot and one vial.
fn hostile_lab() -> Lab {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["person", "add", &hostile("=Ann")]);
    lab.ok(&["location", "add", &hostile("+Fridge"), "--kind", "fridge"]);
    lab.ok(&[
        "batch",
        "new",
        "--material",
        "CdSe",
        &format!("--name={}", hostile("-B1 <script>alert(1)</script> ]]> & \"q\" 'a'")),
        "--operator",
        &hostile("=Ann"),
        "--notes",
        &hostile("@note\nsecond line\r"),
    ]);
    let f1 = lab.abs_file("a1.csv", 520.0);
    let f2 = lab.abs_file("a2.csv", 560.0);
    lab.ok(&["aliquot", "add", "1", "--abs", s(&f1), "--minutes", "2"]);
    lab.ok(&[
        "aliquot",
        "add",
        "1",
        "--abs",
        s(&f2),
        "--stage",
        &hostile("=cmd|' /C calc'!A0 </text><x>"),
    ]);
    lab.ok(&[
        "vial",
        "new",
        "1",
        "--ml",
        "2",
        "--location",
        &hostile("+Fridge"),
        "--label",
        &hostile("=HYPERLINK(\"http://x\")"),
        "--position",
        &hostile("\tbox 1"),
        "--owner",
        &hostile("=Ann"),
        "--conc",
        "0.00001",
    ]);
    lab
}

fn buffer_of(app: &App, w: u16, h: u16) -> ratatui::buffer::Buffer {
    let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
    t.draw(|f| draw::draw(f, app)).unwrap();
    t.backend().buffer().clone()
}

fn text_of(buf: &ratatui::buffer::Buffer) -> String {
    let mut out = String::new();
    for y in 0..buf.area.height {
        for x in 0..buf.area.width {
            out.push_str(buf[(x, y)].symbol());
        }
        out.push('\n');
    }
    out
}

fn assert_clean_buffer(app: &App, what: &str) -> String {
    let mut all = String::new();
    for (w, h) in [(80, 24), (200, 50)] {
        let buf = buffer_of(app, w, h);
        for y in 0..buf.area.height {
            for x in 0..buf.area.width {
                let sym = buf[(x, y)].symbol();
                assert!(
                    !sym.chars().any(is_hazard),
                    "{what} at {w}x{h}: cell ({x},{y}) holds {sym:?}"
                );
            }
        }
        all.push_str(&text_of(&buf));
    }
    all
}

fn press(app: &mut App, code: KeyCode) {
    app.on_key(KeyEvent::new(code, KeyModifiers::NONE));
}

#[test]
fn escape_sequences_in_names_never_reach_a_ui_cell() {
    let lab = hostile_lab();
    let store = Store::open(&lab.db, "Test Runner").unwrap();
    let mut app = App::new(store, keys::KeyMap::new(&Default::default()).unwrap());
    let s = assert_clean_buffer(&app, "ledger");
    assert!(s.contains("pwned"), "the name is still shown, made harmless: {s}");
    press(&mut app, KeyCode::Enter);
    assert_clean_buffer(&app, "batch sheet");
    press(&mut app, KeyCode::Char('p'));
    assert_clean_buffer(&app, "batch sheet, PL");
    for (key, view) in [('2', "shelf"), ('3', "calibrations"), ('4', "trail"), ('1', "ledger")] {
        press(&mut app, KeyCode::Char(key));
        assert_clean_buffer(&app, view);
    }
    press(&mut app, KeyCode::Char('?'));
    assert_clean_buffer(&app, "help");
    press(&mut app, KeyCode::Esc);
    // A query typed with the names' escapes in it, echoed in the search line.
    press(&mut app, KeyCode::Char('/'));
    for c in ESCAPES.chars() {
        press(&mut app, KeyCode::Char(c));
    }
    assert_clean_buffer(&app, "search line");
}

/// Text for people: no control character but the newlines and tabs of the layout.
fn assert_clean_text(text: &str, what: &str) {
    let bad: Vec<char> = text
        .chars()
        .filter(|c| is_hazard(*c) && *c != '\n' && *c != '\t')
        .collect();
    assert!(bad.is_empty(), "{what} prints {bad:?}: {text}");
}

#[test]
fn text_output_shows_escapes_as_visible_harmless_characters() {
    let lab = hostile_lab();
    for args in [
        &["batch", "show", "1"][..],
        &["batch", "list"],
        &["shelf", "--all"],
        &["vial", "show", "1"],
        &["person", "list"],
        &["location", "list"],
        &["log", "--limit", "50"],
        &["explain", "1"],
        &["find", "material:CdSe"],
    ] {
        let o = lab.ok(args);
        assert_clean_text(&o.stdout, &format!("{args:?}"));
        assert_clean_text(&o.stderr, &format!("{args:?} (stderr)"));
    }
    let o = lab.ok(&["batch", "show", "1"]);
    assert!(
        o.stdout.contains("\u{241b}]0;pwned\u{2407}"),
        "ESC and BEL shown as pictures: {}",
        o.stdout
    );
    assert!(o.stdout.contains("<U+009B>31m"), "{}", o.stdout);
    // An error message naming a hostile name is one harmless line.
    let o = lab.run(&[
        "batch",
        "new",
        "--material",
        "CdSe",
        "--name",
        "x",
        "--operator",
        &hostile("Nobody"),
    ]);
    assert_eq!(o.code, 1, "{}", o.stderr);
    assert_clean_text(&o.stderr, "error message");
    assert_eq!(o.stderr.trim().lines().count(), 1, "{}", o.stderr);
}

#[test]
fn json_output_escapes_c1_and_bidi_controls_and_keeps_the_data() {
    let lab = hostile_lab();
    for args in [
        &["batch", "show", "1", "--json"][..],
        &["batch", "list", "--json"],
        &["shelf", "--all", "--json"],
        &["person", "list", "--json"],
        &["log", "--json"],
    ] {
        let o = lab.ok(args);
        assert!(
            !o.stdout.chars().any(|c| is_hazard(c) && c != '\n'),
            "{args:?} writes a control raw: {}",
            o.stdout
        );
    }
    let b = lab.ok(&["batch", "show", "1", "--json"]).json();
    assert_eq!(
        b["name"].as_str().unwrap(),
        hostile("-B1 <script>alert(1)</script> ]]> & \"q\" 'a'"),
        "the JSON still holds the name exactly"
    );
    assert_eq!(b["notes"].as_str().unwrap(), hostile("@note\nsecond line\r"));
}
