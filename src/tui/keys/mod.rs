//! The one key table. Help, footer and dispatch all read it, so a binding cannot be documented
//! in one place and behave differently in another; every mode has its scope here (the views,
//! the search box, the file picker and its path line, forms and their text fields,
//! confirmations, the help). Users may rebind actions in a JSON file (`$CUVETTE_KEYS`, else
//! `keys.json` in the platform's config folder for cuvette): `{"draw": "D", "search":
//! "ctrl-f"}`. A rebinding that gives two actions of one mode the same key is refused, naming
//! both. The file is read only up to [`MAX_KEYS_FILE_BYTES`]: a larger one (or a device that
//! never ends) is refused with its path, never read whole.
//!
//! Here the actions, the scopes and what a binding is; `table.rs` the shipped bindings
//! (`DEFAULT_KEYS`), `parse.rs` a key as the user's file writes it and the file itself,
//! `map.rs` the bindings in force and the action a key press asks for, `help.rs` the help,
//! footers and hints written from them.

mod help;
mod map;
mod parse;
mod table;
#[cfg(test)]
mod tests;

pub use map::KeyMap;
pub use parse::{Key, MAX_KEYS_FILE_BYTES, describe, parse_key, read_overrides};
pub use table::DEFAULT_KEYS;

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
