//! Bench operations shared by the command line and the terminal UI: logging an aliquot from
//! spectrum files (read, check, store, derive, all in one transaction) and importing a folder
//! of exports as a growth series. Files are read and checked before the transaction opens, so
//! a bad file leaves the database exactly as it was.
//!
//! Here: logging an aliquot (or a series of them) from files, and adding a spectrum to an
//! aliquot, with the door every file passes and the duplicate check. Beside them: `folder`
//! (import a folder), `watch` (a watched folder's files, settled before they are read, and
//! logged as they come), `vial` (measure a vial), `preview` (what a file holds, before it is
//! logged) and `times` (the minutes a file name or column header states).

mod folder;
mod preview;
mod times;
mod vial;
mod watch;

use crate::derive::growth;
use crate::error::{Error, Result};
use crate::spectra::{self, RawSpectrum, ReadOptions, quantity};
use crate::store::Store;
use crate::store::model::{self, NewAliquot, NewSpectrum};
use std::path::{Path, PathBuf};

pub use folder::FolderGroup;
pub use folder::ImportReport;
pub use folder::group_folder;
pub use folder::import_folder;
pub use preview::FilePreview;
pub use preview::PREVIEW_MAX_BYTES;
pub use preview::preview_file;
use times::minutes_in;
pub use times::minutes_in_header;
pub use times::minutes_in_name;
pub use vial::VialMeasurement;
pub use vial::measure_vial;
pub use watch::FileLook;
pub use watch::FolderWatch;
pub use watch::WATCH_SETTLE;
pub use watch::WatchEvent;
pub use watch::WatchLogged;
pub use watch::WatchSetup;
pub use watch::folder_looks;
pub use watch::kind_of_file;
pub use watch::log_watched_file;
pub use watch::watched_minutes;

/// What the user said about files that the door would stop.
#[derive(Debug, Clone, Copy, Default)]
pub struct Door {
    /// Log a file whose SHA-256 is already in the batch.
    pub again: bool,
    /// Keep a file as the kind given even when its header or values say otherwise.
    pub kind_as_is: bool,
    /// Take every spectrum of a several-sample file (each column, each block) as its own aliquot.
    pub series: bool,
}

/// A spectrum file to attach, with its kind.
#[derive(Debug, Clone, Default)]
pub struct SpectrumFile {
    pub path: PathBuf,
    pub kind: &'static str,
    pub excitation_nm: Option<f64>,
    /// The spectrum's own cuvette when it was measured in another than the aliquot's: a PL
    /// spectrum taken in a 1 cm fluorescence cuvette at its own dilution while the absorbance
    /// was read in a 0.2 cm one. None: not recorded (the engine says what it takes then).
    pub cuvette: OwnCuvette,
}

/// The path and dilution a spectrum was measured at, when given apart from the aliquot's.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct OwnCuvette {
    pub path_cm: Option<f64>,
    pub dilution_factor: Option<f64>,
}

impl OwnCuvette {
    /// Refuses a path that is not above zero (or beyond 100 cm) and a dilution below 1 (or
    /// beyond 1e6), naming each with `path_name` and `dilution_name` (the flags they came from),
    /// the same bounds an aliquot's own cuvette is held to.
    pub fn checked(self, path_name: &str, dilution_name: &str) -> Result<OwnCuvette> {
        if let Some(p) = self.path_cm
            && !(p.is_finite() && p > 0.0 && p <= 100.0)
        {
            return Err(Error::Invalid(format!(
                "{path_name} must be a path length above 0 and at most 100 cm, got {p}"
            )));
        }
        if let Some(d) = self.dilution_factor
            && !(d.is_finite() && (1.0..=1e6).contains(&d))
        {
            return Err(Error::Invalid(format!(
                "{dilution_name} must be a dilution factor of 1 or more (at most 1e6), got {d}"
            )));
        }
        Ok(self)
    }
}

/// How the PL spectra of an import were measured: the excitation wavelength, and the PL
/// cuvette's own path and dilution when they were given.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct PlSetup {
    pub excitation_nm: Option<f64>,
    pub cuvette: OwnCuvette,
}

