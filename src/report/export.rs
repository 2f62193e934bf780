//! Exports for a paper's supporting information or another tool: every batch, aliquot and
//! current derived value with its method and calibration version, as CSV files or one JSON file.
//! Text cells that a spreadsheet would run as a formula get a leading quote; the numbers
//! cuvette formats stay numbers. The JSON escapes the controls serde_json leaves raw.

use super::create_outputs;
use crate::error::{Error, Result};
use crate::safe_text::{csv_number, csv_text};
use crate::store::{Db, model};
use std::io::Write as _;
use std::path::{Path, PathBuf};

/// A text cell no spreadsheet will run as a formula; numbers go through `csv_number`.
fn text(s: &str) -> String {
    csv_text(s).into_owned()
}

fn csv_err(e: csv::Error) -> Error {
    Error::Invalid(format!("csv: {e}"))
}

/// Writes the export into `out` (default `export/`); returns the files written. Without
/// `force` no existing file is overwritten and no symbolic link followed: the export is
/// refused before anything is written.
pub fn export(conn: &Db, as_json: bool, out: Option<&Path>, force: bool) -> Result<Vec<String>> {
    let dir = out.unwrap_or(Path::new("export"));
    std::fs::create_dir_all(dir).map_err(|e| Error::Invalid(format!("cannot create {}: {e}", dir.display())))?;
    let batches = model::list_batches(conn)?;
    let mut aliquots = Vec::new();
    let mut values = Vec::new();
    for b in &batches {
        for a in model::aliquots_of(conn, b.id)? {
            values.extend(crate::store::values::current_values(conn, a.id)?);
            aliquots.push(a);
        }
    }
    let names: &[&str] = if as_json {
        &["cuvette-export.json"]
    } else {
        &["batches.csv", "aliquots.csv", "derived_values.csv"]
    };
    let paths: Vec<PathBuf> = names.iter().map(|n| dir.join(n)).collect();
    let written: Vec<String> = paths.iter().map(|p| p.display().to_string()).collect();
    let mut files = create_outputs(&paths, force)?.into_iter();
    let mut next = || {
        files
            .next()
            .ok_or_else(|| Error::Invalid("export: fewer files opened than written".into()))
    };
    if as_json {
        let v = serde_json::json!({"batches": batches, "aliquots": aliquots, "derived_values": values});
        let mut f = next()?;
        f.write_all(crate::safe_text::json_text(serde_json::to_string_pretty(&v)?).as_bytes())?;
        f.sync_all()?;
        return Ok(written);
    }
    let mut w = csv::Writer::from_writer(next()?);
    w.write_record([
        "id",
        "name",
        "material",
        "recipe",
        "recipe_version",
        "operator",
        "started_at",
        "status",
        "parent_batch_id",
        "parent_relation",
        "notes",
    ])
    .map_err(csv_err)?;
    for b in &batches {
        w.write_record([
            b.id.to_string(),
            text(&b.name),
            text(&b.material),
            text(b.recipe.as_deref().unwrap_or_default()),
            b.recipe_version.map(|v| v.to_string()).unwrap_or_default(),
            text(b.operator.as_deref().unwrap_or_default()),
            text(&b.started_at),
            text(&b.status),
            b.parent_batch_id.map(|v| v.to_string()).unwrap_or_default(),
            text(b.parent_relation.as_deref().unwrap_or_default()),
            text(&b.notes),
        ])
        .map_err(csv_err)?;
    }
    w.flush()?;
    let mut w = csv::Writer::from_writer(next()?);
    w.write_record([
        "id",
        "batch_id",
        "minutes",
        "stage",
        "dilution_factor",
        "path_cm",
        "solvent",
        "taken_at",
    ])
    .map_err(csv_err)?;
    for a in &aliquots {
        w.write_record([
            a.id.to_string(),
            a.batch_id.to_string(),
            a.minutes.map(csv_number).unwrap_or_default(),
            text(a.stage.as_deref().unwrap_or_default()),
            csv_number(a.dilution_factor),
            csv_number(a.path_cm),
            text(&a.solvent),
            text(&a.taken_at),
        ])
        .map_err(csv_err)?;
    }
    w.flush()?;
    let mut w = csv::Writer::from_writer(next()?);
    w.write_record([
        "aliquot_id",
        "quantity",
        "value",
        "unit",
        "method",
        "calibration_version",
        "inputs_hash",
        "stale",
        "computed_at",
    ])
    .map_err(csv_err)?;
    for v in &values {
        w.write_record([
            v.aliquot_id.to_string(),
            text(&v.quantity),
            v.value.map(csv_number).unwrap_or_default(),
            text(&v.unit),
            text(&v.method),
            v.calibration_version.to_string(),
            text(&v.inputs_hash),
            v.stale.to_string(),
            text(&v.computed_at),
        ])
        .map_err(csv_err)?;
    }
    w.flush()?;
    Ok(written)
}
