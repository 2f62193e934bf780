//! The terminal UI's layout and search box (issue 14, items 1 and 4): the search box tells back
//! what a query means and keeps the last good results while the query has an error; the batch
//! list, growth table, shelf and trail use the width they are given. Rendered into ratatui's
//! TestBackend at 80x24 and 160x45 and driven by keys against a real demo lab.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::settled::{press, reload, typ, wait_idle};
use common::*;
use crossterm::event::KeyCode;
use cuvette::tui::app::{App, Mode, View};

/// The screen's line holding `needle` (panics with the screen when there is none).
fn line_with<'a>(s: &'a str, needle: &str) -> &'a str {
    s.lines()
        .find(|l| l.contains(needle))
        .unwrap_or_else(|| panic!("no line with {needle:?}:\n{s}"))
}

fn hit_ids(app: &App) -> Vec<i64> {
    app.hits.iter().map(|h| h.id).collect()
}

#[test]
fn the_search_box_tells_back_the_query_and_keeps_the_last_good_results_under_an_error() {
    let (_lab, mut app) = demo_ui();
    let s = screen_at(&app, 80, 24);
    assert!(s.contains("means: every batch"), "{s}");
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "size 3 to 4 qy >= 50%");
    let good = hit_ids(&app);
    assert!(!good.is_empty() && good.len() < 25, "{good:?}");
    for s in [screen_at(&app, 80, 24), screen_at(&app, 160, 45)] {
        assert!(s.contains("means: size 3 to 4 nm · QY ≥ 50 %"), "{s}");
        assert!(s.contains(&format!("{} of 25 batches", good.len())), "{s}");
        assert!(!s.contains("showing results for"), "{s}");
    }
    // A comparison still missing its number: the error names its column, with a caret under
    // it, and the list keeps the results of the query as it last parsed. (Pasted whole: typed
    // letter by letter, `p`, `pe`, `pea` would each parse, as free words, on the way.)
    app.on_paste(" peak >");
    assert_eq!(hit_ids(&app), good, "the last good results stay");
    assert!(
        app.query_error.as_deref().unwrap_or("").contains("column 29"),
        "{:?}",
        app.query_error
    );
    for s in [screen_at(&app, 80, 24), screen_at(&app, 160, 45)] {
        let err = line_with(&s, "column 29: expected a number after `peak >`");
        assert_eq!(err.find('^'), Some(2 + 28), "the caret stands under column 29: {err}");
        assert!(
            s.contains(&format!(
                "showing results for: size 3 to 4 nm · QY ≥ 50 % ({} of 25 batches)",
                good.len()
            )),
            "{s}"
        );
        for id in &good {
            assert!(
                s.lines().any(|l| l.starts_with(&format!("{id} "))),
                "batch {id} still listed: {s}"
            );
        }
    }
    // Finishing the comparison makes the query good again: its meaning, its results.
    typ(&mut app, " 560");
    assert!(app.query_error.is_none());
    let s = screen_at(&app, 80, 24);
    assert!(
        s.contains("means: size 3 to 4 nm · QY ≥ 50 % · first exciton > 560 nm"),
        "{s}"
    );
    assert!(!s.contains("showing results for"), "{s}");
    assert!(app.hits.iter().all(|h| h.first_exciton_nm.unwrap() > 560.0));
    // Deleting back through `> 56` and `> 5` to `>`: the last good query is `peak > 5`. Leaving
    // the box with an error in it keeps both the error and those results.
    for _ in 0..3 {
        press(&mut app, KeyCode::Backspace);
    }
    press(&mut app, KeyCode::Esc);
    assert!(matches!(app.mode, Mode::Normal));
    assert!(screen_at(&app, 80, 24).contains("showing results for: size 3 to 4 nm · QY ≥ 50 % · first exciton > 5 nm"));
}

