//! The UI's side of its worker and of the long jobs: what it asked and is still waiting for,
//! and what each answer (or a job's news) does to the screen when it comes. Only the newest
//! request of each read kind is waited for; an older answer of that kind (a sheet asked before
//! another) is dropped. A sheet that comes with a write is shown unless a sheet was asked for
//! after the write. An answer that opens something (a sheet, a confirmation, the form back
//! with an error) does so only where the person still is: a view they have left is not pulled
//! back on screen.

use super::app::{App, Follow, Mode, View};
use super::forms::{self, Form};
use super::jobs::RecomputeReport;
use super::units;
use super::worker::{Checked, Kind, Lists, Note, Read, Reply, SheetData, TrailAsk, Write, Wrote};
use crate::error::Replacement;
use crate::lab::bench::WatchSetup;
use std::collections::{BTreeMap, HashMap};
use std::sync::mpsc::RecvTimeoutError;
use std::time::{Duration, Instant};

/// A sheet asked for to be shown: from which view, and the form (go to batch) that asked.
#[derive(Debug, Clone)]
pub(super) struct Opening {
    pub from: View,
    pub form: Option<Form>,
}

/// What to do with an answer when it comes.
#[derive(Debug, Clone)]
pub(super) enum Then {
    /// Show the lists; then put the selection on this batch or vial.
    Lists {
        follow: Option<Follow>,
    },
    /// A batch sheet: shown (`open`), or the one on screen read again.
    Sheet {
        id: i64,
        open: Option<Opening>,
    },
    /// The trail; `select` moves the selection once more entries are read, if it is still
    /// where it was left (`at`).
    Trail {
        select: Option<(isize, usize)>,
    },
    Check,
    /// Open a repeat's confirmation, if the person is still in this view.
    Repeat {
        view: View,
    },
    /// Open a handover's confirmation for this form (back to the form on an error).
    Handover(Form),
    /// A form's write: finish the form, or bring it back with the error. A watch starts
    /// once its injection time is kept.
    Saved {
        form: Form,
        view: View,
        watch: Option<WatchSetup>,
    },
    /// A repeat: show the new batch's sheet, if the person is still in this view.
    Repeated {
        view: View,
    },
    /// A write nobody waits for (a remembered folder): only an error is said.
    Quiet,
}

struct Waiting {
    seq: u64,
    read: Read,
    then: Then,
    label: Option<String>,
}

/// The requests out: the newest read of each kind, and every write.
#[derive(Default)]
pub(super) struct Asked {
    reads: HashMap<Kind, Waiting>,
    writes: BTreeMap<u64, (Then, String)>,
}

impl Asked {
    fn any(&self) -> bool {
        !self.reads.is_empty() || !self.writes.is_empty()
    }
    /// What the oldest request out that a person would wait for is doing.
    fn label(&self) -> Option<&str> {
        let reads = self
            .reads
            .values()
            .filter_map(|w| w.label.as_deref().map(|l| (w.seq, l)));
        let writes = self.writes.iter().map(|(s, (_, l))| (*s, l.as_str()));
        reads.chain(writes).min_by_key(|(s, _)| *s).map(|(_, l)| l)
    }
}

impl App {
    /// Asks the worker to read; it takes the place of a waiting read of its kind.
    pub(super) fn ask(&mut self, r: Read, then: Then, label: Option<String>) {
        let seq = self.worker.read(r.clone());
        self.asked.reads.insert(
            r.kind(),
            Waiting {
                seq,
                read: r,
                then,
                label,
            },
        );
    }

    /// Queues a write with the worker, behind everything asked before it.
    pub(super) fn send(&mut self, w: Write, then: Then, label: String) {
        let seq = self.worker.write(w);
        self.asked.writes.insert(seq, (then, label));
    }

    /// What the UI is waiting for the worker to do, while it waits ("working…" on the status
    /// line): the oldest request out, saving or opening something.
    pub fn working(&self) -> Option<&str> {
        self.asked.label()
    }

    /// How many requests were made of the worker so far: a key that asked something changes it.
    pub fn requests_made(&self) -> u64 {
        self.worker.made()
    }

    /// How many writes are queued or running on the worker.
    pub fn saves_waiting(&self) -> usize {
        self.asked.writes.len()
    }

    /// Whether any request is out (the lab checks included).
    pub fn waiting(&self) -> bool {
        self.asked.any()
    }

