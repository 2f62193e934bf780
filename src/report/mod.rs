//! Views for people and other tools, built from the store: the shelf entry, `explain`'s chain,
//! SVG plots of a growth series, exports and the handover pack (written by `lab::handover` inside
//! its transaction). Read-only.
//! The views are typed (`BatchSheet`, `ExplainChain`): the faces read their fields, and
//! `--json` prints them as they are.

pub mod context;
mod export;
mod figures;
pub mod handover;
mod outfile;
pub mod plot;
mod summary;
pub mod yields;

pub use figures::three_figures;

pub use export::export;
pub use outfile::{create_output, create_outputs};
pub use plot::{plot_batch_svg, plot_series_svg};
pub use summary::{aliquot_summary, recipe_stats};

use crate::derive::{calibration, engine, growth, sizing};
use crate::error::Result;
use crate::spectra::analysis::AnalysisSettings;
use crate::store::{Db, model};
use crate::vocab::{BatchRelation, ConcentrationSource, VialStatus};
use serde::Serialize;

/// Below this volume a vial counts as low on stock (common practice of our invented lab; a
/// setting a lab may want to change).
pub const LOW_STOCK_ML: f64 = 0.5;

/// A vial as `shelf --json` and `vial show --json` print it.
#[derive(Debug, Clone, serde::Serialize)]
pub struct ShelfEntry {
    pub id: i64,
    pub label: String,
    pub batch_id: i64,
    pub batch_name: String,
    pub material: String,
    pub location: String,
    pub position: Option<String>,
    pub volume_ml: f64,
    pub initial_ml: f64,
    pub solvent: String,
    pub owner: Option<String>,
    pub status: VialStatus,
    /// Of the vial's own solution, mol/L.
    pub concentration_molar: Option<f64>,
    /// measured (from the vial's own spectrum), estimate (carried over from the reaction's
    /// product aliquot), entered (the user's figure) or recorded (source not kept).
    pub concentration_source: Option<ConcentrationSource>,
    pub concentration_method: Option<String>,
    /// The concentration's inputs moved since (a calibration change): recompute.
    pub concentration_stale: bool,
    /// The calibration version behind the concentration (None for entered figures).
    pub calibration_version: Option<i64>,
    pub nanomoles_left: Option<f64>,
    pub low_stock: bool,
    pub created_at: String,
}

pub fn shelf_entry(v: &model::VialRow) -> ShelfEntry {
    ShelfEntry {
        id: v.id,
        label: v.label.clone(),
        batch_id: v.batch_id,
        batch_name: v.batch_name.clone(),
        material: v.material.clone(),
        location: v.location.clone(),
        position: v.position.clone(),
        volume_ml: v.volume_ml,
        initial_ml: v.initial_ml,
        solvent: v.solvent.clone(),
        owner: v.owner.clone(),
        status: v.status,
        concentration_molar: v.concentration_molar,
        concentration_source: v.concentration_source,
        concentration_method: v.concentration_method.clone(),
        concentration_stale: v.concentration_stale,
        calibration_version: v.calibration_version,
        nanomoles_left: v.concentration_molar.map(|c| c * v.volume_ml * 1e6),
        low_stock: v.status.on_shelf() && v.volume_ml < LOW_STOCK_ML,
        created_at: v.created_at.clone(),
    }
}

/// How a vial's concentration is qualified wherever it is shown: an estimate is never shown
/// as a measurement, a stale value never as current.
pub fn concentration_note(v: &model::VialRow) -> &'static str {
    match (v.concentration_stale, v.concentration_source) {
        (true, _) => "STALE",
        (false, Some(ConcentrationSource::Estimate)) => "est.",
        (false, Some(ConcentrationSource::Recorded)) => "unverified",
        (false, Some(ConcentrationSource::Entered)) => "entered",
        (false, Some(ConcentrationSource::Measured)) => "measured",
        (false, None) => "",
    }
}

/// A batch's product aliquot, chosen by the store's one product rule (the `batch_product`
/// view: the marked aliquot, else the last timed one, else the last logged; void ones never),
/// with its values; None for a void batch or one without aliquots.
pub fn product_summary(db: &Db, batch_id: i64) -> Result<Option<growth::AliquotSummary>> {
    match crate::store::values::product_aliquot(db, batch_id)? {
        Some(id) => Ok(Some(aliquot_summary(db, &model::get_aliquot(db, id)?)?)),
        None => Ok(None),
    }
}

