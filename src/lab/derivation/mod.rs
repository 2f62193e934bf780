//! Deriving values in the lab: each aliquot's values computed by derive's pure functions from
//! what the store holds, and written back through the store inside the caller's transaction
//! (unchanged numbers re-stamped, changed ones superseding the old row, which stays as
//! history). Here are the steps the user actions are built from: deriving one aliquot and
//! looking at its growth series again ([`series_pass`]), following a shelled batch's parent
//! core ([`follow_parent_cores`]), a calibration change with its stale marking, the recompute
//! (`recompute`), the vials' concentrations (`vials`) and `check`'s recomputation of a sample
//! (`verify`). Nothing here runs SQL.

mod recompute;
mod verify;
mod vials;

pub use recompute::{
    Crossing, Move, RecomputeReport, THRESHOLD_FIELDS, mark_stale, recompute, recompute_now, recompute_recorded,
    search_thresholds,
};
pub use verify::{CHECK_SAMPLE, verify_values};
pub use vials::{estimate_vial, mark_vials_stale, refresh_vials};

use crate::derive::calibration::Calibration;
use crate::derive::engine::{
    Derived, SPECTRAL, SpectrumMeta, analysis_hash, compute_in_series, expected_hash, inputs_hash,
};
use crate::derive::series::{self, SeriesHint, SeriesPoint};
use crate::error::Result;
use crate::store::model::SpectrumRow;
use crate::store::values::{self, StoredValue};
use crate::store::{Db, now};
use std::collections::HashMap;

/// The batch context is read by the views as well; it lives with them (a read of the store).
pub use crate::report::context::batch_context;

/// The range a stored second look used, to repeat it (the method holds its basis).
pub fn stored_series_hint(values: &[StoredValue]) -> Option<SeriesHint> {
    let lo = values.iter().find(|v| v.quantity == "series_expected_lo_nm")?;
    let hi = values.iter().find(|v| v.quantity == "series_expected_hi_nm")?;
    Some(SeriesHint {
        lo_nm: lo.value?,
        hi_nm: hi.value?,
        basis: lo.method.clone(),
    })
}

fn same(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (None, None) => true,
        (Some(x), Some(y)) => x == y || (x - y).abs() <= 1e-9 * x.abs().max(y.abs()),
        _ => false,
    }
}

/// Writes the new values of one aliquot: unchanged numbers are re-stamped in place, changed
/// ones supersede the old row (kept as history). Returns how many values changed.
fn apply(
    tx: &Db,
    aliquot_id: i64,
    version: i64,
    stage1_hash: &str,
    hash: &str,
    new: &[Derived],
    old: &[StoredValue],
) -> Result<usize> {
    let t = now();
    let mut changed = 0;
    let old_by: HashMap<&str, &StoredValue> = old.iter().map(|o| (o.quantity.as_str(), o)).collect();
    for v in new {
        let hash = expected_hash(&v.quantity, stage1_hash, hash);
        match old_by.get(v.quantity.as_str()) {
            Some(o)
                if same(o.value, v.value)
                    && o.method == v.method
                    && o.inputs_hash == hash
                    && o.calibration_version == version
                    && !o.stale
                    && o.warnings == v.warnings => {}
            Some(o) if same(o.value, v.value) && o.method == v.method => {
                values::restamp_value(tx, o.id, hash, version, &t, &v.warnings)?;
            }
            other => {
                if let Some(o) = other {
                    values::supersede_value(tx, o.id, &t)?;
                }
                values::insert_value(
                    tx,
                    &values::NewValue {
                        aliquot_id,
                        quantity: &v.quantity,
                        value: v.value,
                        unit: &v.unit,
                        method: &v.method,
                        calibration_version: version,
                        inputs_hash: hash,
                        warnings: &v.warnings,
                        computed_at: &t,
                    },
                )?;
                changed += 1;
            }
        }
    }
    for o in old {
        if !new.iter().any(|v| v.quantity == o.quantity) {
            values::supersede_value(tx, o.id, &t)?;
            changed += 1;
        }
    }
    Ok(changed)
}

/// Derives (or re-derives) one aliquot now, inside the caller's transaction, then looks at its
/// growth series again: its reading can move its neighbours' second looks (see [`series_pass`]).
pub fn derive_aliquot(tx: &Db, aliquot_id: i64) -> Result<Vec<Derived>> {
    let old = values::current_values(tx, aliquot_id)?;
    let values = derive_aliquot_with(tx, aliquot_id, stored_series_hint(&old).as_ref())?;
    with_series_pass(tx, aliquot_id, values)
}

