//! The UI's worker and its long jobs. One long-lived thread with its own connection (a
//! sibling of the UI's store, never a second open) does every read and write the screens ask
//! for, so the UI thread only draws and handles keys: a write that waits on SQLite's write lock
//! (a recompute elsewhere) waits here, not in front of the person.
//!
//! Promises: requests are served in the order they were made, so a read asked after a write
//! sees it; reads are newest-wins by kind (a second "open a sheet" while the first waits takes
//! its place, and the UI drops an answer older than the newest it asked for); writes queue in
//! order and are never dropped, not even when the UI closes (the worker finishes them before
//! it ends). Every answer goes back over the UI's note channel with the request's number. The
//! writes go through the `lab`, `corrections` and `bench` actions exactly as the forms called
//! them before. The long jobs (recompute, import, handover) keep threads of their own.
//! Every call into the derivation engine is in this file, so a rename there is one edit here.

use super::RememberName;
use crate::bench::{self, SpectrumFile};
use crate::derive::{calibration, engine};
use crate::report::{self, plot::SeriesItem};
use crate::search::{self, Facts};
use crate::store::{Db, Store, model};
use chrono::{DateTime, FixedOffset};
use std::collections::{HashSet, VecDeque};
use std::path::PathBuf;
use std::sync::mpsc::Sender;
use std::sync::{Arc, Condvar, Mutex, MutexGuard};
use std::thread::JoinHandle;

/// The recompute's report, under the one name the UI uses for it.
pub type RecomputeReport = engine::RecomputeReport;

/// What a background thread reports to the UI.
#[derive(Debug)]
pub enum Note {
    Progress {
        label: String,
        done: usize,
        total: usize,
    },
    Done(String),
    Failed(String),
    Preview(RecomputeReport),
    /// What the folder watch did with an export; true when it logged it.
    Watched(String, bool),
    /// The watch has stopped (asked to, or its folder went away).
    WatchEnded(String),
    /// The UI worker's answer to the request of that number.
    Answer(u64, Box<Reply>),
}

/// Which audit entries the trail reads.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum TrailAsk {
    /// The newest this many.
    Newest(i64),
    /// Every entry about one thing (entity, id).
    About(String, i64),
}

/// A read. Of each kind only the newest waiting one is served.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Read {
    /// Everything the lists show: batches, vials, stale marks, calibrations, the trail.
    Lists {
        disposed: bool,
        trail: TrailAsk,
    },
    /// A batch sheet with its spectra and the bench forms' defaults.
    Sheet(i64),
    Trail(TrailAsk),
    /// Is the lab still the one opened, and has anyone else written to it?
    Check,
    /// What a repeat of this batch starts from.
    Repeat(i64),
    /// What a handover from one person to another would move.
    Handover {
        from: String,
        to: String,
    },
}

/// The kinds of request; a newer read replaces a waiting one of its kind.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Kind {
    Lists,
    Sheet,
    Trail,
    Check,
    Summary,
    Write,
}

impl Read {
    pub fn kind(&self) -> Kind {
        match self {
            Read::Lists { .. } => Kind::Lists,
            Read::Sheet(_) => Kind::Sheet,
            Read::Trail(_) => Kind::Trail,
            Read::Check => Kind::Check,
            Read::Repeat(_) | Read::Handover { .. } => Kind::Summary,
        }
    }
}

/// An aliquot's correction as the form states it: the worker compares it with the aliquot as
/// stored, so a field left alone is no change.
#[derive(Debug, Clone)]
pub struct AliquotFields {
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub dilution: Option<f64>,
    pub path_cm: Option<f64>,
    pub solvent: String,
}

