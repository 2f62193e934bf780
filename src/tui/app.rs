//! The UI's state and what each key does. Drawing lives in `draw`; this module changes state
//! through the library (store, search, bench, engine) and never writes SQL. Slow work —
//! importing a folder, watching for exports, recomputing — runs on a worker thread with its own
//! connection and reports back over a channel, so the screen stays responsive.

use super::keys::{Action, KeyMap, Scope};
use super::picker::Picker;
use super::{shelf, units};
use crate::bench::{self, SpectrumFile};
use crate::derive::{calibration, engine};
use crate::report::plot::SeriesItem;
use crate::search::{self, Facts, Hit};
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

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FormKind {
    NewBatch,
    AddAliquot,
    NewVial,
    Draw,
    Move,
    Dispose,
    ChangeCurve,
    Watch,
    Import,
    VoidAliquot,
    ReinstateAliquot,
    EditAliquot,
    VoidBatch,
    ReinstateBatch,
    GoToBatch,
    ReinstateVial,
    MoveSpectrum,
    Handover,
    /// A new, empty lab: the first person and the first place for vials.
    FirstRun,
}

/// One text field of a form: its label, its text and where the cursor is (a character index).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Field {
    pub label: String,
    pub text: String,
    pub cursor: usize,
}

#[derive(Debug, Clone)]
pub struct Form {
    pub kind: FormKind,
    pub title: String,
    pub fields: Vec<Field>,
    pub focus: usize,
    /// The aliquot, batch or vial the form acts on, fixed when it opened (named in its title).
    pub target: Option<i64>,
}

impl Form {
    fn new(kind: FormKind, title: &str, fields: &[(&str, &str)]) -> Form {
        Form {
            kind,
            title: title.into(),
            fields: fields
                .iter()
                .map(|(a, b)| Field {
                    label: a.to_string(),
                    text: b.to_string(),
                    cursor: b.chars().count(),
                })
                .collect(),
            focus: 0,
            target: None,
        }
    }
    fn on(mut self, id: i64) -> Form {
        self.target = Some(id);
        self
    }
    fn get(&self, label: &str) -> String {
        self.fields
            .iter()
            .find(|f| f.label == label)
            .map(|f| f.text.trim().to_string())
            .unwrap_or_default()
    }
    fn push(&mut self, label: &str, text: String) {
        let cursor = text.chars().count();
        self.fields.push(Field {
            label: label.into(),
            text,
            cursor,
        });
    }
}

/// One change to a line of text being edited.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Edit {
    Left,
    Right,
    Start,
    End,
    Back,
    Forward,
    KillToStart,
    WordBack,
    Insert(char),
}

fn byte_at(s: &str, chars: usize) -> usize {
    s.char_indices().nth(chars).map(|(b, _)| b).unwrap_or(s.len())
}

