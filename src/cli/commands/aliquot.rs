//! Logging aliquots from spectrum files: one at a time (`aliquot add`, or a series from one
//! file), a folder (`import`), or many folders named in a manifest (`import-manifest`); and
//! correcting, voiding or showing an aliquot.

use super::{open_for, open_write, read_options};
use crate::cli::args::*;
use crate::cli::output::{self, Progress, json, line, molar, num};
use crate::lab::bench::{self, SpectrumFile};
use crate::store::model;
use anyhow::{Context, Result, anyhow, bail};
use serde::Serialize;
use std::path::Path;
use std::process::ExitCode;

pub(super) fn aliquot(cli: &Cli, c: &AliquotCmd) -> Result<()> {
    let mut store = open_for(cli, !matches!(c, AliquotCmd::Show { .. }))?;
    match c {
        AliquotCmd::Add(a) => {
            if a.minutes.is_some() && a.stage.is_some() {
                bail!("give either --minutes or --stage, not both");
            }
            if a.excitation_nm.is_some() && a.pl.is_none() {
                bail!("--excitation-nm goes with --pl");
            }
            let pl_cuvette = pl_cuvette(a.pl_path_cm, a.pl_dilution)?;
            if pl_cuvette != bench::OwnCuvette::default() && a.pl.is_none() {
                bail!("--pl-path-cm and --pl-dilution go with --pl");
            }
            let mut files = Vec::new();
            if let Some(p) = &a.abs {
                files.push(SpectrumFile {
                    path: p.clone(),
                    kind: "abs",
                    ..Default::default()
                });
            }
            if let Some(p) = &a.pl {
                files.push(SpectrumFile {
                    path: p.clone(),
                    kind: "pl",
                    excitation_nm: a.excitation_nm,
                    cuvette: pl_cuvette,
                });
            }
            if let Some(p) = &a.ple {
                files.push(SpectrumFile {
                    path: p.clone(),
                    kind: "ple",
                    ..Default::default()
                });
            }
            let na = model::NewAliquot {
                batch_id: a.batch_id,
                minutes: a.minutes,
                stage: a.stage.clone(),
                dilution_factor: a.dilution,
                path_cm: a.path_cm,
                solvent: a.solvent.clone(),
                taken_at: None,
            };
            let opts = read_options(a.x_col, a.y_col, &a.x_unit, &a.block, &a.choice);
            let door = bench::Door {
                again: a.again,
                kind_as_is: a.kind_as_is,
                series: a.series,
            };
            if a.series {
                if files.len() != 1 {
                    bail!("--series takes one file: give one of --abs, --pl or --ple");
                }
                if a.minutes.is_some() || a.stage.is_some() {
                    bail!("--series times each aliquot by its column header; leave out --minutes and --stage");
                }
                let series = bench::add_series(&mut store, &na, &files[0], &opts, &door)?;
                if a.json {
                    json(&series)?;
                } else {
                    for s in &series {
                        line(&format!(
                            "aliquot {} ({}): first exciton {} nm, D {} nm, conc {}",
                            s.id,
                            s.minutes
                                .map(|m| format!("{m:.2} min"))
                                .or(s.stage.clone())
                                .unwrap_or_default(),
                            num(s.first_exciton_nm, 1),
                            num(s.diameter_nm, 2),
                            molar(s.concentration_molar)
                        ))?;
                    }
                }
                return Ok(());
            }
            let s = bench::add_aliquot(&mut store, &na, &files, &opts, &door)?;
            if a.json {
                json(&s)?;
            } else {
                line(&format!(
                    "aliquot {}: first exciton {} nm, D {} nm ({}), conc {}, PL {} nm, QY {}",
                    s.id,
                    num(s.first_exciton_nm, 1),
                    num(s.diameter_nm, 2),
                    s.curve.clone().unwrap_or("-".into()),
                    molar(s.concentration_molar),
                    num(s.pl_peak_nm, 1),
                    num(s.qy, 2)
                ))?;
                for w in &s.warnings {
                    line(&format!("  warning: {w}"))?;
                }
            }
        }
        AliquotCmd::Void { id, why, json: j } | AliquotCmd::Reinstate { id, why, json: j } => {
            let voiding = matches!(c, AliquotCmd::Void { .. });
            let row = crate::lab::corrections::set_aliquot_void(&mut store, *id, voiding, why)?;
            if *j {
                json(&row)?;
            } else if voiding {
                line(&format!(
                    "aliquot {} of batch {} is void ({}); the batch's values no longer use it",
                    row.id,
                    row.batch_id,
                    why.trim()
                ))?;
            } else {
                line(&format!("aliquot {} of batch {} is reinstated", row.id, row.batch_id))?;
            }
        }
        AliquotCmd::Edit {
            id,
            minutes,
            stage,
            dilution,
            path_cm,
            solvent,
            why,
            json: j,
        } => {
            let e = model::AliquotEdit {
                minutes: *minutes,
                stage: stage.clone(),
                dilution_factor: *dilution,
                path_cm: *path_cm,
                solvent: solvent.clone(),
            };
            let row = crate::lab::corrections::edit_aliquot(&mut store, *id, &e, why)?;
            let s = store.read(|tx| crate::report::aliquot_summary(tx, &row))?;
            if *j {
                json(&s)?;
            } else {
                line(&format!(
                    "aliquot {} corrected: D {} nm, conc {}",
                    s.id,
                    num(s.diameter_nm, 2),
                    molar(s.concentration_molar)
                ))?;
            }
        }
        AliquotCmd::Show { id, json: j } => {
            let s = store.read(|tx| {
                let a = model::get_aliquot(tx, *id)?;
                crate::report::aliquot_summary(tx, &a)
            })?;
            if *j {
                json(&s)?
            } else {
                line(&serde_json::to_string_pretty(&s)?)?
            }
        }
    }
    Ok(())
}

