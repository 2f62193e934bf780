//! The one key table. Help, footer and dispatch all read it, so a binding cannot be documented
//! in one place and behave differently in another; every mode has its scope here (the views,
//! the search box, the file picker and its path line, forms and their text fields,
//! confirmations, the help). Users may rebind actions in a JSON file (`$CUVETTE_KEYS`, else
//! `keys.json` in the platform's config folder for cuvette): `{"draw": "D", "search":
//! "ctrl-f"}`. A rebinding that gives two actions of one mode the same key is refused, naming
//! both. The file is read only up to [`MAX_KEYS_FILE_BYTES`]: a larger one (or a device that
//! never ends) is refused with its path, never read whole.
//!
//! Long because the table is: one entry of six lines per binding, about a hundred bindings;
//! the code that reads it is the last few hundred lines.

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::collections::BTreeMap;

/// Everything a key can ask for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Action {
    Quit,
    Help,
    Search,
    Batches,
    Shelf,
    Calibrations,
    Trail,
    Up,
    Down,
    Open,
    Back,
    SortNext,
    SortReverse,
    NewBatch,
    Repeat,
    AddAliquot,
    ImportFolder,
    Watch,
    NewVial,
    Draw,
    Move,
    Dispose,
    ToggleSpectrum,
    ChangeCurve,
    Preview,
    Apply,
    VoidAliquot,
    EditAliquot,
    VoidBatch,
    GoToBatch,
    ReinstateVial,
    ToggleDisposed,
    MoveSpectrum,
    Handover,
    StopWatch,
    // The file picker.
    PickTake,
    PickAbsorbance,
    PickPl,
    PickParent,
    PickTypePath,
    PickContinue,
    PickCancel,
    PickFirst,
    PickLast,
    // Typing a path in the file picker.
    PathComplete,
    PathGo,
    PathStop,
    // The help.
    HelpPageDown,
    HelpPageUp,
    HelpLineDown,
    HelpLineUp,
    HelpTop,
    HelpBottom,
    HelpClose,
    // The search box.
    LeaveSearch,
    // Lists: the batch list, the shelf, the growth table and the trail.
    PageDown,
    PageUp,
    GroupNext,
    TrailFocus,
    // A form.
    NextField,
    PrevField,
    Save,
    Cancel,
    // Any text field (a form's fields and the search box).
    CursorLeft,
    CursorRight,
    LineStart,
    LineEnd,
    DeleteBack,
    DeleteForward,
    KillToStart,
    DeleteWordBack,
    // A confirmation.
    Confirm,
    Decline,
}

/// Where an action applies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scope {
    Everywhere,
    Batches,
    Sheet,
    Shelf,
    Calibrations,
    /// The audit trail.
    Trail,
    /// The help overlay.
    Help,
    /// An open form: moving between fields, saving, cancelling.
    Form,
    /// Editing the text of a field or the search box.
    Field,
    /// A confirmation showing what an action will change.
    Confirm,
    /// The file picker: browsing folders for export files.
    Picker,
    /// Typing a path in the file picker.
    PickerPath,
    /// The search box, while the cursor is in it.
    Search,
}

impl Scope {
    /// A view's scope: its keys and the ones of every view apply there.
    pub fn is_view(self) -> bool {
        matches!(
            self,
            Scope::Batches | Scope::Sheet | Scope::Shelf | Scope::Calibrations | Scope::Trail
        )
    }

    /// Whether a key pressed where `self` applies can also mean something of `other`: every
    /// view takes the keys of every view, and the text being edited (a form's field, the search
    /// box, a path) takes the text field's keys.
    pub fn meets(self, other: Scope) -> bool {
        let with_field = |s: Scope| matches!(s, Scope::Form | Scope::Search | Scope::PickerPath);
        self == other
            || (self == Scope::Everywhere && other.is_view())
            || (other == Scope::Everywhere && self.is_view())
            || (self == Scope::Field && with_field(other))
            || (other == Scope::Field && with_field(self))
    }

