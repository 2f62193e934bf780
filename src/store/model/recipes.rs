//! Recipes and their versions: saving makes a new version (old ones are never changed), with
//! its reagent lines (each in an amount unit of `vocab::AmountUnit`) and steps; the views read
//! one version whole or list the recipes with their latest version.

use super::{check_number, material_by_name, not_found, person_id, reagent_by_name};
use crate::error::{Result, invalid};
use crate::store::{audit, now};
use crate::vocab::{AmountUnit, Vocabulary};
use rusqlite::{Connection, OptionalExtension, params};
use serde::Serialize;
use serde_json::json;

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
