//! The lab's calibration and what follows from it: its versions and each change to it,
//! `recompute` of the values it made stale, and `explain`, the chain behind an aliquot's values.

use super::{open_for, open_read};
use crate::cli::args::*;
use crate::cli::output::{Progress, finite, json, json_sorted, line, num};
use crate::derive::{calibration, sizing, solvents};
use crate::spectra::{self, ReadOptions};
use crate::store::{Store, model};
use anyhow::{Result, anyhow, bail};
use serde::Serialize;

fn core_of(tx: &crate::store::Db, material: &str) -> crate::Result<String> {
    match model::material_by_name(tx, material) {
        Ok(m) => Ok(m.core),
        Err(e) => {
            // A bare core with a curve is fine even if the lab has not added it as a material.
            if sizing::default_curve(material).is_some() {
                Ok(material.to_string())
            } else {
                Err(e)
            }
        }
    }
}

/// A homogeneous HWHM above this is a typing slip, not a linewidth: single crystals' room-
/// temperature linewidths are of order tens of meV (from memory; the calibration itself
/// refuses 500).
const MAX_HOMOGENEOUS_HWHM_MEV: f64 = 200.0;

/// What a calibration change prints with `--json`: the new version and how many derived
/// values it made stale.
#[derive(Serialize)]
struct CalibrationChanged {
    // Fields in alphabetical order: the order these keys have always been printed in.
    marked_stale: usize,
    version: i64,
}