/// The series pass after one aliquot was derived: when it gave the aliquot (or a neighbour) a
/// second look, the aliquot's values are the stored ones it left.
fn with_series_pass(tx: &Db, aliquot_id: i64, values: Vec<Derived>) -> Result<Vec<Derived>> {
    let a = crate::store::model::get_aliquot(tx, aliquot_id)?;
    if series_pass(tx, a.batch_id)? > 0 {
        return Ok(values::current_values(tx, aliquot_id)?
            .into_iter()
            .map(|o| Derived {
                quantity: o.quantity,
                value: o.value,
                unit: o.unit,
                method: o.method,
                warnings: o.warnings,
            })
            .collect());
    }
    Ok(values)
}

/// Derives a new aliquot from the spectra just written for it, as they are in memory (no
/// spectrum read back or decoded), then looks at its growth series again as
/// [`derive_aliquot`] does. `spectra` must be every spectrum of the aliquot, in the order they
/// were inserted (the store's order).
pub fn derive_new_aliquot(tx: &Db, aliquot_id: i64, spectra: &[SpectrumRow]) -> Result<Vec<Derived>> {
    let values = derive_aliquot_from(tx, aliquot_id, None, Some(spectra))?;
    with_series_pass(tx, aliquot_id, values)
}

/// Derives one aliquot with the range its growth series gives (None: no second look).
fn derive_aliquot_with(tx: &Db, aliquot_id: i64, hint: Option<&SeriesHint>) -> Result<Vec<Derived>> {
    derive_aliquot_from(tx, aliquot_id, hint, None)
}

/// Derives one aliquot from `in_memory` spectra when the caller has them, else from the store.
fn derive_aliquot_from(
    tx: &Db,
    aliquot_id: i64,
    hint: Option<&SeriesHint>,
    in_memory: Option<&[SpectrumRow]>,
) -> Result<Vec<Derived>> {
    let a = crate::store::model::get_aliquot(tx, aliquot_id)?;
    let batch = crate::store::model::get_batch(tx, a.batch_id)?;
    let version = values::effective_calibration_version(tx, a.batch_id)?;
    let cal = crate::lab::calibrations::get(tx, version)?.body;
    let read;
    let spectra = match in_memory {
        Some(s) => s,
        None => {
            read = crate::store::model::spectra_of_aliquot(tx, aliquot_id)?;
            &read[..]
        }
    };
    let metas: Vec<SpectrumMeta> = spectra.iter().map(SpectrumMeta::from).collect();
    let ctx = batch_context(tx, a.batch_id)?;
    let hash = inputs_hash(&a, &batch.core, &metas, &cal, &ctx);
    let stage1 = analysis_hash(&metas, &cal);
    let comp = compute_in_series(&a, &batch.core, spectra, &cal, &ctx, hint);
    let old = values::current_values(tx, aliquot_id)?;
    apply(tx, aliquot_id, version, &stage1, &hash, &comp.values, &old)?;
    follow_parent_cores(tx, Some(a.batch_id))?;
    Ok(comp.values)
}

/// Gives every aliquot of a batch the second look its growth series calls for, and takes it
/// away where the series no longer does. The ranges come from the readings as first made, so
/// the pass does not depend on the order aliquots were derived in, and a second pass finds
/// nothing to do. Runs inside the caller's transaction after any aliquot of the batch is
/// (re)derived; each aliquot it derives again is recorded in the audit log. Returns how many.
pub fn series_pass(tx: &Db, batch_id: i64) -> Result<usize> {
    let aliquots = crate::store::model::all_aliquots_of(tx, batch_id)?;
    let mut points = Vec::new();
    let mut stored: Vec<(i64, Option<SeriesHint>)> = Vec::new();
    for a in &aliquots {
        let vals = values::current_values(tx, a.id)?;
        if vals.is_empty() {
            continue;
        }
        let get = |q: &str| vals.iter().find(|v| v.quantity == q).and_then(|v| v.value);
        let as_read = get("first_exciton_as_read_nm");
        let (nm, hwhm, shoulder) = match as_read {
            Some(nm) => (Some(nm), get("hwhm_as_read_nm"), get("shoulder_as_read")),
            None => (get("first_exciton_nm"), get("hwhm_nm"), get("shoulder")),
        };
        if let (Some(minutes), Some(nm), false) = (a.minutes, nm, a.voided) {
            points.push(SeriesPoint {
                aliquot_id: a.id,
                minutes,
                first_exciton_nm: nm,
                hwhm_nm: hwhm,
                shoulder: shoulder.map(|f| f > 0.5),
            });
        }
        stored.push((a.id, stored_series_hint(&vals)));
    }
    let wanted = series::expected_ranges(&points);
    let mut n = 0;
    for (id, had) in stored {
        let want = wanted.iter().find(|w| w.0 == id).map(|w| &w.1);
        let unchanged = match (&had, want) {
            (None, None) => true,
            (Some(h), Some(w)) => {
                same(Some(h.lo_nm), Some(w.lo_nm)) && same(Some(h.hi_nm), Some(w.hi_nm)) && h.basis == w.basis
            }
            _ => false,
        };
        if unchanged {
            continue;
        }
        derive_aliquot_with(tx, id, want)?;
        let now = values::current_values(tx, id)?;
        let get = |q: &str| now.iter().find(|v| v.quantity == q).and_then(|v| v.value);
        crate::store::audit(
            tx,
            "cuvette (growth series)",
            "derived_value",
            Some(id),
            match (want, get("first_exciton_as_read_nm")) {
                (None, _) => "series look withdrawn",
                (Some(_), Some(_)) => "series reassign",
                (Some(_), None) => "series flag",
            },
            had.as_ref()
                .map(|h| serde_json::json!({"expected_lo_nm": h.lo_nm, "expected_hi_nm": h.hi_nm}))
                .as_ref(),
            Some(&serde_json::json!({
                "expected_lo_nm": want.map(|w| w.lo_nm),
                "expected_hi_nm": want.map(|w| w.hi_nm),
                "basis": want.map(|w| w.basis.clone()),
                "first_exciton_nm": get("first_exciton_nm"),
                "first_exciton_as_read_nm": get("first_exciton_as_read_nm"),
            })),
        )?;
        n += 1;
    }
    Ok(n)
}

