//! Bench operations shared by the command line and the terminal UI: logging an aliquot from
//! spectrum files (read, check, store, derive, all in one transaction) and importing a folder
//! of exports as a growth series. Files are read and checked before the transaction opens, so
//! a bad file leaves the database exactly as it was.

use crate::derive::{engine, growth};
use crate::error::{Error, Result};
use crate::spectra::{self, RawSpectrum, ReadOptions, quantity};
use crate::store::Store;
use crate::store::model::{self, NewAliquot, NewSpectrum};
use std::path::{Path, PathBuf};

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
    let bytes = std::fs::read(path).map_err(|e| Error::Spectrum {
        file: name.clone(),
        line: None,
        reason: format!("cannot read: {e}"),
    })?;
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
                    let bytes =
                        std::fs::read(p).map_err(|e| Error::Invalid(format!("cannot read {}: {e}", p.display())))?;
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

/// What measuring a vial's absorbance gave.
#[derive(Debug, Clone, serde::Serialize)]
pub struct VialMeasurement {
    pub vial_id: i64,
    pub spectrum_id: i64,
    pub first_exciton_nm: Option<f64>,
    pub diameter_nm: Option<f64>,
    pub curve: Option<String>,
    pub extinction_m1cm1: Option<f64>,
    pub concentration_molar: Option<f64>,
    pub calibration_version: i64,
    pub warnings: Vec<String>,
}

/// Measures a vial: stores its absorbance spectrum with the vial and, where the spectrum gives
/// a size and the material has an extinction model, sets the vial's concentration from it
/// (Beer-Lambert with the dilution and path of the measurement). One transaction.
pub fn measure_vial(store: &mut Store, vial: i64, abs: &Path, dilution: f64, path_cm: f64) -> Result<VialMeasurement> {
    model::check_number("dilution factor", dilution, false)?;
    model::check_number("path length (cm)", path_cm, false)?;
    let (raw, sha) = read_for_logging(abs, &ReadOptions::default(), "abs", false)?;
    store.write(|tx, who| {
        let v = model::get_vial(tx, vial)?;
        if v.status == "disposed" {
            return Err(Error::Invalid(format!(
                "vial {} ({}) has been disposed of",
                v.id, v.label
            )));
        }
        let core = model::material_by_name(tx, &v.material)?.core;
        let f = SpectrumFile {
            path: abs.to_path_buf(),
            kind: "abs",
            ..Default::default()
        };
        let mut ns = new_spectrum(None, &f, &raw, &sha);
        ns.vial_id = Some(vial);
        ns.dilution_factor = Some(dilution);
        ns.path_cm = Some(path_cm);
        let sid = model::insert_spectrum(tx, who, &ns)?;
        let version = crate::store::values::effective_calibration_version(tx, v.batch_id)?;
        let cal = crate::lab::calibrations::get(tx, version)?;
        let stored = model::get_spectrum(tx, sid)?;
        let (r, values, conc) = engine::vial_measured(&stored, &core, dilution, path_cm, version, &cal.body)?;
        let get = |q: &str| engine::find_value(&values, q);
        let diameter = get("diameter_nm").filter(|d| d.value.is_some());
        let mut out = VialMeasurement {
            vial_id: vial,
            spectrum_id: sid,
            first_exciton_nm: r.first_exciton_nm,
            diameter_nm: diameter.and_then(|d| d.value),
            curve: diameter.map(|d| d.method.clone()),
            extinction_m1cm1: get("extinction_m1cm1").and_then(|d| d.value),
            concentration_molar: conc.value,
            calibration_version: version,
            warnings: conc.warnings.clone(),
        };
        if out.concentration_molar.is_some() {
            model::set_vial_concentration(tx, vial, &conc)?;
            model::record_vial_measured(tx, who, vial, sid)?;
            crate::store::audit(
                tx,
                who,
                "vial",
                Some(vial),
                "measure",
                Some(&serde_json::json!({"concentration_molar": v.concentration_molar, "source": v.concentration_source})),
                Some(&serde_json::json!({"concentration_molar": conc.value, "spectrum_id": sid,
                    "method": conc.method, "curve": out.curve, "calibration_version": version})),
            )?;
        } else {
            out.warnings
                .push("no concentration derived: the vial's concentration is unchanged".into());
        }
        Ok(out)
    })
}

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

/// The minutes after injection a column header states, when it states a time with its unit:
/// "20 s", "40s", "1.5 min", "t = 5 min", "10 minutes", "2 h", "90 sec". A bare number or a
/// header without a time unit says nothing (it may be a sample name), so it gives None.
pub fn minutes_in_header(header: &str) -> Option<f64> {
    let h = header.trim().to_ascii_lowercase();
    let h = h.trim_start_matches("t").trim_start_matches([' ', '=', ':']).trim();
    let split = h
        .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == ','))
        .unwrap_or(h.len());
    let (num, unit) = h.split_at(split);
    let value: f64 = num.replace(',', ".").parse().ok()?;
    let unit = unit.trim().trim_end_matches('.');
    let factor = match unit {
        "s" | "sec" | "secs" | "second" | "seconds" => 1.0 / 60.0,
        "min" | "mins" | "minute" | "minutes" | "m" => 1.0,
        "h" | "hr" | "hrs" | "hour" | "hours" => 60.0,
        _ => return None,
    };
    (value.is_finite() && value >= 0.0).then_some(value * factor)
}