    /// How the help titles the scope.
    pub fn title(self) -> &'static str {
        SCOPES.iter().find(|(s, _)| *s == self).map(|(_, t)| *t).unwrap_or("")
    }
}

/// The order scopes are listed in the help, and their titles there.
pub const SCOPES: &[(Scope, &str)] = &[
    (Scope::Everywhere, "anywhere"),
    (Scope::Batches, "batches"),
    (Scope::Sheet, "batch sheet"),
    (Scope::Shelf, "shelf"),
    (Scope::Calibrations, "calibrations"),
    (Scope::Trail, "trail"),
    (Scope::Search, "in the search box"),
    (Scope::Picker, "choosing export files"),
    (Scope::PickerPath, "typing a path to export files"),
    (Scope::Form, "in a form"),
    (Scope::Field, "in a text field (forms and the search box)"),
    (Scope::Confirm, "when asked to confirm"),
    (Scope::Help, "in this help"),
];

pub struct Binding {
    pub action: Action,
    pub name: &'static str,
    pub key: &'static str,
    pub scope: Scope,
    pub help: &'static str,
    /// Shown in the footer of its scope.
    pub footer: bool,
}

pub const DEFAULT_KEYS: &[Binding] = &[
    Binding {
        action: Action::Quit,
        name: "quit",
        key: "q",
        scope: Scope::Everywhere,
        help: "quit (Ctrl-C works everywhere)",
        footer: true,
    },
    Binding {
        action: Action::Help,
        name: "help",
        key: "?",
        scope: Scope::Everywhere,
        help: "show or hide this help",
        footer: true,
    },
    Binding {
        action: Action::Batches,
        name: "batches",
        key: "1",
        scope: Scope::Everywhere,
        help: "the batch list",
        footer: false,
    },
    Binding {
        action: Action::Shelf,
        name: "shelf",
        key: "2",
        scope: Scope::Everywhere,
        help: "shelf of vials",
        footer: false,
    },
    Binding {
        action: Action::Calibrations,
        name: "calibrations",
        key: "3",
        scope: Scope::Everywhere,
        help: "calibrations and recompute",
        footer: false,
    },
    Binding {
        action: Action::Trail,
        name: "trail",
        key: "4",
        scope: Scope::Everywhere,
        help: "audit trail",
        footer: false,
    },
    Binding {
        action: Action::Up,
        name: "up",
        key: "up",
        scope: Scope::Everywhere,
        help: "move up (also k)",
        footer: false,
    },
    Binding {
        action: Action::Down,
        name: "down",
        key: "down",
        scope: Scope::Everywhere,
        help: "move down (also j)",
        footer: false,
    },
    Binding {
        action: Action::PageDown,
        name: "page-down",
        key: "pagedown",
        scope: Scope::Everywhere,
        help: "a page down the list",
        footer: false,
    },
    Binding {
        action: Action::PageUp,
        name: "page-up",
        key: "pageup",
        scope: Scope::Everywhere,
        help: "a page up the list",
        footer: false,
    },
    Binding {
        action: Action::Back,
        name: "back",
        key: "esc",
        scope: Scope::Everywhere,
        help: "back, or close a form",
        footer: false,
    },
    Binding {
        action: Action::Search,
        name: "search",
        key: "/",
        scope: Scope::Batches,
        help: "search with the query language",
        footer: true,
    },
    Binding {
        action: Action::Open,
        name: "open",
        key: "enter",
        scope: Scope::Batches,
        help: "open the batch sheet",
        footer: true,
    },
    Binding {
        action: Action::SortNext,
        name: "sort",
        key: "s",
        scope: Scope::Batches,
        help: "sort by the next column",
        footer: true,
    },
    Binding {
        action: Action::SortReverse,
        name: "reverse",
        key: "S",
        scope: Scope::Batches,
        help: "reverse the sort",
        footer: false,
    },
    Binding {
        action: Action::NewBatch,
        name: "new-batch",
        key: "n",
        scope: Scope::Batches,
        help: "log a new batch",
        footer: true,
    },
    Binding {
        action: Action::Repeat,
        name: "repeat",
        key: "r",
        scope: Scope::Batches,
        help: "repeat the selected batch (confirms first)",
        footer: false,
    },
    Binding {
        action: Action::AddAliquot,
        name: "add-aliquot",
        key: "a",
        scope: Scope::Sheet,
        help: "add an aliquot from export files",
        footer: true,
    },
    Binding {
        action: Action::ImportFolder,
        name: "import",
        key: "i",
        scope: Scope::Sheet,
        help: "import a folder of exports",
        footer: false,
    },
    Binding {
        action: Action::Watch,
        name: "watch",
        key: "w",
        scope: Scope::Sheet,
        help: "watch a folder for new exports",
        footer: true,
    },
    Binding {
        action: Action::NewVial,
        name: "new-vial",
        key: "v",
        scope: Scope::Sheet,
        help: "put product into a new vial",
        footer: true,
    },
    Binding {
        action: Action::ToggleSpectrum,
        name: "spectrum",
        key: "p",
        scope: Scope::Sheet,
        help: "plot absorbance or PL",
        footer: true,
    },
    Binding {
        action: Action::Draw,
        name: "draw",
        key: "d",
        scope: Scope::Shelf,
        help: "draw from the vial",
        footer: true,
    },
    Binding {
        action: Action::Move,
        name: "move",
        key: "m",
        scope: Scope::Shelf,
        help: "move the vial",
        footer: true,
    },
    Binding {
        action: Action::Dispose,
        name: "dispose",
        key: "x",
        scope: Scope::Shelf,
        help: "dispose of the vial (asks why, then confirms)",
        footer: true,
    },
    Binding {
        action: Action::Search,
        name: "search",
        key: "/",
        scope: Scope::Shelf,
        help: "filter the vials with the query language (by: the owner)",
        footer: true,
    },
    Binding {
        action: Action::SortNext,
        name: "sort",
        key: "s",
        scope: Scope::Shelf,
        help: "sort each group by the next column",
        footer: true,
    },
    Binding {
        action: Action::SortReverse,
        name: "reverse",
        key: "S",
        scope: Scope::Shelf,
        help: "reverse the sort",
        footer: false,
    },
    Binding {
        action: Action::GroupNext,
        name: "group",
        key: "G",
        scope: Scope::Shelf,
        help: "group by location, batch, owner, material, or not at all",
        footer: true,
    },
    Binding {
        action: Action::TrailFocus,
        name: "history",
        key: "f",
        scope: Scope::Trail,
        help: "only the selected entry's batch, vial or aliquot (again: all)",
        footer: true,
    },
    Binding {
        action: Action::ChangeCurve,
        name: "change-curve",
        key: "c",
        scope: Scope::Calibrations,
        help: "choose a sizing curve",
        footer: true,
    },
    Binding {
        action: Action::Preview,
        name: "preview",
        key: "p",
        scope: Scope::Calibrations,
        help: "preview the recompute",
        footer: true,
    },
    Binding {
        action: Action::Apply,
        name: "recompute",
        key: "A",
        scope: Scope::Calibrations,
        help: "recompute stale values (previews, then asks)",
        footer: true,
    },
    Binding {
        action: Action::GoToBatch,
        name: "go-to-batch",
        key: "g",
        scope: Scope::Batches,
        help: "open a batch by its id (void ones too)",
        footer: false,
    },
    Binding {
        action: Action::VoidBatch,
        name: "void-batch",
        key: "X",
        scope: Scope::Sheet,
        help: "void the batch (asks why, then confirms), or reinstate it",
        footer: false,
    },
    Binding {
        action: Action::VoidAliquot,
        name: "void-aliquot",
        key: "x",
        scope: Scope::Sheet,
        help: "void the selected aliquot (asks why, confirms), or reinstate it",
        footer: true,
    },
    Binding {
        action: Action::EditAliquot,
        name: "edit-aliquot",
        key: "e",
        scope: Scope::Sheet,
        help: "correct the aliquot's minutes, dilution, path or solvent",
        footer: true,
    },
    Binding {
        action: Action::MoveSpectrum,
        name: "move-spectrum",
        key: "M",
        scope: Scope::Sheet,
        help: "move a spectrum of the aliquot to another aliquot",
        footer: false,
    },
    Binding {
        action: Action::ToggleDisposed,
        name: "show-disposed",
        key: "t",
        scope: Scope::Shelf,
        help: "show or hide disposed vials",
        footer: false,
    },
    Binding {
        action: Action::ReinstateVial,
        name: "reinstate-vial",
        key: "u",
        scope: Scope::Shelf,
        help: "put a disposed vial back (asks why)",
        footer: false,
    },
    Binding {
        action: Action::Handover,
        name: "handover",
        key: "H",
        scope: Scope::Shelf,
        help: "hand a person's vials and open batches to another (confirms)",
        footer: false,
    },
    Binding {
        action: Action::HelpPageDown,
        name: "help-page-down",
        key: "pagedown",
        scope: Scope::Help,
        help: "next page (Space a page too)",
        footer: true,
    },
    Binding {
        action: Action::HelpPageUp,
        name: "help-page-up",
        key: "pageup",
        scope: Scope::Help,
        help: "previous page",
        footer: true,
    },
    Binding {
        action: Action::HelpLineDown,
        name: "help-line-down",
        key: "down",
        scope: Scope::Help,
        help: "a line down (also j)",
        footer: false,
    },
    Binding {
        action: Action::HelpLineUp,
        name: "help-line-up",
        key: "up",
        scope: Scope::Help,
        help: "a line up (also k)",
        footer: false,
    },
    Binding {
        action: Action::HelpTop,
        name: "help-top",
        key: "home",
        scope: Scope::Help,
        help: "the first page",
        footer: false,
    },
    Binding {
        action: Action::HelpBottom,
        name: "help-bottom",
        key: "end",
        scope: Scope::Help,
        help: "the last page",
        footer: false,
    },
    Binding {
        action: Action::HelpClose,
        name: "close-help",
        key: "esc",
        scope: Scope::Help,
        help: "close the help (also ? and q)",
        footer: true,
    },
    Binding {
        action: Action::LeaveSearch,
        name: "search-done",
        key: "enter",
        scope: Scope::Search,
        help: "leave the search box; the list keeps the query",
        footer: true,
    },
    Binding {
        action: Action::LeaveSearch,
        name: "search-leave",
        key: "esc",
        scope: Scope::Search,
        help: "leave the search box as Enter does",
        footer: true,
    },
    Binding {
        action: Action::Down,
        name: "search-down",
        key: "down",
        scope: Scope::Search,
        help: "the row below, still typing",
        footer: false,
    },
    Binding {
        action: Action::Up,
        name: "search-up",
        key: "up",
        scope: Scope::Search,
        help: "the row above, still typing",
        footer: false,
    },
    Binding {
        action: Action::StopWatch,
        name: "stop-watch",
        key: "W",
        scope: Scope::Everywhere,
        help: "stop watching the folder (shown on the status line)",
        footer: false,
    },
    Binding {
        action: Action::PickTake,
        name: "take",
        key: "enter",
        scope: Scope::Picker,
        help: "open a folder; take a file as the kind it looks like",
        footer: true,
    },
    Binding {
        action: Action::PickAbsorbance,
        name: "as-abs",
        key: "a",
        scope: Scope::Picker,
        help: "take the file as absorbance (again: put it back)",
        footer: true,
    },
    Binding {
        action: Action::PickPl,
        name: "as-pl",
        key: "p",
        scope: Scope::Picker,
        help: "take the file as PL (again: put it back)",
        footer: true,
    },
    Binding {
        action: Action::PickParent,
        name: "up",
        key: "backspace",
        scope: Scope::Picker,
        help: "the folder above (also ←)",
        footer: true,
    },
    Binding {
        action: Action::PickTypePath,
        name: "path",
        key: "/",
        scope: Scope::Picker,
        help: "type a path (Tab completes, Enter goes there)",
        footer: true,
    },
    Binding {
        action: Action::PickContinue,
        name: "next",
        key: "tab",
        scope: Scope::Picker,
        help: "go on to the aliquot's form with the files taken",
        footer: true,
    },
    Binding {
        action: Action::PickCancel,
        name: "close",
        key: "esc",
        scope: Scope::Picker,
        help: "close the picker; nothing is logged",
        footer: true,
    },
    Binding {
        action: Action::Down,
        name: "pick-down",
        key: "down",
        scope: Scope::Picker,
        help: "the entry below (also j)",
        footer: false,
    },
    Binding {
        action: Action::Up,
        name: "pick-up",
        key: "up",
        scope: Scope::Picker,
        help: "the entry above (also k)",
        footer: false,
    },
    Binding {
        action: Action::PageDown,
        name: "pick-page-down",
        key: "pagedown",
        scope: Scope::Picker,
        help: "a page down the folder",
        footer: false,
    },
    Binding {
        action: Action::PageUp,
        name: "pick-page-up",
        key: "pageup",
        scope: Scope::Picker,
        help: "a page up the folder",
        footer: false,
    },
    Binding {
        action: Action::PickFirst,
        name: "pick-first",
        key: "home",
        scope: Scope::Picker,
        help: "the first entry",
        footer: false,
    },
    Binding {
        action: Action::PickLast,
        name: "pick-last",
        key: "end",
        scope: Scope::Picker,
        help: "the last entry",
        footer: false,
    },
    Binding {
        action: Action::PathComplete,
        name: "complete-path",
        key: "tab",
        scope: Scope::PickerPath,
        help: "complete the path as a shell does (several fits are listed)",
        footer: true,
    },
    Binding {
        action: Action::PathGo,
        name: "go-to-path",
        key: "enter",
        scope: Scope::PickerPath,
        help: "go there (a file's path opens its folder on it)",
        footer: true,
    },
    Binding {
        action: Action::PathStop,
        name: "stop-typing",
        key: "esc",
        scope: Scope::PickerPath,
        help: "back to the list",
        footer: true,
    },
    Binding {
        action: Action::NextField,
        name: "next-field",
        key: "tab",
        scope: Scope::Form,
        help: "next field (also ↓)",
        footer: true,
    },
    Binding {
        action: Action::PrevField,
        name: "previous-field",
        key: "backtab",
        scope: Scope::Form,
        help: "previous field (also ↑)",
        footer: false,
    },
    Binding {
        action: Action::Save,
        name: "save",
        key: "enter",
        scope: Scope::Form,
        help: "save (a disposal, void or handover asks first)",
        footer: true,
    },
    Binding {
        action: Action::Cancel,
        name: "cancel",
        key: "esc",
        scope: Scope::Form,
        help: "close the form; nothing is saved",
        footer: true,
    },
    Binding {
        action: Action::CursorLeft,
        name: "cursor-left",
        key: "left",
        scope: Scope::Field,
        help: "cursor one character left",
        footer: false,
    },
    Binding {
        action: Action::CursorRight,
        name: "cursor-right",
        key: "right",
        scope: Scope::Field,
        help: "cursor one character right",
        footer: false,
    },
    Binding {
        action: Action::LineStart,
        name: "line-start",
        key: "ctrl-a",
        scope: Scope::Field,
        help: "to the start of the text (also Home)",
        footer: false,
    },
    Binding {
        action: Action::LineEnd,
        name: "line-end",
        key: "ctrl-e",
        scope: Scope::Field,
        help: "to the end of the text (also End)",
        footer: false,
    },
    Binding {
        action: Action::DeleteBack,
        name: "delete-back",
        key: "backspace",
        scope: Scope::Field,
        help: "delete the character before the cursor",
        footer: false,
    },
    Binding {
        action: Action::DeleteForward,
        name: "delete-forward",
        key: "delete",
        scope: Scope::Field,
        help: "delete the character under the cursor",
        footer: false,
    },
    Binding {
        action: Action::KillToStart,
        name: "delete-to-start",
        key: "ctrl-u",
        scope: Scope::Field,
        help: "delete from the cursor back to the start",
        footer: false,
    },
    Binding {
        action: Action::DeleteWordBack,
        name: "delete-word",
        key: "ctrl-w",
        scope: Scope::Field,
        help: "delete the word before the cursor",
        footer: false,
    },
    Binding {
        action: Action::Confirm,
        name: "confirm",
        key: "y",
        scope: Scope::Confirm,
        help: "go ahead (also Enter)",
        footer: true,
    },
    Binding {
        action: Action::Decline,
        name: "decline",
        key: "n",
        scope: Scope::Confirm,
        help: "do not; nothing changes (also Esc)",
        footer: true,
    },
];

