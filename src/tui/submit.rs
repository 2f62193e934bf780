//! What each form does when it is saved: its fields read and checked (numbers with a decimal
//! point or comma, a reason where the record keeps one, the first run's name as `--as` would
//! take it), then its write handed to the worker, or its long job started. Errors found here
//! come back at once with the form still open; the worker's answer finishes the form or brings
//! it back (see `replies`).

use super::app::App;
use super::forms::{Form, FormKind};
use super::jobs;
use super::replies::{Opening, Then};
use super::units;
use super::worker::{AliquotFields, Read, Write};
use crate::lab::bench::{self, SpectrumFile};
use crate::store::model;
use crate::vocab::{BatchStatus, LocationKind, Vocabulary};
use std::path::PathBuf;

/// What saving a form led to.
pub(super) enum Saved {
    /// Done at once (a long job started, a watch begun): what to say.
    Done(String),
    /// Asked of the worker: its answer finishes the form, or brings it back.
    Sent,
}

fn number(f: &Form, label: &str) -> Result<Option<f64>, String> {
    units::parse_number(label, &f.get(label))
}

/// The handover pack's folder: a new folder named for the two people inside the one given.
pub(super) fn handover_dir(dir: &str, from: &str, to: &str) -> PathBuf {
    PathBuf::from(dir).join(format!(
        "handover-{}-to-{}",
        from.replace(' ', "_"),
        to.replace(' ', "_")
    ))
}

impl App {
    /// Sends a form's write to the worker; its answer finishes the form or brings it back.
    fn save(&mut self, f: &Form, w: Write) -> Result<Saved, String> {
        let then = Then::Saved {
            form: f.clone(),
            view: self.view,
            watch: None,
        };
        self.send(w, then, format!("saving: {}", f.title));
        Ok(Saved::Sent)
    }

