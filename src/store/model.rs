//! The lab's entities and their reads and writes. Every write function takes the open
//! transaction and the actor, validates its input before touching a row, and writes an audit
//! row beside the change. Column lists are constants and each entity has one row-mapping
//! function, so a query and its struct cannot drift apart.

use super::{audit, decode_xy, encode_xy, now};
use crate::error::{Error, Result, invalid};
use rusqlite::{Connection, OptionalExtension, Row, params};
use serde::Serialize;
use serde_json::json;

pub use crate::vocab::{
    AmountUnit, BatchRelation, BatchStatus, ConcentrationSource, LocationKind, SpectrumKind, VialEventKind, VialStatus,
    Vocabulary,
};

fn not_found(kind: &'static str, what: impl ToString) -> Error {
    Error::NotFound {
        kind,
        what: what.to_string(),
    }
}

/// Rejects NaN, infinities and (where asked) negatives, naming the field.
pub fn check_number(field: &str, v: f64, allow_zero: bool) -> Result<f64> {
    if !v.is_finite() {
        return invalid(format!("{field} must be a finite number, got {v}"));
    }
    if v < 0.0 || (!allow_zero && v == 0.0) {
        let bound = if allow_zero { "zero or more" } else { "above zero" };
        return invalid(format!("{field} must be {bound}, got {}", shown(v)));
    }
    Ok(v)
}

/// As [`check_number`], and no larger than `max`: a finite but absurd figure (1e308 mL) is a
/// typing slip, not a measurement.
pub fn check_bounded(field: &str, v: f64, allow_zero: bool, max: f64, unit: &str) -> Result<f64> {
    check_number(field, v, allow_zero)?;
    if v > max {
        return invalid(format!(
            "{field} of {} {unit} is beyond any plausible value (at most {max} {unit})",
            shown(v)
        ));
    }
    Ok(v)
}