/// The PL cuvette as the flags give it, refused (naming the flag) when out of range.
fn pl_cuvette(path_cm: Option<f64>, dilution: Option<f64>) -> Result<bench::OwnCuvette> {
    Ok(bench::OwnCuvette {
        path_cm,
        dilution_factor: dilution,
    }
    .checked("--pl-path-cm", "--pl-dilution")?)
}

pub(super) fn import(cli: &Cli, a: &ImportArgs) -> Result<()> {
    let pl = bench::PlSetup {
        excitation_nm: a.excitation_nm,
        cuvette: pl_cuvette(a.pl_path_cm, a.pl_dilution)?,
    };
    let mut store = open_write(cli)?;
    let template = model::NewAliquot {
        batch_id: a.batch_id,
        minutes: None,
        stage: None,
        dilution_factor: a.dilution,
        path_cm: a.path_cm,
        solvent: a.solvent.clone(),
        taken_at: None,
    };
    let progress = Progress::new("import", a.json);
    let door = bench::Door {
        again: a.again,
        kind_as_is: a.kind_as_is,
        series: a.series,
    };
    let r = bench::import_folder(&mut store, a.batch_id, &a.folder, &template, pl, &door, |d, t| {
        progress.tick(d, t)
    })?;
    if a.json {
        return json(&Imported {
            aliquots: &r.aliquots,
            batch_id: a.batch_id,
            skipped: &r.skipped,
        });
    }
    line(&format!(
        "imported {} aliquots into batch {}",
        r.aliquots.len(),
        a.batch_id
    ))?;
    for f in &r.skipped {
        line(&format!(
            "  skipped {f}: already logged in this batch (give --again to log it twice)"
        ))?;
    }
    let _ = output::num(None, 0);
    Ok(())
}

/// What `import --json` prints: the batch's new aliquots and the files skipped.
#[derive(Serialize)]
struct Imported<'a> {
    // Fields in alphabetical order: the order these keys have always been printed in.
    aliquots: &'a [i64],
    batch_id: i64,
    skipped: &'a [String],
}

