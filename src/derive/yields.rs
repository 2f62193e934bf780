//! Reaction yield and shell growth from crystal size and concentration.
//!
//! Crystal count = c · V · N_A. Formula units per crystal = ρ · (π/6) d³ · N_A / M. Chemical
//! yield = formula units in crystals / formula units the limiting precursor could give.
//! Shell growth: the shell volume for n monolayers of thickness t on a core of diameter d is
//! (π/6)[(d + 2nt)³ - d³] per crystal (common practice; SILAR amounts as in Li et al., J. Am.
//! Chem. Soc. 125, 12567 (2003)). Bulk densities and molar masses are handbook values from
//! memory (densities differ by a few per cent between handbook and lattice-derived values).

use crate::error::{Result, invalid};
use serde::Serialize;

/// Avogadro constant (CODATA 2018, exact).
pub const AVOGADRO: f64 = 6.022_140_76e23;

/// (material, density g/cm³, molar mass g/mol, monolayer thickness nm if used as a shell).
pub const BULK: &[(&str, f64, f64, Option<f64>)] = &[
    ("CdSe", 5.81, 191.37, None),
    ("CdS", 4.82, 144.48, Some(0.35)),
    ("CdTe", 5.85, 240.01, None),
    ("PbS", 7.60, 239.27, None),
    ("PbSe", 8.26, 286.16, None),
    ("InP", 4.81, 145.79, None),
    ("ZnS", 4.09, 97.47, Some(0.31)),
    ("ZnSe", 5.27, 144.35, Some(0.33)),
];

fn bulk(m: &str) -> Result<(f64, f64, Option<f64>)> {
    BULK.iter()
        .find(|b| b.0.eq_ignore_ascii_case(m))
        .map(|b| (b.1, b.2, b.3))
        .ok_or_else(|| crate::error::Error::Invalid(format!("no density and molar mass for {m}")))
}

/// Formula units (e.g. CdSe pairs) in one sphere of diameter `d_nm`.
pub fn formula_units_per_crystal(material: &str, d_nm: f64) -> Result<f64> {
    let (rho, molar, _) = bulk(material)?;
    let v_cm3 = std::f64::consts::PI / 6.0 * (d_nm * 1e-7).powi(3);
    Ok(rho * v_cm3 / molar * AVOGADRO)
}

#[derive(Debug, Clone, Serialize)]
pub struct ReactionYield {
    pub crystals: f64,
    pub formula_units_per_crystal: f64,
    pub product_mmol: f64,
    pub yield_fraction: f64,
}

/// Chemical yield against the limiting precursor (mmol of the element it supplies).
pub fn reaction_yield(
    material: &str,
    d_nm: f64,
    conc_molar: f64,
    volume_ml: f64,
    limiting_mmol: f64,
) -> Result<ReactionYield> {
    if !(limiting_mmol > 0.0) {
        return invalid("the limiting precursor amount must be above zero");
    }
    let per = formula_units_per_crystal(material, d_nm)?;
    let crystals = conc_molar * volume_ml * 1e-3 * AVOGADRO;
    let product_mmol = crystals * per / AVOGADRO * 1e3;
    Ok(ReactionYield {
        crystals,
        formula_units_per_crystal: per,
        product_mmol,
        yield_fraction: product_mmol / limiting_mmol,
    })
}

#[derive(Debug, Clone, Serialize)]
pub struct ShellPlan {
    pub shell: String,
    pub monolayer_nm: f64,
    pub per_monolayer: Vec<ShellLayer>,
    pub final_diameter_nm: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct ShellLayer {
    pub layer: usize,
    pub diameter_nm: f64,
    /// mmol of each shell element needed for this layer.
    pub precursor_mmol: f64,
}

/// Precursor per monolayer for `crystals_umol` µmol of cores of diameter `core_nm`.
pub fn shell_plan(
    shell: &str,
    core_nm: f64,
    crystals_umol: f64,
    layers: usize,
    ml_nm: Option<f64>,
) -> Result<ShellPlan> {
    let (rho, molar, ml) = bulk(shell)?;
    let t = ml_nm
        .or(ml)
        .ok_or_else(|| crate::error::Error::Invalid(format!("no monolayer thickness for {shell}; give --ml-nm")))?;
    if layers == 0 || layers > 20 {
        return invalid("monolayers must be between 1 and 20");
    }
    let mut out = Vec::new();
    let mut d = core_nm;
    for i in 1..=layers {
        let d2 = d + 2.0 * t;
        let dv_cm3 = std::f64::consts::PI / 6.0 * ((d2 * 1e-7).powi(3) - (d * 1e-7).powi(3));
        let mol_per_crystal = rho * dv_cm3 / molar;
        // Moles of shell formula units for all crystals: per crystal times the crystal count.
        let mmol = mol_per_crystal * crystals_umol * 1e-6 * AVOGADRO * 1e3;
        out.push(ShellLayer {
            layer: i,
            diameter_nm: d2,
            precursor_mmol: mmol,
        });
        d = d2;
    }
    Ok(ShellPlan {
        shell: shell.into(),
        monolayer_nm: t,
        per_monolayer: out,
        final_diameter_nm: d,
    })
}