fn minutes_in(name: &str) -> Option<f64> {
    // The first run of digits (with a decimal point) in the name.
    let mut cur = String::new();
    for c in name.chars() {
        if c.is_ascii_digit() || (c == '.' && !cur.is_empty()) || (c == 'p' && !cur.is_empty() && !cur.contains('.')) {
            cur.push(if c == 'p' { '.' } else { c });
        } else if !cur.is_empty() {
            break;
        }
    }
    cur.trim_end_matches('.').parse().ok()
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

#[cfg(test)]
mod tests {
    use super::{FileLook, FolderWatch, WATCH_SETTLE, WatchEvent, minutes_in};
    use std::path::PathBuf;
    use std::time::{Duration, Instant};

    fn look(size: u64) -> FileLook {
        FileLook { size, modified: None }
    }

    /// A file written in bursts with pauses is read only after it has held still for the settle
    /// time, and a change after reading is reported (the case of an export logged half-written).
    #[test]
    fn a_file_written_in_bursts_is_read_whole_and_a_late_change_reported() {
        let p = PathBuf::from("abs_18min.csv");
        let old = PathBuf::from("abs_00min.csv");
        let t0 = Instant::now();
        let mut w = FolderWatch::new(&[(old.clone(), look(10))]);
        assert!(
            w.look(t0, &[(old.clone(), look(10)), (p.clone(), look(100))])
                .is_empty()
        );
        // A pause shorter than the settle time, then more bytes.
        assert!(
            w.look(t0 + Duration::from_millis(1500), &[(p.clone(), look(100))])
                .is_empty()
        );
        assert!(
            w.look(t0 + Duration::from_millis(2000), &[(p.clone(), look(200))])
                .is_empty()
        );
        assert!(
            w.look(t0 + Duration::from_millis(4000), &[(p.clone(), look(200))])
                .is_empty()
        );
        let ready = w.look(
            t0 + Duration::from_millis(2000) + WATCH_SETTLE,
            &[(p.clone(), look(200))],
        );
        assert_eq!(ready, vec![WatchEvent::Ready(p.clone())]);
        w.done(&p, look(200), Some(7));
        assert!(
            w.look(t0 + Duration::from_secs(10), &[(p.clone(), look(200))])
                .is_empty()
        );
        assert_eq!(
            w.look(t0 + Duration::from_secs(11), &[(p.clone(), look(300))]),
            vec![WatchEvent::ChangedAfter(p.clone(), Some(7))]
        );
        // Reported once, not on every look.
        assert!(
            w.look(t0 + Duration::from_secs(12), &[(p.clone(), look(300))])
                .is_empty()
        );
        // A file there before watching began is left alone.
        assert!(w.look(t0 + Duration::from_secs(20), &[(old, look(10))]).is_empty());
    }

    #[test]
    fn minutes_from_column_headers() {
        use super::minutes_in_header as m;
        assert_eq!(m("20 s"), Some(20.0 / 60.0));
        assert_eq!(m("40s"), Some(40.0 / 60.0));
        assert_eq!(m("1.5 min"), Some(1.5));
        assert_eq!(m("t = 5 min"), Some(5.0));
        assert_eq!(m("10 minutes"), Some(10.0));
        assert_eq!(m("2 h"), Some(120.0));
        assert_eq!(m("sample A"), None);
        assert_eq!(m("12"), None);
        assert_eq!(m("Absorbance"), None);
    }

    #[test]
    fn minutes_from_names() {
        assert_eq!(minutes_in("abs_05min"), Some(5.0));
        assert_eq!(minutes_in("b12_pl_t2p5"), Some(12.0));
        assert_eq!(minutes_in("abs-0.5min"), Some(0.5));
        assert_eq!(minutes_in("abs"), None);
    }
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

/// The minutes after injection a file's name states with a unit: `abs_05min.csv`,
/// `pl-2.5min.txt`, `t90s_abs.csv`, `sample_1h.csv`. A bare number says nothing (it may be a
/// date, a sample or a counter), so it gives None.
pub fn minutes_in_name(path: &Path) -> Option<f64> {
    let stem = path.file_stem()?.to_string_lossy().to_ascii_lowercase();
    stem.split(['_', '-', ' ', '+'])
        .filter(|t| t.chars().next().is_some_and(|c| c.is_ascii_digit() || c == 't'))
        .find_map(|t| {
            // "2p5min" is how some software writes 2.5 min in a name.
            let t = t.trim_start_matches('t');
            let t = match t.find('p') {
                Some(i) if t[..i].chars().all(|c| c.is_ascii_digit()) && !t[..i].is_empty() => {
                    format!("{}.{}", &t[..i], &t[i + 1..])
                }
                _ => t.to_string(),
            };
            minutes_in_header(&t)
        })
}

/// What a file looks like before it is logged: how it reads, what kind it seems, where its
/// feature is, and a coarse outline of its values for a small plot.
#[derive(Debug, Clone, serde::Serialize)]
pub struct FilePreview {
    pub format: String,
    /// The spectra the file holds, by label (one entry, maybe unlabelled, for a plain file).
    pub spectra: Vec<String>,
    pub points: usize,
    pub x_unit: String,
    pub y_unit: Option<String>,
    pub nm_range: Option<(f64, f64)>,
    /// "abs", "pl" or "ple" as the door would decide, with its evidence.
    pub kind: Option<&'static str>,
    pub kind_evidence: String,
    /// The first exciton (absorbance) or the PL peak, in nm, where the analysis finds one.
    pub feature_nm: Option<f64>,
    /// `width` values of y, resampled over the wavelength range, for a small plot.
    pub outline: Vec<f64>,
    pub minutes_in_name: Option<f64>,
    pub warnings: Vec<String>,
}

/// Files larger than this are not previewed (a spectrum export is kilobytes; a large file is
/// likely not a spectrum, and reading it would stall the screen).
pub const PREVIEW_MAX_BYTES: u64 = 16 * 1024 * 1024;

/// Reads a file as the door would and says what it holds; nothing is written. `width` is the
/// number of outline values wanted (the plot's columns).
pub fn preview_file(path: &Path, width: usize) -> Result<FilePreview> {
    let size = std::fs::metadata(path)
        .map_err(|e| Error::Invalid(format!("cannot read {}: {e}", path.display())))?
        .len();
    if size > PREVIEW_MAX_BYTES {
        return Err(Error::Invalid(format!(
            "{} is {} MB: too large to be a spectrum export",
            path.display(),
            size / (1024 * 1024)
        )));
    }
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let bytes = spectra::file_bytes(path)?;
    let all = spectra::read_all(&name, &bytes, &ReadOptions::default())?;
    let first = all
        .first()
        .ok_or_else(|| Error::Invalid(format!("{}: no spectrum found", path.display())))?;
    let inf = quantity::infer_kind(&name, first);
    let kind = inf.kind.map(|k| k.as_str());
    let mut warnings = first.warnings.clone();
    if all.len() > 1 {
        warnings.push(format!(
            "{} spectra in this file: log them with `aliquot add --series` or choose one with --column",
            all.len()
        ));
    }
    let trace = first.to_trace(&name, None);
    let (mut nm_range, mut feature_nm, mut outline) = (None, None, Vec::new());
    match &trace {
        Ok(t) if !t.nm.is_empty() => {
            let (lo, hi) = (t.nm[0], t.nm[t.nm.len() - 1]);
            nm_range = Some((lo, hi));
            outline = resample(&t.nm, &t.y, width);
            let set = spectra::analysis::AnalysisSettings::default();
            feature_nm = match kind {
                Some("pl") => spectra::pl::analyze_pl(t, &set).ok().and_then(|r| r.pl_peak_nm),
                Some("abs") => spectra::analysis::analyze_absorbance(t, &set)
                    .ok()
                    .and_then(|r| r.first_exciton_nm),
                _ => None,
            };
        }
        Ok(_) => {}
        Err(e) => warnings.push(e.to_string()),
    }
    Ok(FilePreview {
        format: first.format.clone(),
        spectra: all
            .iter()
            .map(|s| s.label.clone().unwrap_or_else(|| "(one spectrum)".into()))
            .collect(),
        points: first.x.len(),
        x_unit: first.x_unit.clone(),
        y_unit: first.y_unit.clone(),
        nm_range,
        kind,
        kind_evidence: inf.evidence,
        feature_nm,
        outline,
        minutes_in_name: minutes_in_name(path),
        warnings,
    })
}

/// The largest y in each of `width` equal wavelength bins (an empty bin repeats the one
/// before), so a narrow peak is never lost between samples.
fn resample(nm: &[f64], y: &[f64], width: usize) -> Vec<f64> {
    if width == 0 || nm.is_empty() {
        return Vec::new();
    }
    let (lo, hi) = (nm[0], nm[nm.len() - 1]);
    let span = (hi - lo).max(f64::MIN_POSITIVE);
    let mut out = vec![f64::NAN; width];
    for (x, v) in nm.iter().zip(y) {
        if !v.is_finite() {
            continue;
        }
        let i = (((x - lo) / span) * width as f64)
            .floor()
            .clamp(0.0, (width - 1) as f64) as usize;
        if out[i].is_nan() || *v > out[i] {
            out[i] = *v;
        }
    }
    let mut last = 0.0;
    for v in &mut out {
        if v.is_nan() {
            *v = last;
        } else {
            last = *v;
        }
    }
    out
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
