//! Importing a folder of exports as aliquots of a batch: the files grouped into aliquots by
//! their names (kind, minutes, stage), or (`--series`) every spectrum of every file as an
//! aliquot of a series. Promises: one transaction, all or nothing; files already in the batch
//! are skipped and reported, never logged twice.

use crate::error::{Error, Result};
use crate::spectra::{self, RawSpectrum, ReadOptions, quantity};
use crate::store::Store;
use crate::store::model::{self, NewAliquot};
use std::path::{Path, PathBuf};

use super::times::minutes_in;
use super::watch::kind_of_file;
use super::{Door, PlSetup, SpectrumFile, log_series, new_spectrum, read_for_logging, read_series_for_logging};

/// Imports every file of a folder as a series (`import --series`): each spectrum of each file
/// becomes an aliquot, timed by its label (or, for a file of one spectrum, by its name). All
/// or nothing; spectra already in the batch are skipped and reported.
fn import_series(
    store: &mut Store,
    batch_id: i64,
    folder: &Path,
    template: &NewAliquot,
    pl: PlSetup,
    door: &Door,
    mut progress: impl FnMut(usize, usize),
) -> Result<ImportReport> {
    let mut paths: Vec<PathBuf> = std::fs::read_dir(folder)
        .map_err(|e| Error::Invalid(format!("cannot read folder {}: {e}", folder.display())))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file() && !p.file_name().is_some_and(|n| n.to_string_lossy().starts_with('.')))
        // The lab itself may live in the folder: its files are never opened as spectra.
        .filter(|p| !crate::open_labs::is_open_lab(p))
        .collect();
    paths.sort();
    if paths.is_empty() {
        return Err(Error::Invalid(format!("no spectrum files in {}", folder.display())));
    }
    let workers = std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(1)
        .min(8);
    let read = crate::par::parallel_map(
        &paths,
        workers,
        |p| -> Result<(SpectrumFile, Vec<RawSpectrum>, String)> {
            let name = p
                .file_stem()
                .map(|n| n.to_string_lossy().to_ascii_lowercase())
                .unwrap_or_default();
            let kind = match quantity::kind_from_name(&name) {
                Some(k) => k.as_str(),
                None => {
                    let bytes = spectra::file_bytes(p)?;
                    let first = spectra::read_all(&p.display().to_string(), &bytes, &ReadOptions::default())?;
                    first
                        .first()
                        .and_then(|r| quantity::infer_kind(&name, r).kind)
                        .map(|k| k.as_str())
                        .ok_or_else(|| {
                            Error::Invalid(format!(
                                "{}: cannot tell whether it is absorbance, PL or PLE; name it with abs, pl or ple",
                                p.display()
                            ))
                        })?
                }
            };
            let file = pl.file(p.clone(), kind);
            if kind == "pl" && pl.excitation_nm.is_none() {
                return Err(Error::Invalid(format!("PL file {} needs --excitation-nm", p.display())));
            }
            let (spectra, sha) = read_series_for_logging(p, &ReadOptions::default(), kind, door.kind_as_is)?;
            Ok((file, spectra, sha))
        },
    );
    let read: Vec<_> = read.into_iter().collect::<Result<_>>()?;
    let total = read.len();
    store.write(|tx, who| {
        model::get_batch(tx, batch_id)?;
        let mut report = ImportReport::default();
        for (i, (file, spectra, sha)) in read.iter().enumerate() {
            let ids = log_series(tx, who, template, file, spectra, sha, door, Some(&mut report.skipped))?;
            report.aliquots.extend(ids);
            progress(i + 1, total);
        }
        crate::lab::derivation::refresh_vials(tx, Some(batch_id), false)?;
        Ok(report)
    })
}

/// One aliquot's worth of files found in a folder.
#[derive(Debug, Clone)]
pub struct FolderGroup {
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub files: Vec<SpectrumFile>,
}

