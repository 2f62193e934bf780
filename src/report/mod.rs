//! Views for people and other tools, built from the store: the shelf entry, `explain`'s chain,
//! SVG plots of a growth series, exports and the handover pack. Read-only, except `handover`,
//! which reassigns ownership in one transaction before it writes the pack.

mod export;
mod handover;
mod outfile;
pub mod plot;

pub use export::export;
pub use handover::{HandoverReport, handover};
pub use outfile::{create_output, create_outputs};
pub use plot::{plot_batch_svg, plot_series_svg};

use crate::derive::{calibration, engine, growth, sizing};
use crate::error::Result;
use crate::store::{Db, model};
use serde_json::{Value, json};

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
    pub status: String,
    /// Of the vial's own solution, mol/L.
    pub concentration_molar: Option<f64>,
    /// measured (from the vial's own spectrum), estimate (carried over from the reaction's
    /// product aliquot), entered (the user's figure) or recorded (source not kept).
    pub concentration_source: Option<String>,
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
        status: v.status.clone(),
        concentration_molar: v.concentration_molar,
        concentration_source: v.concentration_source.clone(),
        concentration_method: v.concentration_method.clone(),
        concentration_stale: v.concentration_stale,
        calibration_version: v.calibration_version,
        nanomoles_left: v.concentration_molar.map(|c| c * v.volume_ml * 1e6),
        low_stock: v.status != "disposed" && v.volume_ml < LOW_STOCK_ML,
        created_at: v.created_at.clone(),
    }
}

/// How a vial's concentration is qualified wherever it is shown: an estimate is never shown
/// as a measurement, a stale value never as current.
pub fn concentration_note(v: &model::VialRow) -> &'static str {
    match (v.concentration_stale, v.concentration_source.as_deref()) {
        (true, _) => "STALE",
        (false, Some("estimate")) => "est.",
        (false, Some("recorded")) => "unverified",
        (false, Some("entered")) => "entered",
        (false, Some("measured")) => "measured",
        _ => "",
    }
}

/// The concentration of a batch's product aliquot (undiluted), if derived.
pub fn product_concentration(conn: &Db, batch_id: i64) -> Result<Option<f64>> {
    let b = model::get_batch(conn, batch_id)?;
    let series: Vec<growth::AliquotSummary> = model::aliquots_of(conn, batch_id)?
        .iter()
        .map(|a| growth::aliquot_summary(conn, a))
        .collect::<Result<_>>()?;
    Ok(growth::product_of(&b, &series).and_then(|p| p.concentration_molar))
}

pub use crate::par::parallel_map;

/// Each derived value of an aliquot with where it came from: spectrum, peak, curve and its
/// version and source, diameter, extinction, concentration; and the superseded history.
pub fn explain(conn: &Db, aliquot_id: i64) -> Result<Value> {
    let a = model::get_aliquot(conn, aliquot_id)?;
    let b = model::get_batch(conn, a.batch_id)?;
    let spectra = model::spectra_of_aliquot(conn, aliquot_id)?;
    let values = engine::current_values(conn, aliquot_id)?;
    let history = engine::value_history(conn, aliquot_id)?;
    let version = values.iter().map(|v| v.calibration_version).max();
    let cal = match version {
        Some(v) => Some(calibration::get(conn, v)?),
        None => None,
    };
    let order = [
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
    let mut chain = Vec::new();
    for q in order {
        if let Some(v) = values.iter().find(|v| v.quantity == q) {
            let mut step = serde_json::to_value(v)?;
            if (q == "diameter_nm" || q == "edge_nm")
                && let Ok(c) = sizing::Curve::parse(&v.method)
            {
                step["curve"] = json!(c.id());
                step["source"] = json!(c.source());
                step["valid_range_nm"] = json!(c.valid_range_nm(&b.core));
            }
            chain.push(step);
        }
    }
    Ok(json!({
        "aliquot_id": a.id,
        "batch_id": b.id,
        "material": b.material,
        "core": b.core,
        "minutes": a.minutes,
        "stage": a.stage,
        "dilution_factor": a.dilution_factor,
        "path_cm": a.path_cm,
        "solvent": a.solvent,
        "calibration_version": version,
        "pinned_calibration": b.pinned_calibration,
        "calibration": cal.map(|c| json!({
            "version": c.version, "why": c.why, "created_by": c.created_by, "created_at": c.created_at,
            "curve": c.body.curves.get(&b.core), "extinction": c.body.extinction.get(&b.core),
            "qy_reference": c.body.qy_reference, "analysis": c.body.analysis,
        })),
        "spectra": spectra.iter().map(|s| json!({"id": s.id, "kind": s.kind, "file_name": s.file_name, "sha256": s.sha256,
            "npoints": s.npoints, "x_unit": s.x_unit, "excitation_nm": s.excitation_nm,
            // The spectrum's own cuvette (a PL measurement's), null when it is the aliquot's.
            "path_cm": s.path_cm, "dilution_factor": s.dilution_factor})).collect::<Vec<_>>(),
        "chain": chain,
        "history": history,
    }))
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

/// The full record of a batch as `batch show --json` prints it.
pub fn batch_detail(tx: &Db, id: i64) -> crate::Result<Value> {
    let b = model::get_batch(tx, id)?;
    // The whole record, voided aliquots marked; growth and product leave them out.
    let series: Vec<growth::AliquotSummary> = model::all_aliquots_of(tx, id)?
        .iter()
        .map(|a| growth::aliquot_summary(tx, a))
        .collect::<crate::Result<_>>()?;
    let g = growth::growth(&series);
    let product = growth::product_of(&b, &series).cloned();
    let vials = model::vials_of_batch(tx, id)?;
    let recipe = match b.recipe_version_id {
        Some(v) => Some(model::recipe_view(tx, v)?),
        None => None,
    };
    let mut v = serde_json::to_value(&b)?;
    v["aliquots"] = serde_json::to_value(&series)?;
    v["growth"] = serde_json::to_value(&g)?;
    v["product"] = serde_json::to_value(&product)?;
    v["vials"] = serde_json::to_value(&vials)?;
    v["stock_ml"] = json!(
        vials
            .iter()
            .filter(|x| x.status != "disposed")
            .map(|x| x.volume_ml)
            .sum::<f64>()
    );
    v["children"] = json!(
        model::children_of(tx, id)?
            .into_iter()
            .map(|(i, n, r)| json!({"id": i, "name": n, "relation": r}))
            .collect::<Vec<_>>()
    );
    v["cautions"] = match &recipe {
        Some(r) => json!(cautions(r)),
        None => json!(crate::hazards::general_cautions(&b.core, false)),
    };
    v["recipe_detail"] = serde_json::to_value(&recipe)?;
    // Crystals × formula units against the limiting precursor; a reason in `warnings` when
    // it cannot be had (no recipe, no sized product, a shell growth).
    v["reaction_yield"] = serde_json::to_value(engine::reaction_yield_of(tx, id)?)?;
    Ok(v)
}
