//! Vial concentrations as derived values: an estimate carried over from the batch's product
//! aliquot, or a measurement of the vial's own spectrum, each recomputed and flagged stale as
//! its inputs move, like an aliquot's values.

use super::follow_parent_cores;
use crate::derive::calibration::Calibration;
use crate::derive::engine::{vial_measure_hash, vial_measured};
use crate::error::Result;
use crate::store::Db;
use crate::store::model::{StoredVialConcentration, VialConcentration};
use crate::store::values;
use crate::vocab::ConcentrationSource;
use std::collections::BTreeMap;

/// What a vial concentration estimated from its batch's product aliquot should be now.
fn vial_estimate(conn: &Db, batch_id: i64) -> Result<Option<VialConcentration>> {
    let Some(aid) = values::product_aliquot(conn, batch_id)? else {
        return Ok(None);
    };
    let Some(v) = values::current_values(conn, aid)?
        .into_iter()
        .find(|v| v.quantity == "concentration_molar")
    else {
        return Ok(None);
    };
    let mut warnings = vec![
        "an estimate: the reaction aliquot's concentration, not a measurement of this vial's washed, redispersed product (measure it with `cuvette vial measure`)".to_string(),
    ];
    warnings.extend(v.warnings.clone());
    Ok(Some(VialConcentration {
        source: ConcentrationSource::Estimate,
        spectrum_id: None,
        aliquot_id: Some(aid),
        value: v.value,
        method: format!("estimate from product aliquot {aid}: {}", v.method),
        calibration_version: Some(v.calibration_version),
        inputs_hash: format!("{}|{}", v.id, v.inputs_hash),
        warnings,
    }))
}

/// What a vial's derived concentration should be now, given its current row.
pub(super) fn vial_expected(
    conn: &Db,
    row: &StoredVialConcentration,
    cals: &mut BTreeMap<i64, Calibration>,
) -> Result<Option<VialConcentration>> {
    let vial = crate::store::model::get_vial(conn, row.vial_id)?;
    match row.c.source {
        ConcentrationSource::Estimate => vial_estimate(conn, vial.batch_id),
        ConcentrationSource::Measured => {
            let Some(sid) = row.c.spectrum_id else { return Ok(None) };
            let s = crate::store::model::vial_spectrum(conn, sid)?;
            let core = crate::store::model::get_batch(conn, vial.batch_id)?.core;
            let version = values::effective_calibration_version(conn, vial.batch_id)?;
            if let std::collections::btree_map::Entry::Vacant(e) = cals.entry(version) {
                e.insert(crate::lab::calibrations::get(conn, version)?.body);
            }
            let cal = &cals[&version];
            let (_, _, c) = vial_measured(
                &s,
                &core,
                s.dilution_factor.unwrap_or(1.0),
                s.path_cm.unwrap_or(1.0),
                version,
                cal,
            )?;
            Ok(Some(c))
        }
        _ => Ok(None),
    }
}

/// Recomputes the measured and estimated vial concentrations (of one batch, or all); a dry run
/// only counts. Returns (considered, changed).
pub fn refresh_vials(conn: &Db, batch: Option<i64>, dry_run: bool) -> Result<(usize, usize)> {
    // A batch's product may have moved (the reason to refresh its vials): its shelled children
    // follow their core.
    if let (Some(b), false) = (batch, dry_run) {
        follow_parent_cores(conn, Some(b))?;
    }
    let mut cals = BTreeMap::new();
    let (mut considered, mut changed) = (0, 0);
    for row in crate::store::model::derived_vial_concentrations(conn, batch)? {
        considered += 1;
        let expected = vial_expected(conn, &row, &mut cals)?;
        let Some(new) = expected else {
            // The estimate has nothing to follow any more (its product was voided): say so.
            if row.c.source == ConcentrationSource::Estimate && !row.stale {
                if !dry_run {
                    crate::store::model::flag_vial_concentration(conn, row.id, true)?;
                }
                changed += 1;
            }
            continue;
        };
        if new != row.c || row.stale {
            changed += 1;
            if !dry_run {
                crate::store::model::set_vial_concentration(conn, row.vial_id, &new)?;
            }
        }
    }
    Ok((considered, changed))
}

/// Flags vial concentrations whose inputs moved (a calibration change, a recomputed or voided
/// product aliquot). Returns how many flags changed.
pub fn mark_vials_stale(tx: &Db) -> Result<usize> {
    let mut n = 0;
    let latest = crate::lab::calibrations::latest(tx)?.version;
    let mut cals: BTreeMap<i64, Calibration> = BTreeMap::new();
    for row in crate::store::model::derived_vial_concentrations(tx, None)? {
        let vial = crate::store::model::get_vial(tx, row.vial_id)?;
        let stale = match row.c.source {
            ConcentrationSource::Estimate => match vial_estimate(tx, vial.batch_id)? {
                None => true,
                Some(e) => {
                    let src_stale = values::current_stale_flag(tx, e.aliquot_id.unwrap_or(0), "concentration_molar")?
                        .unwrap_or(false);
                    e.inputs_hash != row.c.inputs_hash || src_stale
                }
            },
            _ => {
                let Some(sid) = row.c.spectrum_id else { continue };
                let s = values::spectrum_hash_inputs(tx, sid)?;
                let b = crate::store::model::get_batch(tx, vial.batch_id)?;
                let version = b.pinned_calibration.unwrap_or(latest);
                if let std::collections::btree_map::Entry::Vacant(e) = cals.entry(version) {
                    e.insert(crate::lab::calibrations::get(tx, version)?.body);
                }
                let h = vial_measure_hash(
                    &s.sha256,
                    &s.x_unit,
                    s.dilution_factor.unwrap_or(1.0),
                    s.path_cm.unwrap_or(1.0),
                    &b.core,
                    &cals[&version],
                );
                h != row.c.inputs_hash || row.c.calibration_version != Some(version)
            }
        };
        if crate::store::model::flag_vial_concentration(tx, row.id, stale)? {
            n += 1;
        }
    }
    Ok(n)
}

/// Gives a new vial without a figure of its own the estimate carried over from its batch's
/// product aliquot, labelled as an estimate. Returns whether there was one to give.
pub fn estimate_vial(tx: &Db, vial_id: i64) -> Result<bool> {
    let v = crate::store::model::get_vial(tx, vial_id)?;
    match vial_estimate(tx, v.batch_id)? {
        Some(e) if e.value.is_some() => {
            crate::store::model::set_vial_concentration(tx, vial_id, &e)?;
            Ok(true)
        }
        _ => Ok(false),
    }
}
