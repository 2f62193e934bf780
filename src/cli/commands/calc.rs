//! The bench calculators: what a spectrum file holds (`read`), a diameter from a first-exciton
//! peak (`size`), a single-point quantum yield (`qy`), and the gradient quantum yield of
//! aliquots already logged (`qy gradient`).

use super::{open_read, read_options};
use crate::cli::args::*;
use crate::cli::output::{json, line};
use crate::derive::{qy, sizing, solvents};
use crate::spectra::{self, ReadOptions, analysis};
use anyhow::{Result, anyhow, bail};
use serde::Serialize;
use std::path::Path;

/// What `read --json` prints for one spectrum: the spectrum as read, with its point count and
/// the file's SHA-256.
#[derive(Serialize)]
struct ReadView<'a> {
    #[serde(flatten)]
    spectrum: &'a spectra::RawSpectrum,
    npoints: usize,
    sha256: &'a str,
}

impl<'a> ReadView<'a> {
    fn of(spectrum: &'a spectra::RawSpectrum, sha256: &'a str) -> Self {
        ReadView {
            spectrum,
            npoints: spectrum.x.len(),
            sha256,
        }
    }
}

/// What `size --json` prints: the sizing with what it was asked and the curve's source.
#[derive(Serialize)]
struct SizeView<'a> {
    #[serde(flatten)]
    sizing: &'a sizing::Sizing,
    material: &'a str,
    peak_nm: f64,
    valid_peak_range_nm: Option<[f64; 2]>,
    source: &'a str,
}

/// What `qy --json` prints: the single-point quantum yield with every number it came from.
#[derive(Serialize)]
struct SinglePointQyView<'a> {
    qy: f64,
    method: &'a str,
    ref_qy: f64,
    n_sample: f64,
    n_ref: f64,
    sample_integral: f64,
    sample_abs: f64,
    ref_integral: f64,
    ref_abs: f64,
    warnings: &'a [String],
}

pub(super) fn read(a: &ReadArgs) -> Result<()> {
    let opts = read_options(a.x_col, a.y_col, &a.x_unit, &a.block, &a.choice);
    if a.all {
        let name = a.file.display().to_string();
        let bytes = spectra::file_bytes(&a.file)?;
        let all = spectra::read_all(&name, &bytes, &opts)?;
        let sha = spectra::sha256_hex(&bytes);
        if a.json {
            let v: Vec<ReadView> = all.iter().map(|raw| ReadView::of(raw, &sha)).collect();
            return json(&v);
        }
        for (i, raw) in all.iter().enumerate() {
            line(&format!(
                "{} {}: {} ({} points), {} .. {} {}, y {}",
                i + 1,
                raw.label.clone().unwrap_or_default(),
                raw.format,
                raw.x.len(),
                raw.x.first().copied().unwrap_or(f64::NAN),
                raw.x.last().copied().unwrap_or(f64::NAN),
                raw.x_unit,
                raw.y_unit.clone().unwrap_or("-".into())
            ))?;
        }
        return Ok(());
    }
    let (raw, sha) = spectra::read_file(&a.file, &opts)?;
    if a.json {
        return json(&ReadView::of(&raw, &sha));
    }
    line(&format!(
        "{}: {} ({} points)",
        a.file.display(),
        raw.format,
        raw.x.len()
    ))?;
    if let Some(t) = &raw.title {
        line(&format!("  title: {t}"))?;
    }
    line(&format!(
        "  x: {} .. {} {}",
        raw.x[0],
        raw.x[raw.x.len() - 1],
        raw.x_unit
    ))?;
    line(&format!("  y unit: {}", raw.y_unit.clone().unwrap_or("-".into())))?;
    for c in &raw.checks {
        line(&format!(
            "  check {}: {} ({})",
            c.name,
            if c.passed { "passed" } else { "FAILED" },
            c.detail
        ))?;
    }
    for w in &raw.warnings {
        line(&format!("  warning: {w}"))?;
    }
    Ok(())
}

pub(super) fn size(a: &SizeArgs) -> Result<()> {
    let core = a.material.split('/').next().unwrap_or(&a.material).to_string();
    let curve = match &a.curve {
        Some(c) => c.clone(),
        None => sizing::default_curve(&core)
            .ok_or_else(|| {
                anyhow!(
                    "unknown material '{}' (known: CdSe, CdTe, CdS, PbS, PbSe, InP)",
                    a.material
                )
            })?
            .to_string(),
    };
    let sz = sizing::size(&curve, &core, a.peak_nm, None)?;
    let c = sizing::Curve::parse(&curve)?;
    let peak_range = sizing::peak_range_nm(c, &core, None);
    if a.json {
        return json(&SizeView {
            sizing: &sz,
            material: &a.material,
            peak_nm: a.peak_nm,
            valid_peak_range_nm: peak_range.map(|(l, h)| [l, h]),
            source: c.source(),
        });
    }
    line(&format!(
        "{} with first exciton at {} nm: D = {:.2} nm ({}; valid {:.1}-{:.1} nm)",
        a.material,
        a.peak_nm,
        sz.diameter_nm,
        c.source(),
        sz.valid_range_nm[0],
        sz.valid_range_nm[1]
    ))?;
    if let Some(e) = sz.edge_nm {
        line(&format!(
            "  tetrahedron edge {e:.2} nm (the diameter is the sphere of equal volume)"
        ))?;
    }
    for w in &sz.warnings {
        line(&format!("  warning: {w}"))?;
    }
    Ok(())
}

