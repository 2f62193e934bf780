//! What each request to the UI's worker does, and the long jobs. The reads read one
//! snapshot each (a sheet with its spectra and bench defaults; every list at once); the writes
//! go through the `lab`, `corrections` and `bench` actions exactly as the forms called them
//! before, and say what they did as the status line shows it. The long jobs (recompute, import,
//! handover) keep threads of their own and report over the same channel. Every call into the
//! derivation engine is in this file, so a rename there is one edit here.

use super::worker::{
    BenchDefaults, Checked, HandoverCounts, Lists, Note, Read, Reply, SheetData, SheetError, TrailAsk, Write, Wrote,
};
use crate::lab::bench;
use crate::report;
use crate::search;
use crate::store::{Db, Store, model};
use crate::vocab::{BatchStatus, LocationKind};
use chrono::{DateTime, FixedOffset};
use std::path::PathBuf;
use std::sync::mpsc::Sender;

/// The recompute's report, under the one name the UI uses for it.
pub type RecomputeReport = crate::lab::derivation::RecomputeReport;

// ---------------------------------------------------------------- reads

pub(super) fn read(store: &mut Store, r: &Read) -> Reply {
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
            stale_batches: crate::report::stale_batches(c)?,
            calibrations: crate::lab::calibrations::history(c)?,
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
        Ok(Some((how, what))) => {
            let fresh = crate::lab::reopen(store).map_err(|e| format!("{what}; reopening failed: {e}"))?;
            *store = fresh.sibling().map_err(|e| format!("{what}; reopening failed: {e}"))?;
            Ok(Checked::Reopened(Box::new(fresh), how))
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
        .filter(|b| {
            b.operator.as_deref() == Some(from) && matches!(b.status, BatchStatus::Planned | BatchStatus::Growing)
        })
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
        super::units::words(v.status.as_str())
    )
}

pub(super) fn write(store: &mut Store, w: &Write) -> Result<Wrote, String> {
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
            let v = crate::lab::corrections::reinstate_vial(store, *vial, why).map_err(e)?;
            said(format!(
                "vial {} is back: {} mL at {}",
                v.label,
                super::units::ml(v.volume_ml),
                v.location
            ))
        }
        Write::ChangeCurve { material, curve, why } => {
            let (v, _) = crate::lab::calibrations::change(store, why, &|tx, body| {
                let core = model::material_by_name(tx, material)?.core;
                body.set_curve(&core, curve);
                Ok(())
            })
            .map_err(e)?;
            said(format!("calibration version {v}; press p to preview the recompute"))
        }
        Write::AliquotVoid { aliquot, void, why } => {
            let a = crate::lab::corrections::set_aliquot_void(store, *aliquot, *void, why).map_err(e)?;
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
            crate::lab::corrections::edit_aliquot(store, *aliquot, &ed, why).map_err(e)?;
            with_sheet(
                store,
                format!("aliquot {aliquot} corrected and recomputed"),
                before.batch_id,
            )
        }
        Write::BatchVoid { batch, void, why } => {
            crate::lab::corrections::set_batch_void(store, *batch, *void, why).map_err(e)?;
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
            crate::lab::corrections::move_spectrum(store, spectrum.id, *to, why).map_err(e)?;
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
                match place.as_str() {
                    "" => None,
                    p => Some((p, kind.parse::<LocationKind>().map_err(crate::Error::from).map_err(e)?)),
                },
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
            store.read(|c| crate::lab::derivation::recompute(c, false, true, p))
        } else {
            crate::lab::derivation::recompute_now(&mut store, false, p)
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