/// A write: one thing a person does, carried out by the library action the form always used.
#[derive(Debug, Clone)]
pub enum Write {
    NewBatch(model::NewBatch),
    Repeat(i64),
    AddAliquot {
        aliquot: model::NewAliquot,
        files: Vec<SpectrumFile>,
    },
    NewVial(model::NewVial),
    Draw {
        vial: i64,
        ml: f64,
        why: Option<String>,
    },
    Move {
        vial: i64,
        to: String,
        position: Option<String>,
    },
    Dispose {
        vial: i64,
        why: String,
    },
    ReinstateVial {
        vial: i64,
        why: String,
    },
    ChangeCurve {
        material: String,
        curve: String,
        why: String,
    },
    AliquotVoid {
        aliquot: i64,
        void: bool,
        why: String,
    },
    EditAliquot {
        aliquot: i64,
        fields: AliquotFields,
        why: String,
    },
    BatchVoid {
        batch: i64,
        void: bool,
        why: String,
    },
    MoveSpectrum {
        from: i64,
        kind: String,
        to: i64,
        /// The batch whose sheet is shown again after the move.
        batch: i64,
        why: String,
    },
    /// The first person and place of a new lab; `sign` makes the person the writer from now
    /// on (remembered for the account where `remember` can keep it).
    FirstRun {
        name: String,
        email: String,
        place: String,
        kind: String,
        sign: bool,
        remember: Option<RememberName>,
    },
    /// The folder a batch's exports came from, for the picker next time.
    RememberFolder {
        batch: i64,
        folder: PathBuf,
    },
    /// A batch's injection time, kept (audited) when it differs from the one stored.
    InjectionTime {
        batch: i64,
        at: DateTime<FixedOffset>,
    },
}

/// What a batch's next aliquot is measured like and where its exports are, for the picker and
/// the import and watch forms.
#[derive(Debug, Clone, PartialEq)]
pub struct BenchDefaults {
    /// The folder this batch's exports last came from, else any batch's; None: none kept.
    pub folder: Option<PathBuf>,
    pub dilution: f64,
    pub path_cm: f64,
    pub solvent: String,
    pub excitation_nm: Option<f64>,
    pub injected_at: Option<DateTime<FixedOffset>>,
}

impl Default for BenchDefaults {
    fn default() -> BenchDefaults {
        BenchDefaults {
            folder: None,
            dilution: 1.0,
            path_cm: 1.0,
            solvent: "hexane".into(),
            excitation_nm: None,
            injected_at: None,
        }
    }
}

/// A batch sheet as the screen shows it, read in one snapshot.
pub struct SheetData {
    pub sheet: report::BatchSheet,
    pub series: Vec<SeriesItem>,
    pub bench: BenchDefaults,
}

/// Everything the lists show, read in one snapshot.
pub struct Lists {
    pub facts: Vec<Facts>,
    pub vials: Vec<model::VialRow>,
    pub stale_batches: HashSet<i64>,
    pub calibrations: Vec<calibration::CalibrationVersion>,
    pub trail: Vec<model::AuditRow>,
    pub people: usize,
    pub locations: Vec<String>,
    /// SQLite's count of others' commits, read before the lists: a later change means reload.
    pub data_version: Option<i64>,
}

/// What a handover would move.
pub struct HandoverCounts {
    pub vials: Vec<String>,
    pub open_batches: usize,
}

/// The lab's state as the periodic check found it.
pub enum Checked {
    Same(Option<i64>),
    /// The lab was restored or replaced (what happened): the worker now works on the lab at
    /// the path, and this is the UI's store for it.
    Reopened(Box<Store>, String),
}

/// What a write did.
#[derive(Default)]
pub struct Wrote {
    pub said: String,
    /// The sheet of the batch acted on, read after the write.
    pub sheet: Option<SheetData>,
    /// The batch or vial the write made.
    pub made: Option<i64>,
    /// The writer's name from now on (the first-run form's person).
    pub signed_as: Option<String>,
}

/// A sheet that could not be read: whether the batch is not there (a restore removed it).
pub struct SheetError {
    pub not_found: bool,
    pub message: String,
}

/// The worker's answers, one per request served.
pub enum Reply {
    Lists(Result<Lists, String>),
    Sheet(i64, Result<SheetData, SheetError>),
    Trail(Result<Vec<model::AuditRow>, String>),
    Check(Result<Checked, String>),
    Repeat(Result<model::BatchRow, String>),
    Handover(Result<HandoverCounts, String>),
    Wrote(Result<Wrote, String>),
}

impl std::fmt::Debug for Reply {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let (what, ok) = match self {
            Reply::Lists(r) => ("lists", r.is_ok()),
            Reply::Sheet(_, r) => ("sheet", r.is_ok()),
            Reply::Trail(r) => ("trail", r.is_ok()),
            Reply::Check(r) => ("check", r.is_ok()),
            Reply::Repeat(r) => ("repeat", r.is_ok()),
            Reply::Handover(r) => ("handover", r.is_ok()),
            Reply::Wrote(r) => ("wrote", r.is_ok()),
        };
        write!(f, "Reply::{what}({})", if ok { "ok" } else { "err" })
    }
}

