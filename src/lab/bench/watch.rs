//! A watched folder: each file's look (size and modification time) followed until it has
//! held for [`WATCH_SETTLE`], its kind decided from its name and values, and each settled
//! file logged as it comes. Promises: a file that changes after it was read is reported,
//! never silently half-logged; a file whose kind cannot be placed is an error naming it.

use crate::derive::growth;
use crate::error::{Error, Result};
use crate::spectra::{ReadOptions, quantity};
use crate::store::Store;
use crate::store::model::{self, NewAliquot};
use std::path::{Path, PathBuf};

use super::times::minutes_in_name;
use super::{Door, SpectrumFile, add_aliquot, add_spectrum_to_aliquot, read_checked};

/// The kind of a spectrum file as the door decides it: the header first, then the name, then
/// the shape of the values; a file it cannot place is an error naming it (never "absorbance"
/// by default).
pub fn kind_of_file(path: &Path) -> Result<&'static str> {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let (raw, _) = read_checked(path, &ReadOptions::default())?;
    let inf = quantity::infer_kind(&name, &raw);
    match inf.kind {
        Some(k) => Ok(k.as_str()),
        None => Err(Error::Invalid(format!(
            "{}: cannot tell whether it is absorbance, PL or PLE ({}); name it with abs, pl or ple",
            path.display(),
            inf.evidence
        ))),
    }
}

/// How long a file in a watched folder must stay unchanged (size and modification time) before
/// it is read: spectrometer software often writes an export in bursts with pauses between them
/// (common practice among watch tools; a setting, not a source).
pub const WATCH_SETTLE: std::time::Duration = std::time::Duration::from_secs(3);

/// What a watched folder's file looks like at one look.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FileLook {
    pub size: u64,
    pub modified: Option<std::time::SystemTime>,
}

/// What the watch should do about a file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum WatchEvent {
    /// Unchanged for the settle time: read and log it now.
    Ready(PathBuf),
    /// Changed after it was logged (or refused): it was still being written. Carries the aliquot
    /// it became, if any.
    ChangedAfter(PathBuf, Option<i64>),
}

#[derive(Debug, Clone)]
enum WatchState {
    /// Being written or just arrived: last look and since when it has looked so.
    Settling(FileLook, std::time::Instant),
    /// Read (logged as the aliquot, or refused) as it looked then.
    Done(FileLook, Option<i64>),
    /// Present when watching began: not the watch's business unless it changes.
    Before(FileLook),
}

/// The pure part of watching a folder: decides from successive looks which files are complete.
/// A file is read only once its size and modification time have held for [`WATCH_SETTLE`]; one
/// that changes after it was read is reported, never silently half-logged.
#[derive(Debug, Default)]
pub struct FolderWatch {
    files: std::collections::HashMap<PathBuf, WatchState>,
}

impl FolderWatch {
    /// Starts watching: the files there now are left alone.
    pub fn new(present: &[(PathBuf, FileLook)]) -> FolderWatch {
        FolderWatch {
            files: present
                .iter()
                .map(|(p, l)| (p.clone(), WatchState::Before(*l)))
                .collect(),
        }
    }

    /// One look at the folder at `now`: the events it gives.
    pub fn look(&mut self, now: std::time::Instant, listing: &[(PathBuf, FileLook)]) -> Vec<WatchEvent> {
        let mut out = Vec::new();
        for (p, l) in listing {
            match self.files.get(p).cloned() {
                None => {
                    self.files.insert(p.clone(), WatchState::Settling(*l, now));
                }
                Some(WatchState::Settling(prev, since)) if prev == *l => {
                    if now.duration_since(since) >= WATCH_SETTLE {
                        out.push(WatchEvent::Ready(p.clone()));
                    }
                }
                Some(WatchState::Settling(_, _)) => {
                    self.files.insert(p.clone(), WatchState::Settling(*l, now));
                }
                Some(WatchState::Done(prev, aliquot)) if prev != *l => {
                    out.push(WatchEvent::ChangedAfter(p.clone(), aliquot));
                    // Reported once; a refused file that changes is read again when it settles.
                    self.files.insert(
                        p.clone(),
                        match aliquot {
                            Some(_) => WatchState::Done(*l, aliquot),
                            None => WatchState::Settling(*l, now),
                        },
                    );
                }
                Some(WatchState::Before(prev)) if prev != *l => {
                    self.files.insert(p.clone(), WatchState::Settling(*l, now));
                }
                Some(_) => {}
            }
        }
        out
    }

    /// Records what became of a ready file, as it looked when it was read.
    pub fn done(&mut self, path: &Path, look: FileLook, aliquot: Option<i64>) {
        self.files.insert(path.to_path_buf(), WatchState::Done(look, aliquot));
    }
}