    /// Waits until every request out has been answered, applying each answer as it comes, or
    /// until `timeout`; true when nothing is out any more. It asks nothing of its own (no
    /// periodic lab check). For programs and tests that drive the app key by key and then
    /// look at it; the event loop gives it a few milliseconds, so a quick answer is drawn in
    /// the next frame. It waits on the answers' channel, never by sleeping.
    pub fn settle_workers(&mut self, timeout: Duration) -> bool {
        let start = Instant::now();
        loop {
            self.drain_notes();
            if !self.asked.any() {
                return true;
            }
            let left = timeout.saturating_sub(start.elapsed());
            if left.is_zero() {
                return false;
            }
            if !self.worker.alive() {
                // Let go of what waited, and say the wait failed.
                self.worker_gone();
                return false;
            }
            match self.rx.recv_timeout(left.min(Duration::from_millis(50))) {
                Ok(n) => self.on_note(n),
                Err(RecvTimeoutError::Timeout) => {}
                Err(RecvTimeoutError::Disconnected) => return false,
            }
        }
    }

    /// Reloads what the views show (the lists, and the open sheet), keeping the selection on
    /// what it was on.
    pub fn reload(&mut self) {
        self.reload_and_follow(None);
    }

    /// As [`App::reload`], then puts the selection on `follow`. A reload asked while another
    /// is out keeps the one it replaces' selection to follow.
    pub(super) fn reload_and_follow(&mut self, follow: Option<Follow>) {
        let follow = follow.or(match self.asked.reads.get(&Kind::Lists).map(|w| &w.then) {
            Some(Then::Lists { follow }) => *follow,
            _ => None,
        });
        let read = Read::Lists {
            disposed: self.show_disposed,
            trail: self.trail_ask(),
        };
        self.ask(read, Then::Lists { follow }, Some("reading the lab".into()));
        self.refresh_sheet();
    }

    /// Reads the open sheet again. A sheet still on its way is asked for again as it was
    /// (newest wins, so a refresh must not take the place of an opening).
    fn refresh_sheet(&mut self) {
        if let Some(w) = self.asked.reads.get(&Kind::Sheet) {
            let (read, then, label) = (w.read.clone(), w.then.clone(), w.label.clone());
            self.ask(read, then, label);
        } else if let Some(id) = self.sheet.as_ref().map(|s| s.batch.id) {
            self.ask(
                Read::Sheet(id),
                Then::Sheet { id, open: None },
                Some(format!("reading batch {id}")),
            );
        }
    }

    /// Asks for a batch's sheet, to be shown once it is read.
    pub fn open_sheet(&mut self, id: i64) {
        let open = Opening {
            from: self.view,
            form: None,
        };
        self.ask(
            Read::Sheet(id),
            Then::Sheet { id, open: Some(open) },
            Some(format!("opening batch {id}")),
        );
    }

    pub(super) fn trail_ask(&self) -> TrailAsk {
        match &self.trail_focus {
            Some((entity, id)) => TrailAsk::About(entity.clone(), *id),
            None => TrailAsk::Newest(self.trail_limit),
        }
    }

    /// Remembers the folder a batch's exports came from. A failure to remember is no reason
    /// to stop the person's work, so it only goes to the status line.
    pub(super) fn remember_folder(&mut self, batch: i64, folder: &std::path::Path) {
        if folder.to_str().is_none() {
            return;
        }
        if self.sheet.as_ref().is_some_and(|s| s.batch.id == batch) {
            self.bench.folder = Some(folder.to_path_buf());
        }
        let w = Write::RememberFolder {
            batch,
            folder: folder.to_path_buf(),
        };
        self.send(w, Then::Quiet, "remembering the folder".into());
    }

