//! Batches: starting one, listing, showing (with its aliquots, growth, yield and vials),
//! editing, repeating, and voiding or reinstating.

use super::open_for;
use crate::cli::args::*;
use crate::cli::output::{as_json, finite, json, json_sorted, line, molar, num};
use crate::report::BatchSheet;
use crate::store::model;
use anyhow::Result;

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
            let sheet = store.read(|tx| crate::report::batch_sheet(tx, *id))?;
            if *j { json_sorted(&sheet)? } else { print_batch(&sheet)? }
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

fn print_batch(v: &BatchSheet) -> Result<()> {
    let b = &v.batch;
    // NaN where the text once read a missing number: `{:.1}` shows it as such.
    let nm = |x: Option<f64>| finite(x).unwrap_or(f64::NAN);
    line(&format!("batch {} {} ({}) {}", b.id, b.name, b.material, b.status))?;
    line(&format!(
        "  started {} by {}",
        b.started_at,
        b.operator.as_deref().unwrap_or("")
    ))?;
    if let Some(r) = &b.recipe {
        line(&format!("  recipe {r} v{}", as_json(&b.recipe_version)))?;
    }
    if !b.notes.is_empty() {
        line(&format!("  notes: {}", b.notes))?;
    }
    // The id takes the width of the longest one (at least the heading's), so the columns stay
    // under their headings whatever the ids.
    let id_width = v
        .aliquots
        .iter()
        .map(|a| a.id.to_string().len())
        .max()
        .unwrap_or(0)
        .max(3);
    line(&format!(
        "  {:>id_width$}   min  stage     peak nm   abs    D nm   σ/D %   conc       PL nm  QY     curve (cal)",
        "id"
    ))?;
    for a in &v.aliquots {
        let f = |x: Option<f64>, d: usize| num(finite(x), d);
        line(&format!(
            "  {:>id_width$} {:>5} {:<8} {:>8} {:>6} {:>6} {:>6}   {:<10} {:>6} {:>5}  {} ({}){}",
            a.id,
            f(a.minutes, 1),
            a.stage.as_deref().unwrap_or(""),
            f(a.first_exciton_nm, 1),
            f(a.first_exciton_abs, 3),
            f(a.diameter_nm, 2),
            f(a.size_dispersion_pct, 1),
            molar(finite(a.concentration_molar)),
            f(a.pl_peak_nm, 1),
            f(a.qy, 2),
            a.curve.as_deref().unwrap_or("-"),
            as_json(&a.calibration_version),
            match (a.voided, a.stale) {
                (true, _) => format!(" VOID: {}", a.void_why.as_deref().unwrap_or("")),
                (false, true) => " STALE".to_string(),
                _ => String::new(),
            }
        ))?;
    }
    if b.voided {
        line(&format!("  VOID batch: {}", b.void_why.as_deref().unwrap_or("")))?;
    }
    let g = &v.growth;
    // Both rates, named: the one between the last two aliquots is not the series' growth.
    let rates = match (finite(g.growth_rate_nm_per_min), finite(g.mean_growth_rate_nm_per_min)) {
        (Some(last), Some(mean)) => format!(
            "; {} nm/min between the last two aliquots, {} nm/min over the series",
            crate::report::three_figures(last),
            crate::report::three_figures(mean)
        ),
        (Some(last), None) => format!(
            "; {} nm/min between the last two aliquots",
            crate::report::three_figures(last)
        ),
        (None, Some(mean)) => format!("; {} nm/min over the series", crate::report::three_figures(mean)),
        (None, None) => String::new(),
    };
    line(&format!(
        "  growth: {}{rates}{}",
        g.regime,
        finite(g.focusing_turn_min)
            .map(|m| format!("; focusing turns to defocusing at {m} min"))
            .unwrap_or_default()
    ))?;
    if g.mixed_calibrations {
        line(&format!(
            "  growth uses only aliquots sized under calibration v{}; others are under older versions (run `cuvette recompute`)",
            as_json(&g.calibration_version)
        ))?;
    }
    if g.stale {
        line("  growth: STALE values (run `cuvette recompute`)")?;
    }
    for j in &g.jumps {
        line(&format!(
            "  ! aliquot {}: first exciton {:.1} -> {:.1} nm at {} min, a step blue while the crystals grow (beyond {:.1} nm): check that reading",
            j.aliquot_id,
            nm(Some(j.from_nm)),
            nm(Some(j.to_nm)),
            as_json(&j.minutes),
            nm(Some(j.tolerance_nm))
        ))?;
    }
    for r in &g.reassigned {
        line(&format!(
            "  ~ aliquot {}: first exciton reassigned {:.1} -> {:.1} nm: the series grows through {:.1}-{:.1} nm there and a feature at {:.1} nm stands on its own (`explain {}` keeps the first reading)",
            r.aliquot_id,
            nm(r.as_read_nm),
            nm(r.first_exciton_nm),
            nm(Some(r.expected_lo_nm)),
            nm(Some(r.expected_hi_nm)),
            nm(r.first_exciton_nm),
            r.aliquot_id,
        ))?;
    }
    for r in &g.unsupported {
        line(&format!(
            "  ! aliquot {}: first exciton {:.1} nm lies outside the {:.1}-{:.1} nm its neighbours give, and no feature there stands on its own: kept as read; check it",
            r.aliquot_id,
            nm(r.as_read_nm),
            nm(Some(r.expected_lo_nm)),
            nm(Some(r.expected_hi_nm)),
        ))?;
    }
    let ry = &v.reaction_yield;
    match finite(ry.yield_fraction) {
        Some(f) => line(&format!(
            "  reaction yield {:.0} % against the limiting {} (`batch show --json` has the terms)",
            100.0 * f,
            ry.limiting_element.as_deref().unwrap_or("precursor"),
        ))?,
        None => line("  reaction yield not computed")?,
    }
    // What the yield's caveats are (above 100 %, the volume assumed, why it is missing) belongs
    // beside the number: a bare "116 %" reads as a result.
    for w in &ry.warnings {
        line(&format!("    ! {w}"))?;
    }
    for x in &v.vials {
        line(&format!(
            "  vial {} {} {:.2} mL at {} ({})",
            x.id,
            x.label,
            finite(Some(x.volume_ml)).unwrap_or(0.0),
            x.location,
            x.status
        ))?;
    }
    for c in &v.cautions {
        line(&format!("  ! {c}"))?;
    }
    Ok(())
}
