//! What each key of a view does: the actions of the key table's view scopes (the batch list,
//! the sheet, the shelf, calibrations, the trail and the keys of every view). Opening a form or
//! a confirmation happens here, from what the app already holds in memory; what needs the lab
//! (a sheet, a repeat's summary, the trail's older entries) is asked of the worker, and the
//! answer opens it (see `replies`).

use super::app::{App, Mode, SORT_KEYS, View};
use super::forms::{Form, FormKind};
use super::jobs;
use super::keys::Action;
use super::picker::Picker;
use super::replies::Then;
use super::worker::{BenchDefaults, Read};
use super::{shelf, units};
use crate::vocab::VialStatus;
use std::path::PathBuf;

impl App {
    pub(super) fn act(&mut self, a: Action) {
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
                let ask = self.trail_ask();
                self.ask(
                    Read::Trail(ask),
                    Then::Trail { select: None },
                    Some("reading the trail".into()),
                );
            }
            Action::Back => {
                if self.view == View::Sheet {
                    self.view = View::Batches;
                }
            }
            Action::Open => {
                if let Some(id) = self.hits.get(self.selected).map(|h| h.id) {
                    self.open_sheet(id);
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
                Some(id) => {
                    let then = Then::Repeat { view: self.view };
                    self.ask(Read::Repeat(id), then, Some(format!("reading batch {id}")));
                }
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
                    let d = self.bench_for(id);
                    let form = Form::new(
                        FormKind::Import,
                        &format!("Import a folder of exports into {}", self.batch_words(id)),
                        &[
                            ("folder", &dir),
                            ("dilution", &units::plain(d.dilution)),
                            ("excitation nm", &d.excitation_nm.map(units::plain).unwrap_or_default()),
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
                    let d = self.bench_for(id);
                    let injected = d
                        .injected_at
                        .map(|d| d.with_timezone(&chrono::Local).format("%Y-%m-%d %H:%M:%S").to_string());
                    let form = Form::new(
                        FormKind::Watch,
                        &format!("Watch a folder for {}", self.batch_words(id)),
                        &[
                            ("folder", &dir),
                            ("injected at", &injected.unwrap_or_default()),
                            ("dilution", &units::plain(d.dilution)),
                            ("path cm", &units::plain(d.path_cm)),
                            ("solvent", &d.solvent),
                            ("excitation nm", &d.excitation_nm.map(units::plain).unwrap_or_default()),
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
            | Action::PickCancel
            | Action::PickFirst
            | Action::PickLast
            | Action::PathComplete
            | Action::PathGo
            | Action::PathStop
            | Action::HelpLineDown
            | Action::HelpLineUp
            | Action::HelpTop
            | Action::HelpBottom
            | Action::HelpClose
            | Action::LeaveSearch => {}
            Action::NewVial => match self.selected_batch() {
                None => self.error("no batch open"),
                Some(id) => {
                    let loc = self
                        .locations
                        .as_ref()
                        .and_then(|l| l.first().cloned())
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
                if v.status == VialStatus::Disposed {
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
                    let Some((a, batch)) = self
                        .sheet
                        .as_ref()
                        .and_then(|s| Some((s.aliquots.get(self.aliquot_selected)?.clone(), s.batch.id)))
                    else {
                        return self.error("no aliquot selected");
                    };
                    // Prefilled exactly as stored (the sheet's row is the aliquot's), so a field
                    // left alone is not a change.
                    let minutes = a.minutes.map(|m| m.to_string()).unwrap_or_default();
                    let stage = a.stage.clone().unwrap_or_default();
                    let (d, pcm) = (a.dilution_factor.to_string(), a.path_cm.to_string());
                    self.mode = Mode::Form(
                        Form::new(
                            FormKind::EditAliquot,
                            &format!("Correct aliquot {id} ({label}) of batch {batch}"),
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
                Some(v) if v.status == VialStatus::Disposed => {
                    let title = format!("Put vial {} ({}) back", v.id, v.label);
                    let id = v.id;
                    self.mode = Mode::Form(Form::new(FormKind::ReinstateVial, &title, &[("why", "")]).on(id));
                }
                Some(v) => self.error(format!("vial {} is not disposed of", v.label)),
                None => self.error("no vial selected (t shows disposed vials)"),
            },
        }
    }

    /// What the open batch's next aliquot is measured like and where its exports are (a batch
    /// other than the open one gets the defaults: 1, 1 cm, hexane, no folder kept).
    pub(super) fn bench_for(&self, batch: i64) -> BenchDefaults {
        match &self.sheet {
            Some(s) if s.batch.id == batch => self.bench.clone(),
            _ => BenchDefaults::default(),
        }
    }

    /// Where the picker (and the watch and import forms) open for a batch: the folder its
    /// exports last came from, else the last folder any batch's came from, else where cuvette
    /// was started.
    fn export_folder_for(&self, batch: i64) -> PathBuf {
        self.bench_for(batch).folder.unwrap_or_else(|| self.export_dir.clone())
    }

    /// Starts a recompute (or its preview) on a thread of its own, one job at a time.
    pub(super) fn spawn_recompute(&mut self, dry_run: bool) {
        if self.busy {
            self.error("busy: wait for the running job");
            return;
        }
        match self.worker_store() {
            Ok(store) => {
                jobs::spawn_recompute(store, dry_run, self.tx.clone());
                self.busy = true;
            }
            Err(e) => self.error(e),
        }
    }

    /// Starts watching a folder for a batch; says what it watches.
    pub(super) fn start_watch(&mut self, setup: crate::lab::bench::WatchSetup) -> Result<String, String> {
        if let Some(w) = &self.watching {
            return Err(format!(
                "already watching {} for batch {}; W stops it",
                w.folder.display(),
                w.batch
            ));
        }
        let store = self.worker_store()?;
        let (batch, folder) = (setup.batch, setup.folder.clone());
        let timing = if setup.injected_at.is_some() {
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