/// The concentration of a batch's product aliquot (undiluted), if derived.
pub fn product_concentration(conn: &Db, batch_id: i64) -> Result<Option<f64>> {
    model::get_batch(conn, batch_id)?;
    Ok(product_summary(conn, batch_id)?.and_then(|p| p.concentration_molar))
}

pub use crate::par::parallel_map;

/// Batches whose product values (or a vial's concentration) are stale: what the ledger marks.
pub fn stale_batches(db: &Db) -> Result<std::collections::HashSet<i64>> {
    crate::store::values::stale_batches(db)
}

/// Each derived value of an aliquot with where it came from, as `explain --json` prints it:
/// the aliquot, its calibration, its spectra, the chain of current values and the superseded
/// history.
#[derive(Debug, Clone, Serialize)]
pub struct ExplainChain {
    pub aliquot_id: i64,
    pub batch_id: i64,
    pub material: String,
    pub core: String,
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub dilution_factor: f64,
    pub path_cm: f64,
    pub solvent: String,
    /// The newest calibration version among the current values (None before any is derived).
    pub calibration_version: Option<i64>,
    pub pinned_calibration: Option<i64>,
    pub calibration: Option<ExplainCalibration>,
    pub spectra: Vec<ExplainSpectrum>,
    /// The current values, in the order one follows from another.
    pub chain: Vec<ExplainStep>,
    pub history: Vec<crate::store::values::StoredValue>,
}

/// The parts of the calibration behind an aliquot's values that apply to its batch's core.
#[derive(Debug, Clone, Serialize)]
pub struct ExplainCalibration {
    pub version: i64,
    pub why: String,
    pub created_by: String,
    pub created_at: String,
    /// The sizing curve id for the batch's core.
    pub curve: Option<String>,
    /// The extinction model id for the batch's core.
    pub extinction: Option<String>,
    pub qy_reference: Option<calibration::QyReference>,
    pub analysis: AnalysisSettings,
}

/// A spectrum of the aliquot, without its data.
#[derive(Debug, Clone, Serialize)]
pub struct ExplainSpectrum {
    pub id: i64,
    pub kind: String,
    pub file_name: String,
    pub sha256: String,
    pub npoints: i64,
    pub x_unit: String,
    pub excitation_nm: Option<f64>,
    /// The spectrum's own cuvette (a PL measurement's), None when it is the aliquot's.
    pub path_cm: Option<f64>,
    pub dilution_factor: Option<f64>,
}

/// One current value of the chain; a diameter or band edge also names its sizing curve.
#[derive(Debug, Clone, Serialize)]
pub struct ExplainStep {
    #[serde(flatten)]
    pub value: crate::store::values::StoredValue,
    /// Present only for a value whose method is a sizing curve's id.
    #[serde(flatten)]
    pub curve: Option<CurveNote>,
}

/// A sizing curve as a step of the chain names it.
#[derive(Debug, Clone, Serialize)]
pub struct CurveNote {
    pub curve: &'static str,
    pub source: &'static str,
    pub valid_range_nm: [f64; 2],
}

/// The order of the chain: each value after those it is computed from.
const CHAIN_ORDER: &[&str] = &[
    "first_exciton_nm",
    "first_exciton_as_read_nm",
    "hwhm_as_read_nm",
    "shoulder_as_read",
    "series_expected_lo_nm",
    "series_expected_hi_nm",
    "first_exciton_abs",
    "shoulder",
    "hwhm_nm",
    "hwhm_mev",
    "abs_400nm",
    "abs_400nm_corrected",
    "abs_350nm_corrected",
    "abs_at_excitation_measured",
    "abs_at_excitation",
    "abs_at_excitation_sd",
    "abs_at_excitation_pl",
    "abs_at_pl_band",
    "core_diameter_nm",
    "diameter_nm",
    "edge_nm",
    "size_dispersion_pct",
    "extinction_m1cm1",
    "concentration_molar",
    "pl_peak_nm",
    "pl_fwhm_nm",
    "pl_fwhm_mev",
    "pl_integral",
    "stokes_shift_mev",
    "qy",
];