/// What waits for the worker: at most one read of each kind, and every write in order.
#[derive(Default)]
struct Mailbox {
    reads: Vec<(u64, Read)>,
    writes: VecDeque<(u64, Write)>,
    /// The UI is gone: finish the writes, skip the reads, stop.
    closed: bool,
}

enum Job {
    Read(Read),
    Write(Write),
}

impl Mailbox {
    /// The oldest request waiting (after close, the oldest write).
    fn next(&mut self) -> Option<(u64, Job)> {
        let write = self.writes.front().map(|(s, _)| *s);
        let read = if self.closed {
            None
        } else {
            self.reads
                .iter()
                .enumerate()
                .min_by_key(|(_, (s, _))| *s)
                .map(|(i, (s, _))| (i, *s))
        };
        match (write, read) {
            (Some(w), Some((_, r))) if w < r => self.writes.pop_front().map(|(s, w)| (s, Job::Write(w))),
            (_, Some((i, _))) => {
                let (s, r) = self.reads.swap_remove(i);
                Some((s, Job::Read(r)))
            }
            (Some(_), None) => self.writes.pop_front().map(|(s, w)| (s, Job::Write(w))),
            (None, None) => None,
        }
    }
}

type Shared = Arc<(Mutex<Mailbox>, Condvar)>;

fn lock(shared: &Shared) -> MutexGuard<'_, Mailbox> {
    // A panic while the lock was held cannot leave the mailbox half-changed (every change is
    // one push or pop), so a poisoned lock is taken as it is.
    shared.0.lock().unwrap_or_else(|e| e.into_inner())
}

/// The UI's end of the worker: it numbers requests and posts them; answers come back as
/// [`Note::Answer`] on the channel the worker was started with.
pub struct Worker {
    shared: Shared,
    thread: Option<JoinHandle<()>>,
    next_seq: u64,
}

impl Worker {
    /// Starts the worker on its own store (a sibling of the UI's). Without one (it could not
    /// be opened), every request is answered with why.
    pub fn start(store: Result<Store, String>, tx: Sender<Note>) -> Worker {
        let shared: Shared = Arc::new((Mutex::new(Mailbox::default()), Condvar::new()));
        let theirs = shared.clone();
        let thread = std::thread::Builder::new()
            .name("cuvette-ui-worker".into())
            .spawn(move || serve(store, theirs, tx))
            .ok();
        Worker {
            shared,
            thread,
            next_seq: 0,
        }
    }

    /// Whether the worker thread is there to answer (it could not be started, or it ended).
    pub fn alive(&self) -> bool {
        self.thread.as_ref().is_some_and(|t| !t.is_finished())
    }

    fn number(&mut self) -> u64 {
        self.next_seq += 1;
        self.next_seq
    }

    /// Posts a read, in the place of any read of its kind still waiting; returns its number.
    pub fn read(&mut self, r: Read) -> u64 {
        let seq = self.number();
        let mut m = lock(&self.shared);
        let kind = r.kind();
        m.reads.retain(|(_, w)| w.kind() != kind);
        m.reads.push((seq, r));
        drop(m);
        self.shared.1.notify_one();
        seq
    }

    /// Queues a write behind every request made before it; returns its number.
    pub fn write(&mut self, w: Write) -> u64 {
        let seq = self.number();
        lock(&self.shared).writes.push_back((seq, w));
        self.shared.1.notify_one();
        seq
    }
}

impl Drop for Worker {
    /// The writes still queued are finished, not dropped: the UI waits for them as it closes.
    fn drop(&mut self) {
        lock(&self.shared).closed = true;
        self.shared.1.notify_one();
        if let Some(t) = self.thread.take() {
            let _ = t.join();
        }
    }
}