/// Aliquots of shelled batches take their core's size from their parent batch's product: when
/// that moves (a new or corrected aliquot, another product), they are derived again. With
/// `parent` None every shelled batch is looked at (after a recompute). Returns how many
/// aliquots were derived again.
pub fn follow_parent_cores(tx: &Db, parent: Option<i64>) -> Result<usize> {
    Ok(follow_parent_cores_counted(tx, parent)?.0)
}

/// As [`follow_parent_cores`], also counting the vials whose concentration followed: (aliquots
/// derived again, vials changed), so a recompute can report them with its own.
pub(super) fn follow_parent_cores_counted(tx: &Db, parent: Option<i64>) -> Result<(usize, usize)> {
    let children = values::shelled_children(tx, parent)?;
    let mut n = 0;
    let mut vials_changed = 0;
    for child in children {
        let batch = crate::store::model::get_batch(tx, child)?;
        let ctx = batch_context(tx, child)?;
        let version = values::effective_calibration_version(tx, child)?;
        let cal = crate::lab::calibrations::get(tx, version)?.body;
        for a in crate::store::model::all_aliquots_of(tx, child)? {
            let old = values::current_values(tx, a.id)?;
            if old.is_empty() {
                continue;
            }
            let metas: Vec<SpectrumMeta> = crate::store::model::spectra_of_aliquot(tx, a.id)?
                .iter()
                .map(SpectrumMeta::from)
                .collect();
            let hash = inputs_hash(&a, &batch.core, &metas, &cal, &ctx);
            let moved = old
                .iter()
                .any(|o| !SPECTRAL.contains(&o.quantity.as_str()) && o.inputs_hash != hash);
            if moved {
                derive_aliquot(tx, a.id)?;
                n += 1;
            }
        }
        if n > 0 {
            // The child's product may have moved with its core: its vials' estimates follow.
            vials_changed += refresh_vials(tx, Some(child), false)?.1;
        }
    }
    Ok((n, vials_changed))
}

/// Changes the latest calibration with `f`, saves it as a new version (validated; refused with
/// nothing changed if wrong) and marks the values it makes stale. Returns (version, stale count).
pub fn change_calibration(
    tx: &Db,
    who: &str,
    why: &str,
    f: &dyn Fn(&Db, &mut Calibration) -> Result<()>,
) -> Result<(i64, usize)> {
    let mut body = crate::lab::calibrations::latest(tx)?.body;
    f(tx, &mut body)?;
    let v = crate::lab::calibrations::save(tx, who, why, &body)?;
    Ok((v, mark_stale(tx)?))
}

/// After a correction to an aliquot (a void, a reinstatement, an edit, a spectrum moved): its
/// values are derived again from what it holds now, and the vials whose concentration is
/// estimated from its batch's product follow. Inside the caller's transaction.
pub fn after_correction(tx: &Db, aliquot_id: i64) -> Result<()> {
    let a = crate::store::model::get_aliquot(tx, aliquot_id)?;
    derive_aliquot(tx, aliquot_id)?;
    refresh_vials(tx, Some(a.batch_id), false)?;
    Ok(())
}
