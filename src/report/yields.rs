//! Views of what a batch's values give together: its reaction yield (crystals × formula units
//! against the limiting precursor) and a gradient quantum yield over a dilution series logged
//! as aliquots. Read-only: they read the current values and compute with derive's methods.

use super::context::batch_context;
pub use crate::derive::engine::ReactionYieldView;
use crate::derive::engine::reaction_yield_from;
use crate::derive::{qy, yields};
use crate::error::Result;
use crate::store::{Db, values};
use serde::Serialize;

/// A batch's reaction yield, from the store: its product aliquot's current diameter and
/// concentration and its recipe. A shelled batch has no crystal yield of its own.
pub fn reaction_yield_of(conn: &Db, batch_id: i64) -> Result<ReactionYieldView> {
    let b = crate::store::model::get_batch(conn, batch_id)?;
    let ctx = batch_context(conn, batch_id)?;
    if let Some(sh) = &ctx.shell {
        return Ok(ReactionYieldView::none(format!(
            "a {sh} shell growth: the crystal yield belongs to the core batch"
        )));
    }
    let Some(version_id) = b.recipe_version_id else {
        return Ok(ReactionYieldView::none(
            "no recipe recorded: no precursor amounts".into(),
        ));
    };
    let recipe = crate::store::model::recipe_view(conn, version_id)?;
    let mut lines = Vec::new();
    for r in &recipe.reagents {
        let formula = crate::store::model::reagent_by_name(conn, &r.reagent)
            .ok()
            .and_then(|g| g.formula);
        lines.push(yields::RecipeAmount {
            reagent: r.reagent.clone(),
            formula,
            amount: r.amount,
            unit: r.unit.clone(),
            role: r.role.clone(),
        });
    }
    let Some(aid) = values::product_aliquot(conn, batch_id)? else {
        return Ok(ReactionYieldView::none("no product aliquot".into()));
    };
    let values = values::current_values(conn, aid)?;
    let get = |q: &str| values.iter().find(|v| v.quantity == q);
    let (Some(dv), Some(cv)) = (
        get("diameter_nm").and_then(|v| v.value),
        get("concentration_molar").and_then(|v| v.value),
    ) else {
        let mut v = ReactionYieldView::none(format!("product aliquot {aid} has no diameter and concentration"));
        v.aliquot_id = Some(aid);
        return Ok(v);
    };
    let mut v = reaction_yield_from(&b.core, dv, cv, &lines);
    v.aliquot_id = Some(aid);
    if values
        .iter()
        .any(|x| x.stale && (x.quantity == "diameter_nm" || x.quantity == "concentration_molar"))
    {
        v.warnings
            .push("the product's diameter or concentration is stale: recompute".into());
    }
    Ok(v)
}

/// The gradient method (Williams, Winfield & Miller 1983) over a dilution series of one sample
/// logged as aliquots: each one's current absorbance at excitation in the PL cuvette and PL
/// integral, against the calibration's reference series (or its single point, through the
/// origin). Fewer than four dilutions, solvents that differ or stale values are said.
pub fn gradient_qy(conn: &Db, aliquot_ids: &[i64]) -> Result<qy::QyResult> {
    let g = gradient_qy_series(conn, aliquot_ids)?;
    Ok(qy::QyResult {
        qy: g.qy,
        qy_sd: g.qy_sd,
        method: g.method,
        warnings: g.warnings,
    })
}

/// One dilution of a gradient series, as the method took it.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct GradientPoint {
    pub aliquot_id: i64,
    /// Scatter-corrected, in the PL cuvette.
    pub abs_at_excitation_pl: f64,
    pub pl_integral: f64,
}

/// A gradient quantum yield with what it was computed from.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct GradientQy {
    pub qy: f64,
    /// One standard deviation from the two slopes' standard errors, when both have one.
    pub qy_sd: Option<f64>,
    pub method: String,
    /// How many of the sample's dilutions the line went through.
    pub dilutions: usize,
    pub points: Vec<GradientPoint>,
    /// The sample's line of PL integral on absorbance.
    pub sample_fit: qy::LineFit,
    pub reference_dye: String,
    pub reference_qy: f64,
    /// The reference's dilutions in the calibration; 1 when it holds a single point (its line
    /// is then taken through the origin).
    pub reference_dilutions: usize,
    pub n_sample: f64,
    pub n_ref: f64,
    /// The calibration version the reference and indices came from (the first aliquot's).
    pub calibration_version: i64,
    pub warnings: Vec<String>,
}

