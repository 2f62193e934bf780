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
    match values::product_aliquot(conn, batch_id)? {
        Some(aid) => estimate_from(conn, aid),
        None => Ok(None),
    }
}

/// The estimate carried over from this product aliquot's concentration.
fn estimate_from(conn: &Db, aid: i64) -> Result<Option<VialConcentration>> {
    let Some(v) = values::current_value(conn, aid, "concentration_molar")? else {
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

/// What the vials' derived concentrations should be now, worked out across a walk of the
/// lab's vial concentrations: each vial's batch read once for the walk, each batch's estimate
/// once however many vials share it, each calibration version parsed once.
pub(super) struct VialScan {
    batch_of: std::collections::HashMap<i64, i64>,
    /// Each batch's product aliquot as the walk began; a batch not in it is asked on its own.
    products: std::collections::HashMap<i64, i64>,
    estimates: std::collections::HashMap<i64, Option<VialConcentration>>,
    cals: BTreeMap<i64, Calibration>,
}

impl VialScan {
    /// A walk over the whole lab (`whole_lab`) reads each vial's batch and each batch's product
    /// up front, in one query each; a walk over one batch's vials asks as it goes.
    pub(super) fn new(conn: &Db, whole_lab: bool) -> Result<VialScan> {
        let (batch_of, products) = if whole_lab {
            (values::vial_batches(conn)?, values::product_aliquot_of_batches(conn)?)
        } else {
            Default::default()
        };
        Ok(VialScan {
            batch_of,
            products,
            estimates: std::collections::HashMap::new(),
            cals: BTreeMap::new(),
        })
    }

    fn batch_of(&self, conn: &Db, vial_id: i64) -> Result<i64> {
        match self.batch_of.get(&vial_id) {
            Some(b) => Ok(*b),
            None => Ok(crate::store::model::get_vial(conn, vial_id)?.batch_id),
        }
    }

    /// The estimate a vial of this batch carries over from its product aliquot.
    fn estimate(&mut self, conn: &Db, batch_id: i64) -> Result<Option<VialConcentration>> {
        if let Some(e) = self.estimates.get(&batch_id) {
            return Ok(e.clone());
        }
        let e = match self.products.get(&batch_id) {
            Some(&aid) => estimate_from(conn, aid)?,
            None => vial_estimate(conn, batch_id)?,
        };
        self.estimates.insert(batch_id, e.clone());
        Ok(e)
    }

    /// What a vial's derived concentration should be now, given its current row.
    pub(super) fn expected(&mut self, conn: &Db, row: &StoredVialConcentration) -> Result<Option<VialConcentration>> {
        let batch_id = self.batch_of(conn, row.vial_id)?;
        match row.c.source {
            ConcentrationSource::Estimate => self.estimate(conn, batch_id),
            ConcentrationSource::Measured => {
                let Some(sid) = row.c.spectrum_id else { return Ok(None) };
                let s = crate::store::model::vial_spectrum(conn, sid)?;
                let core = crate::store::model::get_batch(conn, batch_id)?.core;
                let version = values::effective_calibration_version(conn, batch_id)?;
                if let std::collections::btree_map::Entry::Vacant(e) = self.cals.entry(version) {
                    e.insert(crate::lab::calibrations::get(conn, version)?.body);
                }
                let cal = &self.cals[&version];
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
}

/// Recomputes the measured and estimated vial concentrations (of one batch, or all); a dry run
/// only counts. Returns (considered, changed).
pub fn refresh_vials(conn: &Db, batch: Option<i64>, dry_run: bool) -> Result<(usize, usize)> {
    // A batch's product may have moved (the reason to refresh its vials): its shelled children
    // follow their core.
    if let (Some(b), false) = (batch, dry_run) {
        follow_parent_cores(conn, Some(b))?;
    }
    let mut scan = VialScan::new(conn, batch.is_none())?;
    let (mut considered, mut changed) = (0, 0);
    for row in crate::store::model::derived_vial_concentrations(conn, batch)? {
        considered += 1;
        let expected = scan.expected(conn, &row)?;
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
    let mut scan = VialScan::new(tx, true)?;
    for row in crate::store::model::derived_vial_concentrations(tx, None)? {
        let batch_id = scan.batch_of(tx, row.vial_id)?;
        let stale = match row.c.source {
            ConcentrationSource::Estimate => match scan.estimate(tx, batch_id)? {
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
                let b = crate::store::model::get_batch(tx, batch_id)?;
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