#[test]
fn the_batch_list_adds_columns_as_the_terminal_widens() {
    let (_lab, app) = demo_ui();
    let narrow = screen_at(&app, 80, 24);
    let head = line_with(&narrow, "date");
    for col in ["id", "date", "material", "peak", "D nm", "QY", "mL", "state", "name"] {
        assert!(head.contains(col), "{col} at 80: {head}");
    }
    for col in ["operator", "recipe", "σ/D", "PL"] {
        assert!(!head.contains(col), "{col} waits for a wider terminal: {head}");
    }
    // Names are whole at 80 too, and a batch not done says so.
    let row = line_with(&narrow, "PS-261021-y");
    assert!(row.contains("planned"), "{row}");
    let wide = screen_at(&app, 160, 45);
    let head = line_with(&wide, "date");
    for col in ["operator", "status", "recipe", "σ/D", "PL", "state", "name"] {
        assert!(head.contains(col), "{col} at 160: {head}");
    }
    // Every row shown carries its name, operator and recipe whole.
    for h in &app.hits {
        let row = line_with(&wide, &format!(" {} ", h.name));
        assert!(row.contains(h.operator.as_deref().unwrap()), "{row}");
        assert!(row.contains(h.recipe.as_deref().unwrap()), "{row}");
    }
    let row = line_with(&wide, "CS-261014-x");
    assert!(row.contains("Juno Achterberg") && row.contains("growing"), "{row}");
}

#[test]
fn the_growth_table_shows_curve_version_and_stale_in_full() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    lab.ok(&["calib", "set-curve", "CdSe", "jasieniak2009", "--why", "newer curve"]);
    let mut app = open_ui(&lab);
    app.on_key(crossterm::event::KeyEvent::new(
        KeyCode::Char('g'),
        crossterm::event::KeyModifiers::NONE,
    ));
    typ(&mut app, "23");
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.view, View::Sheet);
    for s in [screen_at(&app, 80, 24), screen_at(&app, 160, 45)] {
        let row = line_with(&s, " 0.5 ");
        assert!(row.contains("STALE") && row.contains("yu2003 v2"), "{row}");
    }
    // Recomputed under the new curve: its long name and version show whole at both sizes.
    press(&mut app, KeyCode::Char('3'));
    press(&mut app, KeyCode::Char('A'));
    wait_idle(&mut app);
    press(&mut app, KeyCode::Char('y'));
    wait_idle(&mut app);
    press(&mut app, KeyCode::Char('1'));
    app.on_key(crossterm::event::KeyEvent::new(
        KeyCode::Char('g'),
        crossterm::event::KeyModifiers::NONE,
    ));
    typ(&mut app, "23");
    press(&mut app, KeyCode::Enter);
    for s in [screen_at(&app, 80, 24), screen_at(&app, 160, 45)] {
        let row = line_with(&s, " 0.5 ");
        assert!(row.contains("jasieniak2009 v3") && !row.contains("STALE"), "{row}");
    }
}