/// [`gradient_qy`] with its points, fit and reference. An aliquot named twice or void is
/// refused.
pub fn gradient_qy_series(conn: &Db, aliquot_ids: &[i64]) -> Result<GradientQy> {
    if aliquot_ids.is_empty() {
        return crate::error::invalid("the gradient method needs the aliquots of a dilution series");
    }
    let mut seen = std::collections::HashSet::new();
    if let Some(dup) = aliquot_ids.iter().find(|id| !seen.insert(**id)) {
        return crate::error::invalid(format!("aliquot {dup} is named twice: each dilution counts once"));
    }
    let first = crate::store::model::get_aliquot(conn, aliquot_ids[0])?;
    let version = values::effective_calibration_version(conn, first.batch_id)?;
    let cal = crate::store::calibrations::get::<crate::derive::calibration::Calibration>(conn, version)?.body;
    let r = cal
        .qy_reference
        .as_ref()
        .ok_or_else(|| crate::error::Error::Invalid("no QY reference in the calibration".into()))?;
    let mut points = Vec::new();
    let mut warnings = Vec::new();
    for id in aliquot_ids {
        let a = crate::store::model::get_aliquot(conn, *id)?;
        if a.voided {
            return crate::error::invalid(format!("aliquot {id} is void: it counts for nothing"));
        }
        if !a.solvent.eq_ignore_ascii_case(&first.solvent) {
            warnings.push(format!(
                "aliquot {id} is in {}, the first in {}: one series, one solvent",
                a.solvent, first.solvent
            ));
        }
        let values = values::current_values(conn, *id)?;
        let get = |q: &str| values.iter().find(|v| v.quantity == q);
        let (Some(av), Some(iv)) = (
            get("abs_at_excitation_pl").and_then(|v| v.value),
            get("pl_integral").and_then(|v| v.value),
        ) else {
            return crate::error::invalid(format!(
                "aliquot {id} has no absorbance at excitation in the PL cuvette and PL integral"
            ));
        };
        if values.iter().any(|v| v.stale) {
            warnings.push(format!("aliquot {id}'s values are stale: recompute"));
        }
        points.push(GradientPoint {
            aliquot_id: *id,
            abs_at_excitation_pl: av,
            pl_integral: iv,
        });
    }
    let (Some(n), Some(nr)) = (cal.refractive_index(&first.solvent), cal.refractive_index(&r.solvent)) else {
        return crate::error::invalid("no refractive index for a solvent");
    };
    let xy: Vec<(f64, f64)> = points.iter().map(|p| (p.abs_at_excitation_pl, p.pl_integral)).collect();
    let mut q = if cal.qy_reference_dilutions.is_empty() {
        qy::gradient_single_reference(&xy, r.abs_at_excitation, r.integral, r.qy, n, nr)?
    } else {
        let reference: Vec<(f64, f64)> = cal
            .qy_reference_dilutions
            .iter()
            .map(|p| (p.abs_at_excitation, p.integral))
            .collect();
        qy::gradient(&xy, &reference, r.qy, n, nr)?
    };
    if cal.detector_correction.is_none() {
        q.warnings.push(qy::NO_DETECTOR_CORRECTION.into());
    }
    q.warnings.extend(warnings);
    Ok(GradientQy {
        qy: q.qy,
        qy_sd: q.qy_sd,
        method: format!("{} against {} ({})", q.method, r.dye, r.qy),
        dilutions: points.len(),
        sample_fit: qy::line_fit(&xy)?,
        points,
        reference_dye: r.dye.clone(),
        reference_qy: r.qy,
        reference_dilutions: cal.qy_reference_dilutions.len().max(1),
        n_sample: n,
        n_ref: nr,
        calibration_version: version,
        warnings: q.warnings,
    })
}