fn serve(mut store: Result<Store, String>, shared: Shared, tx: Sender<Note>) {
    loop {
        let (seq, job) = {
            let mut m = lock(&shared);
            loop {
                if let Some(next) = m.next() {
                    break next;
                }
                if m.closed {
                    return;
                }
                m = shared.1.wait(m).unwrap_or_else(|e| e.into_inner());
            }
        };
        // A bug in a handler must not leave the UI waiting for an answer that never comes:
        // it is answered as a failure (the transaction it was in rolled back as it unwound).
        let reply = match &mut store {
            Err(why) => failure(&job, format!("the lab cannot be reached: {why}")),
            Ok(store) => std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| match &job {
                Job::Read(r) => read(store, r),
                Job::Write(w) => Reply::Wrote(write(store, w)),
            }))
            .unwrap_or_else(|_| {
                failure(
                    &job,
                    "the UI's worker failed on this request; nothing was changed".into(),
                )
            }),
        };
        // The UI may be gone (closing): the queued writes are still finished.
        let _ = tx.send(Note::Answer(seq, Box::new(reply)));
    }
}

/// The answer to a request that could not be served: its kind's answer, with why.
fn failure(job: &Job, why: String) -> Reply {
    match job {
        Job::Write(_) => Reply::Wrote(Err(why)),
        Job::Read(r) => match r {
            Read::Lists { .. } => Reply::Lists(Err(why)),
            Read::Sheet(id) => Reply::Sheet(
                *id,
                Err(SheetError {
                    not_found: false,
                    message: why,
                }),
            ),
            Read::Trail(_) => Reply::Trail(Err(why)),
            Read::Check => Reply::Check(Err(why)),
            Read::Repeat(_) => Reply::Repeat(Err(why)),
            Read::Handover { .. } => Reply::Handover(Err(why)),
        },
    }
}

// ---------------------------------------------------------------- reads

fn read(store: &mut Store, r: &Read) -> Reply {
    let text = |e: crate::Error| e.to_string();
    match r {
        Read::Lists { disposed, trail } => Reply::Lists(lists(store, *disposed, trail).map_err(text)),
        Read::Sheet(id) => Reply::Sheet(
            *id,
            store.read(|c| read_sheet(c, *id)).map_err(|e| SheetError {
                not_found: matches!(e, crate::Error::NotFound { .. }),
                message: e.to_string(),
            }),
        ),
        Read::Trail(ask) => Reply::Trail(read_trail(&store.conn, ask).map_err(text)),
        Read::Check => Reply::Check(check(store)),
        Read::Repeat(id) => Reply::Repeat(model::get_batch(&store.conn, *id).map_err(text)),
        Read::Handover { from, to } => Reply::Handover(handover_counts(&store.conn, from, to)),
    }
}

fn lists(store: &mut Store, disposed: bool, trail: &TrailAsk) -> crate::Result<Lists> {
    // Read before the lists: a commit made while they are read then shows as a change.
    let data_version = store.data_version().ok();
    store.read(|c| {
        Ok(Lists {
            facts: search::load_facts(c)?,
            vials: model::list_vials(c, disposed)?,
            stale_batches: engine::stale_batches(c)?,
            calibrations: calibration::history(c)?,
            trail: read_trail(c, trail)?,
            people: model::list_people(c)?.len(),
            locations: model::list_locations(c)?.into_iter().map(|l| l.name).collect(),
            data_version,
        })
    })
}

fn read_trail(c: &Db, ask: &TrailAsk) -> crate::Result<Vec<model::AuditRow>> {
    match ask {
        TrailAsk::About(entity, id) => model::audit_log_of(c, entity, *id, i64::MAX),
        TrailAsk::Newest(n) => model::audit_log(c, None, *n),
    }
}

fn read_sheet(c: &Db, id: i64) -> crate::Result<SheetData> {
    Ok(SheetData {
        sheet: report::batch_sheet(c, id)?,
        series: report::plot::series(c, id)?,
        bench: bench_defaults(c, id),
    })
}

/// The screen-setting key for the folder a batch's exports were last chosen from.
fn folder_key(batch: i64) -> String {
    format!("ui.export_folder.batch.{batch}")
}