impl PlSetup {
    /// Excited at `excitation_nm`, the PL cuvette not recorded apart from the aliquot's.
    pub fn excited_at(excitation_nm: Option<f64>) -> PlSetup {
        PlSetup {
            excitation_nm,
            cuvette: OwnCuvette::default(),
        }
    }

    /// What a file of `kind` carries of this setup: all of it for PL, nothing otherwise.
    fn file(&self, path: PathBuf, kind: &'static str) -> SpectrumFile {
        let pl = kind == "pl";
        SpectrumFile {
            path,
            kind,
            excitation_nm: if pl { self.excitation_nm } else { None },
            cuvette: if pl { self.cuvette } else { OwnCuvette::default() },
        }
    }
}

/// Reads and checks a file for import: it must read and be a plausible UV-Vis-NIR spectrum.
pub fn read_checked(path: &Path, opts: &ReadOptions) -> Result<(RawSpectrum, String)> {
    let (raw, sha) = spectra::read_file(path, opts)?;
    raw.to_trace(&path.display().to_string(), None)?;
    Ok((raw, sha))
}

/// Reads a file to be logged as `kind` and puts it through the door: a file whose own header
/// or values say it is something else is refused (unless `kind_as_is`), %T and reflectance are
/// taken as absorbance when the file says so, absurd and non-finite values never pass. The
/// returned spectrum carries the y unit analysis must read it with.
pub fn read_for_logging(
    path: &Path,
    opts: &ReadOptions,
    kind: &str,
    kind_as_is: bool,
) -> Result<(RawSpectrum, String)> {
    let (mut raw, sha) = read_checked(path, opts)?;
    // A label tells apart the spectra of one file: kept when one of several was chosen.
    if opts.column.is_none() && opts.block.is_none() {
        raw.label = None;
    }
    Ok((admit(path, raw, kind, kind_as_is)?, sha))
}

/// Every spectrum of a file (a several-sample export, a JCAMP-DX file of several blocks), each
/// through the door, with the file's SHA-256; each keeps its label.
pub fn read_series_for_logging(
    path: &Path,
    opts: &ReadOptions,
    kind: &str,
    kind_as_is: bool,
) -> Result<(Vec<RawSpectrum>, String)> {
    let name = path.display().to_string();
    let bytes = spectra::file_bytes(path)?;
    let all = spectra::read_all(&name, &bytes, opts)?;
    let mut out = Vec::with_capacity(all.len());
    for (i, raw) in all.into_iter().enumerate() {
        raw.to_trace(&name, None)?;
        let mut raw = admit(path, raw, kind, kind_as_is)?;
        if raw.label.as_deref().is_none_or(|l| l.trim().is_empty()) {
            raw.label = Some(format!("spectrum {}", i + 1));
        }
        out.push(raw);
    }
    Ok((out, spectra::sha256_hex(&bytes)))
}

/// The door for one spectrum read from `path` to be logged as `kind`.
fn admit(path: &Path, mut raw: RawSpectrum, kind: &str, kind_as_is: bool) -> Result<RawSpectrum> {
    let k = quantity::SpectrumKind::parse(kind)
        .ok_or_else(|| Error::Invalid(format!("unknown spectrum kind '{kind}' (abs, pl, ple)")))?;
    let file = match &raw.label {
        Some(l) => format!("{} [{l}]", path.display()),
        None => path.display().to_string(),
    };
    match quantity::admit(&file, &raw, k, kind_as_is).into_result()? {
        quantity::Verdict::Accept { y_unit, warnings } | quantity::Verdict::Convert { y_unit, warnings, .. } => {
            raw.y_unit = y_unit;
            raw.warnings.extend(warnings);
        }
        quantity::Verdict::Refuse { message, .. } => return Err(Error::Invalid(message)),
    }
    Ok(raw)
}