    /// Carries out a form: reads and checks its fields, then hands the write to the worker
    /// (or starts the long job). Errors found here come back at once; the form stays open.
    pub(super) fn submit(&mut self, f: &Form) -> Result<Saved, String> {
        let why = || f.get("why");
        let some = |s: String| Some(s).filter(|s| !s.is_empty());
        match f.kind {
            FormKind::NewBatch => {
                let nb = model::NewBatch {
                    name: f.get("name"),
                    material: f.get("material"),
                    recipe: some(f.get("recipe")),
                    operator: some(f.get("operator")),
                    status: Some(BatchStatus::Growing),
                    ..Default::default()
                };
                self.save(f, Write::NewBatch(nb))
            }
            FormKind::AddAliquot => {
                let batch = f.target.ok_or("no batch open")?;
                let mut files = Vec::new();
                let ex = number(f, "excitation nm")?;
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
                let aliquot = model::NewAliquot {
                    batch_id: batch,
                    minutes: number(f, "minutes")?,
                    stage: some(f.get("stage")),
                    dilution_factor: number(f, "dilution")?.unwrap_or(1.0),
                    path_cm: number(f, "path cm")?.unwrap_or(1.0),
                    solvent: f.get("solvent"),
                    taken_at: None,
                };
                self.save(f, Write::AddAliquot { aliquot, files })
            }
            FormKind::NewVial => {
                let batch = f.target.ok_or("no batch open")?;
                let ml = number(f, "mL")?.ok_or("mL: give the volume")?;
                let nv = model::NewVial {
                    batch_id: batch,
                    label: some(f.get("label")),
                    volume_ml: ml,
                    solvent: f.get("solvent"),
                    location: f.get("location"),
                    position: None,
                    owner: None,
                    concentration_molar: None,
                    created_at: None,
                };
                self.save(f, Write::NewVial(nv))
            }
            FormKind::Draw | FormKind::Move | FormKind::Dispose => {
                let vial = f.target.ok_or("no vial selected")?;
                let w = match f.kind {
                    FormKind::Draw => {
                        let ml = number(f, "mL")?.ok_or("mL: give the volume to draw")?;
                        Write::Draw {
                            vial,
                            ml,
                            why: some(why()),
                        }
                    }
                    FormKind::Move => Write::Move {
                        vial,
                        to: f.get("to"),
                        position: some(f.get("position")),
                    },
                    _ => Write::Dispose { vial, why: why() },
                };
                self.save(f, w)
            }
            FormKind::ChangeCurve => {
                let w = Write::ChangeCurve {
                    material: f.get("material"),
                    curve: f.get("curve"),
                    why: why(),
                };
                self.save(f, w)
            }
            FormKind::VoidAliquot | FormKind::ReinstateAliquot => {
                let aliquot = f.target.ok_or("no aliquot")?;
                let void = f.kind == FormKind::VoidAliquot;
                self.save(
                    f,
                    Write::AliquotVoid {
                        aliquot,
                        void,
                        why: why(),
                    },
                )
            }
            FormKind::EditAliquot => {
                let aliquot = f.target.ok_or("no aliquot")?;
                let fields = AliquotFields {
                    minutes: number(f, "minutes")?,
                    stage: some(f.get("stage")),
                    dilution: number(f, "dilution")?,
                    path_cm: number(f, "path cm")?,
                    solvent: f.get("solvent"),
                };
                self.save(
                    f,
                    Write::EditAliquot {
                        aliquot,
                        fields,
                        why: why(),
                    },
                )
            }
            FormKind::VoidBatch | FormKind::ReinstateBatch => {
                let batch = f.target.ok_or("no batch")?;
                let void = f.kind == FormKind::VoidBatch;
                self.save(
                    f,
                    Write::BatchVoid {
                        batch,
                        void,
                        why: why(),
                    },
                )
            }
            FormKind::MoveSpectrum => {
                let from = f.target.ok_or("no aliquot")?;
                let to: i64 = f
                    .get("to aliquot")
                    .parse()
                    .map_err(|_| format!("to aliquot: '{}' is not an aliquot id", f.get("to aliquot")))?;
                let w = Write::MoveSpectrum {
                    from,
                    kind: f.get("kind"),
                    to,
                    batch: self.selected_batch().unwrap_or(0),
                    why: why(),
                };
                self.save(f, w)
            }
            FormKind::GoToBatch => {
                let id: i64 = f
                    .get("id")
                    .parse()
                    .map_err(|_| format!("id: '{}' is not a batch id", f.get("id")))?;
                let open = Opening {
                    from: self.view,
                    form: Some(f.clone()),
                };
                self.ask(
                    Read::Sheet(id),
                    Then::Sheet { id, open: Some(open) },
                    Some(format!("opening batch {id}")),
                );
                Ok(Saved::Sent)
            }
            FormKind::ReinstateVial => {
                let vial = f.target.ok_or("no vial")?;
                self.save(f, Write::ReinstateVial { vial, why: why() })
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
                if !place.is_empty() && kind.parse::<LocationKind>().is_err() {
                    return Err(format!(
                        "location kind: one of {} (got '{kind}')",
                        LocationKind::WORDS.join(", ")
                    ));
                }
                let sign = !name.is_empty() && name != self.store.actor && !self.writer.chosen;
                let w = Write::FirstRun {
                    name,
                    email,
                    place,
                    kind,
                    sign,
                    remember: self.writer.remember,
                };
                self.save(f, w)
            }
            FormKind::Handover => {
                let (from, to) = (f.get("from"), f.get("to"));
                let out = handover_dir(&f.get("pack folder"), &from, &to);
                if self.busy {
                    return Err("busy: wait for the running job".into());
                }
                jobs::spawn_handover(self.worker_store()?, from, to, out, self.tx.clone());
                self.busy = true;
                Ok(Saved::Done("handing over in the background".into()))
            }
            FormKind::Import => {
                let batch = f.target.ok_or("no batch open")?;
                let folder = PathBuf::from(f.get("folder"));
                let dilution = number(f, "dilution")?.unwrap_or(1.0);
                let ex = number(f, "excitation nm")?;
                jobs::spawn_import(
                    self.worker_store()?,
                    batch,
                    folder.clone(),
                    dilution,
                    ex,
                    self.tx.clone(),
                );
                self.busy = true;
                self.remember_folder(batch, &folder);
                Ok(Saved::Done("importing in the background".into()))
            }
            FormKind::Watch => {
                let batch = f.target.ok_or("no batch open")?;
                let folder = PathBuf::from(f.get("folder"));
                if !folder.is_dir() {
                    return Err(format!("folder: {} is not a folder", folder.display()));
                }
                let injected_at = super::watch::parse_injected(&f.get("injected at"), chrono::Local::now())?;
                let path_cm = number(f, "path cm")?.unwrap_or(1.0);
                let dilution_factor = number(f, "dilution")?.unwrap_or(1.0);
                bench::OwnCuvette {
                    path_cm: Some(path_cm),
                    dilution_factor: Some(dilution_factor),
                }
                .checked("path cm", "dilution")
                .map_err(|e| e.to_string())?;
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
                    excitation_nm: number(f, "excitation nm")?,
                };
                // The injection time is part of the batch's record: kept (audited) once given,
                // and the watch starts once it is kept.
                let r = match injected_at {
                    Some(at) => {
                        let then = Then::Saved {
                            form: f.clone(),
                            view: self.view,
                            watch: Some(setup),
                        };
                        self.send(Write::InjectionTime { batch, at }, then, format!("saving: {}", f.title));
                        Saved::Sent
                    }
                    None => Saved::Done(self.start_watch(setup)?),
                };
                self.remember_folder(batch, &folder);
                Ok(r)
            }
        }
    }
}
