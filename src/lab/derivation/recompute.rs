//! The recompute: the lab's aliquots walked in chunks of ids, their stored hashes compared
//! with what their inputs give now while streaming, the stale ones derived again (stage one
//! kept when only downstream calibrations moved, so no spectrum is read; spectra analysed on
//! every core otherwise) and written in the caller's transaction; and the stale marking after a
//! calibration change, which walks the same chunks without computing anything.

use super::vials::{mark_vials_stale, refresh_vials};
use super::{apply, batch_context, follow_parent_cores_counted, same, series_pass, stored_series_hint};
use crate::derive::calibration::Calibration;
use crate::derive::engine::{
    BatchContext, Computation, Derived, SPECTRAL, SpectrumMeta, analysis_hash_with, analysis_part, compute_in_series,
    derive_values, expected_hash, inputs_hash_with, relevant,
};
use crate::error::Result;
use crate::store::Db;
use crate::store::model::{AliquotRow, SpectrumRow};
use crate::store::values::{self, StoredValue};
use serde::Serialize;
use std::collections::{BTreeMap, HashMap};

/// A value that moves in a recompute.
#[derive(Debug, Clone, Serialize)]
pub struct Move {
    pub aliquot_id: i64,
    pub batch_id: i64,
    pub quantity: String,
    pub old: Option<f64>,
    pub new: Option<f64>,
    pub relative_change: Option<f64>,
}

/// A batch whose product value crosses a threshold someone has searched by.
#[derive(Debug, Clone, Serialize)]
pub struct Crossing {
    pub batch_id: i64,
    pub field: String,
    pub threshold: f64,
    pub old: Option<f64>,
    pub new: Option<f64>,
}

#[derive(Debug, Clone, Serialize, Default)]
pub struct RecomputeReport {
    pub dry_run: bool,
    pub aliquots_considered: usize,
    pub aliquots_recomputed: usize,
    /// Values computed.
    pub recomputed: usize,
    /// Values whose number, method or presence changed.
    pub changed: usize,
    pub stale_found: usize,
    pub largest_moves: Vec<Move>,
    pub threshold_crossings: Vec<Crossing>,
    /// Vial concentrations (measured or estimated) looked at, and how many changed.
    pub vials_considered: usize,
    pub vials_changed: usize,
}

/// The search fields a threshold can be about, and the derived quantity behind each: the one
/// table of searched quantities (`vocab::quantity`).
pub const THRESHOLD_FIELDS: &[crate::vocab::DerivedQuantity] = crate::vocab::SEARCHED_QUANTITIES;

/// Aliquots are taken in chunks of ids, so memory stays bounded and no query runs per aliquot.
const CHUNK: i64 = 2000;

/// One chunk of aliquots with the hashes their values should carry now, and what their stored
/// values say: whether they have any, whether any hash differs, whether any is flagged stale.
struct Chunk {
    lo: i64,
    hi: i64,
    /// (aliquot, core, calibration version, stage-one hash, full hash, spectrum metadata).
    expected: Vec<(AliquotRow, String, i64, String, String, Vec<SpectrumMeta>)>,
    has_values: Vec<bool>,
    stale_rows: Vec<bool>,
    flagged: Vec<bool>,
}

/// Walks the lab's aliquots chunk by chunk for recompute and for stale marking: three range
/// queries a chunk (aliquots, spectrum metadata from the covering index, current value hashes
/// compared in place), with the calibration parts of the hashes rendered once per version.
struct Scanner {
    latest: i64,
    after: i64,
    cals: BTreeMap<i64, Calibration>,
    relevant_cache: HashMap<(i64, String, String, bool), String>,
    analysis_cache: HashMap<(i64, bool), String>,
    /// Each batch's context (shell, parent core), read once per scan.
    contexts: HashMap<i64, BatchContext>,
    /// Each batch's material, shell and parent, read for the whole lab in one query; a batch
    /// logged during the scan is read on its own.
    shells: HashMap<i64, crate::store::values::BatchShellRow>,
}

impl Scanner {
    fn new(conn: &Db) -> Result<Scanner> {
        Ok(Scanner {
            latest: crate::lab::calibrations::latest(conn)?.version,
            after: 0,
            cals: BTreeMap::new(),
            relevant_cache: HashMap::new(),
            analysis_cache: HashMap::new(),
            contexts: HashMap::new(),
            shells: values::batch_shells(conn)?
                .into_iter()
                .map(|r| (r.batch_id, r))
                .collect(),
        })
    }

