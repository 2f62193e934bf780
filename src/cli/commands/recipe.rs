//! Recipes: the reagent and step shorthand they are written in, a new version, showing one,
//! and the statistics of the batches made from it.

use super::open_for;
use crate::cli::args::*;
use crate::cli::output::{json, line, num};
use crate::store::model;
use anyhow::{Result, anyhow};
use serde_json::json;

/// "cadmium oxide=0.2 mmol:precursor"
fn parse_reagent(s: &str) -> Result<model::RecipeReagent> {
    let (name, rest) = s
        .split_once('=')
        .ok_or_else(|| anyhow!("reagent '{s}' should read NAME=AMOUNT UNIT[:ROLE]"))?;
    let (amount_unit, role) = match rest.split_once(':') {
        Some((a, r)) => (a, Some(r.trim().to_string())),
        None => (rest, None),
    };
    let mut parts = amount_unit.split_whitespace();
    let amount: f64 = parts
        .next()
        .and_then(|a| a.parse().ok())
        .ok_or_else(|| anyhow!("reagent '{s}': amount is not a number"))?;
    let unit = parts
        .next()
        .ok_or_else(|| anyhow!("reagent '{s}': no unit"))?
        .to_string();
    Ok(model::RecipeReagent {
        reagent: name.trim().to_string(),
        amount,
        unit,
        role,
    })
}

/// "inject Se-TOP@260 C/5 min"
fn parse_step(s: &str) -> Result<model::RecipeStep> {
    let (head, minutes) = match s.rsplit_once('/') {
        Some((h, m)) if m.trim().ends_with("min") => {
            let v: f64 = m
                .trim()
                .trim_end_matches("min")
                .trim()
                .parse()
                .map_err(|_| anyhow!("step '{s}': minutes is not a number"))?;
            (h, Some(v))
        }
        _ => (s, None),
    };
    let (action, temp) = match head.rsplit_once('@') {
        Some((a, t)) => {
            let v: f64 = t
                .trim()
                .trim_end_matches('C')
                .trim_end_matches('°')
                .trim()
                .parse()
                .map_err(|_| anyhow!("step '{s}': temperature is not a number"))?;
            (a, Some(v))
        }
        None => (head, None),
    };
    Ok(model::RecipeStep {
        action: action.trim().to_string(),
        temperature_c: temp,
        duration_min: minutes,
    })
}

fn print_recipe(r: &model::RecipeView) -> Result<()> {
    line(&format!("{} v{} ({})", r.name, r.version, r.material))?;
    for g in &r.reagents {
        line(&format!(
            "  {:<32} {:>8} {:<5} {:<10} {}{}",
            g.reagent,
            g.amount,
            g.unit,
            g.role.clone().unwrap_or_default(),
            g.ghs_hazards.join(" "),
            if g.pyrophoric { " PYROPHORIC" } else { "" }
        ))?;
    }
    for (i, s) in r.steps.iter().enumerate() {
        line(&format!(
            "  {}. {}{}{}",
            i + 1,
            s.action,
            s.temperature_c.map(|t| format!(" at {t} °C")).unwrap_or_default(),
            s.duration_min.map(|m| format!(" for {m} min")).unwrap_or_default()
        ))?;
    }
    for c in crate::report::cautions(r) {
        line(&format!("  ! {c}"))?;
    }
    Ok(())
}

pub(super) fn recipe(cli: &Cli, c: &RecipeCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, RecipeCmd::New { .. }))?;
    match c {
        RecipeCmd::New {
            name,
            material,
            reagents,
            steps,
            notes,
            json: j,
        } => {
            let rs: Vec<model::RecipeReagent> = reagents.iter().map(|s| parse_reagent(s)).collect::<Result<_>>()?;
            let ss: Vec<model::RecipeStep> = steps.iter().map(|s| parse_step(s)).collect::<Result<_>>()?;
            let view = crate::lab::register::save_recipe(&mut store, name, material, &rs, &ss, notes.as_deref())?;
            if *j { json(&view)? } else { print_recipe(&view)? }
        }
        RecipeCmd::Show { name, version, json: j } => {
            let view = store.read(|tx| {
                let vid = model::recipe_version_id(tx, name, *version)?;
                model::recipe_view(tx, vid)
            })?;
            if *j {
                let mut v = serde_json::to_value(&view)?;
                v["cautions"] = json!(crate::report::cautions(&view));
                json(&v)?
            } else {
                print_recipe(&view)?
            }
        }
        RecipeCmd::List(f) => {
            let rs = store.read(|tx| model::list_recipes(tx))?;
            if f.json {
                json(&rs)?;
            } else {
                for r in rs {
                    line(&format!(
                        "{:>4}  {:<30} {:<10} v{}",
                        r.id, r.name, r.material, r.latest_version
                    ))?;
                }
            }
        }
        RecipeCmd::Stats { name, version, json: j } => {
            let st = store.read(|tx| {
                let vid = model::recipe_version_id(tx, name, *version)?;
                crate::report::recipe_stats(tx, vid)
            })?;
            if *j {
                json(&st)?;
            } else {
                line(&format!(
                    "{} v{}: {} batches ({} failed)",
                    st.recipe, st.version, st.batches, st.failed
                ))?;
                for (label, s) in [
                    ("diameter nm", &st.diameter_nm),
                    ("dispersion %", &st.size_dispersion_pct),
                    ("PL peak nm", &st.pl_peak_nm),
                    ("QY", &st.qy),
                ] {
                    if let Some(s) = s {
                        line(&format!(
                            "  {label:<13} mean {:.3}  sd {}  (n={})",
                            s.mean,
                            num(s.sd, 3),
                            s.n
                        ))?;
                    }
                }
            }
        }
    }
    Ok(())
}