/// One line of `import-manifest --json`: a batch's folder imported, or why it was not.
#[derive(Serialize)]
#[serde(untagged)]
enum ManifestResult {
    // Fields in alphabetical order: the order these keys have always been printed in.
    Imported {
        aliquots: Vec<i64>,
        batch_id: i64,
        folder: String,
        skipped: Vec<String>,
    },
    Failed {
        batch_id: i64,
        error: String,
        folder: String,
    },
}

#[derive(serde::Deserialize)]
struct ManifestRow {
    batch_id: i64,
    folder: String,
    dilution: Option<f64>,
    path_cm: Option<f64>,
    solvent: Option<String>,
    excitation_nm: Option<f64>,
    pl_path_cm: Option<f64>,
    pl_dilution: Option<f64>,
}

pub(super) fn import_manifest(cli: &Cli, a: &ManifestArgs) -> Result<ExitCode> {
    let text = std::fs::read_to_string(&a.manifest).with_context(|| format!("cannot read {}", a.manifest.display()))?;
    let mut rdr = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let mut rows = Vec::new();
    for (i, r) in rdr.deserialize::<ManifestRow>().enumerate() {
        let r = r.map_err(|e| anyhow!("{} row {}: {e}", a.manifest.display(), i + 2))?;
        bench::OwnCuvette {
            path_cm: r.pl_path_cm,
            dilution_factor: r.pl_dilution,
        }
        .checked("pl_path_cm", "pl_dilution")
        .map_err(|e| anyhow!("{} row {}: {e}", a.manifest.display(), i + 2))?;
        rows.push(r);
    }
    let base = a.manifest.parent().map(Path::to_path_buf).unwrap_or_default();
    let mut store = open_write(cli)?;
    let progress = Progress::new("import", a.json);
    let mut results = Vec::new();
    let mut failed = false;
    for (i, r) in rows.iter().enumerate() {
        let folder = base.join(&r.folder);
        let template = model::NewAliquot {
            batch_id: r.batch_id,
            minutes: None,
            stage: None,
            dilution_factor: r.dilution.unwrap_or(1.0),
            path_cm: r.path_cm.unwrap_or(1.0),
            solvent: r.solvent.clone().unwrap_or_else(|| "hexane".into()),
            taken_at: None,
        };
        match bench::import_folder(
            &mut store,
            r.batch_id,
            &folder,
            &template,
            bench::PlSetup {
                excitation_nm: r.excitation_nm,
                cuvette: bench::OwnCuvette {
                    path_cm: r.pl_path_cm,
                    dilution_factor: r.pl_dilution,
                },
            },
            &bench::Door::default(),
            |_, _| {},
        ) {
            Ok(ids) => results.push(ManifestResult::Imported {
                aliquots: ids.aliquots,
                batch_id: r.batch_id,
                folder: folder.display().to_string(),
                skipped: ids.skipped,
            }),
            Err(e) => {
                failed = true;
                output::warn(&format!(
                    "batch {} ({}): {e}; nothing imported for it",
                    r.batch_id,
                    folder.display()
                ));
                results.push(ManifestResult::Failed {
                    batch_id: r.batch_id,
                    error: e.to_string(),
                    folder: folder.display().to_string(),
                });
            }
        }
        progress.tick(i + 1, rows.len());
    }
    if a.json {
        json(&results)?;
    } else {
        for r in &results {
            match r {
                ManifestResult::Imported { aliquots, batch_id, .. } => {
                    line(&format!("batch {batch_id}: {} aliquots", aliquots.len()))?
                }
                ManifestResult::Failed { batch_id, .. } => line(&format!("batch {batch_id}: not imported"))?,
            }
        }
    }
    Ok(if failed { ExitCode::from(1) } else { ExitCode::SUCCESS })
}