    fn next_chunk(&mut self, conn: &Db) -> Result<Option<Chunk>> {
        let chunk = values::aliquots_after(conn, self.latest, self.after, CHUNK)?;
        let (Some(first), Some(last)) = (chunk.first(), chunk.last()) else {
            return Ok(None);
        };
        let (lo, hi) = (first.aliquot.id, last.aliquot.id);
        self.after = hi;
        let mut metas_by: HashMap<i64, Vec<SpectrumMeta>> = HashMap::new();
        for r in values::spectrum_metas_between(conn, lo, hi)? {
            metas_by.entry(r.aliquot_id).or_default().push(SpectrumMeta {
                kind: r.kind,
                sha256: r.sha256,
                excitation_nm: r.excitation_nm,
                x_unit: r.x_unit,
                path_cm: r.path_cm,
                dilution_factor: r.dilution_factor,
            });
        }
        let mut expected = Vec::with_capacity(chunk.len());
        for values::ScannedAliquot {
            aliquot: a,
            core,
            calibration_version: version,
        } in chunk
        {
            if let std::collections::btree_map::Entry::Vacant(e) = self.cals.entry(version) {
                e.insert(crate::lab::calibrations::get(conn, version)?.body);
            }
            let cal = &self.cals[&version];
            let metas = metas_by.remove(&a.id).unwrap_or_default();
            let has_pl = metas.iter().any(|s| s.kind == "pl");
            let rel = self
                .relevant_cache
                .entry((version, core.clone(), a.solvent.to_ascii_lowercase(), has_pl))
                .or_insert_with(|| relevant(cal, &core, &a.solvent, has_pl).to_string());
            if let std::collections::hash_map::Entry::Vacant(e) = self.contexts.entry(a.batch_id) {
                e.insert(match self.shells.remove(&a.batch_id) {
                    Some(row) => crate::report::context::context_of(conn, row)?,
                    None => batch_context(conn, a.batch_id)?,
                });
            }
            let ctx_part = self
                .contexts
                .get(&a.batch_id)
                .map(|c| c.hash_part())
                .unwrap_or_default();
            let hash = inputs_hash_with(&a, &core, &metas, &format!("{rel}{ctx_part}"));
            let part = self
                .analysis_cache
                .entry((version, has_pl))
                .or_insert_with(|| analysis_part(cal, has_pl));
            let stage1 = analysis_hash_with(&metas, part);
            expected.push((a, core, version, stage1, hash, metas));
        }
        let index: HashMap<i64, usize> = expected.iter().enumerate().map(|(i, e)| (e.0.id, i)).collect();
        let mut has_values = vec![false; expected.len()];
        let mut stale_rows = vec![false; expected.len()];
        let mut flagged = vec![false; expected.len()];
        values::current_hashes_between(conn, lo, hi, |id, q, h, stale| {
            let Some(&i) = index.get(&id) else { return };
            has_values[i] = true;
            flagged[i] |= stale;
            if !stale_rows[i] {
                stale_rows[i] = h != expected_hash(q, &expected[i].3, &expected[i].4);
            }
        })?;
        Ok(Some(Chunk {
            lo,
            hi,
            expected,
            has_values,
            stale_rows,
            flagged,
        }))
    }
}

/// One stale aliquot on its way through a recompute.
struct Work {
    a: AliquotRow,
    core: String,
    version: i64,
    stage1: String,
    hash: String,
    old: Vec<StoredValue>,
    values: Option<Vec<Derived>>,
    spectra: Vec<SpectrumRow>,
}