/// The files of a folder with their looks (hidden files left out).
pub fn folder_looks(folder: &Path) -> Vec<(PathBuf, FileLook)> {
    let Ok(d) = std::fs::read_dir(folder) else {
        return Vec::new();
    };
    let mut v: Vec<(PathBuf, FileLook)> = d
        .filter_map(|e| e.ok())
        .filter(|e| !e.file_name().to_string_lossy().starts_with('.'))
        // The lab itself may live in the watched folder: its files are never opened as spectra.
        .filter(|e| !crate::open_labs::is_open_lab(&e.path()))
        .filter_map(|e| {
            let m = e.metadata().ok()?;
            m.is_file().then(|| {
                (
                    e.path(),
                    FileLook {
                        size: m.len(),
                        modified: m.modified().ok(),
                    },
                )
            })
        })
        .collect();
    v.sort_by(|a, b| a.0.cmp(&b.0));
    v
}

/// How a watched folder's exports are logged: into which batch, timed how, measured how.
#[derive(Debug, Clone)]
pub struct WatchSetup {
    pub batch: i64,
    pub folder: PathBuf,
    /// When the precursor was injected: a file's minutes are its modification time after this,
    /// where its name states no time.
    pub injected_at: Option<chrono::DateTime<chrono::FixedOffset>>,
    pub dilution_factor: f64,
    pub path_cm: f64,
    pub solvent: String,
    /// The PL excitation wavelength; a PL export arriving without one is not logged.
    pub excitation_nm: Option<f64>,
}

/// What became of one watched file.
#[derive(Debug, Clone)]
pub struct WatchLogged {
    pub file: String,
    pub kind: &'static str,
    pub minutes: f64,
    /// The aliquot logged, or joined (a PL export for an aliquot whose absorbance came first).
    pub joined: bool,
    pub summary: growth::AliquotSummary,
}

/// The minutes after injection of a watched file: what its name states with a unit, else its
/// modification time after the injection. A file from before the injection is refused.
pub fn watched_minutes(
    path: &Path,
    modified: Option<std::time::SystemTime>,
    injected_at: Option<chrono::DateTime<chrono::FixedOffset>>,
) -> Result<f64> {
    if let Some(m) = minutes_in_name(path) {
        return Ok(m);
    }
    let name = path.display();
    let (Some(modified), Some(injected)) = (modified, injected_at) else {
        return Err(Error::Invalid(format!(
            "cannot tell when {name} was measured: name it with its time (abs_05min.csv) or give the batch's injection time"
        )));
    };
    let modified: chrono::DateTime<chrono::Utc> = modified.into();
    let seconds = (modified - injected.with_timezone(&chrono::Utc)).num_milliseconds() as f64 / 1000.0;
    if seconds < 0.0 {
        return Err(Error::Invalid(format!(
            "{name} was written {:.0} min before the injection time; it is not this batch's aliquot",
            -seconds / 60.0
        )));
    }
    Ok(seconds / 60.0)
}

/// Logs one watched file: its kind from its content, its minutes as [`watched_minutes`] gives
/// them; a file whose minutes match an aliquot this watch logged and which lacks this kind
/// joins that aliquot (absorbance and PL of one aliquot arrive as two exports), anything else
/// becomes a new aliquot. `logged` maps minutes (in hundredths) to the watch's aliquots.
pub fn log_watched_file(
    store: &mut Store,
    setup: &WatchSetup,
    path: &Path,
    modified: Option<std::time::SystemTime>,
    logged: &mut std::collections::HashMap<i64, i64>,
) -> Result<WatchLogged> {
    let kind = kind_of_file(path)?;
    if kind == "ple" {
        return Err(Error::Invalid(format!(
            "{} is a PL excitation spectrum; log it from the command line (aliquot add --ple)",
            path.display()
        )));
    }
    let minutes = watched_minutes(path, modified, setup.injected_at)?;
    let f = SpectrumFile {
        path: path.to_path_buf(),
        kind,
        excitation_nm: if kind == "pl" { setup.excitation_nm } else { None },
        ..Default::default()
    };
    if kind == "pl" && f.excitation_nm.is_none() {
        return Err(Error::Invalid(format!(
            "{} is PL: give the excitation wavelength in the watch form to log it",
            path.display()
        )));
    }
    let key = (minutes * 100.0).round() as i64;
    let file = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    if let Some(&aliquot) = logged.get(&key) {
        let has_kind = store.read(|tx| Ok(model::spectra_of_aliquot(tx, aliquot)?.iter().any(|s| s.kind == kind)))?;
        if !has_kind {
            let summary = add_spectrum_to_aliquot(store, aliquot, &f, &ReadOptions::default(), &Door::default())?;
            return Ok(WatchLogged {
                file,
                kind,
                minutes,
                joined: true,
                summary,
            });
        }
    }
    let a = NewAliquot {
        batch_id: setup.batch,
        minutes: Some(minutes),
        stage: None,
        dilution_factor: setup.dilution_factor,
        path_cm: setup.path_cm,
        solvent: setup.solvent.clone(),
        taken_at: None,
    };
    let summary = add_aliquot(store, &a, &[f], &ReadOptions::default(), &Door::default())?;
    logged.insert(key, summary.id);
    Ok(WatchLogged {
        file,
        kind,
        minutes,
        joined: false,
        summary,
    })
}