/// A number as a message shows it: short, in e-notation when very large or small.
fn shown(v: f64) -> String {
    if v != 0.0 && (v.abs() >= 1e6 || v.abs() < 1e-4) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

/// A reason for a correction: required, one line, not blank.
pub fn check_reason(why: &str) -> Result<&str> {
    let w = why.trim();
    if w.is_empty() {
        return invalid("a correction needs a reason (--why)");
    }
    Ok(w)
}

// ---------------------------------------------------------------- people

pub fn person_id(conn: &Connection, name: &str) -> Result<i64> {
    conn.query_row("SELECT id FROM person WHERE name = ?1", [name], |r| r.get(0))
        .optional()?
        .ok_or_else(|| Error::Invalid(format!("unknown person '{name}' (add them with `cuvette person add`)")))
}

pub fn add_person(tx: &Connection, who: &str, name: &str, email: Option<&str>) -> Result<i64> {
    let name = name.trim();
    if name.is_empty() {
        return invalid("a person needs a name");
    }
    if tx
        .query_row("SELECT 1 FROM person WHERE name = ?1", [name], |_| Ok(()))
        .optional()?
        .is_some()
    {
        return invalid(format!("person '{name}' already exists"));
    }
    tx.execute("INSERT INTO person (name, email) VALUES (?1, ?2)", params![name, email])?;
    let id = tx.last_insert_rowid();
    audit(
        tx,
        who,
        "person",
        Some(id),
        "create",
        None,
        Some(&json!({"name": name, "email": email})),
    )?;
    Ok(id)
}

#[derive(Debug, Clone, Serialize)]
pub struct PersonRow {
    pub id: i64,
    pub name: String,
    pub email: Option<String>,
}

pub fn list_people(conn: &Connection) -> Result<Vec<PersonRow>> {
    let mut st = conn.prepare("SELECT id, name, email FROM person ORDER BY name")?;
    let rows = st.query_map([], |r| {
        Ok(PersonRow {
            id: r.get(0)?,
            name: r.get(1)?,
            email: r.get(2)?,
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

// ---------------------------------------------------------------- materials

#[derive(Debug, Clone, Serialize)]
pub struct MaterialRow {
    pub id: i64,
    pub name: String,
    pub core: String,
    pub shell: Option<String>,
}

pub fn material_by_name(conn: &Connection, name: &str) -> Result<MaterialRow> {
    let found = conn
        .query_row(
            "SELECT id, name, core, shell FROM material WHERE name = ?1 COLLATE NOCASE",
            [name],
            |r| {
                Ok(MaterialRow {
                    id: r.get(0)?,
                    name: r.get(1)?,
                    core: r.get(2)?,
                    shell: r.get(3)?,
                })
            },
        )
        .optional()?;
    match found {
        Some(m) => Ok(m),
        None => {
            let known: Vec<String> = list_materials(conn)?.into_iter().map(|m| m.name).collect();
            Err(Error::Invalid(format!(
                "unknown material '{name}' (known: {})",
                known.join(", ")
            )))
        }
    }
}

pub fn list_materials(conn: &Connection) -> Result<Vec<MaterialRow>> {
    let mut st = conn.prepare("SELECT id, name, core, shell FROM material ORDER BY name")?;
    let rows = st.query_map([], |r| {
        Ok(MaterialRow {
            id: r.get(0)?,
            name: r.get(1)?,
            core: r.get(2)?,
            shell: r.get(3)?,
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

pub fn add_material(tx: &Connection, who: &str, name: &str, core: &str, shell: Option<&str>) -> Result<i64> {
    if name.trim().is_empty() || core.trim().is_empty() {
        return invalid("a material needs a name and a core");
    }
    if material_by_name(tx, name).is_ok() {
        return invalid(format!("material '{name}' already exists"));
    }
    tx.execute(
        "INSERT INTO material (name, core, shell) VALUES (?1, ?2, ?3)",
        params![name, core, shell],
    )?;
    let id = tx.last_insert_rowid();
    audit(
        tx,
        who,
        "material",
        Some(id),
        "create",
        None,
        Some(&json!({"name": name, "core": core, "shell": shell})),
    )?;
    Ok(id)
}

// ---------------------------------------------------------------- reagents

#[derive(Debug, Clone, Serialize)]
pub struct ReagentRow {
    pub id: i64,
    pub name: String,
    pub formula: Option<String>,
    pub cas: Option<String>,
    pub ghs_hazards: Vec<String>,
    pub pyrophoric: bool,
}

fn reagent_from(r: &Row) -> rusqlite::Result<ReagentRow> {
    let h: String = r.get(4)?;
    Ok(ReagentRow {
        id: r.get(0)?,
        name: r.get(1)?,
        formula: r.get(2)?,
        cas: r.get(3)?,
        ghs_hazards: h.split_whitespace().map(String::from).collect(),
        pyrophoric: r.get(5)?,
    })
}

const REAGENT_COLS: &str = "id, name, formula, cas, ghs_hazards, pyrophoric";

pub fn add_reagent(
    tx: &Connection,
    who: &str,
    name: &str,
    formula: Option<&str>,
    cas: Option<&str>,
    hazards: &[String],
    pyrophoric: bool,
) -> Result<i64> {
    for h in hazards {
        if crate::hazards::statement(h).is_none() {
            return invalid(format!("unknown GHS hazard statement '{h}'"));
        }
    }
    if tx
        .query_row("SELECT 1 FROM reagent WHERE name = ?1", [name], |_| Ok(()))
        .optional()?
        .is_some()
    {
        return invalid(format!("reagent '{name}' already exists"));
    }
    tx.execute(
        "INSERT INTO reagent (name, formula, cas, ghs_hazards, pyrophoric) VALUES (?1,?2,?3,?4,?5)",
        params![name, formula, cas, hazards.join(" "), pyrophoric],
    )?;
    let id = tx.last_insert_rowid();
    audit(
        tx,
        who,
        "reagent",
        Some(id),
        "create",
        None,
        Some(&json!({"name": name, "ghs_hazards": hazards})),
    )?;
    Ok(id)
}

pub fn reagent_by_name(conn: &Connection, name: &str) -> Result<ReagentRow> {
    conn.query_row(
        &format!("SELECT {REAGENT_COLS} FROM reagent WHERE name = ?1 COLLATE NOCASE"),
        [name],
        reagent_from,
    )
    .optional()?
    .ok_or_else(|| not_found("reagent", format!("'{name}'")))
}

pub fn list_reagents(conn: &Connection) -> Result<Vec<ReagentRow>> {
    let mut st = conn.prepare(&format!("SELECT {REAGENT_COLS} FROM reagent ORDER BY name"))?;
    let rows = st.query_map([], reagent_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

// ---------------------------------------------------------------- recipes

#[derive(Debug, Clone, Serialize, serde::Deserialize)]
pub struct RecipeReagent {
    pub reagent: String,
    pub amount: f64,
    pub unit: String,
    pub role: Option<String>,
}

#[derive(Debug, Clone, Serialize, serde::Deserialize)]
pub struct RecipeStep {
    pub action: String,
    pub temperature_c: Option<f64>,
    pub duration_min: Option<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct RecipeView {
    pub id: i64,
    pub name: String,
    pub material: String,
    pub version: i64,
    pub version_id: i64,
    pub reagents: Vec<RecipeReagentView>,
    pub steps: Vec<RecipeStep>,
}

#[derive(Debug, Clone, Serialize)]
pub struct RecipeReagentView {
    pub reagent: String,
    pub amount: f64,
    pub unit: String,
    pub role: Option<String>,
    pub ghs_hazards: Vec<String>,
    pub pyrophoric: bool,
}

/// Creates a recipe, or a new version of an existing one (old versions are never changed).
pub fn save_recipe(
    tx: &Connection,
    who: &str,
    name: &str,
    material: &str,
    reagents: &[RecipeReagent],
    steps: &[RecipeStep],
    notes: Option<&str>,
) -> Result<(i64, i64)> {
    let mat = material_by_name(tx, material)?;
    for r in reagents {
        reagent_by_name(tx, &r.reagent)?;
        check_number(&format!("amount of {}", r.reagent), r.amount, true)?;
        if r.unit.parse::<AmountUnit>().is_err() {
            return invalid(format!(
                "bad unit '{}' for {} (use one of {})",
                r.unit,
                r.reagent,
                AmountUnit::WORDS.join(", ")
            ));
        }
    }
    for s in steps {
        if let Some(d) = s.duration_min {
            check_number("step duration_min", d, true)?;
        }
        if let Some(t) = s.temperature_c
            && !(-273.15..=1000.0).contains(&t)
        {
            return invalid(format!("step temperature {t} °C is not plausible"));
        }
    }
    let existing: Option<(i64, i64)> = tx
        .query_row("SELECT id, material_id FROM recipe WHERE name = ?1", [name], |r| {
            Ok((r.get(0)?, r.get(1)?))
        })
        .optional()?;
    let recipe_id = match existing {
        Some((id, mid)) => {
            if mid != mat.id {
                return invalid(format!("recipe '{name}' is for another material"));
            }
            id
        }
        None => {
            tx.execute(
                "INSERT INTO recipe (name, material_id) VALUES (?1, ?2)",
                params![name, mat.id],
            )?;
            tx.last_insert_rowid()
        }
    };
    let version: i64 = tx.query_row(
        "SELECT COALESCE(MAX(version), 0) + 1 FROM recipe_version WHERE recipe_id = ?1",
        [recipe_id],
        |r| r.get(0),
    )?;
    let person = person_id(tx, who).ok();
    tx.execute(
        "INSERT INTO recipe_version (recipe_id, version, created_at, created_by, notes) VALUES (?1,?2,?3,?4,?5)",
        params![recipe_id, version, now(), person, notes],
    )?;
    let vid = tx.last_insert_rowid();
    for r in reagents {
        let rid = reagent_by_name(tx, &r.reagent)?.id;
        tx.execute(
            "INSERT INTO recipe_reagent (recipe_version_id, reagent_id, amount, unit, role) VALUES (?1,?2,?3,?4,?5)",
            params![vid, rid, r.amount, r.unit, r.role],
        )?;
    }
    for (i, s) in steps.iter().enumerate() {
        tx.execute(
            "INSERT INTO recipe_step (recipe_version_id, position, action, temperature_c, duration_min) VALUES (?1,?2,?3,?4,?5)",
            params![vid, i as i64 + 1, s.action, s.temperature_c, s.duration_min],
        )?;
    }
    audit(
        tx,
        who,
        "recipe",
        Some(recipe_id),
        "new_version",
        None,
        Some(&json!({"name": name, "version": version, "reagents": reagents, "steps": steps})),
    )?;
    Ok((recipe_id, vid))
}

/// The latest version of a recipe by name, or a given version.
pub fn recipe_version_id(conn: &Connection, name: &str, version: Option<i64>) -> Result<i64> {
    let sql = "SELECT rv.id FROM recipe_version rv JOIN recipe r ON r.id = rv.recipe_id
               WHERE r.name = ?1 AND (?2 IS NULL OR rv.version = ?2) ORDER BY rv.version DESC LIMIT 1";
    conn.query_row(sql, params![name, version], |r| r.get(0))
        .optional()?
        .ok_or_else(|| {
            not_found(
                "recipe",
                match version {
                    Some(v) => format!("'{name}' version {v}"),
                    None => format!("'{name}'"),
                },
            )
        })
}

pub fn recipe_view(conn: &Connection, version_id: i64) -> Result<RecipeView> {
    let (id, name, material, version): (i64, String, String, i64) = conn
        .query_row(
            "SELECT r.id, r.name, m.name, rv.version FROM recipe_version rv
             JOIN recipe r ON r.id = rv.recipe_id JOIN material m ON m.id = r.material_id
             WHERE rv.id = ?1",
            [version_id],
            |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?)),
        )
        .optional()?
        .ok_or_else(|| not_found("recipe version", version_id))?;
    let mut st = conn.prepare(
        "SELECT g.name, rr.amount, rr.unit, rr.role, g.ghs_hazards, g.pyrophoric FROM recipe_reagent rr
         JOIN reagent g ON g.id = rr.reagent_id WHERE rr.recipe_version_id = ?1 ORDER BY rr.id",
    )?;
    let reagents = st
        .query_map([version_id], |r| {
            let h: String = r.get(4)?;
            Ok(RecipeReagentView {
                reagent: r.get(0)?,
                amount: r.get(1)?,
                unit: r.get(2)?,
                role: r.get(3)?,
                ghs_hazards: h.split_whitespace().map(String::from).collect(),
                pyrophoric: r.get(5)?,
            })
        })?
        .collect::<rusqlite::Result<Vec<_>>>()?;
    let mut st = conn.prepare(
        "SELECT action, temperature_c, duration_min FROM recipe_step WHERE recipe_version_id = ?1 ORDER BY position",
    )?;
    let steps = st
        .query_map([version_id], |r| {
            Ok(RecipeStep {
                action: r.get(0)?,
                temperature_c: r.get(1)?,
                duration_min: r.get(2)?,
            })
        })?
        .collect::<rusqlite::Result<Vec<_>>>()?;
    Ok(RecipeView {
        id,
        name,
        material,
        version,
        version_id,
        reagents,
        steps,
    })
}

#[derive(Debug, Clone, Serialize)]
pub struct RecipeListRow {
    pub id: i64,
    pub name: String,
    pub material: String,
    pub latest_version: i64,
}

pub fn list_recipes(conn: &Connection) -> Result<Vec<RecipeListRow>> {
    let mut st = conn.prepare(
        "SELECT r.id, r.name, m.name, (SELECT MAX(version) FROM recipe_version WHERE recipe_id = r.id)
         FROM recipe r JOIN material m ON m.id = r.material_id ORDER BY r.name",
    )?;
    let rows = st.query_map([], |r| {
        Ok(RecipeListRow {
            id: r.get(0)?,
            name: r.get(1)?,
            material: r.get(2)?,
            latest_version: r.get(3)?,
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

// ---------------------------------------------------------------- batches

#[derive(Debug, Clone, Serialize)]
pub struct BatchRow {
    pub id: i64,
    pub name: String,
    pub material: String,
    pub core: String,
    pub recipe: Option<String>,
    pub recipe_version: Option<i64>,
    pub recipe_version_id: Option<i64>,
    pub operator: Option<String>,
    pub started_at: String,
    pub status: BatchStatus,
    pub parent_batch_id: Option<i64>,
    pub parent_relation: Option<BatchRelation>,
    pub pinned_calibration: Option<i64>,
    pub product_aliquot_id: Option<i64>,
    pub notes: String,
    /// A voided batch stays in the record, marked, and is left out of search and the pack.
    pub voided: bool,
    pub void_why: Option<String>,
}

const BATCH_SELECT: &str = "SELECT b.id, b.name, m.name, m.core, r.name, rv.version, b.recipe_version_id, p.name,
    b.started_at, b.status, b.parent_batch_id, b.parent_relation, b.pinned_calibration,
    b.product_aliquot_id, b.notes, b.voided_at, b.void_why
  FROM batch b JOIN material m ON m.id = b.material_id
  LEFT JOIN recipe_version rv ON rv.id = b.recipe_version_id
  LEFT JOIN recipe r ON r.id = rv.recipe_id
  LEFT JOIN person p ON p.id = b.operator_id";

fn batch_from(r: &Row) -> rusqlite::Result<BatchRow> {
    Ok(BatchRow {
        id: r.get(0)?,
        name: r.get(1)?,
        material: r.get(2)?,
        core: r.get(3)?,
        recipe: r.get(4)?,
        recipe_version: r.get(5)?,
        recipe_version_id: r.get(6)?,
        operator: r.get(7)?,
        started_at: r.get(8)?,
        status: r.get(9)?,
        parent_batch_id: r.get(10)?,
        parent_relation: r.get(11)?,
        pinned_calibration: r.get(12)?,
        product_aliquot_id: r.get(13)?,
        notes: r.get(14)?,
        voided: r.get::<_, Option<String>>(15)?.is_some(),
        void_why: r.get(16)?,
    })
}

#[derive(Debug, Clone, Default)]
pub struct NewBatch {
    pub name: String,
    pub material: String,
    pub recipe: Option<String>,
    pub recipe_version: Option<i64>,
    pub operator: Option<String>,
    pub started_at: Option<String>,
    pub status: Option<BatchStatus>,
    pub parent_batch_id: Option<i64>,
    pub parent_relation: Option<BatchRelation>,
    pub notes: Option<String>,
}

/// Accepts RFC 3339, "YYYY-MM-DD HH:MM" or a bare date; returns the stored form, the instant
/// in UTC. A time typed without an offset is the user's local time (the offset in force on that
/// date, from the system's time zone or `TZ`), so it is stored as the instant it was.
pub fn parse_time(field: &str, s: &str) -> Result<String> {
    use chrono::{Local, NaiveDate, NaiveDateTime, TimeZone, Utc};
    let stored = |t: chrono::DateTime<Utc>| t.format("%Y-%m-%dT%H:%M:%SZ").to_string();
    if let Ok(t) = chrono::DateTime::parse_from_rfc3339(s) {
        return Ok(stored(t.with_timezone(&Utc)));
    }
    let local = |t: NaiveDateTime| -> Result<String> {
        match Local.from_local_datetime(&t) {
            chrono::LocalResult::Single(l) => Ok(stored(l.with_timezone(&Utc))),
            // A clock change: the earlier of the two readings, as a clock on the wall showed first.
            chrono::LocalResult::Ambiguous(a, _) => Ok(stored(a.with_timezone(&Utc))),
            chrono::LocalResult::None => invalid(format!(
                "{field} '{s}' does not exist in local time (the clocks skipped it); give an offset, e.g. {s}+01:00"
            )),
        }
    };
    for f in [
        "%Y-%m-%d %H:%M",
        "%Y-%m-%dT%H:%M",
        "%Y-%m-%d %H:%M:%S",
        "%Y-%m-%dT%H:%M:%S",
    ] {
        if let Ok(t) = NaiveDateTime::parse_from_str(s, f) {
            return local(t);
        }
    }
    if let Ok(d) = NaiveDate::parse_from_str(s, "%Y-%m-%d") {
        return local(d.and_hms_opt(0, 0, 0).unwrap_or_default());
    }
    invalid(format!(
        "{field} '{s}' is not a date (use YYYY-MM-DD or YYYY-MM-DD HH:MM)"
    ))
}

pub fn insert_batch(tx: &Connection, who: &str, b: &NewBatch) -> Result<i64> {
    let name = b.name.trim();
    if name.is_empty() {
        return invalid("a batch needs a name (--name)");
    }
    let mat = material_by_name(tx, &b.material)?;
    let rv = match &b.recipe {
        Some(r) => {
            let id = recipe_version_id(tx, r, b.recipe_version)?;
            let rm: i64 = tx.query_row(
                "SELECT r.material_id FROM recipe_version rv JOIN recipe r ON r.id = rv.recipe_id WHERE rv.id = ?1",
                [id],
                |r| r.get(0),
            )?;
            if rm != mat.id {
                return invalid(format!("recipe '{r}' is not for {}", mat.name));
            }
            Some(id)
        }
        None => None,
    };
    let op = match &b.operator {
        Some(p) => Some(person_id(tx, p)?),
        None => person_id(tx, who).ok(),
    };
    let status = b.status.unwrap_or(BatchStatus::Planned);
    let started = match &b.started_at {
        Some(s) => parse_time("started at", s)?,
        None => now(),
    };
    if let Some(p) = b.parent_batch_id {
        get_batch(tx, p)?;
    }
    if b.parent_relation.is_some() && b.parent_batch_id.is_none() {
        return invalid("a relation needs a parent batch (--parent)");
    }
    let relation = match (b.parent_relation, b.parent_batch_id) {
        (Some(r), _) => Some(r),
        (None, Some(_)) => Some(BatchRelation::Shell),
        _ => None,
    };
    tx.execute(
        "INSERT INTO batch (name, material_id, recipe_version_id, operator_id, started_at, status,
                            parent_batch_id, parent_relation, notes)
         VALUES (?1,?2,?3,?4,?5,?6,?7,?8,?9)",
        params![
            name,
            mat.id,
            rv,
            op,
            started,
            status,
            b.parent_batch_id,
            relation,
            b.notes.clone().unwrap_or_default()
        ],
    )?;
    let id = tx.last_insert_rowid();
    let after = serde_json::to_value(get_batch(tx, id)?)?;
    audit(tx, who, "batch", Some(id), "create", None, Some(&after))?;
    Ok(id)
}

pub fn get_batch(conn: &Connection, id: i64) -> Result<BatchRow> {
    conn.query_row(&format!("{BATCH_SELECT} WHERE b.id = ?1"), [id], batch_from)
        .optional()?
        .ok_or_else(|| not_found("batch", id))
}

pub fn list_batches(conn: &Connection) -> Result<Vec<BatchRow>> {
    let mut st = conn.prepare(&format!("{BATCH_SELECT} ORDER BY b.id"))?;
    let rows = st.query_map([], batch_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

pub fn children_of(conn: &Connection, id: i64) -> Result<Vec<(i64, String, Option<BatchRelation>)>> {
    let mut st = conn.prepare("SELECT id, name, parent_relation FROM batch WHERE parent_batch_id = ?1 ORDER BY id")?;
    let rows = st.query_map([id], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

#[derive(Debug, Clone, Default)]
pub struct BatchEdit {
    pub name: Option<String>,
    pub notes: Option<String>,
    pub append_notes: Option<String>,
    pub operator: Option<String>,
    pub product_aliquot_id: Option<i64>,
    pub pin_calibration: Option<i64>,
    pub unpin: bool,
    pub parent_batch_id: Option<i64>,
}

pub fn edit_batch(tx: &Connection, who: &str, id: i64, e: &BatchEdit) -> Result<BatchRow> {
    let before = get_batch(tx, id)?;
    if let Some(n) = &e.name {
        if n.trim().is_empty() {
            return invalid("a batch name cannot be empty");
        }
        tx.execute("UPDATE batch SET name = ?1 WHERE id = ?2", params![n.trim(), id])?;
    }
    if let Some(n) = &e.notes {
        tx.execute("UPDATE batch SET notes = ?1 WHERE id = ?2", params![n, id])?;
    }
    if let Some(n) = &e.append_notes {
        let cur: String = tx.query_row("SELECT notes FROM batch WHERE id = ?1", [id], |r| r.get(0))?;
        let joined = if cur.is_empty() {
            n.clone()
        } else {
            format!("{cur}\n{n}")
        };
        tx.execute("UPDATE batch SET notes = ?1 WHERE id = ?2", params![joined, id])?;
    }
    if let Some(p) = &e.operator {
        let pid = person_id(tx, p)?;
        tx.execute("UPDATE batch SET operator_id = ?1 WHERE id = ?2", params![pid, id])?;
    }
    if let Some(a) = e.product_aliquot_id {
        let owner: Option<i64> = tx
            .query_row("SELECT batch_id FROM aliquot WHERE id = ?1", [a], |r| r.get(0))
            .optional()?;
        if owner != Some(id) {
            return invalid(format!("aliquot {a} is not an aliquot of batch {id}"));
        }
        tx.execute("UPDATE batch SET product_aliquot_id = ?1 WHERE id = ?2", params![a, id])?;
    }
    if let Some(v) = e.pin_calibration {
        let ok = tx
            .query_row("SELECT 1 FROM calibration WHERE version = ?1", [v], |_| Ok(()))
            .optional()?;
        if ok.is_none() {
            return Err(not_found("calibration version", v));
        }
        tx.execute("UPDATE batch SET pinned_calibration = ?1 WHERE id = ?2", params![v, id])?;
    }
    if e.unpin {
        tx.execute("UPDATE batch SET pinned_calibration = NULL WHERE id = ?1", [id])?;
    }
    if let Some(p) = e.parent_batch_id {
        if p == id {
            return invalid("a batch cannot be its own parent");
        }
        get_batch(tx, p)?;
        // A parent that grew from this batch would make each the other's core.
        let mut seen = std::collections::HashSet::new();
        let mut up = Some(p);
        while let Some(b) = up {
            if b == id {
                return invalid(format!(
                    "batch {p} descends from batch {id}: it cannot be batch {id}'s parent"
                ));
            }
            if !seen.insert(b) {
                break;
            }
            up = tx.query_row("SELECT parent_batch_id FROM batch WHERE id = ?1", [b], |r| r.get(0))?;
        }
        tx.execute("UPDATE batch SET parent_batch_id = ?1 WHERE id = ?2", params![p, id])?;
    }
    let after = get_batch(tx, id)?;
    audit(
        tx,
        who,
        "batch",
        Some(id),
        "edit",
        Some(&serde_json::to_value(&before)?),
        Some(&serde_json::to_value(&after)?),
    )?;
    Ok(after)
}

pub fn set_batch_status(tx: &Connection, who: &str, id: i64, status: BatchStatus) -> Result<BatchRow> {
    let before = get_batch(tx, id)?;
    tx.execute("UPDATE batch SET status = ?1 WHERE id = ?2", params![status, id])?;
    audit(
        tx,
        who,
        "batch",
        Some(id),
        "set_status",
        Some(&json!({"status": before.status})),
        Some(&json!({"status": status})),
    )?;
    get_batch(tx, id)
}

// ---------------------------------------------------------------- aliquots and spectra

#[derive(Debug, Clone, Serialize)]
pub struct AliquotRow {
    pub id: i64,
    pub batch_id: i64,
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub dilution_factor: f64,
    pub path_cm: f64,
    pub solvent: String,
    pub taken_at: String,
    /// A voided aliquot stays in the record but counts for nothing.
    pub voided: bool,
    pub void_why: Option<String>,
}

/// The aliquot columns, in the order [`aliquot_from`] maps them.
pub const ALIQUOT_COLS: &str =
    "id, batch_id, minutes, stage, dilution_factor, path_cm, solvent, taken_at, voided_at, void_why";

/// Maps the first ten columns of a row (in `ALIQUOT_COLS` order) to an aliquot.
pub fn aliquot_from(r: &Row) -> rusqlite::Result<AliquotRow> {
    Ok(AliquotRow {
        id: r.get(0)?,
        batch_id: r.get(1)?,
        minutes: r.get(2)?,
        stage: r.get(3)?,
        dilution_factor: r.get(4)?,
        path_cm: r.get(5)?,
        solvent: r.get(6)?,
        taken_at: r.get(7)?,
        voided: r.get::<_, Option<String>>(8)?.is_some(),
        void_why: r.get(9)?,
    })
}

#[derive(Debug, Clone)]
pub struct NewAliquot {
    pub batch_id: i64,
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub dilution_factor: f64,
    pub path_cm: f64,
    pub solvent: String,
    pub taken_at: Option<String>,
}

pub fn insert_aliquot(tx: &Connection, who: &str, a: &NewAliquot) -> Result<i64> {
    let batch = get_batch(tx, a.batch_id)?;
    if let Some(m) = a.minutes {
        check_number("minutes", m, true)?;
    }
    check_number("dilution factor", a.dilution_factor, false)?;
    check_number("path length (cm)", a.path_cm, false)?;
    if a.dilution_factor < 1.0 {
        return invalid(format!(
            "dilution factor {} is below 1; it is the factor by which the aliquot was diluted",
            a.dilution_factor
        ));
    }
    let stage = match (&a.minutes, &a.stage) {
        (None, None) => Some("crude".to_string()),
        (_, s) => s.clone(),
    };
    if batch.status == BatchStatus::Archived {
        return invalid(format!("batch {} is archived; set its status first", batch.id));
    }
    if batch.voided {
        return invalid(format!("batch {} is void; reinstate it first", batch.id));
    }
    let taken = match &a.taken_at {
        Some(t) => parse_time("taken at", t)?,
        None => now(),
    };
    tx.execute(
        "INSERT INTO aliquot (batch_id, minutes, stage, dilution_factor, path_cm, solvent, taken_at)
         VALUES (?1,?2,?3,?4,?5,?6,?7)",
        params![
            a.batch_id,
            a.minutes,
            stage,
            a.dilution_factor,
            a.path_cm,
            a.solvent,
            taken
        ],
    )?;
    let id = tx.last_insert_rowid();
    let row = get_aliquot(tx, id)?;
    audit(
        tx,
        who,
        "aliquot",
        Some(id),
        "create",
        None,
        Some(&serde_json::to_value(&row)?),
    )?;
    Ok(id)
}

pub fn get_aliquot(conn: &Connection, id: i64) -> Result<AliquotRow> {
    conn.query_row(
        &format!("SELECT {ALIQUOT_COLS} FROM aliquot WHERE id = ?1"),
        [id],
        aliquot_from,
    )
    .optional()?
    .ok_or_else(|| not_found("aliquot", id))
}

/// The aliquots of a batch that count: voided ones are left out (growth, product, plots, pack).
pub fn aliquots_of(conn: &Connection, batch_id: i64) -> Result<Vec<AliquotRow>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {ALIQUOT_COLS} FROM aliquot WHERE batch_id = ?1 AND voided_at IS NULL ORDER BY minutes IS NULL, minutes, id"
    ))?;
    let rows = st.query_map([batch_id], aliquot_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Every aliquot of a batch, voided ones included (the record as logged).
pub fn all_aliquots_of(conn: &Connection, batch_id: i64) -> Result<Vec<AliquotRow>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {ALIQUOT_COLS} FROM aliquot WHERE batch_id = ?1 ORDER BY minutes IS NULL, minutes, id"
    ))?;
    let rows = st.query_map([batch_id], aliquot_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

#[derive(Debug, Clone)]
pub struct NewSpectrum {
    pub aliquot_id: Option<i64>,
    pub vial_id: Option<i64>,
    pub kind: String,
    pub x_unit: String,
    pub y_unit: Option<String>,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub file_name: String,
    pub sha256: String,
    pub excitation_nm: Option<f64>,
    pub instrument: Option<String>,
    /// For a vial's own measurement: the dilution and path of its cuvette.
    pub dilution_factor: Option<f64>,
    pub path_cm: Option<f64>,
    /// Which spectrum of its file this is (a column header, a block title), when the file holds several.
    pub label: Option<String>,
}

impl NewSpectrum {
    /// The row this spectrum is once inserted with `id`: what the store would give back when
    /// asked, without reading or decoding the BLOB it just wrote (the points are kept exactly;
    /// the BLOB is their lossless encoding).
    pub fn into_row(self, id: i64) -> SpectrumRow {
        SpectrumRow {
            id,
            aliquot_id: self.aliquot_id,
            vial_id: self.vial_id,
            kind: self.kind,
            x_unit: self.x_unit,
            y_unit: self.y_unit,
            npoints: self.x.len() as i64,
            x: self.x,
            y: self.y,
            file_name: self.file_name,
            sha256: self.sha256,
            excitation_nm: self.excitation_nm,
            instrument: self.instrument,
            dilution_factor: self.dilution_factor,
            path_cm: self.path_cm,
            label: self.label,
        }
    }
}

#[derive(Debug, Clone, Serialize)]
pub struct SpectrumRow {
    pub id: i64,
    pub aliquot_id: Option<i64>,
    pub vial_id: Option<i64>,
    pub kind: String,
    pub x_unit: String,
    pub y_unit: Option<String>,
    pub npoints: i64,
    #[serde(skip)]
    pub x: Vec<f64>,
    #[serde(skip)]
    pub y: Vec<f64>,
    pub file_name: String,
    pub sha256: String,
    pub excitation_nm: Option<f64>,
    pub instrument: Option<String>,
    pub dilution_factor: Option<f64>,
    pub path_cm: Option<f64>,
    pub label: Option<String>,
}

pub fn insert_spectrum(tx: &Connection, who: &str, s: &NewSpectrum) -> Result<i64> {
    if s.kind.parse::<SpectrumKind>().is_err() {
        return invalid(format!("unknown spectrum kind '{}' (abs, pl, ple)", s.kind));
    }
    if s.x.len() != s.y.len() || s.x.is_empty() {
        return invalid("a spectrum needs as many y values as x values");
    }
    if s.aliquot_id.is_some() == s.vial_id.is_some() {
        return invalid("a spectrum belongs to exactly one aliquot or one vial");
    }
    if let Some(e) = s.excitation_nm {
        check_number("excitation wavelength (nm)", e, false)?;
    }
    // The spectrum's own cuvette is held to the bounds `aliquot edit` holds an aliquot's to.
    if let Some(p) = s.path_cm {
        check_bounded("the spectrum's path length", p, false, 100.0, "cm")?;
    }
    if let Some(d) = s.dilution_factor {
        check_bounded("the spectrum's dilution factor", d, false, 1e6, "x")?;
    }
    let data = encode_xy(&s.x, &s.y);
    let data_sha = crate::spectra::sha256_hex(&data);
    tx.execute(
        "INSERT INTO spectrum (aliquot_id, vial_id, kind, x_unit, y_unit, npoints, data, file_name, sha256,
                               excitation_nm, instrument, created_at, data_sha256, dilution_factor, path_cm, label)
         VALUES (?1,?2,?3,?4,?5,?6,?7,?8,?9,?10,?11,?12,?13,?14,?15,?16)",
        params![
            s.aliquot_id,
            s.vial_id,
            s.kind,
            s.x_unit,
            s.y_unit,
            s.x.len() as i64,
            data,
            s.file_name,
            s.sha256,
            s.excitation_nm,
            s.instrument,
            now(),
            data_sha,
            s.dilution_factor,
            s.path_cm,
            s.label
        ],
    )?;
    let id = tx.last_insert_rowid();
    audit(
        tx,
        who,
        "spectrum",
        Some(id),
        "create",
        None,
        Some(
            &json!({"aliquot_id": s.aliquot_id, "vial_id": s.vial_id, "kind": s.kind,
                     "file_name": s.file_name, "label": s.label, "sha256": s.sha256, "npoints": s.x.len(),
                     "excitation_nm": s.excitation_nm, "path_cm": s.path_cm, "dilution_factor": s.dilution_factor}),
        ),
    )?;
    Ok(id)
}

const SPECTRUM_COLS: &str = "id, aliquot_id, vial_id, kind, x_unit, y_unit, npoints, data, file_name, sha256, excitation_nm, instrument, dilution_factor, path_cm, label";

fn spectrum_from(r: &Row) -> rusqlite::Result<(SpectrumRow, Vec<u8>)> {
    Ok((
        SpectrumRow {
            id: r.get(0)?,
            aliquot_id: r.get(1)?,
            vial_id: r.get(2)?,
            kind: r.get(3)?,
            x_unit: r.get(4)?,
            y_unit: r.get(5)?,
            npoints: r.get(6)?,
            x: Vec::new(),
            y: Vec::new(),
            file_name: r.get(8)?,
            sha256: r.get(9)?,
            excitation_nm: r.get(10)?,
            instrument: r.get(11)?,
            dilution_factor: r.get(12)?,
            path_cm: r.get(13)?,
            label: r.get(14)?,
        },
        r.get(7)?,
    ))
}

fn with_data((mut s, blob): (SpectrumRow, Vec<u8>)) -> Result<SpectrumRow> {
    let (x, y) = decode_xy(&blob)?;
    s.x = x;
    s.y = y;
    Ok(s)
}

pub fn spectra_of_aliquot(conn: &Connection, aliquot_id: i64) -> Result<Vec<SpectrumRow>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {SPECTRUM_COLS} FROM spectrum WHERE aliquot_id = ?1 ORDER BY id"
    ))?;
    let rows = st
        .query_map([aliquot_id], spectrum_from)?
        .collect::<rusqlite::Result<Vec<_>>>()?;
    rows.into_iter().map(with_data).collect()
}

/// The spectra of the aliquots with ids in `lo..=hi`, grouped by aliquot, in one query.
pub fn spectra_of_aliquots_in(
    conn: &Connection,
    lo: i64,
    hi: i64,
) -> Result<std::collections::HashMap<i64, Vec<SpectrumRow>>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {SPECTRUM_COLS} FROM spectrum WHERE aliquot_id BETWEEN ?1 AND ?2 ORDER BY aliquot_id, id"
    ))?;
    let rows = st.query_map(params![lo, hi], spectrum_from)?;
    let mut out: std::collections::HashMap<i64, Vec<SpectrumRow>> = std::collections::HashMap::new();
    for r in rows {
        let s = with_data(r?)?;
        if let Some(a) = s.aliquot_id {
            out.entry(a).or_default().push(s);
        }
    }
    Ok(out)
}

/// A spectrum with this file hash (and label within the file) already logged in a batch
/// (voided aliquots do not count):
/// (spectrum id, aliquot id).
pub fn spectrum_in_batch(
    conn: &Connection,
    batch_id: i64,
    sha256: &str,
    label: Option<&str>,
) -> Result<Option<(i64, i64)>> {
    Ok(conn
        .query_row(
            "SELECT s.id, a.id FROM spectrum s JOIN aliquot a ON a.id = s.aliquot_id
             WHERE a.batch_id = ?1 AND s.sha256 = ?2 AND s.label IS ?3 AND a.voided_at IS NULL LIMIT 1",
            params![batch_id, sha256, label],
            |r| Ok((r.get(0)?, r.get(1)?)),
        )
        .optional()?)
}

pub fn get_spectrum(conn: &Connection, id: i64) -> Result<SpectrumRow> {
    let raw = conn
        .query_row(
            &format!("SELECT {SPECTRUM_COLS} FROM spectrum WHERE id = ?1"),
            [id],
            spectrum_from,
        )
        .optional()?
        .ok_or_else(|| not_found("spectrum", id))?;
    with_data(raw)
}

// ---------------------------------------------------------------- locations and vials

#[derive(Debug, Clone, Serialize)]
pub struct LocationRow {
    pub id: i64,
    pub name: String,
    pub kind: LocationKind,
    pub position: Option<String>,
}

pub fn add_location(tx: &Connection, who: &str, name: &str, kind: LocationKind, position: Option<&str>) -> Result<i64> {
    if name.trim().is_empty() {
        return invalid("a location needs a name");
    }
    if location_by_name(tx, name).is_ok() {
        return invalid(format!("location '{name}' already exists"));
    }
    tx.execute(
        "INSERT INTO location (name, kind, position) VALUES (?1,?2,?3)",
        params![name.trim(), kind, position],
    )?;
    let id = tx.last_insert_rowid();
    audit(
        tx,
        who,
        "location",
        Some(id),
        "create",
        None,
        Some(&json!({"name": name, "kind": kind, "position": position})),
    )?;
    Ok(id)
}

pub fn location_by_name(conn: &Connection, name: &str) -> Result<LocationRow> {
    conn.query_row(
        "SELECT id, name, kind, position FROM location WHERE name = ?1 COLLATE NOCASE",
        [name],
        |r| {
            Ok(LocationRow {
                id: r.get(0)?,
                name: r.get(1)?,
                kind: r.get(2)?,
                position: r.get(3)?,
            })
        },
    )
    .optional()?
    .ok_or_else(|| {
        Error::Invalid(format!(
            "unknown location '{name}' (add it with `cuvette location add`)"
        ))
    })
}

pub fn list_locations(conn: &Connection) -> Result<Vec<LocationRow>> {
    let mut st = conn.prepare("SELECT id, name, kind, position FROM location ORDER BY name")?;
    let rows = st.query_map([], |r| {
        Ok(LocationRow {
            id: r.get(0)?,
            name: r.get(1)?,
            kind: r.get(2)?,
            position: r.get(3)?,
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

#[derive(Debug, Clone, Serialize)]
pub struct VialRow {
    pub id: i64,
    pub label: String,
    pub batch_id: i64,
    pub batch_name: String,
    pub material: String,
    pub location: String,
    pub position: Option<String>,
    pub volume_ml: f64,
    pub initial_ml: f64,
    pub solvent: String,
    pub owner: Option<String>,
    pub status: VialStatus,
    /// The vial's current concentration (of its own solution), with where it came from.
    pub concentration_molar: Option<f64>,
    pub created_at: String,
    /// measured, estimate, entered or recorded (see `VialConcentration`); None when unknown.
    pub concentration_source: Option<ConcentrationSource>,
    pub concentration_method: Option<String>,
    pub concentration_stale: bool,
    /// The calibration version behind the concentration (None for entered figures).
    pub calibration_version: Option<i64>,
}

const VIAL_SELECT: &str = "SELECT v.id, v.label, v.batch_id, b.name, m.name, l.name, v.position, v.volume_ml,
    v.initial_ml, v.solvent, p.name, v.status, c.value, v.created_at, c.source, c.method, COALESCE(c.stale, 0),
    c.calibration_version
  FROM vial v JOIN batch b ON b.id = v.batch_id JOIN material m ON m.id = b.material_id
  JOIN location l ON l.id = v.location_id LEFT JOIN person p ON p.id = v.owner_id
  LEFT JOIN vial_concentration c ON c.vial_id = v.id AND c.superseded_at IS NULL";

fn vial_from(r: &Row) -> rusqlite::Result<VialRow> {
    Ok(VialRow {
        id: r.get(0)?,
        label: r.get(1)?,
        batch_id: r.get(2)?,
        batch_name: r.get(3)?,
        material: r.get(4)?,
        location: r.get(5)?,
        position: r.get(6)?,
        volume_ml: r.get(7)?,
        initial_ml: r.get(8)?,
        solvent: r.get(9)?,
        owner: r.get(10)?,
        status: r.get(11)?,
        concentration_molar: r.get(12)?,
        created_at: r.get(13)?,
        concentration_source: r.get(14)?,
        concentration_method: r.get(15)?,
        concentration_stale: r.get(16)?,
        calibration_version: r.get(17)?,
    })
}

#[derive(Debug, Clone)]
pub struct NewVial {
    pub batch_id: i64,
    pub label: Option<String>,
    pub volume_ml: f64,
    pub solvent: String,
    pub location: String,
    pub position: Option<String>,
    pub owner: Option<String>,
    pub concentration_molar: Option<f64>,
    pub created_at: Option<String>,
}

pub fn insert_vial(tx: &Connection, who: &str, v: &NewVial) -> Result<i64> {
    let batch = get_batch(tx, v.batch_id)?;
    if batch.voided {
        return invalid(format!("batch {} is voided; reinstate it first", batch.id));
    }
    check_bounded("volume", v.volume_ml, false, 10_000.0, "mL")?;
    if let Some(c) = v.concentration_molar {
        check_bounded("concentration", c, true, 10.0, "M")?;
    }
    let loc = location_by_name(tx, &v.location)?;
    let owner = match &v.owner {
        Some(o) => Some(person_id(tx, o)?),
        None => person_id(tx, who).ok(),
    };
    let label = match &v.label {
        Some(l) if !l.trim().is_empty() => l.trim().to_string(),
        Some(_) => return invalid("a vial label cannot be empty"),
        None => {
            let n: i64 = tx.query_row("SELECT count(*) + 1 FROM vial WHERE batch_id = ?1", [batch.id], |r| {
                r.get(0)
            })?;
            format!("B{}-{}", batch.id, n)
        }
    };
    if tx
        .query_row("SELECT 1 FROM vial WHERE label = ?1", [&label], |_| Ok(()))
        .optional()?
        .is_some()
    {
        return invalid(format!("a vial labelled '{label}' already exists"));
    }
    let created = match &v.created_at {
        Some(t) => parse_time("created at", t)?,
        None => now(),
    };
    tx.execute(
        "INSERT INTO vial (batch_id, label, volume_ml, initial_ml, solvent, location_id, position, owner_id,
                           status, concentration_molar, created_at)
         VALUES (?1,?2,?3,?3,?4,?5,?6,?7,'in_use',?8,?9)",
        params![
            batch.id,
            label,
            v.volume_ml,
            v.solvent,
            loc.id,
            v.position,
            owner,
            Option::<f64>::None,
            created
        ],
    )?;
    let id = tx.last_insert_rowid();
    if let Some(c) = v.concentration_molar {
        set_vial_concentration(
            tx,
            id,
            &VialConcentration {
                source: ConcentrationSource::Entered,
                spectrum_id: None,
                aliquot_id: None,
                value: Some(c),
                method: format!("entered by {who}"),
                calibration_version: None,
                inputs_hash: String::new(),
                warnings: vec![],
            },
        )?;
    }
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, amount_ml, to_location_id, who, why, at) VALUES (?1,'create',?2,?3,?4,NULL,?5)",
        params![id, v.volume_ml, loc.id, who, created],
    )?;
    let row = get_vial(tx, id)?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "create",
        None,
        Some(&serde_json::to_value(&row)?),
    )?;
    Ok(id)
}

pub fn get_vial(conn: &Connection, id: i64) -> Result<VialRow> {
    conn.query_row(&format!("{VIAL_SELECT} WHERE v.id = ?1"), [id], vial_from)
        .optional()?
        .ok_or_else(|| not_found("vial", id))
}

/// Vials by id or by label.
pub fn find_vial(conn: &Connection, key: &str) -> Result<VialRow> {
    if let Ok(id) = key.parse::<i64>() {
        return get_vial(conn, id);
    }
    conn.query_row(&format!("{VIAL_SELECT} WHERE v.label = ?1"), [key], vial_from)
        .optional()?
        .ok_or_else(|| not_found("vial", key))
}

pub fn list_vials(conn: &Connection, include_disposed: bool) -> Result<Vec<VialRow>> {
    let sql = if include_disposed {
        format!("{VIAL_SELECT} ORDER BY l.name, v.id")
    } else {
        format!("{VIAL_SELECT} WHERE v.status <> 'disposed' ORDER BY l.name, v.id")
    };
    let mut st = conn.prepare(&sql)?;
    let rows = st.query_map([], vial_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

pub fn vials_of_batch(conn: &Connection, batch_id: i64) -> Result<Vec<VialRow>> {
    let mut st = conn.prepare(&format!("{VIAL_SELECT} WHERE v.batch_id = ?1 ORDER BY v.id"))?;
    let rows = st.query_map([batch_id], vial_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

fn usable_vial(conn: &Connection, id: i64) -> Result<VialRow> {
    let v = get_vial(conn, id)?;
    if v.status == VialStatus::Disposed {
        return invalid(format!("vial {} ({}) has been disposed of", v.id, v.label));
    }
    Ok(v)
}

/// Tolerance for "draw everything that is left": volumes carry float round-off.
const VOLUME_EPS_ML: f64 = 1e-9;

pub fn draw_from_vial(tx: &Connection, who: &str, id: i64, ml: f64, why: Option<&str>) -> Result<VialRow> {
    let v = usable_vial(tx, id)?;
    check_number("volume to draw (mL)", ml, false)?;
    if ml > v.volume_ml + VOLUME_EPS_ML {
        return invalid(format!(
            "cannot draw {ml} mL from vial {} ({}): only {} mL left",
            v.id, v.label, v.volume_ml
        ));
    }
    let left = (v.volume_ml - ml).max(0.0);
    let left = if left < VOLUME_EPS_ML { 0.0 } else { left };
    let status = if left == 0.0 {
        VialStatus::Empty
    } else {
        VialStatus::InUse
    };
    tx.execute(
        "UPDATE vial SET volume_ml = ?1, status = ?2 WHERE id = ?3",
        params![left, status, id],
    )?;
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, amount_ml, who, why, at) VALUES (?1,'draw',?2,?3,?4,?5)",
        params![id, ml, who, why, now()],
    )?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "draw",
        Some(&json!({"volume_ml": v.volume_ml})),
        Some(&json!({"volume_ml": left, "drawn_ml": ml, "why": why})),
    )?;
    get_vial(tx, id)
}

pub fn move_vial(
    tx: &Connection,
    who: &str,
    id: i64,
    location: &str,
    position: Option<&str>,
    why: Option<&str>,
) -> Result<VialRow> {
    let v = usable_vial(tx, id)?;
    let to = location_by_name(tx, location)?;
    let from = location_by_name(tx, &v.location)?;
    tx.execute(
        "UPDATE vial SET location_id = ?1, position = ?2 WHERE id = ?3",
        params![to.id, position, id],
    )?;
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, from_location_id, to_location_id, who, why, at) VALUES (?1,'move',?2,?3,?4,?5,?6)",
        params![id, from.id, to.id, who, why, now()],
    )?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "move",
        Some(&json!({"location": v.location, "position": v.position})),
        Some(&json!({"location": to.name, "position": position})),
    )?;
    get_vial(tx, id)
}

pub fn dispose_vial(tx: &Connection, who: &str, id: i64, why: &str) -> Result<VialRow> {
    let v = usable_vial(tx, id)?;
    if why.trim().is_empty() {
        return invalid("disposal needs a reason (--why)");
    }
    tx.execute("UPDATE vial SET status = 'disposed' WHERE id = ?1", [id])?;
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, amount_ml, who, why, at) VALUES (?1,'dispose',?2,?3,?4,?5)",
        params![id, v.volume_ml, who, why, now()],
    )?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "dispose",
        Some(&json!({"status": v.status, "volume_ml": v.volume_ml})),
        Some(&json!({"status": VialStatus::Disposed, "why": why})),
    )?;
    get_vial(tx, id)
}

#[derive(Debug, Clone, Serialize)]
pub struct VialEventRow {
    pub id: i64,
    pub vial_id: i64,
    pub kind: VialEventKind,
    pub amount_ml: Option<f64>,
    pub who: String,
    pub why: Option<String>,
    pub at: String,
}

/// Records that a vial's concentration was measured from a spectrum (the event the vial's
/// history shows; the value itself is `set_vial_concentration`'s).
pub fn record_vial_measured(tx: &Connection, who: &str, vial_id: i64, spectrum_id: i64) -> Result<()> {
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, who, why, at) VALUES (?1, 'measure', ?2, ?3, ?4)",
        params![vial_id, who, format!("spectrum {spectrum_id}"), crate::store::now()],
    )?;
    Ok(())
}

pub fn vial_events(conn: &Connection, vial_id: i64) -> Result<Vec<VialEventRow>> {
    let mut st = conn
        .prepare("SELECT id, vial_id, kind, amount_ml, who, why, at FROM vial_event WHERE vial_id = ?1 ORDER BY id")?;
    let rows = st.query_map([vial_id], |r| {
        Ok(VialEventRow {
            id: r.get(0)?,
            vial_id: r.get(1)?,
            kind: r.get(2)?,
            amount_ml: r.get(3)?,
            who: r.get(4)?,
            why: r.get(5)?,
            at: r.get(6)?,
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

// ---------------------------------------------------------------- audit log

#[derive(Debug, Clone, Serialize)]
pub struct AuditRow {
    pub id: i64,
    pub at: String,
    pub who: String,
    pub entity: String,
    pub entity_id: Option<i64>,
    pub action: String,
    pub before: Option<serde_json::Value>,
    pub after: Option<serde_json::Value>,
}

pub fn audit_log(conn: &Connection, entity: Option<&str>, limit: i64) -> Result<Vec<AuditRow>> {
    audit_rows(conn, entity, None, limit)
}

/// The audit entries about one thing (a batch, vial, aliquot...), newest first.
pub fn audit_log_of(conn: &Connection, entity: &str, entity_id: i64, limit: i64) -> Result<Vec<AuditRow>> {
    audit_rows(conn, Some(entity), Some(entity_id), limit)
}

fn audit_rows(conn: &Connection, entity: Option<&str>, entity_id: Option<i64>, limit: i64) -> Result<Vec<AuditRow>> {
    let mut st = conn.prepare(
        "SELECT id, at, who, entity, entity_id, action, before, after FROM audit_log
         WHERE (?1 IS NULL OR entity = ?1) AND (?2 IS NULL OR entity_id = ?2) ORDER BY id DESC LIMIT ?3",
    )?;
    let rows = st.query_map(params![entity, entity_id, limit], |r| {
        let b: Option<String> = r.get(6)?;
        let a: Option<String> = r.get(7)?;
        Ok(AuditRow {
            id: r.get(0)?,
            at: r.get(1)?,
            who: r.get(2)?,
            entity: r.get(3)?,
            entity_id: r.get(4)?,
            action: r.get(5)?,
            before: b.and_then(|s| serde_json::from_str(&s).ok()),
            after: a.and_then(|s| serde_json::from_str(&s).ok()),
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

pub fn meta_get(conn: &Connection, key: &str) -> Result<Option<String>> {
    Ok(conn
        .query_row("SELECT value FROM lab_meta WHERE key = ?1", [key], |r| r.get(0))
        .optional()?)
}

pub fn meta_set(tx: &Connection, who: &str, key: &str, value: &str) -> Result<()> {
    let before = meta_get(tx, key)?;
    tx.execute(
        "INSERT INTO lab_meta (key, value) VALUES (?1, ?2) ON CONFLICT(key) DO UPDATE SET value = excluded.value",
        params![key, value],
    )?;
    audit(
        tx,
        who,
        "lab_meta",
        None,
        "set",
        before.map(|b| json!({key: b})).as_ref(),
        Some(&json!({key: value})),
    )?;
    Ok(())
}

/// A screen's convenience setting (the folder a batch's exports were last picked from), kept
/// in the lab beside its batches but not audited: it records no lab work, and a trail entry
/// for every folder opened would bury the entries that matter. Keys start with `ui.`.
pub fn ui_setting_set(tx: &Connection, key: &str, value: &str) -> Result<()> {
    if !key.starts_with("ui.") {
        return invalid(format!("'{key}' is not a screen setting (they start with ui.)"));
    }
    tx.execute(
        "INSERT INTO lab_meta (key, value) VALUES (?1, ?2) ON CONFLICT(key) DO UPDATE SET value = excluded.value",
        params![key, value],
    )?;
    Ok(())
}

// ---------------------------------------------------------------- vial concentrations

/// A vial concentration with its provenance, as written (see schema 0005).
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct VialConcentration {
    pub source: ConcentrationSource,
    pub spectrum_id: Option<i64>,
    pub aliquot_id: Option<i64>,
    pub value: Option<f64>,
    pub method: String,
    pub calibration_version: Option<i64>,
    pub inputs_hash: String,
    pub warnings: Vec<String>,
}

/// A stored vial concentration row.
#[derive(Debug, Clone, Serialize)]
pub struct StoredVialConcentration {
    pub id: i64,
    pub vial_id: i64,
    #[serde(flatten)]
    pub c: VialConcentration,
    pub computed_at: String,
    pub stale: bool,
}

const VIAL_CONC_COLS: &str = "id, vial_id, source, spectrum_id, aliquot_id, value, method, calibration_version, inputs_hash, warnings, computed_at, stale";

fn vial_conc_from(r: &Row) -> rusqlite::Result<StoredVialConcentration> {
    let w: String = r.get(9)?;
    Ok(StoredVialConcentration {
        id: r.get(0)?,
        vial_id: r.get(1)?,
        c: VialConcentration {
            source: r.get(2)?,
            spectrum_id: r.get(3)?,
            aliquot_id: r.get(4)?,
            value: r.get(5)?,
            method: r.get(6)?,
            calibration_version: r.get(7)?,
            inputs_hash: r.get(8)?,
            warnings: serde_json::from_str(&w).unwrap_or_default(),
        },
        computed_at: r.get(10)?,
        stale: r.get(11)?,
    })
}

/// The current concentration row of a vial.
pub fn current_vial_concentration(conn: &Connection, vial_id: i64) -> Result<Option<StoredVialConcentration>> {
    Ok(conn
        .query_row(
            &format!("SELECT {VIAL_CONC_COLS} FROM vial_concentration WHERE vial_id = ?1 AND superseded_at IS NULL"),
            [vial_id],
            vial_conc_from,
        )
        .optional()?)
}

/// Every vial's current concentration whose value can follow a calibration (measured or
/// estimated), of one batch's vials or of all, for recompute and stale marking.
pub fn derived_vial_concentrations(conn: &Connection, batch: Option<i64>) -> Result<Vec<StoredVialConcentration>> {
    let mut st = conn.prepare_cached(&format!(
        "SELECT {VIAL_CONC_COLS} FROM vial_concentration
          WHERE superseded_at IS NULL AND source IN ('measured','estimate')
            AND (?1 IS NULL OR vial_id IN (SELECT id FROM vial WHERE batch_id = ?1))
          ORDER BY vial_id"
    ))?;
    let rows = st.query_map([batch], vial_conc_from)?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Writes a vial's concentration: an unchanged one is re-stamped, a changed one supersedes the
/// current row (kept as history). Returns whether the value changed. Audited by the caller's
/// action (measure, new vial, recompute).
pub fn set_vial_concentration(tx: &Connection, vial_id: i64, c: &VialConcentration) -> Result<bool> {
    if let Some(v) = c.value {
        check_bounded("concentration", v, true, 10.0, "M")?;
    }
    let t = now();
    let w = serde_json::to_string(&c.warnings)?;
    if let Some(old) = current_vial_concentration(tx, vial_id)? {
        if old.c == *c {
            if old.stale {
                tx.execute(
                    "UPDATE vial_concentration SET stale = 0, computed_at = ?1 WHERE id = ?2",
                    params![t, old.id],
                )?;
            }
            return Ok(false);
        }
        tx.execute(
            "UPDATE vial_concentration SET superseded_at = ?1 WHERE id = ?2",
            params![t, old.id],
        )?;
    }
    tx.execute(
        "INSERT INTO vial_concentration (vial_id, source, spectrum_id, aliquot_id, value, method, calibration_version, inputs_hash, warnings, computed_at)
         VALUES (?1,?2,?3,?4,?5,?6,?7,?8,?9,?10)",
        params![vial_id, c.source, c.spectrum_id, c.aliquot_id, c.value, c.method, c.calibration_version, c.inputs_hash, w, t],
    )?;
    Ok(true)
}

/// Flags a vial's current concentration stale (or not); bookkeeping, not audited.
pub fn flag_vial_concentration(tx: &Connection, id: i64, stale: bool) -> Result<bool> {
    Ok(tx.execute(
        "UPDATE vial_concentration SET stale = ?1 WHERE id = ?2 AND stale <> ?1",
        params![stale, id],
    )? > 0)
}

/// The absorbance spectrum a vial was last measured with.
pub fn vial_spectrum(conn: &Connection, spectrum_id: i64) -> Result<SpectrumRow> {
    get_spectrum(conn, spectrum_id)
}

// ---------------------------------------------------------------- corrections

/// What an aliquot edit may change; None leaves a field as it is.
#[derive(Debug, Clone, Default)]
pub struct AliquotEdit {
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub dilution_factor: Option<f64>,
    pub path_cm: Option<f64>,
    pub solvent: Option<String>,
}

/// A change of a row's void mark, with its reason.
#[derive(Debug, Clone, Copy)]
enum VoidChange<'a> {
    Void(&'a str),
    Reinstate(&'a str),
}

/// Sets or clears the void mark of an aliquot or a batch row, audited with before and after
/// (a void's reason is in the row; a reinstatement's beside it).
fn mark_void<T: Serialize>(
    tx: &Connection,
    who: &str,
    entity: &str,
    id: i64,
    change: VoidChange,
    get: fn(&Connection, i64) -> Result<T>,
) -> Result<T> {
    let before = get(tx, id)?;
    let (stamp, why, action) = match change {
        VoidChange::Void(w) => (Some(now()), Some(w), "void"),
        VoidChange::Reinstate(_) => (None, None, "reinstate"),
    };
    tx.execute(
        &format!("UPDATE {entity} SET voided_at = ?1, void_why = ?2 WHERE id = ?3"),
        params![stamp, why, id],
    )?;
    let after = serde_json::to_value(get(tx, id)?)?;
    let recorded = match change {
        VoidChange::Void(_) => after,
        VoidChange::Reinstate(w) => json!({"row": after, "why": w}),
    };
    audit(
        tx,
        who,
        entity,
        Some(id),
        action,
        Some(&serde_json::to_value(&before)?),
        Some(&recorded),
    )?;
    get(tx, id)
}

/// Voids an aliquot: it stays in the record, marked, and counts for nothing.
pub fn void_aliquot(tx: &Connection, who: &str, id: i64, why: &str) -> Result<AliquotRow> {
    let why = check_reason(why)?;
    let before = get_aliquot(tx, id)?;
    if before.voided {
        return invalid(format!(
            "aliquot {id} is already void ({})",
            before.void_why.unwrap_or_default()
        ));
    }
    mark_void(tx, who, "aliquot", id, VoidChange::Void(why), get_aliquot)
}

/// Undoes a void.
pub fn reinstate_aliquot(tx: &Connection, who: &str, id: i64, why: &str) -> Result<AliquotRow> {
    let why = check_reason(why)?;
    let before = get_aliquot(tx, id)?;
    if !before.voided {
        return invalid(format!("aliquot {id} is not void"));
    }
    let has_spectrum: bool = tx
        .query_row("SELECT 1 FROM spectrum WHERE aliquot_id = ?1 LIMIT 1", [id], |_| Ok(()))
        .optional()?
        .is_some();
    if !has_spectrum {
        return invalid(format!("aliquot {id} has no spectrum left; move one back to it first"));
    }
    mark_void(tx, who, "aliquot", id, VoidChange::Reinstate(why), get_aliquot)
}

/// Changes the logged facts of an aliquot; the caller re-derives its values.
pub fn edit_aliquot(tx: &Connection, who: &str, id: i64, e: &AliquotEdit, why: &str) -> Result<AliquotRow> {
    let why = check_reason(why)?;
    let before = get_aliquot(tx, id)?;
    if e.minutes.is_none()
        && e.stage.is_none()
        && e.dilution_factor.is_none()
        && e.path_cm.is_none()
        && e.solvent.is_none()
    {
        return invalid("nothing to change: give --minutes, --stage, --dilution, --path-cm or --solvent");
    }
    if let Some(m) = e.minutes {
        check_bounded("minutes", m, true, 100_000.0, "min")?;
    }
    if let Some(d) = e.dilution_factor {
        check_bounded("dilution factor", d, false, 1e6, "x")?;
        if d < 1.0 {
            return invalid(format!(
                "dilution factor {d} is below 1; it is the factor by which the aliquot was diluted"
            ));
        }
    }
    if let Some(p) = e.path_cm {
        check_bounded("path length", p, false, 100.0, "cm")?;
    }
    // A timed aliquot given a stage (or the reverse) keeps exactly one of the two.
    let (minutes, stage) = match (e.minutes, &e.stage) {
        (Some(m), Some(s)) if !s.is_empty() => {
            return invalid(format!("give either --minutes ({m}) or --stage ({s}), not both"));
        }
        (Some(m), _) => (Some(m), None),
        (None, Some(s)) if !s.trim().is_empty() => (None, Some(s.trim().to_string())),
        (None, Some(_)) => return invalid("a stage cannot be empty"),
        (None, None) => (before.minutes, before.stage.clone()),
    };
    tx.execute(
        "UPDATE aliquot SET minutes = ?1, stage = ?2, dilution_factor = ?3, path_cm = ?4, solvent = ?5 WHERE id = ?6",
        params![
            minutes,
            stage,
            e.dilution_factor.unwrap_or(before.dilution_factor),
            e.path_cm.unwrap_or(before.path_cm),
            e.solvent.clone().unwrap_or(before.solvent.clone()),
            id
        ],
    )?;
    let after = get_aliquot(tx, id)?;
    audit(
        tx,
        who,
        "aliquot",
        Some(id),
        "edit",
        Some(&serde_json::to_value(&before)?),
        Some(&json!({"row": serde_json::to_value(&after)?, "why": why})),
    )?;
    Ok(after)
}

/// Moves a spectrum to another aliquot (of any batch). Returns (from, to) aliquot ids; the
/// caller re-derives both. An aliquot left without spectra is voided, since it holds nothing.
/// Corrects the cuvette a spectrum of an aliquot was measured in: its own path length (cm)
/// and dilution factor, already checked by the caller (`bench::OwnCuvette::checked`). Returns
/// the aliquot, whose values the caller derives again. Audited with before and after.
pub fn set_spectrum_cuvette(
    tx: &Connection,
    who: &str,
    spectrum_id: i64,
    path_cm: Option<f64>,
    dilution_factor: Option<f64>,
    why: &str,
) -> Result<i64> {
    let why = check_reason(why)?;
    if path_cm.is_none() && dilution_factor.is_none() {
        return invalid("nothing to change: give --path-cm or --dilution");
    }
    let s = get_spectrum(tx, spectrum_id)?;
    let Some(aliquot) = s.aliquot_id else {
        return invalid(format!(
            "spectrum {spectrum_id} belongs to vial {}, not an aliquot: measure the vial again instead",
            s.vial_id.unwrap_or(0)
        ));
    };
    let (path, dilution) = (path_cm.or(s.path_cm), dilution_factor.or(s.dilution_factor));
    tx.execute(
        "UPDATE spectrum SET path_cm = ?1, dilution_factor = ?2 WHERE id = ?3",
        params![path, dilution, spectrum_id],
    )?;
    audit(
        tx,
        who,
        "spectrum",
        Some(spectrum_id),
        "cuvette",
        Some(&json!({"path_cm": s.path_cm, "dilution_factor": s.dilution_factor})),
        Some(&json!({"path_cm": path, "dilution_factor": dilution, "why": why})),
    )?;
    Ok(aliquot)
}

pub fn move_spectrum(tx: &Connection, who: &str, spectrum_id: i64, to_aliquot: i64, why: &str) -> Result<(i64, i64)> {
    let why = check_reason(why)?;
    let s = get_spectrum(tx, spectrum_id)?;
    let Some(from) = s.aliquot_id else {
        return invalid(format!(
            "spectrum {spectrum_id} belongs to vial {}, not an aliquot",
            s.vial_id.unwrap_or(0)
        ));
    };
    if from == to_aliquot {
        return invalid(format!(
            "spectrum {spectrum_id} already belongs to aliquot {to_aliquot}"
        ));
    }
    let target = get_aliquot(tx, to_aliquot)?;
    let target_empty = tx
        .query_row(
            "SELECT 1 FROM spectrum WHERE aliquot_id = ?1 LIMIT 1",
            [to_aliquot],
            |_| Ok(()),
        )
        .optional()?
        .is_none();
    // An aliquot voided because its last spectrum moved away takes one back (and counts again);
    // any other void aliquot is reinstated on purpose first.
    if target.voided && !target_empty {
        return invalid(format!("aliquot {to_aliquot} is void; reinstate it first"));
    }
    let clash: Option<i64> = tx
        .query_row(
            "SELECT id FROM spectrum WHERE aliquot_id = ?1 AND kind = ?2",
            params![to_aliquot, s.kind],
            |r| r.get(0),
        )
        .optional()?;
    if let Some(c) = clash {
        return invalid(format!(
            "aliquot {to_aliquot} already has {} spectrum ({c}); move or void that one first",
            match s.kind.as_str() {
                "abs" => "an absorbance",
                "pl" => "a PL",
                _ => "a PLE",
            }
        ));
    }
    tx.execute(
        "UPDATE spectrum SET aliquot_id = ?1 WHERE id = ?2",
        params![to_aliquot, spectrum_id],
    )?;
    audit(
        tx,
        who,
        "spectrum",
        Some(spectrum_id),
        "move",
        Some(&json!({"aliquot_id": from})),
        Some(&json!({"aliquot_id": to_aliquot, "why": why})),
    )?;
    if target.voided {
        reinstate_aliquot(
            tx,
            who,
            to_aliquot,
            &format!("spectrum {spectrum_id} moved back to it: {why}"),
        )?;
    }
    let left: i64 = tx.query_row("SELECT count(*) FROM spectrum WHERE aliquot_id = ?1", [from], |r| {
        r.get(0)
    })?;
    if left == 0 && !get_aliquot(tx, from)?.voided {
        void_aliquot(
            tx,
            who,
            from,
            &format!("its last spectrum ({spectrum_id}) moved to aliquot {to_aliquot}: {why}"),
        )?;
    }
    Ok((from, to_aliquot))
}

/// Voids a batch: it stays in the record, marked, and is left out of search, the shelf's
/// product values and the pack; its vials stay on the shelf until disposed.
pub fn void_batch(tx: &Connection, who: &str, id: i64, why: &str) -> Result<BatchRow> {
    let why = check_reason(why)?;
    if get_batch(tx, id)?.voided {
        return invalid(format!("batch {id} is already void"));
    }
    mark_void(tx, who, "batch", id, VoidChange::Void(why), get_batch)
}

/// Undoes a batch void.
pub fn reinstate_batch(tx: &Connection, who: &str, id: i64, why: &str) -> Result<BatchRow> {
    let why = check_reason(why)?;
    if !get_batch(tx, id)?.voided {
        return invalid(format!("batch {id} is not void"));
    }
    mark_void(tx, who, "batch", id, VoidChange::Reinstate(why), get_batch)
}

/// Puts a disposed vial back on the shelf, as it was before its disposal.
pub fn reinstate_vial(tx: &Connection, who: &str, id: i64, why: &str) -> Result<VialRow> {
    let why = check_reason(why)?;
    let v = get_vial(tx, id)?;
    if v.status != VialStatus::Disposed {
        return invalid(format!("vial {} ({}) is not disposed of", v.id, v.label));
    }
    let status = if v.volume_ml > VOLUME_EPS_ML {
        VialStatus::InUse
    } else {
        VialStatus::Empty
    };
    tx.execute("UPDATE vial SET status = ?1 WHERE id = ?2", params![status, id])?;
    tx.execute(
        "INSERT INTO vial_event (vial_id, kind, who, why, at) VALUES (?1,'reinstate',?2,?3,?4)",
        params![id, who, why, now()],
    )?;
    audit(
        tx,
        who,
        "vial",
        Some(id),
        "reinstate",
        Some(&json!({"status": v.status})),
        Some(&json!({"status": status, "why": why})),
    )?;
    get_vial(tx, id)
}