/// A parsed key: code and whether Ctrl is held.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Key {
    pub code: KeyCode,
    pub ctrl: bool,
}

pub fn parse_key(s: &str) -> Option<Key> {
    let (ctrl, rest) = match s.strip_prefix("ctrl-") {
        Some(r) => (true, r),
        None => (false, s),
    };
    let code = match rest {
        "enter" => KeyCode::Enter,
        "esc" => KeyCode::Esc,
        "up" => KeyCode::Up,
        "down" => KeyCode::Down,
        "tab" => KeyCode::Tab,
        "left" => KeyCode::Left,
        "right" => KeyCode::Right,
        "backtab" => KeyCode::BackTab,
        "home" => KeyCode::Home,
        "end" => KeyCode::End,
        "delete" => KeyCode::Delete,
        "backspace" => KeyCode::Backspace,
        "pageup" => KeyCode::PageUp,
        "pagedown" => KeyCode::PageDown,
        "space" => KeyCode::Char(' '),
        one if one.chars().count() == 1 => KeyCode::Char(one.chars().next()?),
        _ => return None,
    };
    Some(Key { code, ctrl })
}

pub fn describe(k: &Key) -> String {
    let base = match k.code {
        KeyCode::Enter => "Enter".to_string(),
        KeyCode::Esc => "Esc".to_string(),
        KeyCode::Up => "↑".to_string(),
        KeyCode::Down => "↓".to_string(),
        KeyCode::Tab => "Tab".to_string(),
        KeyCode::Left => "←".to_string(),
        KeyCode::Right => "→".to_string(),
        KeyCode::BackTab => "Shift-Tab".to_string(),
        KeyCode::Home => "Home".to_string(),
        KeyCode::End => "End".to_string(),
        KeyCode::Delete => "Del".to_string(),
        KeyCode::Backspace => "Backspace".to_string(),
        KeyCode::PageUp => "PgUp".to_string(),
        KeyCode::PageDown => "PgDn".to_string(),
        KeyCode::Char(' ') => "Space".to_string(),
        KeyCode::Char(c) => c.to_string(),
        _ => "?".to_string(),
    };
    // Terminals send Ctrl-a and Ctrl-A alike; keyboards and manuals print the capital.
    if k.ctrl {
        format!("Ctrl-{}", base.to_uppercase())
    } else {
        base
    }
}

