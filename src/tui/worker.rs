//! The UI's worker: one long-lived thread with its own connection (a sibling of the UI's
//! store, never a second open) that does every read and write the screens ask for, so the UI
//! thread only draws and handles keys: a write that waits on SQLite's write lock (a recompute
//! elsewhere) waits here, not in front of the person. This file holds the requests, the
//! answers and the mailbox between the two threads; `jobs` what each request does.
//!
//! Promises: requests are served in the order they were made, so a read asked after a write
//! sees it; reads are newest-wins by kind (a second "open a sheet" while the first waits takes
//! its place, and the UI drops an answer older than the newest it asked for); writes queue in
//! order and are never dropped, not even when the UI closes (the worker finishes them before
//! it ends). Every answer goes back over the UI's note channel with the request's number; a
//! request whose handler fails unexpectedly is answered as a failure, never left waiting.

use super::RememberName;
use super::jobs::RecomputeReport;
use crate::lab::bench::SpectrumFile;
use crate::report::{self, plot::SeriesItem};
use crate::search::Facts;
use crate::store::{Store, model};
use chrono::{DateTime, FixedOffset};
use std::collections::{HashSet, VecDeque};
use std::path::PathBuf;
use std::sync::mpsc::Sender;
use std::sync::{Arc, Condvar, Mutex, MutexGuard};
use std::thread::JoinHandle;

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
    pub calibrations: Vec<crate::lab::calibrations::CalibrationVersion>,
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
    Reopened(Box<Store>, crate::error::Replacement),
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

    /// How many requests were made so far (the number of the last one).
    pub fn made(&self) -> u64 {
        self.next_seq
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
                Job::Read(r) => super::jobs::read(store, r),
                Job::Write(w) => Reply::Wrote(super::jobs::write(store, w)),
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