    /// Takes one answer of the worker.
    pub(super) fn take_answer(&mut self, seq: u64, reply: Reply) {
        if let Some((then, _)) = self.asked.writes.remove(&seq) {
            return self.wrote(seq, then, reply);
        }
        let kind = self.asked.reads.iter().find(|(_, w)| w.seq == seq).map(|(k, _)| *k);
        // An answer to a read since asked again is old news: the newer one is on its way.
        let Some(w) = kind.and_then(|k| self.asked.reads.remove(&k)) else {
            return;
        };
        match (w.then, reply) {
            (Then::Lists { follow }, Reply::Lists(r)) => match r {
                Ok(l) => self.show_lists(l, follow),
                Err(e) => self.error(e),
            },
            (Then::Sheet { id, open }, Reply::Sheet(_, r)) => match (r, open) {
                (Ok(d), None) => self.show_sheet(d),
                (Ok(d), Some(o)) => {
                    self.show_sheet(d);
                    if self.view == o.from {
                        self.view = View::Sheet;
                    }
                    if let Some(f) = o.form {
                        self.finished(format!("batch {id}"), &f, None);
                    }
                }
                // The batch is gone (the lab was restored from a backup without it): the sheet
                // closes rather than show, and act on, a batch that is not there.
                (Err(e), None) if e.not_found => {
                    self.sheet = None;
                    self.series.clear();
                    if self.view == View::Sheet {
                        self.view = View::Batches;
                    }
                }
                (Err(e), Some(Opening { form: Some(f), .. })) => self.form_back(f, e.message),
                (Err(e), _) => self.error(e.message),
            },
            (Then::Trail { select }, Reply::Trail(r)) => match r {
                Ok(rows) => {
                    self.show_trail(rows);
                    if let Some((want, at)) = select
                        && self.trail_selected == at
                    {
                        let last = self.trail.len().saturating_sub(1) as isize;
                        self.trail_selected = want.clamp(0, last.max(0)) as usize;
                    }
                }
                Err(e) => self.error(e),
            },
            (Then::Check, Reply::Check(r)) => self.checked(r),
            (Then::Repeat { view }, Reply::Repeat(r)) => match r {
                Ok(b) => {
                    if matches!(self.mode, Mode::Normal) && self.view == view {
                        self.mode = Mode::Confirm(Box::new(forms::repeat_confirm(&b)));
                    }
                }
                Err(e) => self.error(e),
            },
            (Then::Handover(f), Reply::Handover(r)) => match r {
                Ok(c) if matches!(self.mode, Mode::Normal | Mode::Help) => {
                    self.mode = Mode::Confirm(Box::new(forms::handover_confirm(f, &c)));
                }
                Ok(_) => self.info("the handover was not asked: another form is open (H asks again)"),
                Err(e) => self.form_back(f, e),
            },
            (_, Reply::Wrote(Err(e))) => self.error(e),
            _ => {}
        }
    }

    /// A write's answer.
    fn wrote(&mut self, seq: u64, then: Then, reply: Reply) {
        let r = match reply {
            Reply::Wrote(r) => r,
            _ => return,
        };
        match (then, r) {
            (Then::Saved { form, view, watch }, Ok(w)) => self.saved(seq, form, view, watch, w),
            (Then::Saved { form, .. }, Err(e)) => self.form_back(form, e),
            (Then::Repeated { view }, Ok(w)) => {
                self.info(w.said);
                self.sheet_after(seq, w.sheet);
                if self.view == view {
                    self.view = View::Sheet;
                }
                self.reload_and_follow(w.made.map(Follow::Batch));
            }
            (_, Err(e)) => self.error(e),
            (_, Ok(_)) => {}
        }
    }

    fn saved(&mut self, seq: u64, form: Form, view: View, watch: Option<WatchSetup>, w: Wrote) {
        use super::forms::FormKind;
        self.sheet_after(seq, w.sheet);
        if form.kind == FormKind::NewBatch && self.view == view {
            self.view = View::Sheet;
        }
        if form.kind == FormKind::ChangeCurve {
            self.preview = None;
        }
        if let Some(name) = w.signed_as {
            self.store.actor = name;
        }
        let said = match watch {
            Some(setup) => match self.start_watch(setup) {
                Ok(s) => s,
                Err(e) => return self.form_back(form, e),
            },
            None => w.said,
        };
        self.finished(said, &form, w.made);
    }

    /// Shows the sheet a write read after it, unless a sheet was asked for since.
    fn sheet_after(&mut self, seq: u64, sheet: Option<SheetData>) {
        let newer = self.asked.reads.get(&Kind::Sheet).is_some_and(|w| w.seq > seq);
        if let Some(s) = sheet
            && !newer
        {
            self.show_sheet(s);
        }
    }

    fn show_sheet(&mut self, d: SheetData) {
        let same = self.sheet.as_ref().map(|s| s.batch.id) == Some(d.sheet.batch.id);
        let n = d.sheet.aliquots.len();
        self.aliquot_selected = if same {
            self.aliquot_selected.min(n.saturating_sub(1))
        } else {
            0
        };
        self.sheet = Some(d.sheet);
        self.series = d.series;
        self.bench = d.bench;
    }