#[test]
fn the_shelf_shows_every_label_whole_and_groups_sorts_and_filters() {
    let (_lab, mut app) = demo_ui();
    press(&mut app, KeyCode::Char('2'));
    for s in [screen_at(&app, 80, 24), screen_at(&app, 160, 45)] {
        // Vials of one batch differ only at the end of their labels: the end always shows.
        assert!(s.contains("CSZ-260601-e-V2 "), "{s}");
        assert!(s.contains("location Freezer F1 · 15 vials"), "{s}");
        assert!(s.contains("by location · sorted by added"), "{s}");
    }
    let wide = screen_at(&app, 160, 45);
    for l in ["CS-260820-p-V1", "CS-260820-p-V2", "CS-260820-p-V3"] {
        assert!(wide.contains(&format!("{l} ")), "{l}: {wide}");
    }
    // Narrower than any label fits: cut in the middle, the distinguishing end kept.
    let tight = screen_at(&app, 60, 24);
    for end in ["p-V1 ", "p-V2 ", "p-V3 ", "e-V2 "] {
        assert!(tight.contains(end), "{end}: {tight}");
    }
    assert!(tight.contains('…'), "a cut label says it is cut: {tight}");
    // Group by batch: a header per batch; vials of batch 16 together.
    press(&mut app, KeyCode::Char('G'));
    let s = screen_at(&app, 160, 45);
    assert!(s.contains("batch 1 CS-260506-a · 3 vials"), "{s}");
    let batches: Vec<i64> = app.vials.iter().map(|v| v.batch_id).collect();
    let mut sorted = batches.clone();
    sorted.sort();
    assert_eq!(batches, sorted, "grouped by batch");
    // Sort within groups: s moves to the next column, S reverses; by mL here.
    press(&mut app, KeyCode::Char('G'));
    press(&mut app, KeyCode::Char('G'));
    press(&mut app, KeyCode::Char('G'));
    assert!(screen_at(&app, 80, 24).contains("not grouped"));
    for _ in 0..4 {
        press(&mut app, KeyCode::Char('s'));
    }
    press(&mut app, KeyCode::Char('S'));
    let s = screen_at(&app, 160, 45);
    assert!(s.contains("sorted by mL▼"), "{s}");
    let ml: Vec<f64> = app.vials.iter().map(|v| v.volume_ml).collect();
    assert!(ml.windows(2).all(|w| w[0] >= w[1]), "largest first: {ml:?}");
    let fullest = app.all_vials.iter().map(|v| v.volume_ml).fold(0.0, f64::max);
    assert_eq!(ml[0], fullest, "{ml:?}");
    assert!(line_with(&s, "not grouped").contains("50 of 50 vials"), "{s}");
    // Filter with the query language: the vial's own place and owner, its batch's material.
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "material PbS at fridge");
    assert!(!app.vials.is_empty());
    assert!(
        app.vials
            .iter()
            .all(|v| v.material == "PbS" && v.location.contains("Fridge")),
        "{:?}",
        app.vials.iter().map(|v| (&v.label, &v.location)).collect::<Vec<_>>()
    );
    let s = screen_at(&app, 80, 24);
    assert!(s.contains("means: material PbS · at fridge"), "{s}");
    assert!(s.contains(&format!("{} of 50 vials", app.vials.len())), "{s}");
    let kept: Vec<i64> = app.vials.iter().map(|v| v.id).collect();
    app.on_paste(" size");
    assert_eq!(
        app.vials.iter().map(|v| v.id).collect::<Vec<_>>(),
        kept,
        "last good vials stay"
    );
    assert!(screen_at(&app, 80, 24).contains("showing results for: material PbS · at fridge"));
    for _ in 0.." size".len() {
        press(&mut app, KeyCode::Backspace);
    }
    assert_eq!(app.vials.len(), kept.len());
    // `by` on the shelf is the vial's owner; a free word finds a vial's own label.
    for _ in 0.."material PbS at fridge".len() {
        press(&mut app, KeyCode::Backspace);
    }
    typ(&mut app, "by Juno");
    assert!(!app.vials.is_empty());
    assert!(app.vials.iter().all(|v| v.owner.as_deref() == Some("Juno Achterberg")));
    for _ in 0.."by Juno".len() {
        press(&mut app, KeyCode::Backspace);
    }
    typ(&mut app, "p-v2");
    assert_eq!(
        app.vials.iter().map(|v| v.label.as_str()).collect::<Vec<_>>(),
        ["CS-260820-p-V2"]
    );
    // The search box closes with the filter kept, and the view's keys act on what it shows.
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.view, View::Shelf);
    press(&mut app, KeyCode::Char('d'));
    let s = screen_at(&app, 80, 24);
    assert!(s.contains("Draw from vial CS-260820-p-V2"), "{s}");
}