/// Groups a folder's exports by the minutes (or stage) in their names: a name holding "pl"
/// (not "ple") is PL, "ple" is PL excitation, anything else absorbance; "05min", "t5" or a
/// bare number give minutes; "crude" or "washed" a stage.
pub fn group_folder(folder: &Path, excitation_nm: Option<f64>) -> Result<Vec<FolderGroup>> {
    let mut entries: Vec<PathBuf> = std::fs::read_dir(folder)
        .map_err(|e| Error::Invalid(format!("cannot read folder {}: {e}", folder.display())))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file() && !p.file_name().is_some_and(|n| n.to_string_lossy().starts_with('.')))
        // The lab itself may live in the folder: its files are never opened as spectra.
        .filter(|p| !crate::open_labs::is_open_lab(p))
        .collect();
    entries.sort();
    let mut groups: Vec<FolderGroup> = Vec::new();
    for p in entries {
        let name = p
            .file_stem()
            .map(|s| s.to_string_lossy().to_ascii_lowercase())
            .unwrap_or_default();
        let kind = match quantity::kind_from_name(&name) {
            Some(k) => k.as_str(),
            None => kind_of_file(&p)?,
        };
        let stage = ["crude", "washed", "purified", "final"]
            .iter()
            .find(|s| name.contains(*s))
            .map(|s| s.to_string());
        let minutes = if stage.is_some() { None } else { minutes_in(&name) };
        if minutes.is_none() && stage.is_none() {
            return Err(Error::Invalid(format!(
                "cannot tell the minutes or stage of {} (name it like abs_05min.csv or pl_washed.csv)",
                p.display()
            )));
        }
        let file = PlSetup::excited_at(excitation_nm).file(p, kind);
        match groups.iter_mut().find(|g| g.minutes == minutes && g.stage == stage) {
            Some(g) => {
                if g.files.iter().any(|f| f.kind == kind) {
                    return Err(Error::Invalid(format!(
                        "two {kind} files for the same aliquot: {} and {}",
                        g.files
                            .iter()
                            .find(|f| f.kind == kind)
                            .map(|f| f.path.display().to_string())
                            .unwrap_or_default(),
                        file.path.display()
                    )));
                }
                g.files.push(file)
            }
            None => groups.push(FolderGroup {
                minutes,
                stage,
                files: vec![file],
            }),
        }
    }
    groups.sort_by(|a, b| a.minutes.unwrap_or(f64::MAX).total_cmp(&b.minutes.unwrap_or(f64::MAX)));
    Ok(groups)
}

/// Imports a folder as aliquots of a batch in one transaction: all or nothing.
/// What importing a folder did: the aliquots made and the files skipped as already logged.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct ImportReport {
    pub aliquots: Vec<i64>,
    pub skipped: Vec<String>,
}

pub fn import_folder(
    store: &mut Store,
    batch_id: i64,
    folder: &Path,
    template: &NewAliquot,
    pl: PlSetup,
    door: &Door,
    mut progress: impl FnMut(usize, usize),
) -> Result<ImportReport> {
    if door.series {
        return import_series(store, batch_id, folder, template, pl, door, progress);
    }
    let mut groups = group_folder(folder, pl.excitation_nm)?;
    for f in groups.iter_mut().flat_map(|g| g.files.iter_mut()) {
        if f.kind == "pl" {
            f.cuvette = pl.cuvette;
        }
    }
    if groups.is_empty() {
        return Err(Error::Invalid(format!("no spectrum files in {}", folder.display())));
    }
    if let Some(f) = groups
        .iter()
        .flat_map(|g| &g.files)
        .find(|f| f.kind == "pl" && f.excitation_nm.is_none())
    {
        return Err(Error::Invalid(format!(
            "PL file {} needs --excitation-nm",
            f.path.display()
        )));
    }
    // Every file is read and put through the door before the transaction opens, on every core;
    // the first refusal (in folder order) stops the import with nothing written.
    let all: Vec<&SpectrumFile> = groups.iter().flat_map(|g| &g.files).collect();
    let workers = std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(1)
        .min(8);
    let mut results = crate::par::parallel_map(&all, workers, |f| {
        read_for_logging(&f.path, &ReadOptions::default(), f.kind, door.kind_as_is)
    })
    .into_iter();
    let mut read = Vec::new();
    for g in &groups {
        let mut files = Vec::new();
        for f in &g.files {
            let r = results
                .next()
                .ok_or_else(|| Error::Invalid(format!("{} was not read", f.path.display())))??;
            files.push((f.clone(), r));
        }
        read.push((g, files));
    }
    let total = read.len();
    store.write(|tx, who| {
        model::get_batch(tx, batch_id)?;
        let mut report = ImportReport::default();
        for (i, (g, files)) in read.iter().enumerate() {
            // A file already in the batch is skipped and reported (a folder imported twice);
            // an aliquot none of whose files are new is not made at all.
            let fresh: Vec<_> = files
                .iter()
                .filter(|(f, (raw, sha))| {
                    let dup = !door.again
                        && model::spectrum_in_batch(tx, batch_id, sha, raw.label.as_deref())
                            .ok()
                            .flatten()
                            .is_some();
                    if dup {
                        report.skipped.push(f.path.display().to_string());
                    }
                    !dup
                })
                .collect();
            if fresh.is_empty() {
                progress(i + 1, total);
                continue;
            }
            let a = NewAliquot {
                batch_id,
                minutes: g.minutes,
                stage: g.stage.clone(),
                ..template.clone()
            };
            crate::derive::solvents::check(&a.solvent)?;
            let id = model::insert_aliquot(tx, who, &a)?;
            for (f, (raw, sha)) in fresh {
                model::insert_spectrum(tx, who, &new_spectrum(Some(id), f, raw, sha))?;
            }
            crate::lab::derivation::derive_aliquot(tx, id)?;
            report.aliquots.push(id);
            progress(i + 1, total);
        }
        crate::lab::derivation::refresh_vials(tx, Some(batch_id), false)?;
        Ok(report)
    })
}
