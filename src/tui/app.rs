//! The UI's state and what each key does. Drawing lives in `draw`; this module changes state
//! through the library (store, search, bench, engine) and never writes SQL. Slow work —
//! importing a folder, watching for exports, recomputing — runs on a worker thread with its own
//! connection and reports back over a channel, so the screen stays responsive.

use super::keys::{Action, KeyMap, Scope};
use crate::bench::{self, SpectrumFile};
use crate::derive::{calibration, engine};
use crate::report::plot::SeriesItem;
use crate::search::{self, Facts, Hit};
use crate::store::{Store, model};
use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use serde_json::Value;
use std::path::PathBuf;
use std::sync::mpsc::{Receiver, Sender, channel};

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum View {
    Ledger,
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
}

#[derive(Debug, Clone)]
pub struct Form {
    pub kind: FormKind,
    pub title: String,
    pub fields: Vec<(String, String)>,
    pub focus: usize,
    /// The aliquot, batch or vial the form acts on, fixed when it opened (named in its title).
    pub target: Option<i64>,
}

impl Form {
    fn new(kind: FormKind, title: &str, fields: &[(&str, &str)]) -> Form {
        Form {
            kind,
            title: title.into(),
            fields: fields.iter().map(|(a, b)| (a.to_string(), b.to_string())).collect(),
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
            .find(|f| f.0 == label)
            .map(|f| f.1.trim().to_string())
            .unwrap_or_default()
    }
}

/// Choosing export files from a folder.
#[derive(Debug, Clone, Default)]
pub struct Picker {
    pub folder: PathBuf,
    pub files: Vec<PathBuf>,
    pub selected: usize,
    pub abs: Option<PathBuf>,
    pub pl: Option<PathBuf>,
}

#[derive(Debug, Clone)]
pub enum Mode {
    Normal,
    Search,
    Help,
    Form(Form),
    Picker(Picker),
}

/// What a worker reports.
#[derive(Debug, Clone)]
pub enum Note {
    Progress { label: String, done: usize, total: usize },
    Done(String),
    Failed(String),
    Preview(engine::RecomputeReport),
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

pub struct App {
    pub store: Store,
    pub db_path: Option<PathBuf>,
    pub keys: KeyMap,
    pub view: View,
    pub mode: Mode,
    pub quit: bool,
    pub facts: Vec<Facts>,
    pub query: String,
    pub hits: Vec<Hit>,
    pub query_error: Option<String>,
    pub sort: SortKey,
    pub sort_desc: bool,
    pub selected: usize,
    pub sheet: Option<Value>,
    pub series: Vec<SeriesItem>,
    pub show_pl: bool,
    pub vials: Vec<model::VialRow>,
    pub vial_selected: usize,
    /// The shelf lists disposed vials too.
    pub show_disposed: bool,
    /// The aliquot selected in the batch sheet's growth table.
    pub aliquot_selected: usize,
    /// Batches whose product values or vial concentrations are stale (the ledger marks them).
    pub stale_batches: std::collections::HashSet<i64>,
    pub calibrations: Vec<calibration::CalibrationVersion>,
    pub preview: Option<engine::RecomputeReport>,
    pub trail: Vec<model::AuditRow>,
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
            view: View::Ledger,
            mode: Mode::Normal,
            quit: false,
            facts: Vec::new(),
            query: String::new(),
            hits: Vec::new(),
            query_error: None,
            sort: SortKey::Id,
            sort_desc: true,
            selected: 0,
            sheet: None,
            series: Vec::new(),
            show_pl: false,
            vials: Vec::new(),
            vial_selected: 0,
            show_disposed: false,
            aliquot_selected: 0,
            stale_batches: Default::default(),
            calibrations: Vec::new(),
            preview: None,
            trail: Vec::new(),
            message: None,
            progress: None,
            export_dir: std::env::current_dir().unwrap_or_default(),
            colour: std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty()),
            tx,
            rx,
            busy: false,
            last_lab_check: std::time::Instant::now(),
            data_version: None,
        };
        app.reload();
        app
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
            self.vials = model::list_vials(&self.store.conn, self.show_disposed)?;
            if let Some(i) = vial_was.and_then(|id| self.vials.iter().position(|v| v.id == id)) {
                self.vial_selected = i;
            }
            if self.vial_selected >= self.vials.len() {
                self.vial_selected = self.vials.len().saturating_sub(1);
            }
            self.stale_batches = engine::stale_batches(&self.store.conn)?;
            self.calibrations = calibration::history(&self.store.conn)?;
            self.trail = model::audit_log(&self.store.conn, None, 300)?;
            if let Some(id) = self.sheet.as_ref().and_then(|s| s["id"].as_i64()) {
                match self.open_sheet(id) {
                    Ok(()) => {}
                    // The batch is gone (the lab was restored from a backup without it): the
                    // sheet closes rather than show, and act on, a batch that is not there.
                    Err(crate::Error::NotFound { .. }) => {
                        self.sheet = None;
                        self.series.clear();
                        if self.view == View::Sheet {
                            self.view = View::Ledger;
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

    /// Re-filters the ledger from the facts in memory: cheap enough for every keystroke.
    pub fn refilter(&mut self) {
        match search::parse(&self.query) {
            Ok(q) => {
                self.query_error = None;
                self.hits = search::filter(&self.facts, &q);
                if q.words().is_empty() {
                    self.sort_hits();
                }
            }
            Err(e) => self.query_error = Some(e.to_string()),
        }
        if self.selected >= self.hits.len() {
            self.selected = self.hits.len().saturating_sub(1);
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
        let same = self.sheet.as_ref().and_then(|s| s["id"].as_i64()) == Some(id);
        let sheet = crate::report::batch_detail(&self.store.conn, id)?;
        let n = sheet["aliquots"].as_array().map(|a| a.len()).unwrap_or(0);
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
        let a = self.sheet.as_ref()?["aliquots"]
            .as_array()?
            .get(self.aliquot_selected)?
            .clone();
        let label = a["minutes"]
            .as_f64()
            .map(|m| format!("{m} min"))
            .unwrap_or_else(|| a["stage"].as_str().unwrap_or("").to_string());
        Some((a["id"].as_i64()?, label, a["voided"].as_bool() == Some(true)))
    }

    pub fn scope(&self) -> Scope {
        match self.view {
            View::Ledger => Scope::Ledger,
            View::Sheet => Scope::Sheet,
            View::Shelf => Scope::Shelf,
            View::Calibrations => Scope::Calibrations,
            View::Trail => Scope::Everywhere,
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
                    let watching = label.starts_with("watch");
                    self.progress = Some((label, done, total));
                    if watching {
                        self.reload();
                    }
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
                    self.preview = Some(r);
                }
            }
        }
    }

    pub fn on_key(&mut self, ev: KeyEvent) {
        if ev.code == KeyCode::Char('c') && ev.modifiers.contains(KeyModifiers::CONTROL) {
            self.quit = true;
            return;
        }
        match std::mem::replace(&mut self.mode, Mode::Normal) {
            Mode::Search => self.search_key(ev),
            Mode::Help => {
                if !matches!(ev.code, KeyCode::Esc | KeyCode::Char('?') | KeyCode::Char('q')) {
                    self.mode = Mode::Help;
                }
            }
            Mode::Form(f) => self.form_key(f, ev),
            Mode::Picker(p) => self.picker_key(p, ev),
            Mode::Normal => {
                if let Some(a) = self.keys.action(&ev, self.scope()) {
                    self.act(a);
                }
            }
        }
    }

    fn search_key(&mut self, ev: KeyEvent) {
        match ev.code {
            KeyCode::Esc | KeyCode::Enter => {
                self.mode = Mode::Normal;
                return;
            }
            KeyCode::Backspace => {
                self.query.pop();
            }
            KeyCode::Char(c) => self.query.push(c),
            KeyCode::Down => self.selected = (self.selected + 1).min(self.hits.len().saturating_sub(1)),
            KeyCode::Up => self.selected = self.selected.saturating_sub(1),
            _ => {}
        }
        self.selected = 0;
        self.refilter();
        self.mode = Mode::Search;
    }

    fn selected_batch(&self) -> Option<i64> {
        match self.view {
            View::Sheet => self.sheet.as_ref().and_then(|s| s["id"].as_i64()),
            _ => self.hits.get(self.selected).map(|h| h.id),
        }
    }

    fn act(&mut self, a: Action) {
        match a {
            Action::Quit => self.quit = true,
            Action::Help => self.mode = Mode::Help,
            Action::Ledger => self.view = View::Ledger,
            Action::Shelf => self.view = View::Shelf,
            Action::Calibrations => self.view = View::Calibrations,
            Action::Trail => self.view = View::Trail,
            Action::Search => {
                self.view = View::Ledger;
                self.mode = Mode::Search;
            }
            Action::Up => match self.view {
                View::Shelf => self.vial_selected = self.vial_selected.saturating_sub(1),
                View::Sheet => self.aliquot_selected = self.aliquot_selected.saturating_sub(1),
                _ => self.selected = self.selected.saturating_sub(1),
            },
            Action::Down => match self.view {
                View::Shelf => self.vial_selected = (self.vial_selected + 1).min(self.vials.len().saturating_sub(1)),
                View::Sheet => {
                    let n = self
                        .sheet
                        .as_ref()
                        .and_then(|s| s["aliquots"].as_array().map(|a| a.len()))
                        .unwrap_or(0);
                    self.aliquot_selected = (self.aliquot_selected + 1).min(n.saturating_sub(1));
                }
                _ => self.selected = (self.selected + 1).min(self.hits.len().saturating_sub(1)),
            },
            Action::Back => {
                if self.view == View::Sheet {
                    self.view = View::Ledger;
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
            Action::Repeat => {
                if let Some(id) = self.selected_batch() {
                    let r = self.store.write(|tx, who| {
                        let b = model::get_batch(tx, id)?;
                        model::insert_batch(
                            tx,
                            who,
                            &model::NewBatch {
                                name: format!("{} (repeat)", b.name),
                                material: b.material,
                                recipe: b.recipe,
                                recipe_version: b.recipe_version,
                                parent_batch_id: Some(b.id),
                                parent_relation: Some("repeat".into()),
                                ..Default::default()
                            },
                        )
                    });
                    match r {
                        Ok(nid) => {
                            self.info(format!("batch {nid} repeats batch {id}"));
                            self.reload();
                            let _ = self.open_sheet(nid);
                            self.view = View::Sheet;
                        }
                        Err(e) => self.error(e.to_string()),
                    }
                }
            }
            Action::AddAliquot => {
                let p = self.picker();
                self.mode = Mode::Picker(p);
            }
            Action::ImportFolder => {
                let dir = self.export_dir.display().to_string();
                self.mode = Mode::Form(Form::new(
                    FormKind::Import,
                    "Import a folder of exports",
                    &[("folder", &dir), ("dilution", "1"), ("excitation nm", "")],
                ));
            }
            Action::Watch => {
                let dir = self.export_dir.display().to_string();
                self.mode = Mode::Form(Form::new(
                    FormKind::Watch,
                    "Watch a folder: each new export becomes an aliquot",
                    &[("folder", &dir), ("dilution", "1"), ("seconds", "120")],
                ));
            }
            Action::NewVial => {
                let loc = model::list_locations(&self.store.conn)
                    .ok()
                    .and_then(|l| l.first().map(|l| l.name.clone()))
                    .unwrap_or_default();
                self.mode = Mode::Form(Form::new(
                    FormKind::NewVial,
                    "New vial",
                    &[("mL", ""), ("location", &loc), ("label", ""), ("solvent", "hexane")],
                ));
            }
            Action::Draw | Action::Move | Action::Dispose => {
                if self.vials.get(self.vial_selected).is_none() {
                    self.error("no vial selected");
                    return;
                }
                let form = match a {
                    Action::Draw => Form::new(FormKind::Draw, "Draw from vial", &[("mL", ""), ("why", "")]),
                    Action::Move => Form::new(FormKind::Move, "Move vial", &[("to", ""), ("position", "")]),
                    _ => Form::new(FormKind::Dispose, "Dispose of vial", &[("why", "")]),
                };
                self.mode = Mode::Form(form);
            }
            Action::ToggleSpectrum => self.show_pl = !self.show_pl,
            Action::ChangeCurve => {
                self.mode = Mode::Form(Form::new(
                    FormKind::ChangeCurve,
                    "Choose a sizing curve (a new calibration version)",
                    &[("material", "CdSe"), ("curve", "jasieniak2009"), ("why", "")],
                ));
            }
            Action::Preview => self.spawn_recompute(true),
            Action::Apply => self.spawn_recompute(false),
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
                .and_then(|s| Some((s["id"].as_i64()?, s["voided"] == true)))
            {
                None => self.error("no batch open"),
                Some((id, voided)) => {
                    let name = self
                        .sheet
                        .as_ref()
                        .and_then(|s| s["name"].as_str().map(String::from))
                        .unwrap_or_default();
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
                        .and_then(|s| s["aliquots"].as_array()?.get(self.aliquot_selected).cloned())
                        .and_then(|a| {
                            a["spectra"]
                                .as_array()
                                .map(|v| v.iter().filter_map(|s| s["kind"].as_str().map(String::from)).collect())
                        })
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
                self.mode = Mode::Form(Form::new(FormKind::GoToBatch, "Open batch by id", &[("id", "")]));
            }
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

    fn picker(&self) -> Picker {
        let mut files: Vec<PathBuf> = std::fs::read_dir(&self.export_dir)
            .map(|d| {
                d.filter_map(|e| e.ok().map(|e| e.path()))
                    .filter(|p| p.is_file())
                    .collect()
            })
            .unwrap_or_default();
        files.sort();
        Picker {
            folder: self.export_dir.clone(),
            files,
            ..Default::default()
        }
    }

    fn picker_key(&mut self, mut p: Picker, ev: KeyEvent) {
        match ev.code {
            KeyCode::Esc => return,
            KeyCode::Down | KeyCode::Char('j') => p.selected = (p.selected + 1).min(p.files.len().saturating_sub(1)),
            KeyCode::Up | KeyCode::Char('k') => p.selected = p.selected.saturating_sub(1),
            KeyCode::Enter => p.abs = p.files.get(p.selected).cloned(),
            KeyCode::Char('p') => p.pl = p.files.get(p.selected).cloned(),
            KeyCode::Tab => {
                if p.abs.is_none() && p.pl.is_none() {
                    self.error("choose a file first: Enter for absorbance, p for PL");
                } else {
                    let mut f = Form::new(
                        FormKind::AddAliquot,
                        "Add aliquot",
                        &[
                            ("minutes", ""),
                            ("stage", ""),
                            ("dilution", "1"),
                            ("path cm", "1"),
                            ("solvent", "hexane"),
                            ("excitation nm", ""),
                        ],
                    );
                    f.fields.push((
                        "abs file".into(),
                        p.abs.as_ref().map(|x| x.display().to_string()).unwrap_or_default(),
                    ));
                    f.fields.push((
                        "pl file".into(),
                        p.pl.as_ref().map(|x| x.display().to_string()).unwrap_or_default(),
                    ));
                    self.mode = Mode::Form(f);
                    return;
                }
            }
            _ => {}
        }
        self.mode = Mode::Picker(p);
    }

    fn form_key(&mut self, mut f: Form, ev: KeyEvent) {
        match ev.code {
            KeyCode::Esc => return,
            KeyCode::Tab | KeyCode::Down => f.focus = (f.focus + 1) % f.fields.len(),
            KeyCode::BackTab | KeyCode::Up => f.focus = (f.focus + f.fields.len() - 1) % f.fields.len(),
            KeyCode::Backspace => {
                f.fields[f.focus].1.pop();
            }
            KeyCode::Char(c) => f.fields[f.focus].1.push(c),
            KeyCode::Enter => match self.submit(&f) {
                Ok(msg) => {
                    self.info(msg);
                    self.reload();
                    return;
                }
                Err(e) => self.error(e),
            },
            _ => {}
        }
        self.mode = Mode::Form(f);
    }

    fn number(f: &Form, label: &str) -> Result<Option<f64>, String> {
        let v = f.get(label);
        if v.is_empty() {
            return Ok(None);
        }
        v.parse::<f64>()
            .map(Some)
            .map_err(|_| format!("{label}: '{v}' is not a number"))
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
                let id = self
                    .store
                    .write(|tx, who| model::insert_batch(tx, who, &nb))
                    .map_err(e)?;
                self.open_sheet(id).map_err(e)?;
                self.view = View::Sheet;
                Ok(format!("batch {id} logged"))
            }
            FormKind::AddAliquot => {
                let batch = self.selected_batch().ok_or("no batch open")?;
                let mut files = Vec::new();
                let ex = Self::number(f, "excitation nm")?;
                if !f.get("abs file").is_empty() {
                    files.push(SpectrumFile {
                        path: f.get("abs file").into(),
                        kind: "abs",
                        ..Default::default()
                    });
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
                let batch = self.selected_batch().ok_or("no batch open")?;
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
                let id = self
                    .store
                    .write(|tx, who| {
                        let id = model::insert_vial(tx, who, &nv)?;
                        engine::estimate_vial(tx, id)?;
                        Ok(id)
                    })
                    .map_err(e)?;
                Ok(format!("vial {id} on the shelf"))
            }
            FormKind::Draw | FormKind::Move | FormKind::Dispose => {
                let vial = self
                    .vials
                    .get(self.vial_selected)
                    .map(|v| v.id)
                    .ok_or("no vial selected")?;
                let v = match f.kind {
                    FormKind::Draw => {
                        let ml = Self::number(f, "mL")?.ok_or("mL: give the volume to draw")?;
                        let why = f.get("why");
                        self.store.write(|tx, who| {
                            model::draw_from_vial(tx, who, vial, ml, Some(why.as_str()).filter(|s| !s.is_empty()))
                        })
                    }
                    FormKind::Move => {
                        let (to, pos) = (f.get("to"), f.get("position"));
                        self.store.write(|tx, who| {
                            model::move_vial(tx, who, vial, &to, Some(pos.as_str()).filter(|s| !s.is_empty()), None)
                        })
                    }
                    _ => {
                        let why = f.get("why");
                        self.store.write(|tx, who| model::dispose_vial(tx, who, vial, &why))
                    }
                }
                .map_err(e)?;
                Ok(format!(
                    "vial {}: {:.3} mL left at {} ({})",
                    v.label, v.volume_ml, v.location, v.status
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
                    "vial {} is back: {:.3} mL at {}",
                    v.label, v.volume_ml, v.location
                ))
            }
            FormKind::Import | FormKind::Watch => {
                let batch = self.selected_batch().ok_or("no batch open")?;
                let folder = PathBuf::from(f.get("folder"));
                let dilution = Self::number(f, "dilution")?.unwrap_or(1.0);
                if f.kind == FormKind::Import {
                    let ex = Self::number(f, "excitation nm")?;
                    self.spawn_import(batch, folder, dilution, ex)?;
                    Ok("importing in the background".into())
                } else {
                    let secs = Self::number(f, "seconds")?.unwrap_or(120.0);
                    self.spawn_watch(batch, folder, dilution, secs)?;
                    Ok(format!(
                        "watching for {secs:.0} s: new exports become aliquots of batch {batch}"
                    ))
                }
            }
        }
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

    /// Polls a folder once a second; each new file becomes an aliquot of the batch, timed by its
    /// name if it holds minutes, else by the minutes since watching began.
    fn spawn_watch(&mut self, batch: i64, folder: PathBuf, dilution: f64, secs: f64) -> Result<(), String> {
        if !folder.is_dir() {
            return Err(format!("{} is not a folder", folder.display()));
        }
        let mut store = self.worker_store()?;
        let tx = self.tx.clone();
        let mut watch = bench::FolderWatch::new(&bench::folder_looks(&folder));
        self.busy = true;
        std::thread::spawn(move || {
            let start = std::time::Instant::now();
            let mut added = 0;
            let say = |label: String, added: usize| {
                let _ = tx.send(Note::Progress {
                    label,
                    done: added,
                    total: added,
                });
            };
            while start.elapsed().as_secs_f64() < secs {
                std::thread::sleep(std::time::Duration::from_millis(500));
                let listing = bench::folder_looks(&folder);
                for ev in watch.look(std::time::Instant::now(), &listing) {
                    let p = match ev {
                        bench::WatchEvent::ChangedAfter(p, Some(aliquot)) => {
                            say(
                                format!(
                                    "watch: {} changed after it was logged as aliquot {aliquot}; void that aliquot and log the file again",
                                    p.display()
                                ),
                                added,
                            );
                            continue;
                        }
                        bench::WatchEvent::ChangedAfter(_, None) => continue,
                        bench::WatchEvent::Ready(p) => p,
                    };
                    let look = listing.iter().find(|(q, _)| *q == p).map(|(_, l)| *l);
                    let Some(look) = look else { continue };
                    watch.done(&p, look, None);
                    let minutes = bench::group_folder(&folder, None)
                        .ok()
                        .and_then(|g| {
                            g.into_iter()
                                .find(|g| g.files.iter().any(|f| f.path == p))
                                .and_then(|g| g.minutes)
                        })
                        .unwrap_or(start.elapsed().as_secs_f64() / 60.0);
                    let a = model::NewAliquot {
                        batch_id: batch,
                        minutes: Some(minutes),
                        stage: None,
                        dilution_factor: dilution,
                        path_cm: 1.0,
                        solvent: "hexane".into(),
                        taken_at: None,
                    };
                    // The kind is decided as the door decides it (header, name, then shape), never
                    // assumed; a file it cannot place is reported and left alone.
                    let kind = match bench::kind_of_file(&p) {
                        Ok(k) => k,
                        Err(e) => {
                            say(format!("watch: skipped {e}"), added);
                            continue;
                        }
                    };
                    if kind == "pl" {
                        say(
                            format!(
                                "watch: {} is PL; log it with its excitation wavelength (a)",
                                p.display()
                            ),
                            added,
                        );
                        continue;
                    }
                    let f = SpectrumFile {
                        path: p.clone(),
                        kind,
                        ..Default::default()
                    };
                    let mut logged = bench::add_aliquot(
                        &mut store,
                        &a,
                        std::slice::from_ref(&f),
                        &Default::default(),
                        &bench::Door::default(),
                    );
                    // The lab was restored while watching: go on watching into the restored lab.
                    if let Err(crate::Error::Replaced(_)) = &logged
                        && let Ok(fresh) = store.reopen()
                    {
                        store = fresh;
                        say(
                            "watch: the lab was restored from a backup; watching on into it".into(),
                            added,
                        );
                        logged = bench::add_aliquot(&mut store, &a, &[f], &Default::default(), &bench::Door::default());
                    }
                    match logged {
                        Ok(s) => {
                            added += 1;
                            watch.done(&p, look, Some(s.id));
                            say(format!("watch: aliquot {} D {} nm", s.id, num(s.diameter_nm, 2)), added);
                        }
                        Err(e) => say(format!("watch: {e}"), added),
                    }
                }
            }
            let _ = tx.send(Note::Done(format!("stopped watching; {added} aliquots added")));
        });
        Ok(())
    }
}
