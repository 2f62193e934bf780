//! The UI's state and what each key does, mode by mode: the views with their selections, the
//! search boxes, the help and confirmations, and the dispatch of keys to the forms (`forms`),
//! the picker and the views' actions (`actions`). It never touches the lab itself: every read
//! and write goes to the UI's worker (`worker`), whose answers `replies` applies, so this
//! thread only draws and handles keys. Slow work (importing a folder, watching for exports,
//! recomputing, a handover) runs on threads of its own and reports over the same channel.

pub use super::forms::{Edit, Field, Form, FormKind, edit_line};
use super::jobs::RecomputeReport;
use super::keys::{Action, KeyMap, Scope};
pub use super::lists::{SORT_KEYS, ShelfOrder, SortKey, TRAIL_PAGE};
use super::picker::Picker;
use super::replies::Asked;
use super::units;
pub use super::worker::Note;
use super::worker::{BenchDefaults, Worker};
use crate::report::plot::SeriesItem;
use crate::search::{Facts, Hit};
use crate::store::{Store, model};
use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::path::PathBuf;
use std::sync::mpsc::{Receiver, Sender, channel};
use std::time::{Duration, Instant};

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum View {
    /// The list of batches (the first view).
    Batches,
    Sheet,
    Shelf,
    Calibrations,
    Trail,
}

/// What a confirmation goes on to do when the user says yes.
#[derive(Debug, Clone)]
pub enum Pending {
    /// Submit this form (dispose, void, handover).
    Form(Form),
    /// Repeat this batch as a new one.
    Repeat(i64),
    /// Recompute every stale value, as the preview in the summary showed.
    Recompute,
}

/// A one-screen summary of what an action will change, asked before it is done.
#[derive(Debug, Clone)]
pub struct Confirm {
    pub title: String,
    pub lines: Vec<String>,
    pub then: Pending,
    opened: Instant,
}

impl Confirm {
    pub(super) fn new(title: impl Into<String>, lines: Vec<String>, then: Pending) -> Confirm {
        Confirm {
            title: title.into(),
            lines,
            then,
            opened: Instant::now(),
        }
    }
}

/// How long after a form, the search box or a confirmation closes (or a confirmation opens)
/// typed letters and Enter are held back rather than acted on: a person still typing into the
/// form as it closes must not fire the view's keys, nor confirm with a doubled Enter. Long
/// enough for typing already under way, short enough not to be noticed.
pub const SETTLE: Duration = Duration::from_millis(400);

/// What the selection should land on once the lists are reloaded after an action.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Follow {
    Batch(i64),
    Vial(i64),
}

#[derive(Debug, Clone)]
pub enum Mode {
    Normal,
    Search,
    Help,
    Form(Form),
    Picker(Box<Picker>),
    Confirm(Box<Confirm>),
}

