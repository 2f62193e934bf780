//! Exports for a paper's supporting information or another tool: every batch, aliquot and
//! current derived value with its method and calibration version, as CSV files or one JSON file.
//! Text cells that a spreadsheet would run as a formula get a leading quote; the numbers
//! cuvette formats stay numbers. The JSON escapes the controls serde_json leaves raw.

use super::create_outputs;
use crate::error::{Error, Result};
use crate::safe_text::{csv_number, csv_text};
use crate::store::{Db, model};
use serde::Serialize;
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
    write_rows(next()?, batches.iter().map(BatchCsv::from))?;
    write_rows(next()?, aliquots.iter().map(AliquotCsv::from))?;
    write_rows(next()?, values.iter().map(ValueCsv::from))?;
    Ok(written)
}

/// Writes rows through the CSV writer; the header is the row type's field names.
fn write_rows<R: Serialize>(file: std::fs::File, rows: impl Iterator<Item = R>) -> Result<()> {
    let mut w = csv::Writer::from_writer(file);
    for r in rows {
        w.serialize(r).map_err(csv_err)?;
    }
    w.flush()?;
    Ok(())
}

/// A line of `batches.csv`. Text and numbers are already cells (see [`text`] and
/// [`csv_number`]): the spreadsheet-formula guard and the numbers' own formatting are the
/// export's, not the CSV writer's.
#[derive(Serialize)]
struct BatchCsv {
    id: i64,
    name: String,
    material: String,
    recipe: String,
    recipe_version: Option<i64>,
    operator: String,
    started_at: String,
    status: String,
    parent_batch_id: Option<i64>,
    parent_relation: String,
    notes: String,
}

impl From<&model::BatchRow> for BatchCsv {
    fn from(b: &model::BatchRow) -> Self {
        BatchCsv {
            id: b.id,
            name: text(&b.name),
            material: text(&b.material),
            recipe: text(b.recipe.as_deref().unwrap_or_default()),
            recipe_version: b.recipe_version,
            operator: text(b.operator.as_deref().unwrap_or_default()),
            started_at: text(&b.started_at),
            status: text(b.status.as_str()),
            parent_batch_id: b.parent_batch_id,
            parent_relation: text(b.parent_relation.map(|r| r.as_str()).unwrap_or_default()),
            notes: text(&b.notes),
        }
    }
}

/// A line of `aliquots.csv`.
#[derive(Serialize)]
struct AliquotCsv {
    id: i64,
    batch_id: i64,
    minutes: String,
    stage: String,
    dilution_factor: String,
    path_cm: String,
    solvent: String,
    taken_at: String,
}

impl From<&model::AliquotRow> for AliquotCsv {
    fn from(a: &model::AliquotRow) -> Self {
        AliquotCsv {
            id: a.id,
            batch_id: a.batch_id,
            minutes: a.minutes.map(csv_number).unwrap_or_default(),
            stage: text(a.stage.as_deref().unwrap_or_default()),
            dilution_factor: csv_number(a.dilution_factor),
            path_cm: csv_number(a.path_cm),
            solvent: text(&a.solvent),
            taken_at: text(&a.taken_at),
        }
    }
}

/// A line of `derived_values.csv` (long format: one value per line).
#[derive(Serialize)]
struct ValueCsv {
    aliquot_id: i64,
    quantity: String,
    value: String,
    unit: String,
    method: String,
    calibration_version: i64,
    inputs_hash: String,
    stale: bool,
    computed_at: String,
}

impl From<&crate::store::values::StoredValue> for ValueCsv {
    fn from(v: &crate::store::values::StoredValue) -> Self {
        ValueCsv {
            aliquot_id: v.aliquot_id,
            quantity: text(&v.quantity),
            value: v.value.map(csv_number).unwrap_or_default(),
            unit: text(&v.unit),
            method: text(&v.method),
            calibration_version: v.calibration_version,
            inputs_hash: text(&v.inputs_hash),
            stale: v.stale,
            computed_at: text(&v.computed_at),
        }
    }
}