/// Recomputes stale values (all with `all`); a dry run only reports. Streams aliquots so
/// memory stays bounded whatever the size of the lab. `progress` gets (done, total).
pub fn recompute(
    conn: &Db,
    all: bool,
    dry_run: bool,
    mut progress: impl FnMut(usize, usize),
) -> Result<RecomputeReport> {
    let mut report = RecomputeReport {
        dry_run,
        ..Default::default()
    };
    let total = values::aliquot_count(conn)?;
    let thresholds = search_thresholds(conn)?;
    let products = values::product_aliquots(conn)?;
    let mut moves: Vec<Move> = Vec::new();
    // Batches with a value that moved: their growth series is looked at again afterwards.
    let mut touched: std::collections::BTreeSet<i64> = std::collections::BTreeSet::new();
    let mut scan = Scanner::new(conn)?;
    let mut done = 0usize;
    while let Some(chunk) = scan.next_chunk(conn)? {
        let Chunk {
            lo,
            hi,
            expected,
            has_values,
            stale_rows,
            ..
        } = chunk;
        let cals = &scan.cals;
        let contexts = &scan.contexts;
        let mut work: Vec<Work> = Vec::new();
        let mut candidates: Vec<(AliquotRow, String, i64, String, String, Vec<SpectrumMeta>)> = Vec::new();
        for (i, e) in expected.into_iter().enumerate() {
            report.aliquots_considered += 1;
            done += 1;
            if done.is_multiple_of(256) {
                progress(done, total as usize);
            }
            let stale = (!has_values[i] && !e.5.is_empty()) || stale_rows[i];
            if stale {
                report.stale_found += 1;
            }
            if !stale && !all {
                continue;
            }
            candidates.push(e);
        }
        // When most of a chunk is stale, its current values and spectra are read in one range
        // query each; when few are, one small query per stale aliquot reads less.
        let many = candidates.len() * 5 > CHUNK as usize * 3;
        let mut olds_by: HashMap<i64, Vec<StoredValue>> = HashMap::new();
        if many {
            for v in values::current_values_between(conn, lo, hi)? {
                olds_by.entry(v.aliquot_id).or_default().push(v);
            }
        }
        let mut spectra_by: Option<HashMap<i64, Vec<SpectrumRow>>> = None;
        for (a, core, version, stage1, hash, metas) in candidates {
            let cal = &cals[&version];
            let old = if many {
                olds_by.remove(&a.id).unwrap_or_default()
            } else {
                values::current_values(conn, a.id)?
            };
            // Stage one is kept when the spectra and the analysis settings are unchanged: then no
            // spectrum is read at all. `--all` redoes both stages.
            let spectral: Vec<&StoredValue> = old.iter().filter(|o| SPECTRAL.contains(&o.quantity.as_str())).collect();
            let stage1_current = !all && !spectral.is_empty() && spectral.iter().all(|o| o.inputs_hash == stage1);
            let (values, spectra) = if stage1_current {
                let mut v: Vec<Derived> = spectral
                    .iter()
                    .map(|o| Derived {
                        quantity: o.quantity.clone(),
                        value: o.value,
                        unit: o.unit.clone(),
                        method: o.method.clone(),
                        warnings: o.warnings.clone(),
                    })
                    .collect();
                let ctx = contexts.get(&a.batch_id).cloned().unwrap_or_default();
                let (more, _, _) = derive_values(&a, &core, &metas, &v, cal, &ctx);
                v.extend(more);
                (Some(v), Vec::new())
            } else if many {
                if spectra_by.is_none() {
                    spectra_by = Some(crate::store::model::spectra_of_aliquots_in(conn, lo, hi)?);
                }
                (
                    None,
                    spectra_by.as_mut().and_then(|m| m.remove(&a.id)).unwrap_or_default(),
                )
            } else {
                (None, crate::store::model::spectra_of_aliquot(conn, a.id)?)
            };
            work.push(Work {
                a,
                core,
                version,
                stage1,
                hash,
                old,
                values,
                spectra,
            });
        }
        // Pass two: the spectral analysis, the costly part, on every core.
        let workers = std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
            .min(8);
        let todo: Vec<usize> = (0..work.len()).filter(|&i| work[i].values.is_none()).collect();
        let computed: Vec<Vec<Derived>> = crate::par::parallel_map(&todo, workers, |&i| {
            let w = &work[i];
            let ctx = contexts.get(&w.a.batch_id).cloned().unwrap_or_default();
            let hint = stored_series_hint(&w.old);
            compute_in_series(&w.a, &w.core, &w.spectra, &cals[&w.version], &ctx, hint.as_ref()).values
        });
        for (i, v) in todo.into_iter().zip(computed) {
            work[i].values = Some(v);
            work[i].spectra = Vec::new();
        }
        // Pass three, in order: write (or, in a dry run, count) and report.
        for w in work {
            let Work {
                a,
                version,
                stage1,
                hash,
                old,
                values,
                ..
            } = w;
            let comp = Computation {
                values: values.unwrap_or_default(),
                absorbance: None,
                pl: None,
                sizing: None,
                extinction: None,
            };
            report.aliquots_recomputed += 1;
            report.recomputed += comp.values.len();
            let n_changed = if dry_run {
                count_changes(&comp.values, &old)
            } else {
                apply(conn, a.id, version, &stage1, &hash, &comp.values, &old)?
            };
            report.changed += n_changed;
            if n_changed > 0 {
                touched.insert(a.batch_id);
                for v in &comp.values {
                    let o = old.iter().find(|o| o.quantity == v.quantity).and_then(|o| o.value);
                    if same(o, v.value) {
                        continue;
                    }
                    let rel = match (o, v.value) {
                        (Some(x), Some(y)) if x != 0.0 => Some((y - x) / x.abs()),
                        _ => None,
                    };
                    if products.contains(&a.id) {
                        for (field, q, t) in &thresholds {
                            if q == &v.quantity
                                && let (Some(x), Some(y)) = (o, v.value)
                                && (x - t) * (y - t) < 0.0
                            {
                                report.threshold_crossings.push(Crossing {
                                    batch_id: a.batch_id,
                                    field: field.clone(),
                                    threshold: *t,
                                    old: o,
                                    new: v.value,
                                });
                            }
                        }
                    }
                    if ["diameter_nm", "concentration_molar", "qy", "first_exciton_nm"].contains(&v.quantity.as_str()) {
                        moves.push(Move {
                            aliquot_id: a.id,
                            batch_id: a.batch_id,
                            quantity: v.quantity.clone(),
                            old: o,
                            new: v.value,
                            relative_change: rel,
                        });
                        // Keep only the largest moves so memory stays bounded: the 20 largest
                        // are selected (not sorted) whenever 2,000 have gathered.
                        if moves.len() > 2000 {
                            moves.select_nth_unstable_by(19, move_order);
                            moves.truncate(20);
                        }
                    }
                }
            }
        }
    }
    progress(done, total as usize);
    sort_moves(&mut moves);
    moves.truncate(10);
    report.largest_moves = moves;
    let mut followed_vials = 0;
    if !dry_run {
        // Second looks follow the readings they rest on. With `all`, every batch is looked at,
        // so a lab whose values predate series awareness gets its second looks.
        if all {
            touched.extend(values::batch_ids(conn)?);
        }
        for b in touched {
            report.changed += series_pass(conn, b)?;
        }
        // Shelled batches computed before their parent's product moved in this pass follow it.
        // Their values were counted as they changed in the pass; a second move of the same
        // values is not counted again (a dry run cannot see it, and the preview is the run).
        // The vials that follow them are counted with the rest.
        let (_, vials) = follow_parent_cores_counted(conn, None)?;
        followed_vials = vials;
    }
    let (considered, changed) = refresh_vials(conn, None, dry_run)?;
    report.vials_considered = considered;
    report.vials_changed = changed + followed_vials;
    Ok(report)
}

