//! What a file holds before it is logged: how it reads, the kind it seems, where its feature
//! is, and a coarse outline for a small plot. Promises: nothing is written; files over
//! [`PREVIEW_MAX_BYTES`] are not read.

use crate::error::{Error, Result};
use crate::spectra::{self, ReadOptions, quantity};
use std::path::Path;

use super::times::minutes_in_name;

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