/// Refuses a file whose bytes are already logged in the batch (a folder imported twice, the
/// same export picked again), naming where it is; `again` lets it through.
fn refuse_duplicate(tx: &crate::store::Db, batch_id: i64, path: &Path, sha: &str, label: Option<&str>) -> Result<()> {
    if let Some((sid, aid)) = model::spectrum_in_batch(tx, batch_id, sha, label)? {
        return Err(Error::Invalid(format!(
            "{}{} is already logged in batch {batch_id} (spectrum {sid} of aliquot {aid}, same SHA-256); give --again to log it twice",
            path.display(),
            label.map(|l| format!(" [{l}]")).unwrap_or_default()
        )));
    }
    Ok(())
}

/// Logs one aliquot with its spectra and derives its values. Returns the summary.
pub fn add_aliquot(
    store: &mut Store,
    a: &NewAliquot,
    files: &[SpectrumFile],
    opts: &ReadOptions,
    door: &Door,
) -> Result<growth::AliquotSummary> {
    if files.is_empty() {
        return Err(Error::Invalid(
            "an aliquot needs at least one spectrum (--abs, --pl or --ple)".into(),
        ));
    }
    let mut read = Vec::new();
    for f in files {
        if f.kind == "pl" && f.excitation_nm.is_none() {
            return Err(Error::Invalid(format!(
                "PL file {} needs its excitation wavelength (--excitation-nm)",
                f.path.display()
            )));
        }
        read.push((f, read_for_logging(&f.path, opts, f.kind, door.kind_as_is)?));
    }
    store.write(|tx, who| {
        if !door.again {
            for (f, (raw, sha)) in &read {
                refuse_duplicate(tx, a.batch_id, &f.path, sha, raw.label.as_deref())?;
            }
        }
        crate::derive::solvents::check(&a.solvent)?;
        let id = model::insert_aliquot(tx, who, a)?;
        // The spectra just read are analysed as they are in memory: nothing is read back or
        // decoded from the BLOBs written here.
        let mut written = Vec::with_capacity(read.len());
        for (f, (raw, sha)) in &read {
            let s = new_spectrum(Some(id), f, raw, sha);
            let sid = model::insert_spectrum(tx, who, &s)?;
            written.push(s.into_row(sid));
        }
        crate::lab::derivation::derive_new_aliquot(tx, id, &written)?;
        // A new aliquot may be the batch's product now: its vials' estimates follow.
        crate::lab::derivation::refresh_vials(tx, Some(a.batch_id), false)?;
        let row = model::get_aliquot(tx, id)?;
        crate::report::aliquot_summary(tx, &row)
    })
}

pub fn new_spectrum(aliquot_id: Option<i64>, f: &SpectrumFile, raw: &RawSpectrum, sha: &str) -> NewSpectrum {
    NewSpectrum {
        aliquot_id,
        vial_id: None,
        kind: f.kind.to_string(),
        x_unit: raw.x_unit.clone(),
        y_unit: raw.y_unit.clone(),
        x: raw.x.clone(),
        y: raw.y.clone(),
        file_name: f
            .path
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default(),
        sha256: sha.to_string(),
        excitation_nm: f.excitation_nm,
        instrument: None,
        dilution_factor: f.cuvette.dilution_factor,
        path_cm: f.cuvette.path_cm,
        label: raw.label.clone(),
    }
}

/// Logs every spectrum of one file as a growth series in one transaction: one aliquot per
/// spectrum (a sample column, a JCAMP-DX block), timed by its label where the label states a
/// time with its unit ("20 s", "5 min"), else given the label as its stage.
pub fn add_series(
    store: &mut Store,
    template: &NewAliquot,
    file: &SpectrumFile,
    opts: &ReadOptions,
    door: &Door,
) -> Result<Vec<growth::AliquotSummary>> {
    if file.kind == "pl" && file.excitation_nm.is_none() {
        return Err(Error::Invalid(format!(
            "PL file {} needs its excitation wavelength (--excitation-nm)",
            file.path.display()
        )));
    }
    let (spectra, sha) = read_series_for_logging(&file.path, opts, file.kind, door.kind_as_is)?;
    store.write(|tx, who| {
        let ids = log_series(tx, who, template, file, &spectra, &sha, door, None)?;
        crate::lab::derivation::refresh_vials(tx, Some(template.batch_id), false)?;
        ids.iter()
            .map(|id| crate::report::aliquot_summary(tx, &model::get_aliquot(tx, *id)?))
            .collect()
    })
}

