//! Vials of product on the shelf: filling, drawing, moving, disposing, measuring, and the shelf
//! listing.

use super::{open_for, open_read};
use crate::cli::args::*;
use crate::cli::output::{json, line, molar, num};
use crate::lab::bench;
use crate::store::{Store, model};
use crate::vocab::VialStatus;
use anyhow::{Result, bail};

fn vial_id(store: &mut Store, key: &str) -> Result<i64> {
    Ok(store.read(|tx| model::find_vial(tx, key))?.id)
}

fn print_vial(v: &model::VialRow, j: bool) -> Result<()> {
    if j {
        json(&crate::report::shelf_entry(v))
    } else {
        line(&format!(
            "vial {} {}: {:.3} mL left at {} ({}); concentration {}{}",
            v.id,
            v.label,
            v.volume_ml,
            v.location,
            v.status,
            molar(v.concentration_molar),
            match (crate::report::concentration_note(v), v.calibration_version) {
                ("", _) => String::new(),
                (n, Some(c)) => format!(" ({n}, calibration v{c})"),
                (n, None) => format!(" ({n})"),
            }
        ))
    }
}

pub(super) fn vial(cli: &Cli, c: &VialCmd) -> Result<()> {
    let mut store = open_for(cli, !matches!(c, VialCmd::Show { .. }))?;
    match c {
        VialCmd::New {
            batch_id,
            ml,
            location,
            label,
            solvent,
            position,
            owner,
            conc,
            json: j,
        } => {
            let v = crate::lab::vials::new_vial(
                &mut store,
                &model::NewVial {
                    batch_id: *batch_id,
                    label: label.clone(),
                    volume_ml: *ml,
                    solvent: solvent.clone(),
                    location: location.clone(),
                    position: position.clone(),
                    owner: owner.clone(),
                    concentration_molar: *conc,
                    created_at: None,
                },
            )?;
            print_vial(&v, *j)?;
        }
        VialCmd::Draw { vial, ml, why, json: j } => {
            let id = vial_id(&mut store, vial)?;
            let v = crate::lab::vials::draw(&mut store, id, *ml, why.as_deref())?;
            print_vial(&v, *j)?;
        }
        VialCmd::Move {
            vial,
            to,
            position,
            why,
            json: j,
        } => {
            let id = vial_id(&mut store, vial)?;
            let v = crate::lab::vials::move_to(&mut store, id, to, position.as_deref(), why.as_deref())?;
            print_vial(&v, *j)?;
        }
        VialCmd::Dispose { vial, why, json: j } => {
            let id = vial_id(&mut store, vial)?;
            let v = crate::lab::vials::dispose(&mut store, id, why)?;
            print_vial(&v, *j)?;
        }
        VialCmd::Reinstate { vial, why, json: j } => {
            let id = vial_id(&mut store, vial)?;
            let v = crate::lab::corrections::reinstate_vial(&mut store, id, why)?;
            print_vial(&v, *j)?;
        }
        VialCmd::Measure {
            vial,
            abs,
            dilution,
            path_cm,
            json: j,
        } => {
            let id = vial_id(&mut store, vial)?;
            let m = bench::measure_vial(&mut store, id, abs, *dilution, *path_cm)?;
            if *j {
                json(&m)?;
            } else {
                line(&format!(
                    "vial {id}: first exciton {} nm, D {} nm, concentration {}",
                    num(m.first_exciton_nm, 1),
                    num(m.diameter_nm, 2),
                    molar(m.concentration_molar)
                ))?;
                for w in &m.warnings {
                    line(&format!("  warning: {w}"))?;
                }
            }
        }
        VialCmd::Show { vial, json: j } => {
            let (v, events) = store.read(|tx| {
                let v = model::find_vial(tx, vial)?;
                let e = model::vial_events(tx, v.id)?;
                Ok((v, e))
            })?;
            if *j {
                let mut x = serde_json::to_value(crate::report::shelf_entry(&v))?;
                x["events"] = serde_json::to_value(&events)?;
                json(&x)?;
            } else {
                print_vial(&v, false)?;
                for e in events {
                    line(&format!(
                        "  {} {:<8} {:>8} {} {}",
                        e.at,
                        e.kind,
                        num(e.amount_ml, 3),
                        e.who,
                        e.why.unwrap_or_default()
                    ))?;
                }
            }
        }
    }
    Ok(())
}

pub(super) fn shelf(cli: &Cli, a: &ShelfArgs) -> Result<()> {
    if let Some(l) = a.low
        && !(l >= 0.0)
    {
        bail!("--low must be a volume of zero or more mL, got {l}");
    }
    let mut store = open_read(cli)?;
    let vials = store.read(|tx| model::list_vials(tx, a.all))?;
    let vials: Vec<_> = vials
        .into_iter()
        .filter(|v| a.low.is_none_or(|l| v.volume_ml < l))
        .collect();
    if a.json {
        let v: Vec<crate::report::ShelfEntry> = vials.iter().map(crate::report::shelf_entry).collect();
        return json(&v);
    }
    let mut current = String::new();
    for v in &vials {
        if v.location != current {
            current = v.location.clone();
            line(&current.to_string())?;
        }
        let e = crate::report::shelf_entry(v);
        line(&format!(
            "  {:>4} {:<14} batch {:>4} {:<9} {:>7.3} mL {:>10} {:<10} {:>9} nmol  {:<10} {}",
            v.id,
            v.label,
            v.batch_id,
            v.material,
            v.volume_ml,
            molar(v.concentration_molar),
            crate::report::concentration_note(v),
            num(e.nanomoles_left, 2),
            v.owner.clone().unwrap_or_default(),
            if v.status == VialStatus::InUse {
                String::new()
            } else {
                v.status.to_string()
            }
        ))?;
    }
    Ok(())
}
