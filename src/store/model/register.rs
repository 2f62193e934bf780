//! The lab's register: people, materials, reagents and storage locations, each with its
//! insert (validated, audited) and its reads by name and as a list. A name that is not
//! registered is refused in one line that says how to add it.

use super::not_found;
use crate::error::{Error, Result, invalid};
use crate::store::audit;
use crate::vocab::LocationKind;
use rusqlite::{Connection, OptionalExtension, Row, params};
use serde::Serialize;
use serde_json::json;

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