/// The largest key overrides file read; the full table is well under a kilobyte.
pub const MAX_KEYS_FILE_BYTES: u64 = 64 * 1024;

/// Reads an overrides file, refusing one above [`MAX_KEYS_FILE_BYTES`] after reading at most
/// one byte more than that (its stated size is not trusted: a pipe or a device has none).
pub fn read_overrides(p: &std::path::Path) -> Result<BTreeMap<String, String>, String> {
    use std::io::Read;
    let f = std::fs::File::open(p).map_err(|e| format!("keys: cannot read {}: {e}", p.display()))?;
    let mut bytes = Vec::new();
    f.take(MAX_KEYS_FILE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| format!("keys: cannot read {}: {e}", p.display()))?;
    if bytes.len() as u64 > MAX_KEYS_FILE_BYTES {
        return Err(format!(
            "keys: {} is larger than {} KiB; a key overrides file is a small JSON object",
            p.display(),
            MAX_KEYS_FILE_BYTES / 1024
        ));
    }
    let text = String::from_utf8(bytes).map_err(|_| format!("keys: {} is not UTF-8 text", p.display()))?;
    serde_json::from_str(&text).map_err(|e| format!("keys: {} is not a JSON object of action to key: {e}", p.display()))
}

/// The bindings in force: defaults with the user's overrides.
pub struct KeyMap {
    pub entries: Vec<(Key, &'static Binding)>,
}

impl KeyMap {
    pub fn new(overrides: &BTreeMap<String, String>) -> Result<KeyMap, String> {
        let mut entries = Vec::new();
        for b in DEFAULT_KEYS {
            let text = overrides.get(b.name).map(String::as_str).unwrap_or(b.key);
            let key = parse_key(text).ok_or_else(|| format!("keys: '{text}' for {} is not a key", b.name))?;
            entries.push((key, b));
        }
        for name in overrides.keys() {
            if !DEFAULT_KEYS.iter().any(|b| b.name == name) {
                return Err(format!("keys: no action called '{name}'"));
            }
        }
        // Two actions of one mode on one key: only one could ever be reached. The shipped
        // table has no such pair, so it is a rebinding that made it.
        for (i, (ka, a)) in entries.iter().enumerate() {
            for (kb, b) in &entries[i + 1..] {
                if ka == kb && a.scope.meets(b.scope) && a.action != b.action {
                    let (rebound, other) = if overrides.contains_key(a.name) { (a, b) } else { (b, a) };
                    let narrow = if rebound.scope == Scope::Everywhere {
                        other.scope
                    } else {
                        rebound.scope
                    };
                    return Err(format!(
                        "keys: {} and {} would both be {} ({}); give one of them another key",
                        rebound.name,
                        other.name,
                        describe(ka),
                        narrow.title()
                    ));
                }
            }
        }
        Ok(KeyMap { entries })
    }