#[test]
fn the_trail_scrolls_selects_and_shows_before_and_after() {
    let (_lab, mut app) = demo_ui();
    press(&mut app, KeyCode::Char('4'));
    assert_eq!(app.view, View::Trail);
    // The newest entry is selected; the detail shows what it recorded.
    let s = screen_at(&app, 80, 24);
    assert!(s.contains(&format!("entry {}:", app.trail[0].id)), "{s}");
    // Walk down to the first draw from a vial: its before and after, changed fields marked.
    let draw = app.trail.iter().position(|r| r.action == "draw").unwrap();
    for _ in 0..draw {
        press(&mut app, KeyCode::Down);
    }
    assert_eq!(app.trail_selected, draw);
    let r = app.trail[draw].clone();
    let before = r.before.as_ref().unwrap()["volume_ml"].as_f64().unwrap();
    let after = r.after.as_ref().unwrap()["volume_ml"].as_f64().unwrap();
    for s in [screen_at(&app, 80, 24), screen_at(&app, 160, 45)] {
        assert!(
            s.contains(&format!("entry {}: draw vial {}", r.id, r.entity_id.unwrap())),
            "{s}"
        );
        let head = line_with(&s, "field ");
        assert!(head.contains("before") && head.contains("after"), "{head}");
        let row = line_with(&s, "• volume_ml");
        assert!(
            row.contains(&format!("{before:.2}")) && row.contains(&format!("{after:.2}")),
            "{row}"
        );
    }
    // Far past one screen: the selection stays in view.
    for _ in 0..40 {
        press(&mut app, KeyCode::Down);
    }
    let r = app.trail[app.trail_selected].clone();
    let s = screen_at(&app, 80, 24);
    assert!(s.contains(&format!("entry {}:", r.id)), "{s}");
    assert!(
        s.contains(&format!("trail: {}-{} of the newest", draw + 41 - 7, draw + 41)),
        "{s}"
    );
    // Paging past the newest 300 read reads older ones (the demo writes more than that).
    let total = cuvette::store::model::audit_log(&app.store.conn, None, i64::MAX)
        .unwrap()
        .len();
    assert!(total > 300, "{total}");
    for _ in 0..40 {
        press(&mut app, KeyCode::PageDown);
    }
    assert_eq!(app.trail.len(), total);
    assert_eq!(app.trail_selected, total - 1);
    let oldest = app.trail[total - 1].id;
    assert!(screen_at(&app, 160, 45).contains(&format!("entry {oldest}:")));
    // f: only the selected thing's entries; again: all of them.
    press(&mut app, KeyCode::PageUp);
    let pick = app
        .trail
        .iter()
        .position(|r| r.entity == "vial" && r.action == "draw")
        .unwrap();
    while app.trail_selected > pick {
        press(&mut app, KeyCode::Up);
    }
    while app.trail_selected < pick {
        press(&mut app, KeyCode::Down);
    }
    let vial = app.trail[pick].entity_id.unwrap();
    press(&mut app, KeyCode::Char('f'));
    assert!(
        app.trail
            .iter()
            .all(|r| r.entity == "vial" && r.entity_id == Some(vial))
    );
    assert!(app.trail.iter().any(|r| r.action == "create"), "its whole history");
    let s = screen_at(&app, 80, 24);
    assert!(
        s.contains(&format!("trail of vial {vial}: {} entries", app.trail.len())),
        "{s}"
    );
    assert!(s.contains("f history"), "the footer from the key table: {s}");
    press(&mut app, KeyCode::Char('f'));
    assert_eq!(app.trail.len() as i64, app.trail_limit.min(total as i64));
}

#[test]
fn a_shelf_filtered_to_no_vial_draws_and_says_so() {
    let (_lab, mut app) = demo_ui();
    press(&mut app, KeyCode::Char('2'));
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "at nowhere");
    assert!(app.vials.is_empty());
    for s in [
        screen_at(&app, 80, 24),
        screen_at(&app, 160, 45),
        screen_at(&app, 40, 12),
    ] {
        assert!(s.contains("0 of 50 vials"), "{s}");
        assert!(s.contains("means: at nowhere"), "{s}");
    }
    // A key for a vial, with none shown, is refused in words.
    press(&mut app, KeyCode::Enter);
    press(&mut app, KeyCode::Char('d'));
    assert!(
        app.message
            .as_ref()
            .is_some_and(|m| m.0 && m.1.contains("no vial selected"))
    );
}