/// Each derived value of an aliquot with where it came from: spectrum, peak, curve and its
/// version and source, diameter, extinction, concentration; and the superseded history.
pub fn explain_chain(db: &Db, aliquot_id: i64) -> Result<ExplainChain> {
    let a = model::get_aliquot(db, aliquot_id)?;
    let b = model::get_batch(db, a.batch_id)?;
    let spectra = model::spectra_of_aliquot(db, aliquot_id)?;
    let values = crate::store::values::current_values(db, aliquot_id)?;
    let history = crate::store::values::value_history(db, aliquot_id)?;
    let version = values.iter().map(|v| v.calibration_version).max();
    let cal = match version {
        Some(v) => Some(crate::store::calibrations::get::<calibration::Calibration>(db, v)?),
        None => None,
    };
    let mut chain = Vec::new();
    for q in CHAIN_ORDER {
        if let Some(v) = values.iter().find(|v| v.quantity == *q) {
            let curve = if *q == "diameter_nm" || *q == "edge_nm" {
                sizing::Curve::parse(&v.method).ok().map(|c| CurveNote {
                    curve: c.id(),
                    source: c.source(),
                    valid_range_nm: c.valid_range_nm(&b.core),
                })
            } else {
                None
            };
            chain.push(ExplainStep {
                value: v.clone(),
                curve,
            });
        }
    }
    Ok(ExplainChain {
        aliquot_id: a.id,
        batch_id: b.id,
        calibration: cal.map(|c| ExplainCalibration {
            curve: c.body.curves.get(&b.core).cloned(),
            extinction: c.body.extinction.get(&b.core).cloned(),
            version: c.version,
            why: c.why,
            created_by: c.created_by,
            created_at: c.created_at,
            qy_reference: c.body.qy_reference,
            analysis: c.body.analysis,
        }),
        material: b.material,
        core: b.core,
        minutes: a.minutes,
        stage: a.stage,
        dilution_factor: a.dilution_factor,
        path_cm: a.path_cm,
        solvent: a.solvent,
        calibration_version: version,
        pinned_calibration: b.pinned_calibration,
        spectra: spectra
            .into_iter()
            .map(|s| ExplainSpectrum {
                id: s.id,
                kind: s.kind,
                file_name: s.file_name,
                sha256: s.sha256,
                npoints: s.npoints,
                x_unit: s.x_unit,
                excitation_nm: s.excitation_nm,
                path_cm: s.path_cm,
                dilution_factor: s.dilution_factor,
            })
            .collect(),
        chain,
        history,
    })
}

/// Minutes of a growth series for people: to 0.01 min, no trailing zeros (2, 2.5, 1.55), never
/// "-0". One rule for the UI, the plots and the pack.
pub fn minutes(m: f64) -> String {
    let s = format!("{:.2}", (m * 100.0).round() / 100.0);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.to_string() }
}

/// The cautions of a recipe: its reagents' hazards and the general ones.
pub fn cautions(r: &model::RecipeView) -> Vec<String> {
    let mut out: Vec<String> = r
        .reagents
        .iter()
        .filter(|g| !g.ghs_hazards.is_empty())
        .map(|g| {
            format!(
                "{}: {}",
                g.reagent,
                g.ghs_hazards
                    .iter()
                    .map(|h| format!("{h} {}", crate::hazards::statement(h).unwrap_or("")))
                    .collect::<Vec<_>>()
                    .join("; ")
            )
        })
        .collect();
    let core = r.material.split('/').next().unwrap_or("");
    out.extend(crate::hazards::general_cautions(
        core,
        r.reagents.iter().any(|g| g.pyrophoric),
    ));
    out
}

/// The full record of a batch as `batch show --json` prints it: the batch's own fields, then
/// its aliquots (voided ones marked), growth, product, vials and the rest.
#[derive(Debug, Clone, Serialize)]
pub struct BatchSheet {
    #[serde(flatten)]
    pub batch: model::BatchRow,
    /// The whole record, voided aliquots marked; growth and product leave them out.
    pub aliquots: Vec<growth::AliquotSummary>,
    pub growth: growth::Growth,
    pub product: Option<growth::AliquotSummary>,
    pub vials: Vec<model::VialRow>,
    /// mL left in the vials that are not disposed.
    pub stock_ml: f64,
    /// The batches made from this one (shells, purifications).
    pub children: Vec<ChildBatch>,
    pub cautions: Vec<String>,
    pub recipe_detail: Option<model::RecipeView>,
    /// Crystals × formula units against the limiting precursor; a reason in its `warnings`
    /// when it cannot be had (no recipe, no sized product, a shell growth).
    pub reaction_yield: engine::ReactionYieldView,
}