    /// Reads the user's override file, if there is one.
    pub fn load() -> Result<KeyMap, String> {
        match crate::paths::keys_file() {
            Some(p) if p.exists() => KeyMap::from_file(&p),
            _ => KeyMap::new(&BTreeMap::new()),
        }
    }

    /// The shipped keys with the overrides of one file (what [`KeyMap::load`] reads).
    pub fn from_file(p: &std::path::Path) -> Result<KeyMap, String> {
        KeyMap::new(&read_overrides(p)?)
    }

    /// The action a key press asks for in a scope.
    pub fn action(&self, ev: &KeyEvent, scope: Scope) -> Option<Action> {
        let ctrl = ev.modifiers.contains(KeyModifiers::CONTROL);
        let code = match ev.code {
            KeyCode::Char('k') if !ctrl && !self.bound(KeyCode::Char('k'), scope) => KeyCode::Up,
            KeyCode::Char('j') if !ctrl && !self.bound(KeyCode::Char('j'), scope) => KeyCode::Down,
            c => c,
        };
        let want = Key { code, ctrl };
        self.entries
            .iter()
            .find(|(k, b)| *k == want && (b.scope == scope || b.scope == Scope::Everywhere))
            .map(|(_, b)| b.action)
    }

    /// The action a key asks for in exactly this scope: no keys of other scopes, no j/k
    /// aliases. Forms, text fields and confirmations use it, so a letter meant as text never
    /// reaches a view's binding.
    pub fn action_in(&self, ev: &KeyEvent, scope: Scope) -> Option<Action> {
        let ctrl = ev.modifiers.contains(KeyModifiers::CONTROL);
        let want = Key { code: ev.code, ctrl };
        self.entries
            .iter()
            .find(|(k, b)| *k == want && b.scope == scope)
            .map(|(_, b)| b.action)
    }