pub(super) fn qy_cmd(a: &QyArgs) -> Result<()> {
    // clap requires both when no subcommand is given.
    let (Some(solvent), Some(ref_solvent)) = (&a.solvent, &a.ref_solvent) else {
        bail!("give --solvent and --ref-solvent");
    };
    let n = solvents::refractive_index(solvent)
        .ok_or_else(|| anyhow!("unknown solvent '{solvent}' (known: {})", solvents::names().join(", ")))?;
    let nr = solvents::refractive_index(ref_solvent).ok_or_else(|| {
        anyhow!(
            "unknown reference solvent '{ref_solvent}' (known: {})",
            solvents::names().join(", ")
        )
    })?;
    let mut extra = Vec::new();
    let ref_qy = match (&a.ref_qy, &a.ref_dye) {
        (Some(q), None) => *q,
        (None, Some(d)) => {
            let dye = solvents::dye(d).ok_or_else(|| {
                anyhow!(
                    "unknown dye '{d}' (known: {})",
                    solvents::DYES.iter().map(|d| d.name).collect::<Vec<_>>().join(", ")
                )
            })?;
            if !dye.solvent.eq_ignore_ascii_case(ref_solvent) {
                extra.push(format!(
                    "{} has its tabulated value in {}, not {ref_solvent}",
                    dye.name, dye.solvent
                ));
            }
            dye.qy
        }
        _ => bail!("give the reference's quantum yield: --ref-qy Q or --ref-dye NAME"),
    };
    let set = analysis::AnalysisSettings::default();
    let numbers = (a.sample_integral, a.sample_abs, a.ref_integral, a.ref_abs);
    let (fs, as_, fr, ar) = match numbers {
        (Some(fs), Some(as_), Some(fr), Some(ar)) => (fs, as_, fr, ar),
        _ => {
            let (Some(sp), Some(sa), Some(rp), Some(ra), Some(ex)) = (
                &a.sample_pl,
                &a.sample_abs_file,
                &a.ref_pl,
                &a.ref_abs_file,
                a.excitation_nm,
            ) else {
                bail!(
                    "give either the numbers (--sample-integral --sample-abs --ref-integral --ref-abs) or the files (--sample-pl --sample-abs-file --ref-pl --ref-abs-file --excitation-nm)"
                );
            };
            let pl_int = |p: &Path| -> Result<f64> {
                let (raw, _) = spectra::read_file(p, &ReadOptions::default())?;
                Ok(analysis::analyze_pl(&raw.to_trace(&p.display().to_string(), None)?, &set)?.pl_integral)
            };
            let abs_at = |p: &Path| -> Result<f64> {
                let (raw, _) = spectra::read_file(p, &ReadOptions::default())?;
                analysis::interpolate(&raw.to_trace(&p.display().to_string(), None)?, ex)
                    .ok_or_else(|| anyhow!("{} does not cover {ex} nm", p.display()))
            };
            (pl_int(sp)?, abs_at(sa)?, pl_int(rp)?, abs_at(ra)?)
        }
    };
    let mut r = qy::single_point(fs, as_, fr, ar, ref_qy, n, nr)?;
    r.warnings.extend(extra);
    if a.json {
        return json(&SinglePointQyView {
            qy: r.qy,
            method: &r.method,
            ref_qy,
            n_sample: n,
            n_ref: nr,
            sample_integral: fs,
            sample_abs: as_,
            ref_integral: fr,
            ref_abs: ar,
            warnings: &r.warnings,
        });
    }
    line(&format!("QY = {:.3} ({:.1} %), {}", r.qy, r.qy * 100.0, r.method))?;
    for w in &r.warnings {
        line(&format!("  warning: {w}"))?;
    }
    Ok(())
}

/// `qy gradient`: the gradient quantum yield of a dilution series logged as aliquots.
pub(super) fn qy_gradient(cli: &Cli, aliquots: &[i64], j: bool) -> Result<()> {
    let mut store = open_read(cli)?;
    let g = store.read(|tx| crate::report::yields::gradient_qy_series(tx, aliquots))?;
    if j {
        return json(&g);
    }
    line(&format!(
        "QY = {:.3}{} ({:.1} %), {}",
        g.qy,
        g.qy_sd.map(|sd| format!(" ± {sd:.3}")).unwrap_or_default(),
        g.qy * 100.0,
        g.method
    ))?;
    line(&format!(
        "  {} dilutions: slope {:.4e} per unit absorbance, R² {:.4}; n {} against the reference's {} (calibration v{})",
        g.dilutions, g.sample_fit.slope, g.sample_fit.r_squared, g.n_sample, g.n_ref, g.calibration_version
    ))?;
    for p in &g.points {
        line(&format!(
            "  aliquot {:>5}  A(ex, PL cuvette) {:.4}  PL integral {:.4e}",
            p.aliquot_id, p.abs_at_excitation_pl, p.pl_integral
        ))?;
    }
    for w in &g.warnings {
        line(&format!("  warning: {w}"))?;
    }
    Ok(())
}
