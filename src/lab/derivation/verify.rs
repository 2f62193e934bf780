//! `check`'s look at the derived values: a sample of aliquots (all, deep) and every derived vial
//! concentration recomputed from their stored inputs, and each current value that differs from
//! what its inputs give now without being flagged stale reported as a problem.

use super::vials::VialScan;
use super::{batch_context, same, stored_series_hint};
use crate::derive::calibration::Calibration;
use crate::derive::engine::{
    SPECTRAL, SpectrumMeta, analysis_hash, analysis_hash_before_method_versions, compute_in_series, expected_hash,
    find_value, inputs_hash,
};
use crate::error::Result;
use crate::spectra::analysis;
use crate::store::Db;
use crate::store::check::Problem;
use crate::store::values;
use std::collections::BTreeMap;

/// How many aliquots `check` recomputes when not asked to go deep.
pub const CHECK_SAMPLE: usize = 200;

/// Recomputes a sample of aliquots (every one with `deep`) and the derived vial concentrations
/// from their stored inputs, and reports every current value that is not flagged stale yet
/// differs from what its inputs give now. Returns (aliquots checked, problems).
pub fn verify_values(conn: &Db, deep: bool) -> Result<(usize, Vec<Problem>)> {
    let ids = values::aliquot_ids(conn)?;
    let step = if deep || ids.len() <= CHECK_SAMPLE {
        1
    } else {
        ids.len().div_ceil(CHECK_SAMPLE)
    };
    let mut problems = Vec::new();
    let mut checked = 0;
    let mut earlier_method = 0usize;
    let mut cals: BTreeMap<i64, Calibration> = BTreeMap::new();
    for id in ids.iter().step_by(step) {
        let a = crate::store::model::get_aliquot(conn, *id)?;
        let old = values::current_values(conn, a.id)?;
        let Some(version) = old.iter().filter(|o| !o.stale).map(|o| o.calibration_version).max() else {
            continue;
        };
        checked += 1;
        let core = crate::store::model::get_batch(conn, a.batch_id)?.core;
        if let std::collections::btree_map::Entry::Vacant(e) = cals.entry(version) {
            e.insert(crate::lab::calibrations::get(conn, version)?.body);
        }
        let cal = &cals[&version];
        // A spectrum that cannot even be read is a finding, not a reason to stop checking.
        let spectra = match crate::store::model::spectra_of_aliquot(conn, a.id) {
            Ok(s) => s,
            Err(e) => {
                problems.push(Problem::new(
                    "spectrum_data",
                    format!("aliquot {}: its spectra cannot be read ({e})", a.id),
                ));
                continue;
            }
        };
        let metas: Vec<SpectrumMeta> = spectra.iter().map(SpectrumMeta::from).collect();
        let ctx = batch_context(conn, a.batch_id)?;
        let hash = inputs_hash(&a, &core, &metas, cal, &ctx);
        let stage1 = analysis_hash(&metas, cal);
        let stage1_before = analysis_hash_before_method_versions(&metas, cal);
        let comp = compute_in_series(&a, &core, &spectra, cal, &ctx, stored_series_hint(&old).as_ref());
        // Computed by an earlier analysis method: out of date, not inconsistent; its stage-two
        // values follow from those spectral values, so none of the aliquot's is compared.
        let by_earlier_method = old.iter().any(|o| {
            !o.stale
                && o.calibration_version == version
                && SPECTRAL.contains(&o.quantity.as_str())
                && o.inputs_hash != stage1
                && o.inputs_hash == stage1_before
        });
        if by_earlier_method {
            earlier_method += 1;
            continue;
        }
        for o in old.iter().filter(|o| !o.stale && o.calibration_version == version) {
            if o.inputs_hash != expected_hash(&o.quantity, &stage1, &hash) {
                problems.push(Problem::new(
                    "derived_value",
                    format!(
                        "aliquot {} {}: its inputs changed but the value is not marked stale",
                        a.id, o.quantity
                    ),
                ));
                continue;
            }
            let now = find_value(&comp.values, &o.quantity).and_then(|v| v.value);
            if !same(o.value, now) {
                problems.push(Problem::new(
                    "derived_value",
                    format!(
                        "aliquot {} {} is stored as {} but its inputs give {} (calibration v{version})",
                        a.id,
                        o.quantity,
                        o.value.map(|v| format!("{v}")).unwrap_or("none".into()),
                        now.map(|v| format!("{v}")).unwrap_or("none".into())
                    ),
                ));
            }
        }
    }
    if earlier_method > 0 {
        problems.push(Problem::new(
            "derived_value",
            format!(
                "{earlier_method} aliquot(s) checked hold values an earlier version of cuvette's analysis computed ({} now): run `cuvette recompute` to derive them again",
                analysis::METHOD_VERSION
            ),
        ));
    }
    let mut vials = VialScan::new(conn, true)?;
    for row in crate::store::model::derived_vial_concentrations(conn, None)? {
        if row.stale {
            continue;
        }
        let expected = match vials.expected(conn, &row) {
            Ok(e) => e,
            Err(e) => {
                problems.push(Problem::new(
                    "derived_value",
                    format!("vial {} concentration cannot be recomputed ({e})", row.vial_id),
                ));
                continue;
            }
        };
        if let Some(e) = expected
            && (!same(e.value, row.c.value) || e.inputs_hash != row.c.inputs_hash)
        {
            problems.push(Problem::new(
                "derived_value",
                format!(
                    "vial {} concentration is stored as {} but its inputs give {}, and it is not marked stale",
                    row.vial_id,
                    row.c.value.map(|v| format!("{v}")).unwrap_or("none".into()),
                    e.value.map(|v| format!("{v}")).unwrap_or("none".into())
                ),
            ));
        }
    }
    Ok((checked, problems))
}