    fn bound(&self, code: KeyCode, scope: Scope) -> bool {
        self.entries
            .iter()
            .any(|(k, b)| k.code == code && !k.ctrl && (b.scope == scope || b.scope == Scope::Everywhere))
    }

    /// (key, description) for the footer of a scope.
    pub fn footer(&self, scope: Scope) -> Vec<(String, &'static str)> {
        self.entries
            .iter()
            .filter(|(_, b)| b.footer && (b.scope == scope || b.scope == Scope::Everywhere))
            .map(|(k, b)| (describe(k), b.name))
            .collect()
    }

    /// (key, description) for the footer of a form or a confirmation: only that scope's keys.
    pub fn footer_in(&self, scope: Scope) -> Vec<(String, &'static str)> {
        self.entries
            .iter()
            .filter(|(_, b)| b.footer && b.scope == scope)
            .map(|(k, b)| (describe(k), b.name))
            .collect()
    }

    /// The key bound to an action in a scope, as the help writes it.
    pub fn key_for(&self, action: Action, scope: Scope) -> Option<String> {
        self.entries
            .iter()
            .find(|(_, b)| b.action == action && b.scope == scope)
            .map(|(k, _)| describe(k))
    }

    /// Every key bound to an action in a scope, as the help writes them, joined by `/`.
    fn keys_for(&self, action: Action, scope: Scope) -> String {
        let keys: Vec<String> = self
            .entries
            .iter()
            .filter(|(_, b)| b.action == action && b.scope == scope)
            .map(|(k, _)| describe(k))
            .collect();
        keys.join("/")
    }