/// Where the picker (and the watch and import forms) open for a batch: the folder its exports
/// last came from, else the last folder any batch's came from; and what its next aliquot is
/// measured like, from its last one (a new batch gets 1, 1 cm, hexane).
fn bench_defaults(c: &Db, batch: i64) -> BenchDefaults {
    let get = |k: &str| model::meta_get(c, k).ok().flatten();
    let folder = get(&folder_key(batch))
        .or_else(|| get("ui.export_folder.last"))
        .map(PathBuf::from);
    let injected_at = stored_injection(c, batch);
    let last = model::aliquots_of(c, batch)
        .ok()
        .and_then(|v| v.into_iter().max_by_key(|a| a.id));
    match last {
        Some(a) => BenchDefaults {
            folder,
            excitation_nm: model::spectra_of_aliquot(c, a.id)
                .ok()
                .and_then(|s| s.into_iter().find(|s| s.kind == "pl").and_then(|s| s.excitation_nm)),
            dilution: a.dilution_factor,
            path_cm: a.path_cm,
            solvent: a.solvent,
            injected_at,
        },
        None => BenchDefaults {
            folder,
            injected_at,
            ..Default::default()
        },
    }
}

/// The injection time given for a batch, if any.
fn stored_injection(c: &Db, batch: i64) -> Option<DateTime<FixedOffset>> {
    model::meta_get(c, &format!("injected_at.batch.{batch}"))
        .ok()
        .flatten()
        .and_then(|t| DateTime::parse_from_rfc3339(&t).ok())
}

/// Whether the lab is still the one opened: if it was restored or its file replaced, the
/// worker reopens the lab at the path and hands the UI its new store.
fn check(store: &mut Store) -> Result<Checked, String> {
    match store.replaced() {
        Ok(None) => Ok(Checked::Same(store.data_version().ok())),
        Ok(Some(what)) => {
            let fresh = store.reopen().map_err(|e| format!("{what}; reopening failed: {e}"))?;
            *store = fresh.sibling().map_err(|e| format!("{what}; reopening failed: {e}"))?;
            Ok(Checked::Reopened(Box::new(fresh), what))
        }
        Err(e) => Err(e.to_string()),
    }
}

fn handover_counts(c: &Db, from: &str, to: &str) -> Result<HandoverCounts, String> {
    let e = |x: crate::Error| x.to_string();
    let (a, b) = (
        model::person_id(c, from).map_err(e)?,
        model::person_id(c, to).map_err(e)?,
    );
    if a == b {
        return Err("to: hand over to someone else than from".into());
    }
    let vials = model::list_vials(c, false)
        .map_err(e)?
        .into_iter()
        .filter(|v| v.owner.as_deref() == Some(from))
        .map(|v| v.label)
        .collect();
    let open_batches = model::list_batches(c)
        .map_err(e)?
        .into_iter()
        .filter(|b| b.operator.as_deref() == Some(from) && matches!(b.status.as_str(), "planned" | "growing"))
        .count();
    Ok(HandoverCounts { vials, open_batches })
}

// ---------------------------------------------------------------- writes

fn num(v: Option<f64>, d: usize) -> String {
    v.map(|x| format!("{x:.d$}")).unwrap_or_else(|| "-".into())
}

/// What a write says, with the sheet of the batch it acted on read afresh. A write that landed
/// is reported as landed even when the sheet cannot be read after it.
fn with_sheet(store: &mut Store, said: String, batch: i64) -> Wrote {
    match store.read(|c| read_sheet(c, batch)) {
        Ok(s) => Wrote {
            said,
            sheet: Some(s),
            ..Default::default()
        },
        Err(e) => Wrote {
            said: format!("{said} (the sheet could not be read again: {e})"),
            ..Default::default()
        },
    }
}

fn said(text: String) -> Wrote {
    Wrote {
        said: text,
        ..Default::default()
    }
}

fn vial_said(v: &model::VialRow) -> String {
    format!(
        "vial {}: {} mL left at {} ({})",
        v.label,
        super::units::ml(v.volume_ml),
        v.location,
        super::units::words(&v.status)
    )
}