/// Applies an edit to `text` with its cursor (a character index, kept within the text).
/// Returns whether the text changed. A word, for Ctrl-W, ends at whitespace, as in a shell.
pub fn edit_line(text: &mut String, cursor: &mut usize, e: Edit) -> bool {
    let len = text.chars().count();
    *cursor = (*cursor).min(len);
    match e {
        Edit::Left => *cursor = cursor.saturating_sub(1),
        Edit::Right => *cursor = (*cursor + 1).min(len),
        Edit::Start => *cursor = 0,
        Edit::End => *cursor = len,
        Edit::Back if *cursor > 0 => {
            let b = byte_at(text, *cursor - 1);
            text.remove(b);
            *cursor -= 1;
            return true;
        }
        Edit::Forward if *cursor < len => {
            text.remove(byte_at(text, *cursor));
            return true;
        }
        Edit::KillToStart if *cursor > 0 => {
            text.replace_range(..byte_at(text, *cursor), "");
            *cursor = 0;
            return true;
        }
        Edit::WordBack if *cursor > 0 => {
            let before: Vec<char> = text.chars().take(*cursor).collect();
            let mut i = before.len();
            while i > 0 && before[i - 1].is_whitespace() {
                i -= 1;
            }
            while i > 0 && !before[i - 1].is_whitespace() {
                i -= 1;
            }
            let (from, to) = (byte_at(text, i), byte_at(text, *cursor));
            text.replace_range(from..to, "");
            *cursor = i;
            return true;
        }
        Edit::Insert(c) if !c.is_control() => {
            text.insert(byte_at(text, *cursor), c);
            *cursor += 1;
            return true;
        }
        _ => {}
    }
    false
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
    fn new(title: impl Into<String>, lines: Vec<String>, then: Pending) -> Confirm {
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
enum Follow {
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

/// What a worker reports.
#[derive(Debug, Clone)]
pub enum Note {
    Progress {
        label: String,
        done: usize,
        total: usize,
    },
    Done(String),
    Failed(String),
    Preview(engine::RecomputeReport),
    /// What the folder watch did with an export; true when it logged it.
    Watched(String, bool),
    /// The watch has stopped (asked to, or its folder went away).
    WatchEnded(String),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SortKey {
    Id,
    Date,
    Material,
    Peak,
    Diameter,
    Qy,
    Stock,
}

pub const SORT_KEYS: &[SortKey] = &[
    SortKey::Id,
    SortKey::Date,
    SortKey::Material,
    SortKey::Peak,
    SortKey::Diameter,
    SortKey::Qy,
    SortKey::Stock,
];

/// The shelf's own query, grouping and sort (see [`super::shelf`]).
#[derive(Debug, Clone)]
pub struct ShelfOrder {
    pub query: String,
    /// Where the cursor is in the shelf's search box (a character index).
    pub cursor: usize,
    pub error: Option<String>,
    /// The 1-based column of the error, while the query has one.
    pub error_column: Option<usize>,
    /// What the last query that parsed means: the vials on screen are its vials.
    pub meaning: String,
    pub group: shelf::Group,
    pub sort: shelf::Sort,
    pub desc: bool,
}

impl Default for ShelfOrder {
    fn default() -> ShelfOrder {
        ShelfOrder {
            query: String::new(),
            cursor: 0,
            error: None,
            error_column: None,
            meaning: "every vial".into(),
            group: shelf::Group::Location,
            sort: shelf::Sort::Added,
            desc: false,
        }
    }
}

/// How many audit entries the trail reads at a time; scrolling past them reads more.
pub const TRAIL_PAGE: i64 = 300;

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
    pub calibrations: Vec<calibration::CalibrationVersion>,
    pub preview: Option<engine::RecomputeReport>,
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
    tx: Sender<Note>,
    rx: Receiver<Note>,
    pub busy: bool,
    /// When the UI last asked whether its lab was restored or replaced under it.
    last_lab_check: std::time::Instant,
    /// SQLite's count of commits by others when the UI last read: a change means reload.
    data_version: Option<i64>,
    /// How long typing is held back after a form closes (see [`SETTLE`]). `App::new` leaves it
    /// at zero, so a program driving the app key by key gets every key; `tui::run`, which
    /// serves a person at a keyboard, sets [`SETTLE`].
    pub settle: Duration,
    /// When a form, the search box, the picker or a confirmation last closed.
    closed_at: Option<Instant>,
    /// Keys held back as a form closed, shown on the status line until the next key.
    pub held_back: String,
    /// The help's first line shown.
    pub help_scroll: usize,
    /// The terminal's size (columns, rows), for paging the help; the event loop keeps it.
    pub size: (u16, u16),
    /// `A` asked for a recompute: the preview running now ends in a confirmation.
    apply_after_preview: bool,
    /// The vial the last new-vial form made, for the selection to follow.
    new_vial: Option<i64>,
    /// The folder watch, while one runs (the status line shows it; `W` stops it).
    pub watching: Option<super::watch::WatchRun>,
    /// How the writer's name was found; the first-run form may make its name the writer's.
    pub writer: super::Writer,
    /// The search box is being typed in (see [`App::parse_query`]).
    typing_query: bool,
}

/// The 1-based column a query error names.
fn error_column(e: &crate::Error) -> Option<usize> {
    match e {
        crate::Error::Query { column, .. } => Some(*column),
        _ => None,
    }
}

/// How a growth table row names its aliquot: its minutes, else its stage.
fn aliquot_label(a: &crate::derive::growth::AliquotSummary) -> String {
    a.minutes
        .map(|m| format!("{} min", units::minutes(m)))
        .unwrap_or_else(|| a.stage.clone().unwrap_or_default())
}

fn num(v: Option<f64>, d: usize) -> String {
    v.map(|x| format!("{x:.d$}")).unwrap_or_else(|| "-".into())
}

impl App {
    pub fn new(store: Store, keys: KeyMap) -> App {
        let (tx, rx) = channel();
        let db_path = store.path.clone();
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
            last_lab_check: std::time::Instant::now(),
            data_version: None,
            settle: Duration::ZERO,
            closed_at: None,
            held_back: String::new(),
            help_scroll: 0,
            size: (80, 24),
            apply_after_preview: false,
            new_vial: None,
            watching: None,
            writer: super::Writer::default(),
            typing_query: false,
        };
        app.reload();
        app
    }

    /// On a lab with nobody in it or nowhere to put a vial (a new lab), opens the form that
    /// adds the first person and location; Esc leaves it for later. `tui::run` calls it, so a
    /// program driving the app key by key gets its first key into the view as usual.
    pub fn offer_first_run(&mut self) {
        let people = model::list_people(&self.store.conn).map(|v| v.len()).unwrap_or(1);
        let places = model::list_locations(&self.store.conn).map(|v| v.len()).unwrap_or(1);
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

    fn info(&mut self, s: impl Into<String>) {
        self.message = Some((false, s.into()));
    }
    fn error(&mut self, s: impl Into<String>) {
        self.message = Some((true, s.into()));
    }

    /// Reloads what the current view shows.
    pub fn reload(&mut self) {
        // What is selected is kept by what it is (a batch, a vial), not by its row number, so a
        // reload after someone else's write never leaves the highlight on another thing.
        let batch_was = self.hits.get(self.selected).map(|h| h.id);
        let vial_was = self.vials.get(self.vial_selected).map(|v| v.id);
        let r = (|| -> crate::Result<()> {
            self.facts = search::load_facts(&self.store.conn)?;
            self.refilter();
            if let Some(i) = batch_was.and_then(|id| self.hits.iter().position(|h| h.id == id)) {
                self.selected = i;
            }
            self.all_vials = model::list_vials(&self.store.conn, self.show_disposed)?;
            self.reshelve();
            if let Some(i) = vial_was.and_then(|id| self.vials.iter().position(|v| v.id == id)) {
                self.vial_selected = i;
            }
            if self.vial_selected >= self.vials.len() {
                self.vial_selected = self.vials.len().saturating_sub(1);
            }
            self.stale_batches = engine::stale_batches(&self.store.conn)?;
            self.calibrations = calibration::history(&self.store.conn)?;
            self.load_trail()?;
            if let Some(id) = self.sheet.as_ref().map(|s| s.batch.id) {
                match self.open_sheet(id) {
                    Ok(()) => {}
                    // The batch is gone (the lab was restored from a backup without it): the
                    // sheet closes rather than show, and act on, a batch that is not there.
                    Err(crate::Error::NotFound { .. }) => {
                        self.sheet = None;
                        self.series.clear();
                        if self.view == View::Sheet {
                            self.view = View::Batches;
                        }
                    }
                    Err(e) => return Err(e),
                }
            }
            self.data_version = self.store.data_version().ok();
            Ok(())
        })();
        if let Err(e) = r {
            self.error(e.to_string());
        }
    }

    /// Re-filters the batch list from the facts in memory: cheap enough for every keystroke.
    /// A query with an error leaves the last good results (and their meaning) in place.
    pub fn refilter(&mut self) {
        match self.parse_query(&self.query) {
            Ok((q, typing)) => {
                self.query_error = None;
                self.query_error_column = None;
                self.query_meaning = search::describe(&q) + &typing;
                self.hits = search::filter(&self.facts, &q);
                if q.words().is_empty() {
                    self.sort_hits();
                }
            }
            Err(e) => {
                self.query_error_column = error_column(&e);
                self.query_error = Some(e.to_string());
            }
        }
        if self.selected >= self.hits.len() {
            self.selected = self.hits.len().saturating_sub(1);
        }
    }

    /// A search box's query: while it is being typed, a last word that is only the start of a
    /// field name waits (see [`search::parse_typing`]), and the meaning says so.
    fn parse_query(&self, text: &str) -> crate::Result<(search::Query, String)> {
        if !self.typing_query {
            return search::parse(text).map(|q| (q, String::new()));
        }
        let (q, word, names) = search::parse_typing(text)?;
        let note = match names.as_slice() {
            [] => String::new(),
            [one] => format!(" · typing '{word}' ({one}?)"),
            [rest @ .., last] => format!(" · typing '{word}' ({} or {last}?)", rest.join(", ")),
        };
        Ok((q, note))
    }

    /// Arranges the shelf from the vials in memory: its query, grouping and sort. The
    /// selection stays on the vial it was on while that vial still shows. A query with an error
    /// leaves the last good arrangement in place.
    pub fn reshelve(&mut self) {
        let was = self.vials.get(self.vial_selected).map(|v| v.id);
        match self.parse_query(&self.shelf.query) {
            Ok((q, typing)) => {
                self.shelf.error = None;
                self.shelf.error_column = None;
                self.shelf.meaning = if q.clauses.is_empty() {
                    "every vial".to_string() + &typing
                } else {
                    search::describe(&q) + &typing
                };
                let o = &self.shelf;
                self.vials = shelf::arrange(&self.all_vials, &self.facts, &q, o.group, o.sort, o.desc);
            }
            Err(e) => {
                self.shelf.error_column = error_column(&e);
                self.shelf.error = Some(e.to_string());
                // The vials shown stay; their rows are refreshed from what was just read.
                let fresh: std::collections::HashMap<i64, &model::VialRow> =
                    self.all_vials.iter().map(|v| (v.id, v)).collect();
                self.vials = self
                    .vials
                    .iter()
                    .filter_map(|v| fresh.get(&v.id).map(|f| (*f).clone()))
                    .collect();
            }
        }
        if let Some(i) = was.and_then(|id| self.vials.iter().position(|v| v.id == id)) {
            self.vial_selected = i;
        }
        if self.vial_selected >= self.vials.len() {
            self.vial_selected = self.vials.len().saturating_sub(1);
        }
    }

    /// Reads the trail (the newest `trail_limit` entries, or every entry about the focused
    /// thing), keeping the selection on the entry it was on; a selection on the newest entry
    /// follows the newest, so new writes do not leave it behind.
    fn load_trail(&mut self) -> crate::Result<()> {
        let was = (self.trail_selected > 0)
            .then(|| self.trail.get(self.trail_selected).map(|r| r.id))
            .flatten();
        self.trail = match &self.trail_focus {
            Some((entity, id)) => model::audit_log_of(&self.store.conn, entity, *id, i64::MAX)?,
            None => model::audit_log(&self.store.conn, None, self.trail_limit)?,
        };
        if let Some(i) = was.and_then(|id| self.trail.iter().position(|r| r.id == id)) {
            self.trail_selected = i;
        }
        self.trail_selected = self.trail_selected.min(self.trail.len().saturating_sub(1));
        Ok(())
    }

    /// Moves the trail's selection by `step` entries, reading older entries when it passes
    /// the last one read.
    fn trail_step(&mut self, step: isize) {
        let want = self.trail_selected as isize + step;
        if want >= self.trail.len() as isize
            && self.trail_focus.is_none()
            && self.trail.len() as i64 >= self.trail_limit
        {
            self.trail_limit += TRAIL_PAGE.max(step as i64);
            if let Err(e) = self.load_trail() {
                self.error(e.to_string());
            }
        }
        let last = self.trail.len().saturating_sub(1) as isize;
        self.trail_selected = want.clamp(0, last.max(0)) as usize;
    }

    /// Rows a page of a list moves by: the body of the screen less its headers.
    fn page_rows(&self) -> usize {
        (self.size.1 as usize).saturating_sub(9).max(1)
    }

    /// Moves the selection of the view's list by `step` rows (negative: up).
    fn step(&mut self, step: isize) {
        let moved = |at: usize, len: usize| (at as isize + step).clamp(0, len.saturating_sub(1) as isize) as usize;
        match self.view {
            View::Shelf => self.vial_selected = moved(self.vial_selected, self.vials.len()),
            View::Sheet => {
                let n = self.sheet.as_ref().map(|s| s.aliquots.len()).unwrap_or(0);
                self.aliquot_selected = moved(self.aliquot_selected, n);
            }
            View::Trail => self.trail_step(step),
            _ => self.selected = moved(self.selected, self.hits.len()),
        }
    }

    fn sort_hits(&mut self) {
        let key = self.sort;
        let cmp_opt = |a: Option<f64>, b: Option<f64>| a.unwrap_or(f64::MIN).total_cmp(&b.unwrap_or(f64::MIN));
        self.hits.sort_by(|a, b| match key {
            SortKey::Id => a.id.cmp(&b.id),
            SortKey::Date => a.started_at.cmp(&b.started_at),
            SortKey::Material => a.material.cmp(&b.material).then(a.id.cmp(&b.id)),
            SortKey::Peak => cmp_opt(a.first_exciton_nm, b.first_exciton_nm),
            SortKey::Diameter => cmp_opt(a.diameter_nm, b.diameter_nm),
            SortKey::Qy => cmp_opt(a.qy, b.qy),
            SortKey::Stock => a.stock_ml.total_cmp(&b.stock_ml),
        });
        if self.sort_desc {
            self.hits.reverse();
        }
    }

    pub fn open_sheet(&mut self, id: i64) -> crate::Result<()> {
        let same = self.sheet.as_ref().map(|s| s.batch.id) == Some(id);
        let sheet = crate::report::batch_sheet(&self.store.conn, id)?;
        let n = sheet.aliquots.len();
        self.aliquot_selected = if same {
            self.aliquot_selected.min(n.saturating_sub(1))
        } else {
            0
        };
        self.sheet = Some(sheet);
        self.series = crate::report::plot::series(&self.store.conn, id)?;
        Ok(())
    }

    /// The aliquot selected in the batch sheet: (id, label, voided).
    fn selected_aliquot(&self) -> Option<(i64, String, bool)> {
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

    /// Notices a lab restored (or its file replaced) while the UI had it open: the UI reopens
    /// the lab at its path and says so, instead of writing into a file nobody looks at. Every
    /// write also checks this under its lock, so nothing slips in before the UI looks.
    pub fn check_lab(&mut self) {
        match self.store.replaced() {
            // Others' writes show without waiting for one of ours (not while a form is open,
            // so nothing moves under the user's typing).
            Ok(None) => {
                let now = self.store.data_version().ok();
                if now != self.data_version && matches!(self.mode, Mode::Normal | Mode::Help) {
                    self.reload();
                }
            }
            Ok(Some(what)) => match self.store.reopen() {
                Ok(s) => {
                    self.store = s;
                    if !matches!(self.mode, Mode::Normal | Mode::Help) {
                        self.closed_at = Some(Instant::now());
                    }
                    self.mode = Mode::Normal;
                    self.reload();
                    let why = if what.contains("restored") {
                        "the lab was restored from a backup"
                    } else {
                        "the lab's file was replaced"
                    };
                    self.error(format!("{why}: now showing the lab as it is; redo anything unfinished"));
                }
                Err(e) => self.error(format!("{what}; reopening failed: {e}")),
            },
            Err(e) => self.error(e.to_string()),
        }
    }

    /// Drains what the workers reported.
    pub fn poll_workers(&mut self) {
        if self.last_lab_check.elapsed() >= std::time::Duration::from_secs(2) {
            self.last_lab_check = std::time::Instant::now();
            self.check_lab();
        }
        while let Ok(n) = self.rx.try_recv() {
            match n {
                Note::Progress { label, done, total } => {
                    self.progress = Some((label, done, total));
                }
                Note::Watched(line, logged) => {
                    if logged && let Some(w) = &mut self.watching {
                        w.logged += 1;
                    }
                    if logged {
                        self.info(line)
                    } else {
                        self.error(line)
                    }
                    self.reload();
                }
                Note::WatchEnded(line) => {
                    self.watching = None;
                    self.info(line);
                    self.reload();
                }
                Note::Done(s) => {
                    self.progress = None;
                    self.busy = false;
                    self.info(s);
                    self.reload();
                }
                Note::Failed(s) => {
                    self.progress = None;
                    self.busy = false;
                    self.error(s);
                    self.reload();
                }
                Note::Preview(r) => {
                    self.progress = None;
                    self.busy = false;
                    self.info(format!(
                        "preview: {} values would be recomputed, {} would change",
                        r.recomputed, r.changed
                    ));
                    if std::mem::take(&mut self.apply_after_preview) {
                        self.ask_to_recompute(&r);
                    }
                    self.preview = Some(r);
                }
            }
        }
    }

    /// Opens the recompute's confirmation from a fresh preview, unless nothing would change or
    /// the user is busy in a form (then the preview waits on screen for another A).
    fn ask_to_recompute(&mut self, r: &engine::RecomputeReport) {
        if r.stale_found == 0 && r.changed == 0 && r.vials_changed == 0 {
            self.info("nothing is stale: a recompute would change nothing");
            return;
        }
        if !matches!(self.mode, Mode::Normal | Mode::Help) {
            self.info("preview ready; press A again to recompute");
            return;
        }
        let mut lines = vec![
            format!(
                "{} stale aliquots: {} values recomputed, {} of them change",
                r.stale_found, r.recomputed, r.changed
            ),
            format!(
                "{} of {} vial concentrations change",
                r.vials_changed, r.vials_considered
            ),
        ];
        if !r.largest_moves.is_empty() {
            lines.push("largest moves:".into());
        }
        for m in r.largest_moves.iter().take(4) {
            lines.push(format!(
                "  aliquot {} (batch {}) {}: {} → {}",
                m.aliquot_id,
                m.batch_id,
                units::quantity_name(&m.quantity),
                units::quantity(&m.quantity, m.old),
                units::quantity(&m.quantity, m.new)
            ));
        }
        for c in r.threshold_crossings.iter().take(3) {
            lines.push(format!("  batch {} crosses {} {}", c.batch_id, c.field, c.threshold));
        }
        lines.push("The old values stay in the record, superseded; the audit log notes the run.".into());
        self.mode = Mode::Confirm(Box::new(Confirm::new(
            "Recompute stale values?",
            lines,
            Pending::Recompute,
        )));
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
                    self.act(a);
                }
            }
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
    fn field_edit(&self, ev: &KeyEvent) -> Option<Edit> {
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
        match ev.code {
            KeyCode::Esc | KeyCode::Enter => {
                // Leaving the box finishes the query: a half-typed word is a word now.
                self.typing_query = false;
                if self.view == View::Shelf {
                    self.reshelve();
                } else {
                    self.refilter();
                }
                return;
            }
            KeyCode::Down => self.step(1),
            KeyCode::Up => self.step(-1),
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
        match self.keys.action_in(&ev, Scope::Help) {
            Some(Action::HelpPageDown) => self.help_scroll = (self.help_scroll + page).min(last),
            Some(Action::HelpPageUp) => self.help_scroll = self.help_scroll.saturating_sub(page),
            _ => match ev.code {
                KeyCode::Esc | KeyCode::Char('?') | KeyCode::Char('q') => {
                    self.help_scroll = 0;
                    return;
                }
                KeyCode::Down | KeyCode::Char('j') => self.help_scroll = (self.help_scroll + 1).min(last),
                KeyCode::Up | KeyCode::Char('k') => self.help_scroll = self.help_scroll.saturating_sub(1),
                KeyCode::Char(' ') => self.help_scroll = (self.help_scroll + page).min(last),
                KeyCode::Home => self.help_scroll = 0,
                KeyCode::End => self.help_scroll = last,
                _ => {}
            },
        }
        self.mode = Mode::Help;
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
                Ok(msg) => self.finished(msg, &f),
                Err(e) => {
                    self.error(e);
                    self.mode = Mode::Form(f);
                }
            },
            Pending::Repeat(id) => self.repeat(id),
            Pending::Recompute => self.spawn_recompute(false),
        }
    }

    /// After a form's action: say what was done, reload, and keep the selection on the thing
    /// acted on (a moved vial sorts elsewhere on the shelf; the highlight goes with it).
    fn finished(&mut self, msg: String, f: &Form) {
        self.info(msg);
        let follow = match f.kind {
            FormKind::Draw | FormKind::Move | FormKind::Dispose | FormKind::ReinstateVial => f.target.map(Follow::Vial),
            FormKind::NewVial => self.new_vial.take().map(Follow::Vial),
            FormKind::VoidBatch | FormKind::ReinstateBatch | FormKind::GoToBatch => f.target.map(Follow::Batch),
            FormKind::NewBatch => self.sheet.as_ref().map(|s| Follow::Batch(s.batch.id)),
            _ => None,
        };
        self.reload();
        if let Some(to) = follow {
            self.follow(to);
        }
    }

    fn follow(&mut self, to: Follow) {
        match to {
            Follow::Vial(id) => {
                if let Some(i) = self.vials.iter().position(|v| v.id == id) {
                    self.vial_selected = i;
                }
            }
            Follow::Batch(id) => {
                if let Some(i) = self.hits.iter().position(|h| h.id == id) {
                    self.selected = i;
                }
            }
        }
    }

    fn selected_batch(&self) -> Option<i64> {
        match self.view {
            View::Sheet => self.sheet.as_ref().map(|s| s.batch.id),
            _ => self.hits.get(self.selected).map(|h| h.id),
        }
    }

    fn act(&mut self, a: Action) {
        match a {
            Action::Quit => self.quit = true,
            Action::Help => {
                self.help_scroll = 0;
                self.mode = Mode::Help;
            }
            Action::Batches => self.view = View::Batches,
            Action::Shelf => self.view = View::Shelf,
            Action::Calibrations => self.view = View::Calibrations,
            Action::Trail => self.view = View::Trail,
            Action::Search => {
                if self.view != View::Shelf {
                    self.view = View::Batches;
                }
                self.mode = Mode::Search;
            }
            Action::Up => self.step(-1),
            Action::Down => self.step(1),
            Action::PageUp => self.step(-(self.page_rows() as isize)),
            Action::PageDown => self.step(self.page_rows() as isize),
            Action::GroupNext => {
                let i = shelf::GROUPS.iter().position(|g| *g == self.shelf.group).unwrap_or(0);
                self.shelf.group = shelf::GROUPS[(i + 1) % shelf::GROUPS.len()];
                self.reshelve();
            }
            Action::TrailFocus => {
                self.trail_focus = match (&self.trail_focus, self.trail.get(self.trail_selected)) {
                    (None, Some(r)) => match r.entity_id {
                        Some(id) => Some((r.entity.clone(), id)),
                        None => {
                            return self.error("this entry is about no one thing (f needs a batch, vial, aliquot...)");
                        }
                    },
                    _ => None,
                };
                if let Err(e) = self.load_trail() {
                    self.error(e.to_string());
                }
            }
            Action::Back => {
                if self.view == View::Sheet {
                    self.view = View::Batches;
                }
            }
            Action::Open => {
                if let Some(id) = self.hits.get(self.selected).map(|h| h.id) {
                    match self.open_sheet(id) {
                        Ok(()) => self.view = View::Sheet,
                        Err(e) => self.error(e.to_string()),
                    }
                }
            }
            Action::SortNext if self.view == View::Shelf => {
                let i = shelf::SORTS.iter().position(|k| *k == self.shelf.sort).unwrap_or(0);
                self.shelf.sort = shelf::SORTS[(i + 1) % shelf::SORTS.len()];
                self.reshelve();
            }
            Action::SortReverse if self.view == View::Shelf => {
                self.shelf.desc = !self.shelf.desc;
                self.reshelve();
            }
            Action::SortNext => {
                let i = SORT_KEYS.iter().position(|k| *k == self.sort).unwrap_or(0);
                self.sort = SORT_KEYS[(i + 1) % SORT_KEYS.len()];
                self.refilter();
                self.sort_hits();
            }
            Action::SortReverse => {
                self.sort_desc = !self.sort_desc;
                self.refilter();
                self.sort_hits();
            }
            Action::NewBatch => {
                self.mode = Mode::Form(Form::new(
                    FormKind::NewBatch,
                    "New batch",
                    &[("material", "CdSe"), ("name", ""), ("recipe", ""), ("operator", "")],
                ));
            }
            Action::Repeat => match self.selected_batch() {
                None => self.error("no batch selected"),
                Some(id) => match self.repeat_summary(id) {
                    Ok(c) => self.mode = Mode::Confirm(Box::new(c)),
                    Err(e) => self.error(e),
                },
            },
            Action::AddAliquot => match self.selected_batch() {
                None => self.error("no batch open"),
                Some(id) => {
                    let p = Picker::open(Some(id), &self.export_folder_for(id));
                    if let Some(problem) = &p.problem {
                        self.error(problem.clone());
                    }
                    self.mode = Mode::Picker(Box::new(p));
                }
            },
            Action::ImportFolder => match self.selected_batch() {
                None => self.error("no batch open"),
                Some(id) => {
                    let dir = self.export_folder_for(id).display().to_string();
                    let (dilution, _, _, ex) = self.batch_defaults(id);
                    let form = Form::new(
                        FormKind::Import,
                        &format!("Import a folder of exports into {}", self.batch_words(id)),
                        &[
                            ("folder", &dir),
                            ("dilution", &units::plain(dilution)),
                            ("excitation nm", &ex.map(units::plain).unwrap_or_default()),
                        ],
                    );
                    self.mode = Mode::Form(form.on(id));
                }
            },
            Action::Watch => match (self.selected_batch(), &self.watching) {
                (_, Some(w)) => self.error(format!(
                    "already watching {} for batch {}; W stops it",
                    w.folder.display(),
                    w.batch
                )),
                (None, None) => self.error("no batch open"),
                (Some(id), None) => {
                    let dir = self.export_folder_for(id).display().to_string();
                    let (dilution, path_cm, solvent, ex) = self.batch_defaults(id);
                    let injected = self
                        .injected_at(id)
                        .map(|d| d.with_timezone(&chrono::Local).format("%Y-%m-%d %H:%M:%S").to_string());
                    let form = Form::new(
                        FormKind::Watch,
                        &format!("Watch a folder for {}", self.batch_words(id)),
                        &[
                            ("folder", &dir),
                            ("injected at", &injected.unwrap_or_default()),
                            ("dilution", &units::plain(dilution)),
                            ("path cm", &units::plain(path_cm)),
                            ("solvent", &solvent),
                            ("excitation nm", &ex.map(units::plain).unwrap_or_default()),
                        ],
                    );
                    self.mode = Mode::Form(form.on(id));
                }
            },
            Action::StopWatch => match &self.watching {
                Some(w) if w.stopping() => self.info("stopping the watch…"),
                Some(w) => {
                    w.stop();
                    self.info(format!("stopping the watch on {}…", w.folder.display()));
                }
                None => self.error("no folder is being watched (w on a batch sheet starts one)"),
            },
            Action::PickTake
            | Action::PickAbsorbance
            | Action::PickPl
            | Action::PickParent
            | Action::PickTypePath
            | Action::PickContinue
            | Action::PickCancel => {}
            Action::NewVial => match self.selected_batch() {
                None => self.error("no batch open"),
                Some(id) => {
                    let loc = model::list_locations(&self.store.conn)
                        .ok()
                        .and_then(|l| l.first().map(|l| l.name.clone()))
                        .unwrap_or_default();
                    self.mode = Mode::Form(
                        Form::new(
                            FormKind::NewVial,
                            &format!("New vial of {}", self.batch_words(id)),
                            &[("mL", ""), ("location", &loc), ("label", ""), ("solvent", "hexane")],
                        )
                        .on(id),
                    );
                }
            },
            Action::Draw | Action::Move | Action::Dispose => {
                let Some(v) = self.vials.get(self.vial_selected) else {
                    self.error("no vial selected");
                    return;
                };
                if v.status == "disposed" {
                    let label = v.label.clone();
                    self.error(format!("vial {label} is disposed of (u puts it back)"));
                    return;
                }
                let what = format!(
                    "vial {} (batch {}, {} mL at {})",
                    v.label,
                    v.batch_id,
                    units::ml(v.volume_ml),
                    v.location
                );
                let form = match a {
                    Action::Draw => Form::new(FormKind::Draw, &format!("Draw from {what}"), &[("mL", ""), ("why", "")]),
                    Action::Move => Form::new(FormKind::Move, &format!("Move {what}"), &[("to", ""), ("position", "")]),
                    _ => Form::new(FormKind::Dispose, &format!("Dispose of {what}"), &[("why", "")]),
                };
                self.mode = Mode::Form(form.on(v.id));
            }
            Action::Handover => {
                let from = self
                    .vials
                    .get(self.vial_selected)
                    .and_then(|v| v.owner.clone())
                    .unwrap_or_default();
                let dir = self.export_dir.display().to_string();
                self.mode = Mode::Form(Form::new(
                    FormKind::Handover,
                    "Hand a person's vials and open batches to another",
                    &[("from", &from), ("to", ""), ("pack folder", &dir)],
                ));
            }
            Action::ToggleSpectrum => self.show_pl = !self.show_pl,
            Action::ChangeCurve => {
                let after = self.calibrations.last().map(|c| c.version).unwrap_or(0);
                self.mode = Mode::Form(Form::new(
                    FormKind::ChangeCurve,
                    &format!("Choose a sizing curve: calibration v{} after v{after}", after + 1),
                    &[("material", "CdSe"), ("curve", "jasieniak2009"), ("why", "")],
                ));
            }
            Action::Preview => self.spawn_recompute(true),
            Action::Apply => {
                // A fresh preview first: the confirmation shows what this recompute will change
                // now, not what an older preview said.
                if !self.busy {
                    self.apply_after_preview = true;
                    self.info("previewing the recompute: it asks before changing anything");
                }
                self.spawn_recompute(true);
            }
            Action::VoidAliquot => match self.selected_aliquot() {
                None => self.error("no aliquot selected"),
                Some((id, label, voided)) => {
                    let batch = self.selected_batch().unwrap_or(0);
                    let (kind, verb) = if voided {
                        (FormKind::ReinstateAliquot, "Reinstate")
                    } else {
                        (FormKind::VoidAliquot, "Void")
                    };
                    self.mode = Mode::Form(
                        Form::new(
                            kind,
                            &format!("{verb} aliquot {id} ({label}) of batch {batch}"),
                            &[("why", "")],
                        )
                        .on(id),
                    );
                }
            },
            Action::EditAliquot => match self.selected_aliquot() {
                None => self.error("no aliquot selected"),
                Some((id, label, _)) => {
                    let a = match model::get_aliquot(&self.store.conn, id) {
                        Ok(a) => a,
                        Err(e) => return self.error(e.to_string()),
                    };
                    // Prefilled exactly as stored, so a field left alone is not a change.
                    let minutes = a.minutes.map(|m| m.to_string()).unwrap_or_default();
                    let stage = a.stage.clone().unwrap_or_default();
                    let (d, pcm) = (a.dilution_factor.to_string(), a.path_cm.to_string());
                    self.mode = Mode::Form(
                        Form::new(
                            FormKind::EditAliquot,
                            &format!("Correct aliquot {id} ({label}) of batch {}", a.batch_id),
                            &[
                                ("minutes", &minutes),
                                ("stage", &stage),
                                ("dilution", &d),
                                ("path cm", &pcm),
                                ("solvent", &a.solvent),
                                ("why", ""),
                            ],
                        )
                        .on(id),
                    );
                }
            },
            Action::VoidBatch => match self
                .sheet
                .as_ref()
                .map(|s| (s.batch.id, s.batch.voided, s.batch.name.clone()))
            {
                None => self.error("no batch open"),
                Some((id, voided, name)) => {
                    let (kind, verb) = if voided {
                        (FormKind::ReinstateBatch, "Reinstate")
                    } else {
                        (FormKind::VoidBatch, "Void")
                    };
                    self.mode =
                        Mode::Form(Form::new(kind, &format!("{verb} batch {id} ({name})"), &[("why", "")]).on(id));
                }
            },
            Action::MoveSpectrum => match self.selected_aliquot() {
                None => self.error("no aliquot selected"),
                Some((id, label, _)) => {
                    let kinds: Vec<String> = self
                        .sheet
                        .as_ref()
                        .and_then(|s| s.aliquots.get(self.aliquot_selected))
                        .map(|a| a.spectra.iter().map(|s| s.kind.clone()).collect())
                        .unwrap_or_default();
                    let first = kinds.first().cloned().unwrap_or_else(|| "abs".into());
                    self.mode = Mode::Form(
                        Form::new(
                            FormKind::MoveSpectrum,
                            &format!("Move a spectrum ({}) of aliquot {id} ({label})", kinds.join(", ")),
                            &[("kind", &first), ("to aliquot", ""), ("why", "")],
                        )
                        .on(id),
                    );
                }
            },
            Action::GoToBatch => {
                self.mode = Mode::Form(Form::new(
                    FormKind::GoToBatch,
                    "Open a batch by its id (void ones too)",
                    &[("id", "")],
                ));
            }
            Action::HelpPageDown
            | Action::HelpPageUp
            | Action::NextField
            | Action::PrevField
            | Action::Save
            | Action::Cancel
            | Action::CursorLeft
            | Action::CursorRight
            | Action::LineStart
            | Action::LineEnd
            | Action::DeleteBack
            | Action::DeleteForward
            | Action::KillToStart
            | Action::DeleteWordBack
            | Action::Confirm
            | Action::Decline => {}
            Action::ToggleDisposed => {
                self.show_disposed = !self.show_disposed;
                self.reload();
            }
            Action::ReinstateVial => match self.vials.get(self.vial_selected) {
                Some(v) if v.status == "disposed" => {
                    let title = format!("Put vial {} ({}) back", v.id, v.label);
                    let id = v.id;
                    self.mode = Mode::Form(Form::new(FormKind::ReinstateVial, &title, &[("why", "")]).on(id));
                }
                Some(v) => self.error(format!("vial {} is not disposed of", v.label)),
                None => self.error("no vial selected (t shows disposed vials)"),
            },
        }
    }

    /// The screen-setting key for the folder a batch's exports were last chosen from.
    fn folder_key(batch: i64) -> String {
        format!("ui.export_folder.batch.{batch}")
    }

    /// Where the picker (and the watch and import forms) open for a batch: the folder its
    /// exports last came from, else the last folder any batch's came from, else where cuvette
    /// was started.
    fn export_folder_for(&self, batch: i64) -> PathBuf {
        let get = |k: &str| model::meta_get(&self.store.conn, k).ok().flatten();
        get(&Self::folder_key(batch))
            .or_else(|| get("ui.export_folder.last"))
            .map(PathBuf::from)
            .unwrap_or_else(|| self.export_dir.clone())
    }

    /// Remembers the folder a batch's exports came from. A failure to remember is no reason
    /// to stop the person's work, so it only goes to the status line.
    fn remember_folder(&mut self, batch: i64, folder: &std::path::Path) {
        let Some(text) = folder.to_str().map(str::to_string) else {
            return;
        };
        let key = Self::folder_key(batch);
        let r = crate::lab::settings::remember(&mut self.store, &[(&key, &text), ("ui.export_folder.last", &text)]);
        if let Err(e) = r {
            self.error(format!("could not remember the folder: {e}"));
        }
    }

    /// What a batch's next aliquot is measured like, from its last one: dilution, path,
    /// solvent and the PL excitation wavelength. A new batch gets 1, 1 cm, hexane.
    fn batch_defaults(&self, batch: i64) -> (f64, f64, String, Option<f64>) {
        let last = model::aliquots_of(&self.store.conn, batch)
            .ok()
            .and_then(|v| v.into_iter().max_by_key(|a| a.id));
        match last {
            Some(a) => {
                let ex = model::spectra_of_aliquot(&self.store.conn, a.id)
                    .ok()
                    .and_then(|s| s.into_iter().find(|s| s.kind == "pl").and_then(|s| s.excitation_nm));
                (a.dilution_factor, a.path_cm, a.solvent, ex)
            }
            None => (1.0, 1.0, "hexane".into(), None),
        }
    }

    fn picker_key(&mut self, mut p: Picker, ev: KeyEvent) {
        if p.typing {
            match ev.code {
                KeyCode::Esc => {
                    p.typing = false;
                    p.completions.clear();
                }
                KeyCode::Tab => {
                    p.path_fresh = false;
                    p.complete()
                }
                KeyCode::Enter => {
                    p.go_typed();
                }
                _ => {
                    if let Some(e) = self.field_edit(&ev) {
                        if p.path_fresh && matches!(e, Edit::Insert('/' | '~')) {
                            p.path_text.clear();
                            p.path_cursor = 0;
                        }
                        p.path_fresh = false;
                        edit_line(&mut p.path_text, &mut p.path_cursor, e);
                        p.completions.clear();
                    }
                }
            }
            self.mode = Mode::Picker(Box::new(p));
            return;
        }
        let page = self.page_rows() as isize;
        match ev.code {
            KeyCode::Down | KeyCode::Char('j') => p.step(1),
            KeyCode::Up | KeyCode::Char('k') => p.step(-1),
            KeyCode::PageDown => p.step(page),
            KeyCode::PageUp => p.step(-page),
            KeyCode::Home => p.step(-(p.entries.len() as isize)),
            KeyCode::End => p.step(p.entries.len() as isize),
            KeyCode::Left => p.up(),
            _ => {}
        }
        let said = match self.keys.action_in(&ev, Scope::Picker) {
            Some(Action::PickCancel) => return,
            Some(Action::PickTake) => match p.selected_entry().cloned() {
                Some(e) if e.is_dir => {
                    p.go_to(&e.path, None);
                    Ok(String::new())
                }
                Some(e) => match p.selected_kind() {
                    Some(k @ ("abs" | "pl")) => p.take(k),
                    _ if matches!(&p.preview, Some((q, Err(_))) if *q == e.path) => p.take("abs"),
                    _ => Err(format!(
                        "cannot tell what kind {} is: a takes it as absorbance, p as PL",
                        e.name
                    )),
                },
                None => Err("nothing here".into()),
            },
            Some(Action::PickAbsorbance) => p.take("abs"),
            Some(Action::PickPl) => p.take("pl"),
            Some(Action::PickParent) => {
                p.up();
                Ok(String::new())
            }
            Some(Action::PickTypePath) => {
                let mut start = p.folder.display().to_string();
                if !start.ends_with('/') {
                    start.push('/');
                }
                p.start_typing(start);
                Ok(String::new())
            }
            Some(Action::PickContinue) => {
                if p.abs.is_none() && p.pl.is_none() {
                    Err("take a file first: Enter takes it as the kind it looks like".into())
                } else {
                    self.aliquot_form_from(&p);
                    return;
                }
            }
            _ => Ok(String::new()),
        };
        match said {
            Ok(s) if !s.is_empty() => self.info(s),
            Ok(_) => {}
            Err(e) => self.error(e),
        }
        self.mode = Mode::Picker(Box::new(p));
    }

    /// The aliquot's form after the picker: the files taken, minutes from the absorbance
    /// file's name where it states them, the rest as the batch's last aliquot was measured.
    fn aliquot_form_from(&mut self, p: &Picker) {
        let Some(batch) = p.batch else {
            self.error("no batch open");
            return;
        };
        self.remember_folder(batch, &p.folder);
        let (dilution, path_cm, solvent, ex) = self.batch_defaults(batch);
        let minutes = p
            .abs
            .iter()
            .chain(p.pl.iter())
            .find_map(|f| bench::minutes_in_name(f))
            .map(units::minutes)
            .unwrap_or_default();
        let words = self.batch_words(batch);
        let mut f = Form::new(
            FormKind::AddAliquot,
            &format!("Add an aliquot to {words}"),
            &[
                ("minutes", &minutes),
                ("stage", ""),
                ("dilution", &units::plain(dilution)),
                ("path cm", &units::plain(path_cm)),
                ("solvent", &solvent),
                ("excitation nm", &ex.map(units::plain).unwrap_or_default()),
            ],
        );
        f.push(
            "abs file",
            p.abs.as_ref().map(|x| x.display().to_string()).unwrap_or_default(),
        );
        f.push(
            "pl file",
            p.pl.as_ref().map(|x| x.display().to_string()).unwrap_or_default(),
        );
        f.target = Some(batch);
        self.mode = Mode::Form(f);
    }

    fn form_key(&mut self, mut f: Form, ev: KeyEvent) {
        let n = f.fields.len().max(1);
        let action = self.keys.action_in(&ev, Scope::Form).or(match ev.code {
            KeyCode::Down => Some(Action::NextField),
            KeyCode::Up => Some(Action::PrevField),
            _ => None,
        });
        match action {
            Some(Action::Cancel) => return,
            Some(Action::NextField) => f.focus = (f.focus + 1) % n,
            Some(Action::PrevField) => f.focus = (f.focus + n - 1) % n,
            Some(Action::Save) => match self.confirmation(&f) {
                Ok(Some(c)) => {
                    self.mode = Mode::Confirm(Box::new(c));
                    return;
                }
                Ok(None) => match self.submit(&f) {
                    Ok(msg) => {
                        self.finished(msg, &f);
                        return;
                    }
                    Err(e) => {
                        // An error that names a field ("excitation nm: …") takes the cursor there.
                        if let Some(i) = f.fields.iter().position(|x| e.starts_with(&format!("{}:", x.label))) {
                            f.focus = i;
                        }
                        self.error(e)
                    }
                },
                Err(e) => self.error(e),
            },
            _ => {
                if let Some(e) = self.field_edit(&ev)
                    && let Some(field) = f.fields.get_mut(f.focus)
                {
                    edit_line(&mut field.text, &mut field.cursor, e);
                }
            }
        }
        self.mode = Mode::Form(f);
    }

    fn number(f: &Form, label: &str) -> Result<Option<f64>, String> {
        units::parse_number(label, &f.get(label))
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

    fn repeat_summary(&self, id: i64) -> Result<Confirm, String> {
        let b = model::get_batch(&self.store.conn, id).map_err(|e| e.to_string())?;
        let recipe = match (&b.recipe, b.recipe_version) {
            (Some(r), Some(v)) => format!("recipe {r} v{v}"),
            (Some(r), None) => format!("recipe {r}"),
            _ => "no recipe".into(),
        };
        Ok(Confirm::new(
            format!("Repeat batch {id} {}?", b.name),
            vec![
                format!("A new batch \"{} (repeat)\" is logged:", b.name),
                format!("  {}, {recipe}, status planned", b.material),
                format!("  linked to batch {id} as its repeat"),
                format!("Batch {id} itself does not change."),
            ],
            Pending::Repeat(id),
        ))
    }

    fn repeat(&mut self, id: i64) {
        let r = crate::lab::batches::repeat_batch(&mut self.store, id, None).map(|b| b.id);
        match r {
            Ok(nid) => {
                self.info(format!("batch {nid} repeats batch {id}"));
                self.reload();
                self.follow(Follow::Batch(nid));
                match self.open_sheet(nid) {
                    Ok(()) => self.view = View::Sheet,
                    Err(e) => self.error(e.to_string()),
                }
            }
            Err(e) => self.error(e.to_string()),
        }
    }

    /// The summary a destructive or bulk form's action is confirmed with, or None when the form
    /// needs no confirmation. A missing reason is refused here, before anything is asked.
    fn confirmation(&self, f: &Form) -> Result<Option<Confirm>, String> {
        let needs_why = matches!(f.kind, FormKind::Dispose | FormKind::VoidAliquot | FormKind::VoidBatch);
        if !needs_why && f.kind != FormKind::Handover {
            return Ok(None);
        }
        let why = f.get("why");
        if needs_why && why.is_empty() {
            return Err("why: give a reason (the record keeps it beside the change)".into());
        }
        let id = f.target.unwrap_or(0);
        let (title, mut lines) = match f.kind {
            FormKind::Dispose => {
                let v = self
                    .vials
                    .iter()
                    .find(|v| v.id == id)
                    .ok_or("that vial is no longer on the shelf")?;
                let conc = v
                    .concentration_molar
                    .map(|c| format!(", {} µM", units::micromolar(c)))
                    .unwrap_or_default();
                (
                    format!("Dispose of vial {}?", v.label),
                    vec![
                        format!(
                            "vial {} of batch {} {} ({})",
                            v.label, v.batch_id, v.batch_name, v.material
                        ),
                        format!(
                            "  at {}{}: {} mL left{conc}, owner {}",
                            v.location,
                            v.position.as_ref().map(|p| format!(" {p}")).unwrap_or_default(),
                            units::ml(v.volume_ml),
                            v.owner.as_deref().unwrap_or("none")
                        ),
                        "It leaves the shelf and the stock counts; t still lists it, u puts it back.".into(),
                    ],
                )
            }
            FormKind::VoidAliquot => {
                let s = self.sheet.as_ref().ok_or("that aliquot is not in the open batch")?;
                let a = s
                    .aliquots
                    .iter()
                    .find(|a| a.id == id)
                    .ok_or("that aliquot is not in the open batch")?;
                let batch = s.batch.id;
                let when = aliquot_label(a);
                let product = s.product.as_ref().map(|p| p.id) == Some(id);
                let mut l = vec![
                    format!(
                        "aliquot {id} ({when}) of {}: peak {} nm, D {} nm",
                        self.batch_words(batch),
                        num(a.first_exciton_nm, 1),
                        num(a.diameter_nm, 2)
                    ),
                    "It is left out of the growth series, product, search, plots and pack;".into(),
                    "  its spectra and values stay in the record, and x reinstates it.".into(),
                ];
                if product {
                    l.push("It is the batch's product aliquot: the product moves to the one before.".into());
                }
                (format!("Void aliquot {id}?"), l)
            }
            FormKind::VoidBatch => {
                let s = self.sheet.as_ref().ok_or("no batch open")?;
                (
                    format!("Void {}?", self.batch_words(id)),
                    vec![
                        format!(
                            "{} ({}, {}): {} aliquots, {} vials",
                            self.batch_words(id),
                            s.batch.material,
                            units::words(&s.batch.status),
                            s.aliquots.len(),
                            s.vials.len()
                        ),
                        "It is left out of the batch list, search and the pack;".into(),
                        "  nothing is deleted: g opens it by id, and X there reinstates it.".into(),
                    ],
                )
            }
            _ => {
                let (from, to, dir) = (f.get("from"), f.get("to"), f.get("pack folder"));
                if from.is_empty() || to.is_empty() {
                    return Err("from and to: name both people".into());
                }
                let conn = &self.store.conn;
                let e = |x: crate::Error| x.to_string();
                let (a, b) = (
                    model::person_id(conn, &from).map_err(e)?,
                    model::person_id(conn, &to).map_err(e)?,
                );
                if a == b {
                    return Err("to: hand over to someone else than from".into());
                }
                let vials: Vec<String> = model::list_vials(conn, false)
                    .map_err(e)?
                    .into_iter()
                    .filter(|v| v.owner.as_deref() == Some(from.as_str()))
                    .map(|v| v.label)
                    .collect();
                let open = model::list_batches(conn)
                    .map_err(e)?
                    .into_iter()
                    .filter(|b| {
                        b.operator.as_deref() == Some(from.as_str())
                            && matches!(b.status.as_str(), "planned" | "growing")
                    })
                    .count();
                let mut shown = vials.iter().take(6).cloned().collect::<Vec<_>>().join(", ");
                if vials.len() > 6 {
                    shown.push_str(&format!(" and {} more", vials.len() - 6));
                }
                (
                    format!("Hand over from {from} to {to}?"),
                    vec![
                        format!(
                            "{} vials and {open} open batches (planned or growing) go to {to}.",
                            vials.len()
                        ),
                        format!("  vials: {}", if shown.is_empty() { "none".into() } else { shown }),
                        "Finished batches keep their operator: who ran a synthesis stays a fact.".into(),
                        format!(
                            "A handover pack is written to {}",
                            Self::handover_dir(&dir, &from, &to).display()
                        ),
                    ],
                )
            }
        };
        if needs_why {
            lines.push(format!("why: {why}"));
        }
        Ok(Some(Confirm::new(title, lines, Pending::Form(f.clone()))))
    }

    /// The handover pack's folder: a new folder named for the two people inside the one given.
    fn handover_dir(dir: &str, from: &str, to: &str) -> PathBuf {
        PathBuf::from(dir).join(format!(
            "handover-{}-to-{}",
            from.replace(' ', "_"),
            to.replace(' ', "_")
        ))
    }

    /// Carries out a form. Errors come back as a message; the form stays open to correct it.
    fn submit(&mut self, f: &Form) -> Result<String, String> {
        let e = |x: crate::Error| x.to_string();
        match f.kind {
            FormKind::NewBatch => {
                let nb = model::NewBatch {
                    name: f.get("name"),
                    material: f.get("material"),
                    recipe: Some(f.get("recipe")).filter(|s| !s.is_empty()),
                    operator: Some(f.get("operator")).filter(|s| !s.is_empty()),
                    status: Some("growing".into()),
                    ..Default::default()
                };
                let id = crate::lab::batches::log_batch(&mut self.store, &nb).map_err(e)?.id;
                self.open_sheet(id).map_err(e)?;
                self.view = View::Sheet;
                Ok(format!("batch {id} logged"))
            }
            FormKind::AddAliquot => {
                let batch = f.target.ok_or("no batch open")?;
                let mut files = Vec::new();
                let ex = Self::number(f, "excitation nm")?;
                if !f.get("abs file").is_empty() {
                    files.push(SpectrumFile {
                        path: f.get("abs file").into(),
                        kind: "abs",
                        ..Default::default()
                    });
                }
                if !f.get("pl file").is_empty() && ex.is_none() {
                    return Err("excitation nm: the PL file needs the wavelength it was excited at".into());
                }
                if !f.get("pl file").is_empty() {
                    files.push(SpectrumFile {
                        path: f.get("pl file").into(),
                        kind: "pl",
                        excitation_nm: ex,
                        ..Default::default()
                    });
                }
                let stage = Some(f.get("stage")).filter(|s| !s.is_empty());
                let a = model::NewAliquot {
                    batch_id: batch,
                    minutes: Self::number(f, "minutes")?,
                    stage,
                    dilution_factor: Self::number(f, "dilution")?.unwrap_or(1.0),
                    path_cm: Self::number(f, "path cm")?.unwrap_or(1.0),
                    solvent: f.get("solvent"),
                    taken_at: None,
                };
                let s = bench::add_aliquot(
                    &mut self.store,
                    &a,
                    &files,
                    &Default::default(),
                    &bench::Door::default(),
                )
                .map_err(e)?;
                self.open_sheet(batch).map_err(e)?;
                Ok(format!(
                    "aliquot {}: first exciton {} nm, D {} nm ({})",
                    s.id,
                    num(s.first_exciton_nm, 1),
                    num(s.diameter_nm, 2),
                    s.curve.unwrap_or_else(|| "-".into())
                ))
            }
            FormKind::NewVial => {
                let batch = f.target.ok_or("no batch open")?;
                let ml = Self::number(f, "mL")?.ok_or("mL: give the volume")?;
                let nv = model::NewVial {
                    batch_id: batch,
                    label: Some(f.get("label")).filter(|s| !s.is_empty()),
                    volume_ml: ml,
                    solvent: f.get("solvent"),
                    location: f.get("location"),
                    position: None,
                    owner: None,
                    concentration_molar: None,
                    created_at: None,
                };
                let id = crate::lab::vials::new_vial(&mut self.store, &nv).map_err(e)?.id;
                self.new_vial = Some(id);
                Ok(format!("vial {id} of batch {batch} on the shelf: {} mL", units::ml(ml)))
            }
            FormKind::Draw | FormKind::Move | FormKind::Dispose => {
                let vial = f.target.ok_or("no vial selected")?;
                let v = match f.kind {
                    FormKind::Draw => {
                        let ml = Self::number(f, "mL")?.ok_or("mL: give the volume to draw")?;
                        let why = f.get("why");
                        crate::lab::vials::draw(&mut self.store, vial, ml, Some(why.as_str()).filter(|s| !s.is_empty()))
                    }
                    FormKind::Move => {
                        let (to, pos) = (f.get("to"), f.get("position"));
                        crate::lab::vials::move_to(
                            &mut self.store,
                            vial,
                            &to,
                            Some(pos.as_str()).filter(|s| !s.is_empty()),
                            None,
                        )
                    }
                    _ => {
                        let why = f.get("why");
                        crate::lab::vials::dispose(&mut self.store, vial, &why)
                    }
                }
                .map_err(e)?;
                Ok(format!(
                    "vial {}: {} mL left at {} ({})",
                    v.label,
                    units::ml(v.volume_ml),
                    v.location,
                    units::words(&v.status)
                ))
            }
            FormKind::ChangeCurve => {
                let (m, c, why) = (f.get("material"), f.get("curve"), f.get("why"));
                let v = self
                    .store
                    .write(|tx, who| {
                        let core = model::material_by_name(tx, &m)?.core;
                        let (v, _) = engine::change_calibration(tx, who, &why, &|_, body| {
                            body.set_curve(&core, &c);
                            Ok(())
                        })?;
                        Ok(v)
                    })
                    .map_err(e)?;
                self.preview = None;
                Ok(format!("calibration version {v}; press p to preview the recompute"))
            }
            FormKind::VoidAliquot | FormKind::ReinstateAliquot => {
                let id = f.target.ok_or("no aliquot")?;
                let why = f.get("why");
                let voiding = f.kind == FormKind::VoidAliquot;
                let a = crate::corrections::set_aliquot_void(&mut self.store, id, voiding, &why).map_err(e)?;
                self.open_sheet(a.batch_id).map_err(e)?;
                Ok(if voiding {
                    format!("aliquot {id} is void; the batch's values no longer use it")
                } else {
                    format!("aliquot {id} is reinstated")
                })
            }
            FormKind::EditAliquot => {
                let id = f.target.ok_or("no aliquot")?;
                let before = model::get_aliquot(&self.store.conn, id).map_err(e)?;
                let minutes = Self::number(f, "minutes")?;
                let stage = Some(f.get("stage")).filter(|s| !s.is_empty());
                let changed_minutes = minutes != before.minutes;
                let changed_stage = stage != before.stage;
                let ed = model::AliquotEdit {
                    minutes: minutes.filter(|_| changed_minutes || changed_stage),
                    stage: if minutes.is_some() {
                        None
                    } else {
                        stage.filter(|_| changed_stage || changed_minutes)
                    },
                    dilution_factor: Self::number(f, "dilution")?.filter(|d| *d != before.dilution_factor),
                    path_cm: Self::number(f, "path cm")?.filter(|p| *p != before.path_cm),
                    solvent: Some(f.get("solvent")).filter(|s| !s.is_empty() && *s != before.solvent),
                };
                let why = f.get("why");
                let batch = before.batch_id;
                crate::corrections::edit_aliquot(&mut self.store, id, &ed, &why).map_err(e)?;
                self.open_sheet(batch).map_err(e)?;
                Ok(format!("aliquot {id} corrected and recomputed"))
            }
            FormKind::VoidBatch | FormKind::ReinstateBatch => {
                let id = f.target.ok_or("no batch")?;
                let why = f.get("why");
                let voiding = f.kind == FormKind::VoidBatch;
                crate::corrections::set_batch_void(&mut self.store, id, voiding, &why).map_err(e)?;
                self.open_sheet(id).map_err(e)?;
                Ok(if voiding {
                    format!("batch {id} is void: left out of search and the pack (g opens it by id)")
                } else {
                    format!("batch {id} is reinstated")
                })
            }
            FormKind::MoveSpectrum => {
                let from = f.target.ok_or("no aliquot")?;
                let kind = f.get("kind");
                let to: i64 = f
                    .get("to aliquot")
                    .parse()
                    .map_err(|_| format!("to aliquot: '{}' is not an aliquot id", f.get("to aliquot")))?;
                let spectrum = model::spectra_of_aliquot(&self.store.conn, from)
                    .map_err(e)?
                    .into_iter()
                    .find(|s| s.kind == kind)
                    .ok_or_else(|| format!("aliquot {from} has no {kind} spectrum"))?;
                let why = f.get("why");
                let batch = self.selected_batch().unwrap_or(0);
                crate::corrections::move_spectrum(&mut self.store, spectrum.id, to, &why).map_err(e)?;
                self.open_sheet(batch).map_err(e)?;
                Ok(format!(
                    "spectrum {} moved from aliquot {from} to aliquot {to}; both recomputed",
                    spectrum.id
                ))
            }
            FormKind::GoToBatch => {
                let id: i64 = f
                    .get("id")
                    .parse()
                    .map_err(|_| format!("id: '{}' is not a batch id", f.get("id")))?;
                self.open_sheet(id).map_err(e)?;
                self.view = View::Sheet;
                Ok(format!("batch {id}"))
            }
            FormKind::ReinstateVial => {
                let id = f.target.ok_or("no vial")?;
                let why = f.get("why");
                let v = crate::corrections::reinstate_vial(&mut self.store, id, &why).map_err(e)?;
                Ok(format!(
                    "vial {} is back: {} mL at {}",
                    v.label,
                    units::ml(v.volume_ml),
                    v.location
                ))
            }
            FormKind::FirstRun => {
                let (name, email) = (f.get("your name"), f.get("email"));
                let (place, kind) = (f.get("location"), f.get("location kind"));
                if name.is_empty() && place.is_empty() {
                    return Err("give your name, a location, or both (Esc leaves this for later)".into());
                }
                // The same rule as a name given with --as: it signs the audit log.
                if name.chars().count() > 80 || name.chars().any(char::is_control) {
                    return Err("your name: one line of at most 80 printable characters".into());
                }
                if !place.is_empty() && !model::LOCATION_KINDS.contains(&kind.as_str()) {
                    return Err(format!(
                        "location kind: one of {} (got '{kind}')",
                        model::LOCATION_KINDS.join(", ")
                    ));
                }
                crate::lab::register::first_run(
                    &mut self.store,
                    Some((name.as_str(), Some(email.as_str()).filter(|e| !e.is_empty()))).filter(|_| !name.is_empty()),
                    Some((place.as_str(), kind.as_str())).filter(|_| !place.is_empty()),
                )
                .map_err(e)?;
                let mut said = Vec::new();
                if !name.is_empty() {
                    said.push(format!("{name} added to the lab"));
                }
                // The login name only stood in for a person until one was named: from now on
                // the writes are theirs, and stay so next time where the name can be kept.
                if !name.is_empty() && name != self.store.actor && !self.writer.chosen {
                    self.store.actor = name.clone();
                    said.push(match self.writer.remember.map(|r| r(&name)) {
                        Some(Ok(kept)) => format!("your writes are signed {name} (kept in {kept})"),
                        Some(Err(why)) => format!("your writes are signed {name} until you quit ({why})"),
                        None => format!("your writes are signed {name}"),
                    });
                }
                if !place.is_empty() {
                    said.push(format!("location {place} ({kind}) ready for vials"));
                }
                Ok(format!("{}; n logs the first batch", said.join(", ")))
            }
            FormKind::Handover => {
                let (from, to) = (f.get("from"), f.get("to"));
                let out = Self::handover_dir(&f.get("pack folder"), &from, &to);
                self.spawn_handover(from, to, out)?;
                Ok("handing over in the background".into())
            }
            FormKind::Import => {
                let batch = f.target.ok_or("no batch open")?;
                let folder = PathBuf::from(f.get("folder"));
                let dilution = Self::number(f, "dilution")?.unwrap_or(1.0);
                let ex = Self::number(f, "excitation nm")?;
                self.spawn_import(batch, folder.clone(), dilution, ex)?;
                self.remember_folder(batch, &folder);
                Ok("importing in the background".into())
            }
            FormKind::Watch => {
                let batch = f.target.ok_or("no batch open")?;
                let folder = PathBuf::from(f.get("folder"));
                if !folder.is_dir() {
                    return Err(format!("folder: {} is not a folder", folder.display()));
                }
                let injected_at = super::watch::parse_injected(&f.get("injected at"), chrono::Local::now())?;
                let path_cm = Self::number(f, "path cm")?.unwrap_or(1.0);
                let dilution_factor = Self::number(f, "dilution")?.unwrap_or(1.0);
                bench::OwnCuvette {
                    path_cm: Some(path_cm),
                    dilution_factor: Some(dilution_factor),
                }
                .checked("path cm", "dilution")
                .map_err(e)?;
                let solvent = f.get("solvent");
                if solvent.is_empty() {
                    return Err("solvent: name the solvent the aliquots are diluted in".into());
                }
                let setup = bench::WatchSetup {
                    batch,
                    folder: folder.clone(),
                    injected_at,
                    dilution_factor,
                    path_cm,
                    solvent,
                    excitation_nm: Self::number(f, "excitation nm")?,
                };
                let store = self.worker_store()?;
                // The injection time is part of the batch's record: kept (audited) once given.
                if let Some(at) = injected_at
                    && self.injected_at(batch) != Some(at)
                {
                    crate::lab::settings::set_injection_time(&mut self.store, batch, &at).map_err(e)?;
                }
                self.remember_folder(batch, &folder);
                let timing = if injected_at.is_some() {
                    "timed from the injection"
                } else {
                    "timed by their names"
                };
                self.watching = Some(super::watch::start(store, setup, self.tx.clone()));
                Ok(format!(
                    "watching {}: new exports become aliquots of batch {batch}, {timing}; W stops",
                    folder.display()
                ))
            }
        }
    }

    /// The injection time given for a batch, if any.
    pub fn injected_at(&self, batch: i64) -> Option<chrono::DateTime<chrono::FixedOffset>> {
        model::meta_get(&self.store.conn, &format!("injected_at.batch.{batch}"))
            .ok()
            .flatten()
            .and_then(|t| chrono::DateTime::parse_from_rfc3339(&t).ok())
    }

    fn worker_store(&self) -> Result<Store, String> {
        self.store.sibling().map_err(|e| e.to_string())
    }

    fn spawn_recompute(&mut self, dry_run: bool) {
        if self.busy {
            self.error("busy: wait for the running job");
            return;
        }
        let mut store = match self.worker_store() {
            Ok(s) => s,
            Err(e) => return self.error(e),
        };
        let tx = self.tx.clone();
        self.busy = true;
        std::thread::spawn(move || {
            let label = if dry_run { "preview" } else { "recompute" }.to_string();
            let p = |d, t| {
                let _ = tx.send(Note::Progress {
                    label: label.clone(),
                    done: d,
                    total: t,
                });
            };
            let r = if dry_run {
                store.read(|c| engine::recompute(c, false, true, p))
            } else {
                store.write(|c, who| engine::recompute_recorded(c, who, false, p))
            };
            let _ = tx.send(match r {
                Ok(r) if dry_run => Note::Preview(r),
                Ok(r) => Note::Done(format!("recomputed {} values, {} changed", r.recomputed, r.changed)),
                Err(e) => Note::Failed(e.to_string()),
            });
        });
    }

    fn spawn_handover(&mut self, from: String, to: String, out: PathBuf) -> Result<(), String> {
        if self.busy {
            return Err("busy: wait for the running job".into());
        }
        let mut store = self.worker_store()?;
        let tx = self.tx.clone();
        self.busy = true;
        std::thread::spawn(move || {
            let r = crate::lab::handover::handover(&mut store, &from, &to, &out, None, &mut |d, t| {
                let _ = tx.send(Note::Progress {
                    label: "handover".into(),
                    done: d,
                    total: t,
                });
            });
            let _ = tx.send(match r {
                Ok(r) => Note::Done(format!(
                    "handed {} vials and {} open batches from {} to {}; pack in {}",
                    r.vials,
                    r.batches,
                    r.from,
                    r.to,
                    out.display()
                )),
                Err(e) => Note::Failed(e.to_string()),
            });
        });
        Ok(())
    }

    fn spawn_import(&mut self, batch: i64, folder: PathBuf, dilution: f64, ex: Option<f64>) -> Result<(), String> {
        let mut store = self.worker_store()?;
        let tx = self.tx.clone();
        self.busy = true;
        std::thread::spawn(move || {
            let t = model::NewAliquot {
                batch_id: batch,
                minutes: None,
                stage: None,
                dilution_factor: dilution,
                path_cm: 1.0,
                solvent: "hexane".into(),
                taken_at: None,
            };
            let r = bench::import_folder(
                &mut store,
                batch,
                &folder,
                &t,
                bench::PlSetup::excited_at(ex),
                &bench::Door::default(),
                |d, n| {
                    let _ = tx.send(Note::Progress {
                        label: "import".into(),
                        done: d,
                        total: n,
                    });
                },
            );
            let _ = tx.send(match r {
                Ok(r) if r.skipped.is_empty() => Note::Done(format!("imported {} aliquots", r.aliquots.len())),
                Ok(r) => Note::Done(format!(
                    "imported {} aliquots; skipped {} files already in this batch",
                    r.aliquots.len(),
                    r.skipped.len()
                )),
                Err(e) => Note::Failed(e.to_string()),
            });
        });
        Ok(())
    }
}