/// The aliquots of one file's spectra, inside the caller's transaction. `fallback_minutes` times
/// a lone spectrum whose label states no time (the minutes in its file name). Spectra already
/// in the batch are skipped and named in `skipped` when one is given, else refused.
#[allow(clippy::too_many_arguments)]
fn log_series(
    tx: &crate::store::Db,
    who: &str,
    template: &NewAliquot,
    file: &SpectrumFile,
    spectra: &[RawSpectrum],
    sha: &str,
    door: &Door,
    mut skipped: Option<&mut Vec<String>>,
) -> Result<Vec<i64>> {
    let mut ids = Vec::new();
    let lone = spectra.len() == 1;
    for raw in spectra {
        let label = raw.label.clone().unwrap_or_default();
        if !door.again {
            match skipped.as_deref_mut() {
                Some(list) => {
                    if model::spectrum_in_batch(tx, template.batch_id, sha, raw.label.as_deref())?.is_some() {
                        list.push(format!("{} [{label}]", file.path.display()));
                        continue;
                    }
                }
                None => refuse_duplicate(tx, template.batch_id, &file.path, sha, raw.label.as_deref())?,
            }
        }
        let name_minutes = file
            .path
            .file_stem()
            .and_then(|n| minutes_in(&n.to_string_lossy().to_ascii_lowercase()));
        let (minutes, stage) = match minutes_in_header(&label) {
            Some(m) => (Some(m), None),
            None if lone && name_minutes.is_some() => (name_minutes, None),
            None => (None, Some(label.chars().take(60).collect::<String>())),
        };
        let a = NewAliquot {
            minutes,
            stage,
            ..template.clone()
        };
        crate::derive::solvents::check(&a.solvent)?;
        let id = model::insert_aliquot(tx, who, &a)?;
        model::insert_spectrum(tx, who, &new_spectrum(Some(id), file, raw, sha))?;
        crate::lab::derivation::derive_aliquot(tx, id)?;
        ids.push(id);
    }
    Ok(ids)
}

/// Adds one spectrum to an aliquot already logged (the PL export that arrives after its
/// absorbance, say), in one transaction, and derives the aliquot's values again. An aliquot
/// holds one spectrum of each kind: a second of the same kind is refused, naming the first.
pub fn add_spectrum_to_aliquot(
    store: &mut Store,
    aliquot_id: i64,
    f: &SpectrumFile,
    opts: &ReadOptions,
    door: &Door,
) -> Result<growth::AliquotSummary> {
    if f.kind == "pl" && f.excitation_nm.is_none() {
        return Err(Error::Invalid(format!(
            "PL file {} needs its excitation wavelength",
            f.path.display()
        )));
    }
    let (raw, sha) = read_for_logging(&f.path, opts, f.kind, door.kind_as_is)?;
    store.write(|tx, who| {
        let row = model::get_aliquot(tx, aliquot_id)?;
        if let Some(s) = model::spectra_of_aliquot(tx, aliquot_id)?
            .into_iter()
            .find(|s| s.kind == f.kind)
        {
            return Err(Error::Invalid(format!(
                "aliquot {aliquot_id} already has a {} spectrum ({}); void the aliquot and log both again",
                f.kind, s.file_name
            )));
        }
        if !door.again {
            refuse_duplicate(tx, row.batch_id, &f.path, &sha, raw.label.as_deref())?;
        }
        model::insert_spectrum(tx, who, &new_spectrum(Some(aliquot_id), f, &raw, &sha))?;
        crate::lab::derivation::derive_aliquot(tx, aliquot_id)?;
        crate::lab::derivation::refresh_vials(tx, Some(row.batch_id), false)?;
        let row = model::get_aliquot(tx, aliquot_id)?;
        crate::report::aliquot_summary(tx, &row)
    })
}

#[cfg(test)]
mod tests;
