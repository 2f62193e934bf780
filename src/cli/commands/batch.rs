//! Batches: starting one, listing, showing (with its aliquots, growth, yield and vials),
//! editing, repeating, and voiding or reinstating.

use super::open_for;
use crate::cli::args::*;
use crate::cli::output::{json, line, molar, num};
use crate::store::model;
use anyhow::Result;
use serde_json::Value;

pub(super) fn batch(cli: &Cli, c: &BatchCmd) -> Result<()> {
    let mut store = open_for(cli, !matches!(c, BatchCmd::List(_) | BatchCmd::Show { .. }))?;
    match c {
        BatchCmd::New(a) => {
            let nb = model::NewBatch {
                name: a.name.clone(),
                material: a.material.clone(),
                recipe: a.recipe.clone(),
                recipe_version: a.recipe_version,
                operator: a.operator.clone(),
                started_at: a.started.clone(),
                status: a.status,
                parent_batch_id: a.parent,
                parent_relation: a.relation,
                notes: a.notes.clone(),
            };
            let row = crate::lab::batches::log_batch(&mut store, &nb)?;
            if a.json {
                json(&row)?
            } else {
                line(&format!(
                    "batch {}: {} ({}, {})",
                    row.id, row.name, row.material, row.status
                ))?
            }
        }
        BatchCmd::List(a) => {
            let rows = store.read(|tx| {
                let mut all = model::list_batches(tx)?;
                if let Some(m) = &a.material {
                    let mat = model::material_by_name(tx, m)?;
                    all.retain(|b| b.material == mat.name);
                }
                Ok(all)
            })?;
            let rows: Vec<_> = rows
                .into_iter()
                .filter(|b| a.status.is_none_or(|s| b.status == s))
                .collect();
            if a.json {
                json(&rows)?;
            } else {
                for b in rows {
                    line(&format!(
                        "{:>5}  {:<28} {:<10} {:<9} {:<10} {}",
                        b.id,
                        b.name,
                        b.material,
                        b.status,
                        &b.started_at[..10.min(b.started_at.len())],
                        b.operator.unwrap_or_default()
                    ))?;
                }
            }
        }
        BatchCmd::Show { id, json: j } => {
            let v = store.read(|tx| crate::report::batch_detail(tx, *id))?;
            if *j { json(&v)? } else { print_batch(&v)? }
        }
        BatchCmd::Edit(a) => {
            let e = model::BatchEdit {
                name: a.name.clone(),
                notes: a.notes.clone(),
                append_notes: a.append_notes.clone(),
                operator: a.operator.clone(),
                product_aliquot_id: a.product_aliquot,
                pin_calibration: a.pin_calibration,
                unpin: a.unpin,
                parent_batch_id: a.parent,
            };
            let done = crate::lab::batches::edit_batch(&mut store, a.id, &e)?;
            let (row, followed) = (done.batch, done.aliquots_followed);
            if a.json {
                json(&row)?
            } else if let (true, Some(p)) = (followed > 0, a.parent) {
                line(&format!(
                    "batch {} updated; {followed} aliquots of batch {p}'s shelled batches derived again with its core",
                    row.id
                ))?
            } else {
                line(&format!("batch {} updated", row.id))?
            }
        }
        BatchCmd::SetStatus { id, status, json: j } => {
            let row = crate::lab::batches::set_status(&mut store, *id, *status)?;
            if *j {
                json(&row)?
            } else {
                line(&format!("batch {} is now {}", row.id, row.status))?
            }
        }
        BatchCmd::Repeat { id, name, json: j } => {
            let row = crate::lab::batches::repeat_batch(&mut store, *id, name.as_deref())?;
            if *j {
                json(&row)?
            } else {
                line(&format!("batch {}: {} repeats batch {id}", row.id, row.name))?
            }
        }
        BatchCmd::Void { id, why, json: j } | BatchCmd::Reinstate { id, why, json: j } => {
            let voiding = matches!(c, BatchCmd::Void { .. });
            let row = crate::lab::corrections::set_batch_void(&mut store, *id, voiding, why)?;
            if *j {
                json(&row)?
            } else if voiding {
                line(&format!("batch {} is void: {}", row.id, why.trim()))?
            } else {
                line(&format!("batch {} is reinstated", row.id))?
            }
        }
    }
    Ok(())
}