pub(super) fn calib(cli: &Cli, c: &CalibCmd) -> Result<()> {
    let mut store = open_for(
        cli,
        !matches!(c, CalibCmd::List(_) | CalibCmd::History(_) | CalibCmd::Show { .. }),
    )?;
    let change = |store: &mut Store,
                  why: &str,
                  j: bool,
                  f: &dyn Fn(&crate::store::Db, &mut calibration::Calibration) -> crate::Result<()>|
     -> Result<()> {
        let (v, stale) = crate::lab::calibrations::change(store, why, f)?;
        if j {
            json(&CalibrationChanged {
                marked_stale: stale,
                version: v,
            })
        } else {
            line(&format!(
                "calibration version {v}; {stale} derived values are now stale (run `cuvette recompute --dry-run` to preview)"
            ))
        }
    };
    match c {
        CalibCmd::List(f) | CalibCmd::History(f) => {
            let h = store.read(|tx| crate::lab::calibrations::history(tx))?;
            if f.json {
                return json(&h);
            }
            for v in h {
                line(&format!(
                    "v{:<3} {} {:<10} {}",
                    v.version, v.created_at, v.created_by, v.why
                ))?;
            }
        }
        CalibCmd::Show { version, json: j } => {
            let v = store.read(|tx| match version {
                Some(v) => crate::lab::calibrations::get(tx, *v),
                None => crate::lab::calibrations::latest(tx),
            })?;
            if *j {
                return json(&v);
            }
            line(&format!(
                "calibration v{} ({} by {}: {})",
                v.version, v.created_at, v.created_by, v.why
            ))?;
            for (m, curve) in &v.body.curves {
                let src = sizing::Curve::parse(curve).map(|c| c.source()).unwrap_or("");
                line(&format!(
                    "  {m:<6} curve {curve:<14} extinction {:<14} {src}",
                    v.body.extinction.get(m).cloned().unwrap_or("-".into())
                ))?;
            }
            match &v.body.qy_reference {
                Some(r) => line(&format!(
                    "  QY reference: {} in {} = {} (excited at {} nm, A {}, integral {})",
                    r.dye, r.solvent, r.qy, r.excitation_nm, r.abs_at_excitation, r.integral
                ))?,
                None => line("  QY reference: none")?,
            }
            line(&format!(
                "  detector correction: {}",
                v.body
                    .detector_correction
                    .as_ref()
                    .map(|d| d.name.clone())
                    .unwrap_or("none".into())
            ))?;
            if v.body.homogeneous_hwhm_mev.is_empty() {
                line("  homogeneous HWHM: off (size dispersions hold the whole width)")?;
            }
            line(&format!(
                "  plausible size dispersion: up to {} % σ/D{} (above it a value is flagged)",
                v.body.plausible_dispersion_pct(),
                if v.body.plausible_dispersion_pct.is_none() {
                    ", the default"
                } else {
                    ""
                }
            ))?;
            for (core, h) in &v.body.homogeneous_hwhm_mev {
                line(&format!(
                    "  homogeneous HWHM: {core} {h} meV (taken out of the first-exciton width in quadrature)"
                ))?;
            }
            line(&format!(
                "  analysis: smoothing {} nm, order {}, saturation A {}",
                v.body.analysis.smoothing_nm, v.body.analysis.smoothing_order, v.body.analysis.saturation_abs
            ))?;
        }
        CalibCmd::SetCurve {
            material,
            curve,
            why,
            json: j,
        } => {
            change(&mut store, why, *j, &|tx, body| {
                body.set_curve(&core_of(tx, material)?, curve);
                Ok(())
            })?;
        }
        CalibCmd::SetExtinction {
            material,
            model,
            why,
            json: j,
        } => {
            let (material, model) = (
                material.clone(),
                if model.starts_with("lab:") {
                    model.clone()
                } else {
                    model.to_ascii_lowercase()
                },
            );
            change(&mut store, why, *j, &|tx, body| {
                let core = core_of(tx, &material)?;
                body.extinction.insert(core, model.clone());
                Ok(())
            })?;
        }
        CalibCmd::SetReference {
            dye,
            qy: q,
            solvent,
            excitation_nm,
            integral,
            abs,
            why,
            json: j,
        } => {
            let table = solvents::dye(dye);
            let q = q
                .or(table.map(|d| d.qy))
                .ok_or_else(|| anyhow!("dye '{dye}' is not in the table; give its --qy"))?;
            let solvent = solvent
                .clone()
                .or(table.map(|d| d.solvent.to_string()))
                .ok_or_else(|| anyhow!("give the reference's --solvent"))?;
            let r = calibration::QyReference {
                dye: dye.clone(),
                solvent,
                qy: q,
                excitation_nm: *excitation_nm,
                integral: *integral,
                abs_at_excitation: *abs,
            };
            change(&mut store, why, *j, &|_, body| {
                body.qy_reference = Some(r.clone());
                Ok(())
            })?;
        }
        CalibCmd::SetIndex {
            solvent,
            n,
            why,
            json: j,
        } => {
            let (s, n) = (solvent.clone(), *n);
            change(&mut store, why, *j, &|_, body| {
                body.solvent_index.insert(s.clone(), n);
                Ok(())
            })?;
        }
        CalibCmd::SetAnalysis {
            smoothing_nm,
            smoothing_order,
            saturation_abs,
            plausible_dispersion_pct,
            why,
            json: j,
        } => {
            let (a, b, c2) = (*smoothing_nm, *smoothing_order, *saturation_abs);
            let pd = *plausible_dispersion_pct;
            change(&mut store, why, *j, &|_, body| {
                if let Some(v) = pd {
                    body.plausible_dispersion_pct = Some(v);
                }
                if let Some(v) = a {
                    body.analysis.smoothing_nm = v;
                }
                if let Some(v) = b {
                    body.analysis.smoothing_order = v;
                }
                if let Some(v) = c2 {
                    body.analysis.saturation_abs = v;
                }
                Ok(())
            })?;
        }
        CalibCmd::SetDetector { file, why, json: j } => {
            let (raw, _) = spectra::read_file(file, &ReadOptions::default())?;
            let t = raw.to_trace(&file.display().to_string(), None)?;
            let name = file
                .file_name()
                .map(|n| n.to_string_lossy().to_string())
                .unwrap_or_default();
            let d = calibration::DetectorCorrection {
                name,
                nm: t.nm,
                factor: t.y,
            };
            change(&mut store, why, *j, &|_, body| {
                body.detector_correction = Some(d.clone());
                Ok(())
            })?;
        }
        CalibCmd::SetLabCurve {
            name,
            material,
            coeffs,
            range,
            source,
            why,
            json: j,
        } => {
            let coefficients: Vec<f64> = coeffs
                .split(',')
                .map(|c| {
                    c.trim()
                        .parse::<f64>()
                        .map_err(|_| anyhow!("coefficient '{c}' is not a number"))
                })
                .collect::<Result<_>>()?;
            let (lo, hi) = range
                .split_once("..")
                .ok_or_else(|| anyhow!("--range should read LOW..HIGH"))?;
            let valid_range_nm = [
                lo.trim()
                    .parse::<f64>()
                    .map_err(|_| anyhow!("range low '{lo}' is not a number"))?,
                hi.trim()
                    .parse::<f64>()
                    .map_err(|_| anyhow!("range high '{hi}' is not a number"))?,
            ];
            let (name, material, source) = (name.clone(), material.clone(), source.clone());
            change(&mut store, why, *j, &|tx, body| {
                let core = core_of(tx, &material)?;
                body.lab_curves.insert(
                    name.clone(),
                    calibration::LabCurve {
                        material: core,
                        coefficients: coefficients.clone(),
                        valid_range_nm,
                        source: source.clone(),
                    },
                );
                Ok(())
            })?;
        }
        CalibCmd::SetLabExtinction {
            name,
            material,
            prefactor,
            exponent,
            source,
            why,
            json: j,
        } => {
            let (name, material, source, a, b) =
                (name.clone(), material.clone(), source.clone(), *prefactor, *exponent);
            change(&mut store, why, *j, &|tx, body| {
                let core = core_of(tx, &material)?;
                body.lab_extinction.insert(
                    name.clone(),
                    calibration::LabExtinction {
                        material: core,
                        prefactor: a,
                        exponent: b,
                        source: source.clone(),
                    },
                );
                Ok(())
            })?;
        }
        CalibCmd::SetHomogeneousHwhm {
            material,
            mev,
            off,
            why,
            json: j,
        } => {
            let mev = if *off { None } else { *mev };
            if let Some(h) = mev
                && !(h.is_finite() && h > 0.0 && h <= MAX_HOMOGENEOUS_HWHM_MEV)
            {
                bail!(
                    "the homogeneous HWHM must be above 0 and at most {MAX_HOMOGENEOUS_HWHM_MEV} meV, got {h} (give --off to take none out)"
                );
            }
            let m = material.clone();
            change(&mut store, why, *j, &|tx, body| {
                body.set_homogeneous_hwhm(&core_of(tx, &m)?, mev);
                Ok(())
            })?;
        }
        CalibCmd::SetBulk {
            material,
            eg_ev,
            me,
            mh,
            eps_r,
            source,
            why,
            json: j,
        } => {
            let b = sizing::BulkParams {
                eg_ev: *eg_ev,
                me: *me,
                mh: *mh,
                eps_r: *eps_r,
                source: source.clone(),
            };
            let m = material.clone();
            change(&mut store, why, *j, &|tx, body| {
                let core = core_of(tx, &m).unwrap_or(m.clone());
                body.bulk.insert(core, b.clone());
                Ok(())
            })?;
        }
    }
    Ok(())
}