pub struct App {
    pub store: Store,
    pub db_path: Option<PathBuf>,
    pub keys: KeyMap,
    pub view: View,
    pub mode: Mode,
    pub quit: bool,
    pub facts: Vec<Facts>,
    pub query: String,
    /// Where the cursor is in the search box (a character index).
    pub query_cursor: usize,
    pub hits: Vec<Hit>,
    pub query_error: Option<String>,
    /// The 1-based column of the query's error, while it has one.
    pub query_error_column: Option<usize>,
    /// What the last query that parsed means, told back as it is typed: while the query has an
    /// error, the results on screen are still this one's.
    pub query_meaning: String,
    /// The last query that parsed: while the box holds one with an error, the list is this
    /// one's results, filtered again from the facts each time they are read.
    pub last_good_query: crate::search::Query,
    pub sort: SortKey,
    pub sort_desc: bool,
    pub selected: usize,
    pub sheet: Option<crate::report::BatchSheet>,
    pub series: Vec<SeriesItem>,
    pub show_pl: bool,
    /// The vials shown, as the shelf's query, grouping and sort arrange them.
    pub vials: Vec<model::VialRow>,
    /// Every vial read (disposed ones too when shown), before the shelf's query.
    pub all_vials: Vec<model::VialRow>,
    pub shelf: ShelfOrder,
    pub vial_selected: usize,
    /// The shelf lists disposed vials too.
    pub show_disposed: bool,
    /// The aliquot selected in the batch sheet's growth table.
    pub aliquot_selected: usize,
    /// Batches whose product values or vial concentrations are stale (the batch list marks them).
    pub stale_batches: std::collections::HashSet<i64>,
    pub calibrations: Vec<crate::lab::calibrations::CalibrationVersion>,
    pub preview: Option<RecomputeReport>,
    pub trail: Vec<model::AuditRow>,
    pub trail_selected: usize,
    /// How many of the newest entries the trail has read.
    pub trail_limit: i64,
    /// The trail shows only the entries about this thing (entity, id).
    pub trail_focus: Option<(String, i64)>,
    pub message: Option<(bool, String)>,
    pub progress: Option<(String, usize, usize)>,
    pub export_dir: PathBuf,
    pub colour: bool,
    pub(super) tx: Sender<Note>,
    pub(super) rx: Receiver<Note>,
    /// A long job (recompute, import, handover) runs; one at a time.
    pub busy: bool,
    /// The UI's worker: every read and write of the lab goes through it.
    pub(super) worker: Worker,
    /// What the worker was asked and has not answered yet.
    pub(super) asked: Asked,
    /// When the UI last asked whether its lab was restored or replaced under it.
    pub(super) last_lab_check: std::time::Instant,
    /// SQLite's count of commits by others when the UI last read: a change means reload.
    pub(super) data_version: Option<i64>,
    /// The open sheet's bench defaults: where its exports are, how its next aliquot is measured.
    pub(super) bench: BenchDefaults,
    /// How many people the lab has, and its locations (the new-vial form starts on the first);
    /// None until the first read.
    pub(super) people: Option<usize>,
    pub(super) locations: Option<Vec<String>>,
    /// How long typing is held back after a form closes (see [`SETTLE`]). `App::new` leaves it
    /// at zero, so a program driving the app key by key gets every key; `tui::run`, which
    /// serves a person at a keyboard, sets [`SETTLE`].
    pub settle: Duration,
    /// When a form, the search box, the picker or a confirmation last closed.
    pub(super) closed_at: Option<Instant>,
    /// Keys held back as a form closed, shown on the status line until the next key.
    pub held_back: String,
    /// The help's first line shown.
    pub help_scroll: usize,
    /// The terminal's size (columns, rows), for paging the help; the event loop keeps it.
    pub size: (u16, u16),
    /// `A` asked for a recompute: the preview running now ends in a confirmation.
    pub(super) apply_after_preview: bool,
    /// The folder watch, while one runs (the status line shows it; `W` stops it).
    pub watching: Option<super::watch::WatchRun>,
    /// How the writer's name was found; the first-run form may make its name the writer's.
    pub writer: super::Writer,
    /// The search box is being typed in (see [`App::parse_query`]).
    pub(super) typing_query: bool,
}

/// How a growth table row names its aliquot: its minutes, else its stage.
pub(super) fn aliquot_label(a: &crate::derive::growth::AliquotSummary) -> String {
    a.minutes
        .map(|m| format!("{} min", units::minutes(m)))
        .unwrap_or_else(|| a.stage.clone().unwrap_or_default())
}

pub(super) fn num(v: Option<f64>, d: usize) -> String {
    v.map(|x| format!("{x:.d$}")).unwrap_or_else(|| "-".into())
}

