//! The lab's people, materials, reagents and storage locations: adding them and listing them.

use super::open_for;
use crate::cli::args::*;
use crate::cli::output::{json, line};
use crate::derive::sizing;
use crate::store::model;
use anyhow::Result;
use serde::Serialize;

pub(super) fn person(cli: &Cli, c: &PersonCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, PersonCmd::Add { .. }))?;
    match c {
        PersonCmd::Add { name, email, json: j } => {
            let id = crate::lab::register::add_person(&mut store, name, email.as_deref())?;
            if *j {
                let people = store.read(|tx| model::list_people(tx))?;
                return json(&people.iter().find(|p| p.id == id));
            }
            line(&format!("person {id}: {name}"))?;
        }
        PersonCmd::List(f) => {
            let people = store.read(|tx| model::list_people(tx))?;
            if f.json {
                json(&people)?;
            } else {
                for p in people {
                    line(&format!("{:>4}  {}", p.id, p.name))?;
                }
            }
        }
    }
    Ok(())
}

pub(super) fn material(cli: &Cli, c: &MaterialCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, MaterialCmd::Add { .. }))?;
    match c {
        MaterialCmd::Add {
            name,
            core,
            shell,
            json: j,
        } => {
            let id = crate::lab::register::add_material(&mut store, name, core, shell.as_deref())?;
            if *j {
                let ms = store.read(|tx| model::list_materials(tx))?;
                return json(&ms.iter().find(|m| m.id == id).map(material_json));
            }
            line(&format!("material {id}: {name}"))?;
        }
        MaterialCmd::List(f) => {
            let ms = store.read(|tx| model::list_materials(tx))?;
            if f.json {
                let v: Vec<MaterialView> = ms.iter().map(material_json).collect();
                json(&v)?;
            } else {
                for m in ms {
                    line(&format!(
                        "{:>4}  {:<10} core {:<5} curves: {}",
                        m.id,
                        m.name,
                        m.core,
                        sizing::curves_for(&m.core).join(", ")
                    ))?;
                }
            }
        }
    }
    Ok(())
}

pub(super) fn reagent(cli: &Cli, c: &ReagentCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, ReagentCmd::Add { .. }))?;
    match c {
        ReagentCmd::Add {
            name,
            formula,
            cas,
            hazards,
            pyrophoric,
            json: j,
        } => {
            let id = crate::lab::register::add_reagent(
                &mut store,
                name,
                formula.as_deref(),
                cas.as_deref(),
                hazards,
                *pyrophoric,
            )?;
            if *j {
                let rs = store.read(|tx| model::list_reagents(tx))?;
                return json(&rs.iter().find(|r| r.id == id));
            }
            line(&format!("reagent {id}: {name}"))?;
        }
        ReagentCmd::List(f) => {
            let rs = store.read(|tx| model::list_reagents(tx))?;
            if f.json {
                json(&rs)?;
            } else {
                for r in rs {
                    line(&format!(
                        "{:>4}  {:<32} {}{}",
                        r.id,
                        r.name,
                        r.ghs_hazards.join(" "),
                        if r.pyrophoric { "  PYROPHORIC" } else { "" }
                    ))?;
                }
                line(crate::hazards::SDS_NOTICE)?;
            }
        }
    }
    Ok(())
}

pub(super) fn location(cli: &Cli, c: &LocationCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, LocationCmd::Add { .. }))?;
    match c {
        LocationCmd::Add {
            name,
            kind,
            position,
            json: j,
        } => {
            let id = crate::lab::register::add_location(&mut store, name, *kind, position.as_deref())?;
            if *j {
                let ls = store.read(|tx| model::list_locations(tx))?;
                return json(&ls.iter().find(|l| l.id == id));
            }
            line(&format!("location {id}: {name}"))?;
        }
        LocationCmd::List(f) => {
            let ls = store.read(|tx| model::list_locations(tx))?;
            if f.json {
                json(&ls)?;
            } else {
                for l in ls {
                    line(&format!(
                        "{:>4}  {:<24} {:<9} {}",
                        l.id,
                        l.name,
                        l.kind,
                        l.position.unwrap_or_default()
                    ))?;
                }
            }
        }
    }
    Ok(())
}

/// A material as `material list --json` and `material add --json` give it: with the sizing
/// curves that apply to its core.
fn material_json(m: &model::MaterialRow) -> MaterialView {
    MaterialView {
        core: m.core.clone(),
        curves: sizing::curves_for(&m.core),
        id: m.id,
        name: m.name.clone(),
        shell: m.shell.clone(),
    }
}

/// A material with the sizing curves that apply to its core.
#[derive(Serialize)]
struct MaterialView {
    // Fields in alphabetical order: the order these keys have always been printed in.
    core: String,
    curves: Vec<&'static str>,
    id: i64,
    name: String,
    shell: Option<String>,
}
