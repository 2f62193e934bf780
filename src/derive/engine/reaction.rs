//! The pure part of a batch's reaction yield: crystals × formula units against the limiting
//! precursor, from the product's diameter and concentration and the recipe's lines
//! (`report::yields` reads them).

use crate::derive::yields;
use serde::Serialize;

/// A batch's reaction yield: crystals × formula units against the limiting precursor, from
/// its product aliquot's diameter and concentration and its recipe's amounts.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ReactionYieldView {
    /// Formula units in the crystals over the most the limiting precursor could give (0-1).
    pub yield_fraction: Option<f64>,
    pub product_mmol: Option<f64>,
    pub crystals: Option<f64>,
    pub formula_units_per_crystal: Option<f64>,
    pub limiting_element: Option<String>,
    pub limiting_reagents: Vec<String>,
    pub limiting_mmol: Option<f64>,
    pub reaction_volume_ml: Option<f64>,
    pub aliquot_id: Option<i64>,
    pub diameter_nm: Option<f64>,
    pub concentration_molar: Option<f64>,
    pub method: String,
    pub warnings: Vec<String>,
}

const YIELD_METHOD: &str =
    "crystals (c · V · N_A) x formula units per crystal (ρ (π/6) D³ N_A / M) over the limiting precursor";

impl ReactionYieldView {
    pub fn none(why: String) -> ReactionYieldView {
        ReactionYieldView {
            yield_fraction: None,
            product_mmol: None,
            crystals: None,
            formula_units_per_crystal: None,
            limiting_element: None,
            limiting_reagents: Vec::new(),
            limiting_mmol: None,
            reaction_volume_ml: None,
            aliquot_id: None,
            diameter_nm: None,
            concentration_molar: None,
            method: YIELD_METHOD.into(),
            warnings: vec![why],
        }
    }
}

/// The pure part of the reaction yield: from the product's diameter and (undiluted)
/// concentration, the reaction volume and the recipe lines.
pub fn reaction_yield_from(
    core: &str,
    diameter_nm: f64,
    concentration_molar: f64,
    lines: &[yields::RecipeAmount],
) -> ReactionYieldView {
    let (lim, mut warnings) = match yields::limiting_precursor(core, lines) {
        Ok(x) => x,
        Err(e) => return ReactionYieldView::none(e.to_string()),
    };
    let Some(volume) = yields::reaction_volume_ml(lines) else {
        return ReactionYieldView::none("the recipe gives no liquid volume (mL): no reaction volume".into());
    };
    warnings.push(format!(
        "reaction volume taken as the recipe's liquids ({volume:.1} mL): expansion when hot and aliquots taken out are not counted"
    ));
    match yields::reaction_yield(core, diameter_nm, concentration_molar, volume, lim.formula_units_mmol) {
        Err(e) => ReactionYieldView::none(e.to_string()),
        Ok(y) => {
            if y.yield_fraction > 1.0 {
                warnings.push(format!(
                    "yield {:.0} % is above 100 %: check the concentration (extinction law, dilution) and the recipe amounts",
                    100.0 * y.yield_fraction
                ));
            }
            ReactionYieldView {
                yield_fraction: Some(y.yield_fraction),
                product_mmol: Some(y.product_mmol),
                crystals: Some(y.crystals),
                formula_units_per_crystal: Some(y.formula_units_per_crystal),
                limiting_element: Some(lim.element),
                limiting_reagents: lim.reagents,
                limiting_mmol: Some(lim.formula_units_mmol),
                reaction_volume_ml: Some(volume),
                aliquot_id: None,
                diameter_nm: Some(diameter_nm),
                concentration_molar: Some(concentration_molar),
                method: YIELD_METHOD.into(),
                warnings,
            }
        }
    }
}