fn print_batch(v: &Value) -> Result<()> {
    let s = |k: &str| v[k].as_str().unwrap_or("").to_string();
    line(&format!(
        "batch {} {} ({}) {}",
        v["id"],
        s("name"),
        s("material"),
        s("status")
    ))?;
    line(&format!("  started {} by {}", s("started_at"), s("operator")))?;
    if let Some(r) = v["recipe"].as_str() {
        line(&format!("  recipe {r} v{}", v["recipe_version"]))?;
    }
    if !s("notes").is_empty() {
        line(&format!("  notes: {}", s("notes")))?;
    }
    line("   id   min  stage     peak nm   abs    D nm   σ/D %   conc       PL nm  QY     curve (cal)")?;
    for a in v["aliquots"].as_array().into_iter().flatten() {
        let f = |k: &str, d: usize| num(a[k].as_f64(), d);
        line(&format!(
            "  {:>4} {:>5} {:<8} {:>8} {:>6} {:>6} {:>6}   {:<10} {:>6} {:>5}  {} ({}){}",
            a["id"],
            f("minutes", 1),
            a["stage"].as_str().unwrap_or(""),
            f("first_exciton_nm", 1),
            f("first_exciton_abs", 3),
            f("diameter_nm", 2),
            f("size_dispersion_pct", 1),
            molar(a["concentration_molar"].as_f64()),
            f("pl_peak_nm", 1),
            f("qy", 2),
            a["curve"].as_str().unwrap_or("-"),
            a["calibration_version"],
            match (a["voided"].as_bool() == Some(true), a["stale"].as_bool() == Some(true)) {
                (true, _) => format!(" VOID: {}", a["void_why"].as_str().unwrap_or("")),
                (false, true) => " STALE".to_string(),
                _ => String::new(),
            }
        ))?;
    }
    if v["voided"].as_bool() == Some(true) {
        line(&format!("  VOID batch: {}", s("void_why")))?;
    }
    let g = &v["growth"];
    line(&format!(
        "  growth: {} ; rate {} nm/min{}",
        g["regime"].as_str().unwrap_or(""),
        num(g["growth_rate_nm_per_min"].as_f64(), 3),
        g["focusing_turn_min"]
            .as_f64()
            .map(|m| format!("; focusing turns to defocusing at {m} min"))
            .unwrap_or_default()
    ))?;
    if g["mixed_calibrations"].as_bool() == Some(true) {
        line(&format!(
            "  growth uses only aliquots sized under calibration v{}; others are under older versions (run `cuvette recompute`)",
            g["calibration_version"]
        ))?;
    }
    if g["stale"].as_bool() == Some(true) {
        line("  growth: STALE values (run `cuvette recompute`)")?;
    }
    for j in g["jumps"].as_array().into_iter().flatten() {
        line(&format!(
            "  ! aliquot {}: first exciton {:.1} -> {:.1} nm at {} min, a step blue while the crystals grow (beyond {:.1} nm): check that reading",
            j["aliquot_id"],
            j["from_nm"].as_f64().unwrap_or(f64::NAN),
            j["to_nm"].as_f64().unwrap_or(f64::NAN),
            j["minutes"],
            j["tolerance_nm"].as_f64().unwrap_or(f64::NAN)
        ))?;
    }
    for r in g["reassigned"].as_array().into_iter().flatten() {
        line(&format!(
            "  ~ aliquot {}: first exciton reassigned {:.1} -> {:.1} nm: the series grows through {:.1}-{:.1} nm there and a feature at {:.1} nm stands on its own (`explain {}` keeps the first reading)",
            r["aliquot_id"],
            r["as_read_nm"].as_f64().unwrap_or(f64::NAN),
            r["first_exciton_nm"].as_f64().unwrap_or(f64::NAN),
            r["expected_lo_nm"].as_f64().unwrap_or(f64::NAN),
            r["expected_hi_nm"].as_f64().unwrap_or(f64::NAN),
            r["first_exciton_nm"].as_f64().unwrap_or(f64::NAN),
            r["aliquot_id"],
        ))?;
    }
    for r in g["unsupported"].as_array().into_iter().flatten() {
        line(&format!(
            "  ! aliquot {}: first exciton {:.1} nm lies outside the {:.1}-{:.1} nm its neighbours give, and no feature there stands on its own: kept as read; check it",
            r["aliquot_id"],
            r["as_read_nm"].as_f64().unwrap_or(f64::NAN),
            r["expected_lo_nm"].as_f64().unwrap_or(f64::NAN),
            r["expected_hi_nm"].as_f64().unwrap_or(f64::NAN),
        ))?;
    }
    let ry = &v["reaction_yield"];
    if let Some(f) = ry["yield_fraction"].as_f64() {
        line(&format!(
            "  reaction yield {:.0} % against the limiting {} (`batch show --json` has the terms)",
            100.0 * f,
            ry["limiting_element"].as_str().unwrap_or("precursor"),
        ))?;
    }
    for x in v["vials"].as_array().into_iter().flatten() {
        line(&format!(
            "  vial {} {} {:.2} mL at {} ({})",
            x["id"],
            x["label"].as_str().unwrap_or(""),
            x["volume_ml"].as_f64().unwrap_or(0.0),
            x["location"].as_str().unwrap_or(""),
            x["status"].as_str().unwrap_or("")
        ))?;
    }
    for c in v["cautions"].as_array().into_iter().flatten() {
        line(&format!("  ! {}", c.as_str().unwrap_or("")))?;
    }
    Ok(())
}