#[test]
fn a_field_name_half_typed_does_not_replace_the_results_until_it_is_finished() {
    let (_lab, mut app) = demo_ui();
    press(&mut app, KeyCode::Char('/'));
    typ(&mut app, "material CdSe");
    let cdse = hit_ids(&app);
    assert!(!cdse.is_empty() && cdse.len() < 25, "{cdse:?}");
    // Letter by letter on the way to `size 3 to 4`: `s`, `si`, `siz` are the start of a field,
    // not words no batch has; the CdSe batches stay, and the meaning says what is coming.
    for (typed, note) in [(" s", "(size, status or stock?)"), ("i", "(size?)"), ("z", "(size?)")] {
        typ(&mut app, typed);
        assert_eq!(hit_ids(&app), cdse, "after typing {typed:?}");
        let s = screen_at(&app, 160, 45);
        assert!(s.contains(note), "{s}");
        assert!(app.query_error.is_none());
    }
    typ(&mut app, "e 3 to 4");
    let sized = hit_ids(&app);
    assert!(
        sized.iter().all(|id| cdse.contains(id)) && sized.len() < cdse.len(),
        "{sized:?}"
    );
    // Leaving the box with a half word takes it as a word, as `cuvette find` does.
    for _ in 0.."e 3 to 4".len() {
        press(&mut app, KeyCode::Backspace);
    }
    press(&mut app, KeyCode::Enter);
    let as_word = cuvette::search::parse("material CdSe siz").unwrap();
    let want: Vec<i64> = cuvette::search::filter(&app.facts, &as_word)
        .iter()
        .map(|h| h.id)
        .collect();
    let mut got = hit_ids(&app);
    got.sort();
    let mut want = want;
    want.sort();
    assert_eq!(got, want, "siz taken as a free word");
    assert_ne!(got, cdse);
    assert!(!screen_at(&app, 160, 45).contains("typing"));
}

/// A message longer than the terminal is wide was cut at the edge ("needs its excitation
/// wave"); the status line grows to up to three lines, wrapped at words.
#[test]
fn a_long_message_is_shown_whole_at_80_columns() {
    let (_lab, mut app) = demo_ui();
    let msg = "PL file /home/student/exports/2026-12-03/run-7/aliquots/pl_02min.csv needs its excitation wavelength";
    app.message = Some((true, msg.to_string()));
    let s = screen_at(&app, 80, 24);
    let words: Vec<&str> = s.split_whitespace().collect();
    for w in msg.split_whitespace() {
        assert!(words.contains(&w), "{w} not whole on screen:\n{s}");
    }
    // The footer with the keys is still the last line.
    assert!(s.lines().last().unwrap().contains("help"), "{s}");
}

/// A batch with no vial showed `0.00` mL in the batch list, as if its vials were used up.
#[test]
fn a_batch_with_no_vial_shows_no_volume() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["batch", "new", "--material", "CdSe", "--name", "never bottled"]);
    let app = open_ui(&lab);
    for (w, h) in [(80, 24), (160, 45)] {
        let s = screen_at(&app, w, h);
        let row = line_with(&s, "CdSe");
        assert!(!row.contains("0.00"), "{row}");
    }
}

/// The trail kept its selection on the entry that was newest when the UI opened, so after a
/// session of writes it opened on an old entry. A selection on the newest entry now follows
/// the newest; one moved down the list stays on its entry.
#[test]
fn the_trail_opens_on_the_newest_entry_after_writes() {
    let (lab, mut app) = demo_ui();
    lab.ok(&["person", "add", "Orla Vance"]);
    reload(&mut app);
    press(&mut app, KeyCode::Char('4'));
    let newest = app.trail.iter().map(|r| r.id).max().unwrap();
    assert_eq!(app.trail[app.trail_selected].id, newest);
    // Moved down, the selection stays on its entry as more is written.
    press(&mut app, KeyCode::Down);
    let kept = app.trail[app.trail_selected].id;
    lab.ok(&["person", "add", "Piet Vance"]);
    reload(&mut app);
    assert_eq!(app.trail[app.trail_selected].id, kept);
}