fn write(store: &mut Store, w: &Write) -> Result<Wrote, String> {
    use crate::lab;
    let e = |x: crate::Error| x.to_string();
    Ok(match w {
        Write::NewBatch(nb) => {
            let id = lab::batches::log_batch(store, nb).map_err(e)?.id;
            Wrote {
                made: Some(id),
                ..with_sheet(store, format!("batch {id} logged"), id)
            }
        }
        Write::Repeat(id) => {
            let nid = lab::batches::repeat_batch(store, *id, None).map_err(e)?.id;
            Wrote {
                made: Some(nid),
                ..with_sheet(store, format!("batch {nid} repeats batch {id}"), nid)
            }
        }
        Write::AddAliquot { aliquot, files } => {
            let s =
                bench::add_aliquot(store, aliquot, files, &Default::default(), &bench::Door::default()).map_err(e)?;
            let text = format!(
                "aliquot {}: first exciton {} nm, D {} nm ({})",
                s.id,
                num(s.first_exciton_nm, 1),
                num(s.diameter_nm, 2),
                s.curve.unwrap_or_else(|| "-".into())
            );
            with_sheet(store, text, aliquot.batch_id)
        }
        Write::NewVial(nv) => {
            let id = lab::vials::new_vial(store, nv).map_err(e)?.id;
            Wrote {
                made: Some(id),
                ..said(format!(
                    "vial {id} of batch {} on the shelf: {} mL",
                    nv.batch_id,
                    super::units::ml(nv.volume_ml)
                ))
            }
        }
        Write::Draw { vial, ml, why } => said(vial_said(
            &lab::vials::draw(store, *vial, *ml, why.as_deref()).map_err(e)?,
        )),
        Write::Move { vial, to, position } => said(vial_said(
            &lab::vials::move_to(store, *vial, to, position.as_deref(), None).map_err(e)?,
        )),
        Write::Dispose { vial, why } => said(vial_said(&lab::vials::dispose(store, *vial, why).map_err(e)?)),
        Write::ReinstateVial { vial, why } => {
            let v = crate::corrections::reinstate_vial(store, *vial, why).map_err(e)?;
            said(format!(
                "vial {} is back: {} mL at {}",
                v.label,
                super::units::ml(v.volume_ml),
                v.location
            ))
        }
        Write::ChangeCurve { material, curve, why } => {
            let v = store
                .write(|tx, who| {
                    let core = model::material_by_name(tx, material)?.core;
                    let (v, _) = engine::change_calibration(tx, who, why, &|_, body| {
                        body.set_curve(&core, curve);
                        Ok(())
                    })?;
                    Ok(v)
                })
                .map_err(e)?;
            said(format!("calibration version {v}; press p to preview the recompute"))
        }
        Write::AliquotVoid { aliquot, void, why } => {
            let a = crate::corrections::set_aliquot_void(store, *aliquot, *void, why).map_err(e)?;
            let text = if *void {
                format!("aliquot {aliquot} is void; the batch's values no longer use it")
            } else {
                format!("aliquot {aliquot} is reinstated")
            };
            with_sheet(store, text, a.batch_id)
        }
        Write::EditAliquot { aliquot, fields, why } => {
            let before = model::get_aliquot(&store.conn, *aliquot).map_err(e)?;
            let f = fields;
            let changed_minutes = f.minutes != before.minutes;
            let changed_stage = f.stage != before.stage;
            let ed = model::AliquotEdit {
                minutes: f.minutes.filter(|_| changed_minutes || changed_stage),
                stage: if f.minutes.is_some() {
                    None
                } else {
                    f.stage.clone().filter(|_| changed_stage || changed_minutes)
                },
                dilution_factor: f.dilution.filter(|d| *d != before.dilution_factor),
                path_cm: f.path_cm.filter(|p| *p != before.path_cm),
                solvent: Some(f.solvent.clone()).filter(|s| !s.is_empty() && *s != before.solvent),
            };
            crate::corrections::edit_aliquot(store, *aliquot, &ed, why).map_err(e)?;
            with_sheet(
                store,
                format!("aliquot {aliquot} corrected and recomputed"),
                before.batch_id,
            )
        }
        Write::BatchVoid { batch, void, why } => {
            crate::corrections::set_batch_void(store, *batch, *void, why).map_err(e)?;
            let text = if *void {
                format!("batch {batch} is void: left out of search and the pack (g opens it by id)")
            } else {
                format!("batch {batch} is reinstated")
            };
            with_sheet(store, text, *batch)
        }
        Write::MoveSpectrum {
            from,
            kind,
            to,
            batch,
            why,
        } => {
            let spectrum = model::spectra_of_aliquot(&store.conn, *from)
                .map_err(e)?
                .into_iter()
                .find(|s| s.kind == *kind)
                .ok_or_else(|| format!("aliquot {from} has no {kind} spectrum"))?;
            crate::corrections::move_spectrum(store, spectrum.id, *to, why).map_err(e)?;
            let text = format!(
                "spectrum {} moved from aliquot {from} to aliquot {to}; both recomputed",
                spectrum.id
            );
            with_sheet(store, text, *batch)
        }
        Write::FirstRun {
            name,
            email,
            place,
            kind,
            sign,
            remember,
        } => {
            lab::register::first_run(
                store,
                Some((name.as_str(), Some(email.as_str()).filter(|e| !e.is_empty()))).filter(|_| !name.is_empty()),
                Some((place.as_str(), kind.as_str())).filter(|_| !place.is_empty()),
            )
            .map_err(e)?;
            let mut parts = Vec::new();
            if !name.is_empty() {
                parts.push(format!("{name} added to the lab"));
            }
            // The login name only stood in for a person until one was named: from now on the
            // writes are theirs, and stay so next time where the name can be kept.
            let signed_as = sign.then(|| name.clone());
            if *sign {
                store.actor = name.clone();
                parts.push(match remember.map(|r| r(name)) {
                    Some(Ok(kept)) => format!("your writes are signed {name} (kept in {kept})"),
                    Some(Err(why)) => format!("your writes are signed {name} until you quit ({why})"),
                    None => format!("your writes are signed {name}"),
                });
            }
            if !place.is_empty() {
                parts.push(format!("location {place} ({kind}) ready for vials"));
            }
            Wrote {
                signed_as,
                ..said(format!("{}; n logs the first batch", parts.join(", ")))
            }
        }
        Write::RememberFolder { batch, folder } => {
            if let Some(text) = folder.to_str() {
                let key = folder_key(*batch);
                lab::settings::remember(store, &[(&key, text), ("ui.export_folder.last", text)])
                    .map_err(|x| format!("could not remember the folder: {x}"))?;
            }
            Wrote::default()
        }
        Write::InjectionTime { batch, at } => {
            if stored_injection(&store.conn, *batch) != Some(*at) {
                lab::settings::set_injection_time(store, *batch, at).map_err(e)?;
            }
            Wrote::default()
        }
    })
}