    fn show_lists(&mut self, l: Lists, follow: Option<Follow>) {
        // What is selected is kept by what it is (a batch, a vial), not by its row number, so a
        // reload after someone else's write never leaves the highlight on another thing.
        let batch_was = self.hits.get(self.selected).map(|h| h.id);
        let vial_was = self.vials.get(self.vial_selected).map(|v| v.id);
        self.facts = l.facts;
        self.refilter();
        if let Some(i) = batch_was.and_then(|id| self.hits.iter().position(|h| h.id == id)) {
            self.selected = i;
        }
        self.all_vials = l.vials;
        self.reshelve();
        if let Some(i) = vial_was.and_then(|id| self.vials.iter().position(|v| v.id == id)) {
            self.vial_selected = i;
        }
        if self.vial_selected >= self.vials.len() {
            self.vial_selected = self.vials.len().saturating_sub(1);
        }
        self.stale_batches = l.stale_batches;
        self.calibrations = l.calibrations;
        self.show_trail(l.trail);
        self.people = Some(l.people);
        self.locations = Some(l.locations);
        self.data_version = l.data_version;
        if let Some(to) = follow {
            self.follow(to);
        }
    }

    /// Shows the trail read, keeping the selection on the entry it was on; a selection on the
    /// newest entry follows the newest, so new writes do not leave it behind.
    fn show_trail(&mut self, rows: Vec<crate::store::model::AuditRow>) {
        let was = (self.trail_selected > 0)
            .then(|| self.trail.get(self.trail_selected).map(|r| r.id))
            .flatten();
        self.trail = rows;
        if let Some(i) = was.and_then(|id| self.trail.iter().position(|r| r.id == id)) {
            self.trail_selected = i;
        }
        self.trail_selected = self.trail_selected.min(self.trail.len().saturating_sub(1));
    }

    /// The lab check's answer: others' writes show without waiting for one of ours (not while
    /// a form is open, so nothing moves under the user's typing); a restored or replaced lab
    /// is shown as it is now, and the person told to redo anything unfinished.
    fn checked(&mut self, r: Result<Checked, String>) {
        match r {
            Ok(Checked::Same(now)) => {
                if now != self.data_version && matches!(self.mode, Mode::Normal | Mode::Help) {
                    self.reload();
                }
            }
            Ok(Checked::Reopened(store, how)) => {
                self.store = *store;
                if !matches!(self.mode, Mode::Normal | Mode::Help) {
                    self.closed_at = Some(Instant::now());
                }
                self.mode = Mode::Normal;
                self.reload();
                let why = match how {
                    Replacement::Restored => "the lab was restored from a backup",
                    Replacement::FileReplaced => "the lab's file was replaced",
                };
                self.error(format!("{why}: now showing the lab as it is; redo anything unfinished"));
            }
            Err(e) => self.error(e),
        }
    }

    /// Opens the recompute's confirmation from a fresh preview, unless nothing would change or
    /// the user is busy in a form (then the preview waits on screen for another A).
    pub(super) fn ask_to_recompute(&mut self, r: &RecomputeReport) {
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
        lines.extend(units::crossing_lines(&r.threshold_crossings));
        lines.push("The old values stay in the record, superseded; the audit log notes the run.".into());
        self.mode = Mode::Confirm(Box::new(super::app::Confirm::new(
            "Recompute stale values?",
            lines,
            super::app::Pending::Recompute,
        )));
    }
}

impl App {
    /// Asks whether the lab was restored (or its file replaced) while the UI had it open, and
    /// whether others wrote to it: the answer reopens the lab at its path and says so, instead
    /// of writing into a file nobody looks at, or shows others' writes. Every write also checks
    /// this under its lock, so nothing slips in before the UI looks. The event loop asks every
    /// two seconds; the answer comes through [`App::poll_workers`].
    pub fn check_lab(&mut self) {
        self.ask(Read::Check, Then::Check, None);
    }

    /// Takes what the workers reported, and asks for the lab check every two seconds.
    pub fn poll_workers(&mut self) {
        if self.last_lab_check.elapsed() >= std::time::Duration::from_secs(2) {
            self.last_lab_check = std::time::Instant::now();
            self.check_lab();
        }
        self.drain_notes();
        self.worker_gone();
    }

    /// A worker that ended (it cannot, short of a bug outside its handlers) answers nothing
    /// more: what was waiting for it is let go and the person told, rather than "working…"
    /// for ever.
    fn worker_gone(&mut self) {
        if self.asked.any() && !self.worker.alive() {
            self.drain_notes();
            if self.asked.any() {
                self.asked = Asked::default();
                self.error("the UI's worker stopped: quit and open the lab again");
            }
        }
    }

    /// Takes every report waiting, asking nothing.
    pub(super) fn drain_notes(&mut self) {
        while let Ok(n) = self.rx.try_recv() {
            self.on_note(n);
        }
    }

    pub(super) fn on_note(&mut self, n: Note) {
        match n {
            Note::Answer(seq, reply) => self.take_answer(seq, *reply),
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