impl App {
    /// The UI on a store: its worker starts on a sibling of it, and the lists are read before
    /// this returns (reads never wait for another writer's lock), so the first frame shows
    /// the lab.
    pub fn new(store: Store, keys: KeyMap) -> App {
        let (tx, rx) = channel();
        let db_path = store.path.clone();
        let worker = Worker::start(store.sibling().map_err(|e| e.to_string()), tx.clone());
        let mut app = App {
            store,
            db_path,
            keys,
            view: View::Batches,
            mode: Mode::Normal,
            quit: false,
            facts: Vec::new(),
            query: String::new(),
            query_cursor: 0,
            hits: Vec::new(),
            query_error: None,
            query_error_column: None,
            query_meaning: "every batch".into(),
            last_good_query: crate::search::Query::default(),
            sort: SortKey::Id,
            sort_desc: true,
            selected: 0,
            sheet: None,
            series: Vec::new(),
            show_pl: false,
            vials: Vec::new(),
            all_vials: Vec::new(),
            shelf: ShelfOrder::default(),
            vial_selected: 0,
            show_disposed: false,
            aliquot_selected: 0,
            stale_batches: Default::default(),
            calibrations: Vec::new(),
            preview: None,
            trail: Vec::new(),
            trail_selected: 0,
            trail_limit: TRAIL_PAGE,
            trail_focus: None,
            message: None,
            progress: None,
            export_dir: std::env::current_dir().unwrap_or_default(),
            colour: std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty()),
            tx,
            rx,
            busy: false,
            worker,
            asked: Asked::default(),
            last_lab_check: std::time::Instant::now(),
            data_version: None,
            bench: BenchDefaults::default(),
            people: None,
            locations: None,
            settle: Duration::ZERO,
            closed_at: None,
            held_back: String::new(),
            help_scroll: 0,
            size: (80, 24),
            apply_after_preview: false,
            watching: None,
            writer: super::Writer::default(),
            typing_query: false,
        };
        app.reload();
        app.settle_workers(Duration::MAX);
        app
    }

    /// On a lab with nobody in it or nowhere to put a vial (a new lab), opens the form that
    /// adds the first person and location; Esc leaves it for later. `tui::run` calls it, so a
    /// program driving the app key by key gets its first key into the view as usual.
    pub fn offer_first_run(&mut self) {
        // Unread (the lists could not be read) counts as someone and somewhere: no offer.
        let people = self.people.unwrap_or(1);
        let places = self.locations.as_ref().map_or(1, |l| l.len());
        if (people > 0 && places > 0) || self.store.read_only {
            return;
        }
        let me = if people == 0 {
            self.store.actor.clone()
        } else {
            String::new()
        };
        let place = if places == 0 { "fridge 1" } else { "" };
        self.mode = Mode::Form(Form::new(
            FormKind::FirstRun,
            "A new lab: add yourself and a first place for vials (Esc: later)",
            &[
                ("your name", &me),
                ("email", ""),
                ("location", place),
                ("location kind", if places == 0 { "fridge" } else { "" }),
            ],
        ));
    }

    pub(super) fn info(&mut self, s: impl Into<String>) {
        self.message = Some((false, s.into()));
    }
    pub(super) fn error(&mut self, s: impl Into<String>) {
        self.message = Some((true, s.into()));
    }

    /// The aliquot selected in the batch sheet: (id, label, voided).
    pub(super) fn selected_aliquot(&self) -> Option<(i64, String, bool)> {
        let a = self.sheet.as_ref()?.aliquots.get(self.aliquot_selected)?;
        Some((a.id, aliquot_label(a), a.voided))
    }

    pub fn scope(&self) -> Scope {
        match self.view {
            View::Batches => Scope::Batches,
            View::Sheet => Scope::Sheet,
            View::Shelf => Scope::Shelf,
            View::Calibrations => Scope::Calibrations,
            View::Trail => Scope::Trail,
        }
    }

    pub fn on_key(&mut self, ev: KeyEvent) {
        if ev.code == KeyCode::Char('c') && ev.modifiers.contains(KeyModifiers::CONTROL) {
            self.quit = true;
            return;
        }
        let was_open = !matches!(self.mode, Mode::Normal | Mode::Help);
        match std::mem::replace(&mut self.mode, Mode::Normal) {
            Mode::Search => self.search_key(ev),
            Mode::Help => self.help_key(ev),
            Mode::Form(f) => self.form_key(f, ev),
            Mode::Picker(p) => self.picker_key(*p, ev),
            Mode::Confirm(c) => self.confirm_key(*c, ev),
            Mode::Normal => {
                if self.holds_back(&ev) {
                    return;
                }
                // Any other key means the person is with the view again.
                self.held_back.clear();
                self.closed_at = None;
                if let Some(a) = self.keys.action(&ev, self.scope()) {
                    // A message answers the person's last action: the next action starts
                    // without it, so an old error never stands under a new view or question.
                    self.message = None;
                    self.act(a);
                }
            }
        }
        // A form or question put away with Esc takes its messages with it.
        if was_open && ev.code == KeyCode::Esc && matches!(self.mode, Mode::Normal) {
            self.message = None;
        }
        // Esc closes on purpose; Enter (or a confirmation's answer) closes where the person may
        // still be typing, so only then are the next letters held back.
        if was_open && ev.code != KeyCode::Esc && matches!(self.mode, Mode::Normal | Mode::Help) {
            self.closed_at = Some(Instant::now());
        }
    }

    /// Text pasted into the terminal (bracketed paste): into the field being edited, as typed
    /// text with line breaks as spaces, so a pasted newline never submits a form.
    pub fn on_paste(&mut self, text: &str) {
        let clean = text.replace(['\r', '\n', '\t'], " ");
        match &mut self.mode {
            Mode::Form(f) => {
                if let Some(field) = f.fields.get_mut(f.focus) {
                    for c in clean.chars() {
                        edit_line(&mut field.text, &mut field.cursor, Edit::Insert(c));
                    }
                }
            }
            Mode::Search => {
                for c in clean.chars() {
                    let (text, cursor) = self.search_text();
                    edit_line(text, cursor, Edit::Insert(c));
                }
                self.searched();
            }
            _ => self.error("pasted text goes into a form's field or the search box (/)"),
        }
    }

    /// A letter or Enter arriving just after a form closed was typed for the form: it is held
    /// back (and shown), never taken as a view's key.
    fn holds_back(&mut self, ev: &KeyEvent) -> bool {
        let typing = match ev.code {
            KeyCode::Char(_) => !ev.modifiers.intersects(KeyModifiers::CONTROL | KeyModifiers::ALT),
            KeyCode::Enter => true,
            _ => false,
        };
        let recent = self.closed_at.is_some_and(|t| t.elapsed() < self.settle);
        if typing && recent {
            match ev.code {
                KeyCode::Char(c) => self.held_back.push(c),
                _ => self.held_back.push('⏎'),
            }
            return true;
        }
        false
    }

    /// The edit a key asks for in a text field: the key table's editing keys, Home and End,
    /// and any plain character typed. Other keys (an unbound Ctrl-letter) do nothing at all.
    pub(super) fn field_edit(&self, ev: &KeyEvent) -> Option<Edit> {
        if let Some(a) = self.keys.action_in(ev, Scope::Field) {
            return match a {
                Action::CursorLeft => Some(Edit::Left),
                Action::CursorRight => Some(Edit::Right),
                Action::LineStart => Some(Edit::Start),
                Action::LineEnd => Some(Edit::End),
                Action::DeleteBack => Some(Edit::Back),
                Action::DeleteForward => Some(Edit::Forward),
                Action::KillToStart => Some(Edit::KillToStart),
                Action::DeleteWordBack => Some(Edit::WordBack),
                _ => None,
            };
        }
        match ev.code {
            KeyCode::Home => Some(Edit::Start),
            KeyCode::End => Some(Edit::End),
            KeyCode::Char(c) if !ev.modifiers.intersects(KeyModifiers::CONTROL | KeyModifiers::ALT) => {
                Some(Edit::Insert(c))
            }
            _ => None,
        }
    }

    /// The search box being typed in: the shelf's on the shelf, else the batch list's.
    fn search_text(&mut self) -> (&mut String, &mut usize) {
        if self.view == View::Shelf {
            (&mut self.shelf.query, &mut self.shelf.cursor)
        } else {
            (&mut self.query, &mut self.query_cursor)
        }
    }

    /// After the search box's text changed: the list re-filters, its first row selected.
    fn searched(&mut self) {
        if self.view == View::Shelf {
            self.vial_selected = 0;
            self.reshelve();
            self.vial_selected = 0;
        } else {
            self.selected = 0;
            self.refilter();
        }
    }

    fn search_key(&mut self, ev: KeyEvent) {
        self.typing_query = true;
        match self.keys.action_in(&ev, Scope::Search) {
            Some(Action::LeaveSearch) => {
                // Leaving the box finishes the query: a half-typed word is a word now.
                self.typing_query = false;
                if self.view == View::Shelf {
                    self.reshelve();
                } else {
                    self.refilter();
                }
                return;
            }
            Some(Action::Down) => self.step(1),
            Some(Action::Up) => self.step(-1),
            _ => {
                if let Some(e) = self.field_edit(&ev) {
                    let (text, cursor) = self.search_text();
                    if edit_line(text, cursor, e) {
                        self.searched();
                    }
                }
            }
        }
        self.mode = Mode::Search;
    }

    fn help_key(&mut self, ev: KeyEvent) {
        let page = super::draw::help_page_lines(self.size.0, self.size.1);
        let total = self.keys.help().len() + super::keys::SCOPES.len();
        let last = total.saturating_sub(page);
        // The table's keys first; then the alternates its help names (? and q close, j and k
        // scroll, Space pages), for keys the table leaves free here.
        let action = self.keys.action_in(&ev, Scope::Help).or(match ev.code {
            KeyCode::Char('?') | KeyCode::Char('q') => Some(Action::HelpClose),
            KeyCode::Char('j') => Some(Action::HelpLineDown),
            KeyCode::Char('k') => Some(Action::HelpLineUp),
            KeyCode::Char(' ') => Some(Action::HelpPageDown),
            _ => None,
        });
        match action {
            Some(Action::HelpPageDown) => self.help_scroll = (self.help_scroll + page).min(last),
            Some(Action::HelpPageUp) => self.help_scroll = self.help_scroll.saturating_sub(page),
            Some(Action::HelpLineDown) => self.help_scroll = (self.help_scroll + 1).min(last),
            Some(Action::HelpLineUp) => self.help_scroll = self.help_scroll.saturating_sub(1),
            Some(Action::HelpTop) => self.help_scroll = 0,
            Some(Action::HelpBottom) => self.help_scroll = last,
            Some(Action::HelpClose) => {
                self.help_scroll = 0;
                return;
            }
            _ => {}
        }
        self.mode = Mode::Help;
    }

    /// The scope of the key table the keys are read in now, for the footer: the mode's, or in
    /// a view the view's.
    pub fn mode_scope(&self) -> Scope {
        match &self.mode {
            Mode::Normal => self.scope(),
            Mode::Search => Scope::Search,
            Mode::Help => Scope::Help,
            Mode::Form(_) => Scope::Form,
            Mode::Picker(p) if p.typing => Scope::PickerPath,
            Mode::Picker(_) => Scope::Picker,
            Mode::Confirm(_) => Scope::Confirm,
        }
    }

    fn confirm_key(&mut self, c: Confirm, ev: KeyEvent) {
        let a = self.keys.action_in(&ev, Scope::Confirm).or(match ev.code {
            KeyCode::Enter => Some(Action::Confirm),
            KeyCode::Esc => Some(Action::Decline),
            _ => None,
        });
        match a {
            // A doubled Enter (the form's, then one more) must not say yes unseen.
            Some(Action::Confirm) if c.opened.elapsed() < self.settle => {
                self.held_back.push(if ev.code == KeyCode::Enter { '⏎' } else { 'y' });
                self.mode = Mode::Confirm(Box::new(c));
            }
            Some(Action::Confirm) => {
                self.held_back.clear();
                self.go(c.then);
            }
            Some(Action::Decline) => {
                self.held_back.clear();
                self.info("not done: nothing changed");
                if let Pending::Form(f) = c.then {
                    self.mode = Mode::Form(f);
                }
            }
            _ => self.mode = Mode::Confirm(Box::new(c)),
        }
    }

    /// Carries out what a confirmation was about.
    fn go(&mut self, then: Pending) {
        match then {
            Pending::Form(f) => match self.submit(&f) {
                Ok(super::submit::Saved::Done(msg)) => self.finished(msg, &f, None),
                Ok(super::submit::Saved::Sent) => {}
                Err(e) => {
                    self.error(e);
                    self.mode = Mode::Form(f);
                }
            },
            Pending::Repeat(id) => {
                let then = super::replies::Then::Repeated { view: self.view };
                self.send(super::worker::Write::Repeat(id), then, format!("repeating batch {id}"));
            }
            Pending::Recompute => self.spawn_recompute(false),
        }
    }

    /// After a form's action: say what was done, reload, and keep the selection on the thing
    /// acted on (a moved vial sorts elsewhere on the shelf; the highlight goes with it).
    /// `made` is the batch or vial the action made.
    pub(super) fn finished(&mut self, msg: String, f: &Form, made: Option<i64>) {
        if !msg.is_empty() {
            self.info(msg);
        }
        let follow = match f.kind {
            FormKind::Draw | FormKind::Move | FormKind::Dispose | FormKind::ReinstateVial => f.target.map(Follow::Vial),
            FormKind::NewVial => made.map(Follow::Vial),
            FormKind::VoidBatch | FormKind::ReinstateBatch | FormKind::GoToBatch => f.target.map(Follow::Batch),
            FormKind::NewBatch => made.map(Follow::Batch),
            _ => None,
        };
        if let Some(to) = follow {
            self.follow(to);
        }
        self.reload_and_follow(follow);
    }

    pub(super) fn selected_batch(&self) -> Option<i64> {
        match self.view {
            View::Sheet => self.sheet.as_ref().map(|s| s.batch.id),
            _ => self.hits.get(self.selected).map(|h| h.id),
        }
    }

    /// "batch 3 CdSe-0412": how a form names the batch it acts on.
    pub fn batch_words(&self, id: i64) -> String {
        let name = match &self.sheet {
            Some(s) if s.batch.id == id => Some(s.batch.name.clone()),
            _ => self.facts.iter().find(|b| b.id == id).map(|b| b.name.clone()),
        };
        match name {
            Some(n) if !n.is_empty() => format!("batch {id} {n}"),
            _ => format!("batch {id}"),
        }
    }

    pub(super) fn worker_store(&self) -> Result<Store, String> {
        self.store.sibling().map_err(|e| e.to_string())
    }
}