// ---------------------------------------------------------------- the long jobs

/// A recompute of every stale value (or its preview, a dry run) on a thread of its own.
pub fn spawn_recompute(mut store: Store, dry_run: bool, tx: Sender<Note>) {
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

/// A handover, with its pack, on a thread of its own.
pub fn spawn_handover(mut store: Store, from: String, to: String, out: PathBuf, tx: Sender<Note>) {
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
}

/// An import of a folder of exports into a batch, on a thread of its own.
pub fn spawn_import(mut store: Store, batch: i64, folder: PathBuf, dilution: f64, ex: Option<f64>, tx: Sender<Note>) {
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
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sheet(id: i64) -> Read {
        Read::Sheet(id)
    }

    #[test]
    fn a_newer_read_replaces_a_waiting_one_of_its_kind_and_writes_keep_their_order() {
        let mut m = Mailbox::default();
        m.reads.push((1, sheet(3)));
        m.writes.push_back((
            2,
            Write::Dispose {
                vial: 1,
                why: "a".into(),
            },
        ));
        // What Worker::read does: the waiting sheet read gives way to the newer one.
        m.reads.retain(|(_, r)| r.kind() != Kind::Sheet);
        m.reads.push((3, sheet(7)));
        m.reads.push((4, Read::Check));
        m.writes.push_back((
            5,
            Write::Dispose {
                vial: 2,
                why: "b".into(),
            },
        ));
        let order: Vec<u64> = std::iter::from_fn(|| m.next().map(|(s, _)| s)).collect();
        assert_eq!(order, [2, 3, 4, 5], "in the order asked, the replaced read gone");
    }

    #[test]
    fn a_closed_mailbox_still_gives_its_writes_and_no_reads() {
        let mut m = Mailbox::default();
        m.reads.push((1, Read::Check));
        m.writes.push_back((2, Write::Repeat(4)));
        m.closed = true;
        let order: Vec<u64> = std::iter::from_fn(|| m.next().map(|(s, _)| s)).collect();
        assert_eq!(order, [2]);
    }
}
