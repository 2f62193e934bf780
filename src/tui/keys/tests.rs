//! The key table's own tests: overrides and conflicts, scopes kept apart, every mode in the
//! help.

use super::*;
use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::collections::BTreeMap;

#[test]
fn overrides_rebind_and_the_footer_follows() {
    let mut o = BTreeMap::new();
    o.insert("draw".to_string(), "D".to_string());
    let k = KeyMap::new(&o).unwrap();
    let ev = |c| KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE);
    assert_eq!(k.action(&ev('D'), Scope::Shelf), Some(Action::Draw));
    assert_eq!(k.action(&ev('d'), Scope::Shelf), None);
    assert!(
        k.footer(Scope::Shelf)
            .iter()
            .any(|(key, name)| key == "D" && *name == "draw")
    );
    assert!(
        k.help()
            .iter()
            .any(|(_, key, help)| key == "D" && help.contains("draw"))
    );
    // Scopes keep keys apart: p plots in the sheet and previews in calibrations.
    let d = KeyMap::new(&BTreeMap::new()).unwrap();
    assert_eq!(d.action(&ev('p'), Scope::Sheet), Some(Action::ToggleSpectrum));
    assert_eq!(d.action(&ev('p'), Scope::Calibrations), Some(Action::Preview));
    assert_eq!(d.action(&ev('j'), Scope::Batches), Some(Action::Down));
}

#[test]
fn text_scopes_take_only_their_own_keys() {
    let d = KeyMap::new(&BTreeMap::new()).unwrap();
    let ctrl = |c| KeyEvent::new(KeyCode::Char(c), KeyModifiers::CONTROL);
    let ev = |c| KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE);
    assert_eq!(d.action_in(&ctrl('w'), Scope::Field), Some(Action::DeleteWordBack));
    assert_eq!(d.action_in(&ctrl('u'), Scope::Field), Some(Action::KillToStart));
    assert_eq!(d.action_in(&ctrl('a'), Scope::Field), Some(Action::LineStart));
    // q quits and 2 opens the shelf everywhere in the views, but in a field they are text.
    assert_eq!(d.action_in(&ev('q'), Scope::Field), None);
    assert_eq!(d.action_in(&ev('2'), Scope::Form), None);
    assert_eq!(d.action_in(&ev('y'), Scope::Confirm), Some(Action::Confirm));
}

#[test]
fn the_help_lists_each_scope_once_with_every_binding() {
    let d = KeyMap::new(&BTreeMap::new()).unwrap();
    let help = d.help();
    assert_eq!(help.len(), DEFAULT_KEYS.len());
    let mut titles: Vec<&str> = help.iter().map(|(t, _, _)| *t).collect();
    titles.dedup();
    assert_eq!(titles.len(), SCOPES.len(), "{titles:?}");
}

#[test]
fn every_mode_reads_its_keys_from_the_table() {
    // The modes of the UI and the scope each reads: the views, the search box, the picker
    // and its path line, forms with their text fields, confirmations, the help.
    for scope in [
        Scope::Everywhere,
        Scope::Batches,
        Scope::Sheet,
        Scope::Shelf,
        Scope::Calibrations,
        Scope::Trail,
        Scope::Search,
        Scope::Picker,
        Scope::PickerPath,
        Scope::Form,
        Scope::Field,
        Scope::Confirm,
        Scope::Help,
    ] {
        assert!(
            SCOPES.iter().any(|(s, _)| *s == scope),
            "{scope:?} has no place in the help"
        );
        assert!(DEFAULT_KEYS.iter().any(|b| b.scope == scope), "{scope:?} has no keys");
    }
    assert_eq!(SCOPES.len(), 13);
    // Leaving a mode is a key of that mode, so its footer can say how.
    for (scope, leave) in [
        (Scope::Search, Action::LeaveSearch),
        (Scope::Picker, Action::PickCancel),
        (Scope::PickerPath, Action::PathStop),
        (Scope::Form, Action::Cancel),
        (Scope::Confirm, Action::Decline),
        (Scope::Help, Action::HelpClose),
    ] {
        assert!(
            DEFAULT_KEYS
                .iter()
                .any(|b| b.scope == scope && b.action == leave && b.footer),
            "{scope:?}"
        );
    }
}

#[test]
fn the_shipped_table_gives_no_key_two_actions_in_one_mode() {
    for (i, a) in DEFAULT_KEYS.iter().enumerate() {
        for b in &DEFAULT_KEYS[i + 1..] {
            if a.key == b.key && a.scope.meets(b.scope) {
                assert_eq!(a.action, b.action, "{} and {} share {}", a.name, b.name, a.key);
            }
        }
    }
    assert!(KeyMap::new(&BTreeMap::new()).is_ok());
}

#[test]
fn a_rebinding_onto_another_key_of_the_same_mode_is_refused_naming_both() {
    let refused = |name: &str, key: &str| {
        let mut o = BTreeMap::new();
        o.insert(name.to_string(), key.to_string());
        match KeyMap::new(&o) {
            Err(e) => e,
            Ok(_) => panic!("{name} on {key} was taken"),
        }
    };
    for (name, key, other, mode) in [
        // Two keys of the shelf.
        ("draw", "m", "move", "(shelf)"),
        // A view's key onto a key of every view.
        ("sort", "q", "quit", "(batches)"),
        ("quit", "s", "sort", "(batches)"),
        // Leaving the search box onto a key that edits its text.
        ("search-done", "ctrl-w", "delete-word", "(in the search box)"),
        // The picker's path line, the help, a form, a confirmation.
        (
            "complete-path",
            "ctrl-u",
            "delete-to-start",
            "(typing a path to export files)",
        ),
        ("close-help", "pagedown", "help-page-down", "(in this help)"),
        ("save", "tab", "next-field", "(in a form)"),
        ("confirm", "n", "decline", "(when asked to confirm)"),
    ] {
        let e = refused(name, key);
        assert!(e.starts_with("keys: ") && !e.contains('\n'), "one line: {e}");
        assert!(
            e.contains(&format!("{name} and {other}")) && e.contains(mode),
            "{name} on {key}: {e}"
        );
    }
    // The same key in modes that never meet is no conflict: p plots on the sheet and would
    // draw on the shelf; Esc closes the help and leaves the picker.
    let mut o = BTreeMap::new();
    o.insert("draw".to_string(), "p".to_string());
    o.insert("close-help".to_string(), "x".to_string());
    assert!(KeyMap::new(&o).is_ok());
}

#[test]
fn bad_overrides_are_named() {
    let mut o = BTreeMap::new();
    o.insert("teleport".to_string(), "t".to_string());
    assert!(KeyMap::new(&o).err().unwrap().contains("no action called 'teleport'"));
    let mut o = BTreeMap::new();
    o.insert("draw".to_string(), "ctrl-".to_string());
    assert!(KeyMap::new(&o).err().unwrap().contains("is not a key"));
}