/// Largest relative change first; a move to or from nothing counts as the largest.
fn move_order(a: &Move, b: &Move) -> std::cmp::Ordering {
    let ka = a.relative_change.map(f64::abs).unwrap_or(f64::INFINITY);
    let kb = b.relative_change.map(f64::abs).unwrap_or(f64::INFINITY);
    kb.total_cmp(&ka)
}

fn sort_moves(m: &mut [Move]) {
    m.sort_by(move_order);
}

fn count_changes(new: &[Derived], old: &[StoredValue]) -> usize {
    let mut n = new
        .iter()
        .filter(|v| {
            !old.iter()
                .any(|o| o.quantity == v.quantity && same(o.value, v.value) && o.method == v.method)
        })
        .count();
    n += old
        .iter()
        .filter(|o| !new.iter().any(|v| v.quantity == o.quantity))
        .count();
    n
}

/// Marks current values whose inputs no longer match as stale (cheap: no spectrum is read).
pub fn mark_stale(tx: &Db) -> Result<usize> {
    let mut scan = Scanner::new(tx)?;
    let mut n = 0;
    while let Some(c) = scan.next_chunk(tx)? {
        // Only aliquots with a differing hash or a flag already set can change.
        let rows: Vec<(i64, &str, &str)> = c
            .expected
            .iter()
            .enumerate()
            .filter(|(i, _)| c.stale_rows[*i] || c.flagged[*i])
            .map(|(_, (a, _, _, stage1, hash, _))| (a.id, hash.as_str(), stage1.as_str()))
            .collect();
        n += values::flag_stale_values(tx, SPECTRAL, &rows)?;
    }
    Ok(n + mark_vials_stale(tx)?)
}

/// (field, quantity, threshold) pairs people have searched by.
pub fn search_thresholds(conn: &Db) -> Result<Vec<(String, String, f64)>> {
    let mut out = Vec::new();
    for (f, v) in values::search_thresholds(conn)? {
        if let Some(q) = THRESHOLD_FIELDS.iter().find(|q| q.search_field == f) {
            out.push((f, q.name.to_string(), v));
        }
    }
    Ok(out)
}

/// Recomputes and records it in the audit log: the one way both faces apply a recompute.
pub fn recompute_recorded(
    tx: &Db,
    who: &str,
    all: bool,
    progress: impl FnMut(usize, usize),
) -> Result<RecomputeReport> {
    let r = recompute(tx, all, false, progress)?;
    crate::store::audit(
        tx,
        who,
        "derived_value",
        None,
        "recompute",
        None,
        Some(
            &serde_json::json!({"recomputed": r.recomputed, "changed": r.changed, "all": all,
            "vials_changed": r.vials_changed}),
        ),
    )?;
    Ok(r)
}

/// Recomputes the lab's stale values (every value with `all`) as the person's action: one
/// transaction, audited with what it changed (see [`recompute_recorded`]).
pub fn recompute_now(
    store: &mut crate::store::Store,
    all: bool,
    progress: impl FnMut(usize, usize),
) -> Result<RecomputeReport> {
    store.write(|tx, who| recompute_recorded(tx, who, all, progress))
}