/// A batch made from another, as its parent's sheet lists it.
#[derive(Debug, Clone, Serialize)]
pub struct ChildBatch {
    pub id: i64,
    pub name: String,
    pub relation: Option<BatchRelation>,
}

/// The full record of a batch.
pub fn batch_sheet(db: &Db, id: i64) -> Result<BatchSheet> {
    let b = model::get_batch(db, id)?;
    let aliquots: Vec<growth::AliquotSummary> = model::all_aliquots_of(db, id)?
        .iter()
        .map(|a| aliquot_summary(db, a))
        .collect::<Result<_>>()?;
    let g = growth::growth(&aliquots);
    // The product by the store's one rule (the `batch_product` view), taken from the series.
    let product_id = crate::store::values::product_aliquot(db, id)?;
    let product = aliquots.iter().find(|a| Some(a.id) == product_id).cloned();
    let vials = model::vials_of_batch(db, id)?;
    let recipe_detail = match b.recipe_version_id {
        Some(v) => Some(model::recipe_view(db, v)?),
        None => None,
    };
    // From +0.0: the empty sum of f64 is -0.0, which a sheet would print as "-0".
    let stock_ml = vials
        .iter()
        .filter(|x| x.status.on_shelf())
        .map(|x| x.volume_ml)
        .fold(0.0, |a, b| a + b);
    let children = model::children_of(db, id)?
        .into_iter()
        .map(|(id, name, relation)| ChildBatch { id, name, relation })
        .collect();
    let cautions = match &recipe_detail {
        Some(r) => cautions(r),
        None => crate::hazards::general_cautions(&b.core, false),
    };
    let reaction_yield = yields::reaction_yield_of(db, id)?;
    Ok(BatchSheet {
        batch: b,
        aliquots,
        growth: g,
        product,
        vials,
        stock_ml,
        children,
        cautions,
        recipe_detail,
        reaction_yield,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;
    use std::collections::BTreeSet;

    fn keys(v: &Value) -> BTreeSet<String> {
        v.as_object().map(|m| m.keys().cloned().collect()).unwrap_or_default()
    }

    /// A flattened row and the keys a view adds beside it must not share a name: a struct
    /// printed as it is would then carry the key twice, and through a `Value` lose one.
    #[test]
    fn the_typed_views_add_no_key_their_rows_already_have() -> Result<()> {
        let mut store = crate::lab::in_memory("tester")?;
        crate::lab::demo::build(&mut store, None, |_, _| {})?;
        let shelled = model::list_batches(&store.conn)?
            .into_iter()
            .find(|b| b.parent_batch_id.is_some())
            .ok_or_else(|| crate::error::Error::Invalid("the demo has a shelled batch".into()))?;
        let sheet = batch_sheet(&store.conn, shelled.id)?;
        let own = keys(&serde_json::to_value(&sheet.batch)?);
        let all = keys(&serde_json::to_value(&sheet)?);
        let added = [
            "aliquots",
            "growth",
            "product",
            "vials",
            "stock_ml",
            "children",
            "cautions",
            "recipe_detail",
            "reaction_yield",
        ];
        assert!(added.iter().all(|k| !own.contains(*k)));
        assert_eq!(all.len(), own.len() + added.len());
        assert!(sheet.product.is_some(), "a shelled demo batch has a product aliquot");
        let aliquot = sheet.aliquots.last().map(|a| a.id).unwrap_or_default();
        let chain = explain_chain(&store.conn, aliquot)?;
        let sized = chain
            .chain
            .iter()
            .find(|s| s.value.quantity == "diameter_nm")
            .ok_or_else(|| crate::error::Error::Invalid("the product is sized".into()))?;
        let note = sized.curve.as_ref().map(|c| c.curve);
        assert_eq!(note, sizing::Curve::parse(&sized.value.method).ok().map(|c| c.id()));
        let step = keys(&serde_json::to_value(sized)?);
        let value = keys(&serde_json::to_value(&sized.value)?);
        assert!(
            ["curve", "source", "valid_range_nm"]
                .iter()
                .all(|k| !value.contains(*k))
        );
        assert_eq!(step.len(), value.len() + 3);
        Ok(())
    }
}