    /// The footer while the search box is being typed in.
    pub fn search_footer(&self) -> String {
        format!(
            "type a query · {} leave the search box",
            self.keys_for(Action::LeaveSearch, Scope::Search)
        )
    }

    /// The help's title: which lines show of how many, and the keys that page and close it.
    pub fn help_title(&self, lines: Option<(usize, usize, usize)>) -> String {
        let more = match lines {
            Some((first, last, total)) => format!(
                " · lines {first}-{last} of {total}, {}/{} more, {}/{} back",
                self.keys_for(Action::HelpLineDown, Scope::Help),
                self.keys_for(Action::HelpPageDown, Scope::Help),
                self.keys_for(Action::HelpLineUp, Scope::Help),
                self.keys_for(Action::HelpPageUp, Scope::Help)
            ),
            None => String::new(),
        };
        format!(
            "keys{more} · {} or ? closes",
            self.keys_for(Action::HelpClose, Scope::Help)
        )
    }

    /// The picker's line while a path is typed.
    pub fn path_hint(&self) -> String {
        let k = |a| self.keys_for(a, Scope::PickerPath);
        format!(
            "{} completes · {} goes there · {} back to the list",
            k(Action::PathComplete),
            k(Action::PathGo),
            k(Action::PathStop)
        )
    }

    /// (scope title, key, help) for the help overlay, grouped by scope in [`SCOPES`] order.
    pub fn help(&self) -> Vec<(&'static str, String, &'static str)> {
        let mut out = Vec::new();
        for (scope, title) in SCOPES {
            for (k, b) in self.entries.iter().filter(|(_, b)| b.scope == *scope) {
                out.push((*title, describe(k), b.help));
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crossterm::event::KeyEvent;

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
}