pub(super) fn recompute(cli: &Cli, a: &RecomputeArgs) -> Result<()> {
    let mut store = open_for(cli, !a.dry_run)?;
    let progress = Progress::new("recompute", a.json);
    let report = if a.dry_run {
        store.read(|tx| crate::lab::derivation::recompute(tx, a.all, true, |d, t| progress.tick(d, t)))?
    } else {
        crate::lab::derivation::recompute_now(&mut store, a.all, |d, t| progress.tick(d, t))?
    };
    if a.json {
        return json(&report);
    }
    line(&format!(
        "{}{} of {} aliquots recomputed ({} stale): {} values, {} changed",
        if a.dry_run { "dry run: " } else { "" },
        report.aliquots_recomputed,
        report.aliquots_considered,
        report.stale_found,
        report.recomputed,
        report.changed
    ))?;
    for m in &report.largest_moves {
        line(&format!(
            "  aliquot {:>5} (batch {:>4}) {:<20} {} -> {} ({})",
            m.aliquot_id,
            m.batch_id,
            m.quantity,
            num(m.old, 4),
            num(m.new, 4),
            m.relative_change
                .map(|r| format!("{:+.1} %", r * 100.0))
                .unwrap_or("-".into())
        ))?;
    }
    for c in &report.threshold_crossings {
        line(&format!(
            "  batch {} crosses {} {} ({} -> {})",
            c.batch_id,
            c.field,
            c.threshold,
            num(c.old, 3),
            num(c.new, 3)
        ))?;
    }
    Ok(())
}

pub(super) fn explain(cli: &Cli, a: &ExplainArgs) -> Result<()> {
    let mut store = open_read(cli)?;
    let v = store.read(|tx| crate::report::explain_chain(tx, a.aliquot))?;
    if a.json {
        return json_sorted(&v);
    }
    line(&format!(
        "aliquot {} of batch {} ({})",
        v.aliquot_id, v.batch_id, v.material
    ))?;
    for s in &v.spectra {
        let own = match (finite(s.path_cm), finite(s.dilution_factor)) {
            (None, None) => String::new(),
            (p, d) => format!(
                " (own cuvette: {} cm, dilution {})",
                p.map(|v| v.to_string()).unwrap_or("-".into()),
                d.map(|v| v.to_string()).unwrap_or("-".into())
            ),
        };
        line(&format!(
            "  spectrum {} {} {} sha256 {}{own}",
            s.id,
            s.kind,
            s.file_name,
            s.sha256.get(..12.min(s.sha256.len())).unwrap_or(&s.sha256)
        ))?;
    }
    for step in &v.chain {
        let value = &step.value;
        line(&format!(
            "  {:<20} {:>14} {:<11} {} (calibration v{}){}",
            value.quantity,
            num(finite(value.value), 5),
            value.unit,
            value.method,
            value.calibration_version,
            if value.stale { " STALE" } else { "" }
        ))?;
        if let Some(note) = &step.curve {
            line(&format!("  {:<20} source: {}", "", note.source))?;
        }
        // A value's warnings belong beside it: a chemist reading the chain must see them.
        for w in &value.warnings {
            line(&format!("  {:<20} ! {w}", ""))?;
        }
    }
    Ok(())
}
