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

/// Standard atomic weights (IUPAC, conventional values rounded as in the periodic table most
/// labs hang on the wall; from memory), g/mol, for the elements of the shipped reagents and
/// common nanocrystal materials.
pub const ATOMIC_MASS: &[(&str, f64)] = &[
    ("H", 1.008),
    ("Li", 6.94),
    ("C", 12.011),
    ("N", 14.007),
    ("O", 15.999),
    ("F", 18.998),
    ("Na", 22.990),
    ("Mg", 24.305),
    ("Al", 26.982),
    ("Si", 28.085),
    ("P", 30.974),
    ("S", 32.06),
    ("Cl", 35.45),
    ("K", 39.098),
    ("Ti", 47.867),
    ("Mn", 54.938),
    ("Fe", 55.845),
    ("Co", 58.933),
    ("Ni", 58.693),
    ("Cu", 63.546),
    ("Zn", 65.38),
    ("Ga", 69.723),
    ("Ge", 72.630),
    ("As", 74.922),
    ("Se", 78.971),
    ("Br", 79.904),
    ("Ag", 107.87),
    ("Cd", 112.41),
    ("In", 114.82),
    ("Sn", 118.71),
    ("Sb", 121.76),
    ("Te", 127.60),
    ("I", 126.90),
    ("Cs", 132.91),
    ("Hg", 200.59),
    ("Pb", 207.2),
    ("Bi", 208.98),
];

/// Element counts of a chemical formula such as `Cd(CH3COO)2` or `((CH3)3Si)3P`.
pub fn element_counts(formula: &str) -> Result<std::collections::BTreeMap<String, f64>> {
    fn parse(chars: &[char], i: &mut usize, depth: usize, f: &str) -> Result<std::collections::BTreeMap<String, f64>> {
        let mut out = std::collections::BTreeMap::new();
        while *i < chars.len() {
            let c = chars[*i];
            if c == '(' {
                if depth > 8 {
                    return invalid(format!("formula '{f}' nests too deeply"));
                }
                *i += 1;
                let inner = parse(chars, i, depth + 1, f)?;
                if *i >= chars.len() || chars[*i] != ')' {
                    return invalid(format!("formula '{f}' has an unclosed bracket"));
                }
                *i += 1;
                let n = count(chars, i);
                for (k, v) in inner {
                    *out.entry(k).or_insert(0.0) += v * n;
                }
            } else if c == ')' {
                if depth == 0 {
                    return invalid(format!("formula '{f}' closes a bracket it never opened"));
                }
                return Ok(out);
            } else if c.is_ascii_uppercase() {
                let mut sym = c.to_string();
                *i += 1;
                if *i < chars.len() && chars[*i].is_ascii_lowercase() {
                    sym.push(chars[*i]);
                    *i += 1;
                }
                if !ATOMIC_MASS.iter().any(|(s, _)| *s == sym) {
                    return invalid(format!("formula '{f}': unknown element '{sym}'"));
                }
                let n = count(chars, i);
                *out.entry(sym).or_insert(0.0) += n;
            } else {
                return invalid(format!("formula '{f}': cannot read '{c}'"));
            }
        }
        if depth > 0 {
            return invalid(format!("formula '{f}' has an unclosed bracket"));
        }
        Ok(out)
    }
    fn count(chars: &[char], i: &mut usize) -> f64 {
        let start = *i;
        while *i < chars.len() && chars[*i].is_ascii_digit() && *i - start < 6 {
            *i += 1;
        }
        let s: String = chars[start..*i].iter().collect();
        s.parse::<f64>().unwrap_or(1.0)
    }
    let chars: Vec<char> = formula.trim().chars().collect();
    if chars.is_empty() {
        return invalid("an empty formula");
    }
    let mut i = 0;
    let out = parse(&chars, &mut i, 0, formula)?;
    if out.is_empty() {
        return invalid(format!("formula '{formula}' names no element"));
    }
    Ok(out)
}

/// Molar mass of a formula, g/mol.
pub fn molar_mass(formula: &str) -> Result<f64> {
    let counts = element_counts(formula)?;
    Ok(counts
        .iter()
        .map(|(el, n)| {
            n * ATOMIC_MASS
                .iter()
                .find(|(s, _)| s == el)
                .map(|(_, m)| *m)
                .unwrap_or(0.0)
        })
        .sum())
}

/// One line of a recipe, as the yield needs it.
#[derive(Debug, Clone)]
pub struct RecipeAmount {
    pub reagent: String,
    pub formula: Option<String>,
    pub amount: f64,
    /// mg, g, mL, uL, mmol or umol (the recipe's units).
    pub unit: String,
    pub role: Option<String>,
}

/// The precursor that limits how many formula units the reaction can make.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Limiting {
    /// The element of the material it supplies (Cd, Se, ...).
    pub element: String,
    pub reagents: Vec<String>,
    /// Formula units of the material it could give at most, mmol.
    pub formula_units_mmol: f64,
}

/// mmol of a recipe line, from mmol/umol directly or from a mass through its formula.
fn line_mmol(r: &RecipeAmount) -> Option<f64> {
    match r.unit.as_str() {
        "mmol" => Some(r.amount),
        "umol" => Some(r.amount * 1e-3),
        "mg" | "g" => {
            let m = molar_mass(r.formula.as_deref()?).ok()?;
            let mg = if r.unit == "g" { r.amount * 1e3 } else { r.amount };
            Some(mg / m)
        }
        _ => None,
    }
}

/// The limiting precursor for `material` (a formula such as CdSe or InP) among the recipe's
/// lines with role `precursor`: for each element of the material, the mmol that the precursors
/// supplying it carry, divided by its count in the formula unit; the smallest limits.
pub fn limiting_precursor(material: &str, lines: &[RecipeAmount]) -> Result<(Limiting, Vec<String>)> {
    let unit = element_counts(material)?;
    let mut warnings = Vec::new();
    let mut best: Option<Limiting> = None;
    for (el, n_el) in &unit {
        let mut mmol = 0.0;
        let mut names = Vec::new();
        for r in lines.iter().filter(|r| r.role.as_deref() == Some("precursor")) {
            let Some(f) = r.formula.as_deref() else { continue };
            let Ok(counts) = element_counts(f) else { continue };
            let Some(k) = counts.get(el) else { continue };
            match line_mmol(r) {
                Some(m) => {
                    mmol += m * k;
                    names.push(r.reagent.clone());
                }
                None => warnings.push(format!(
                    "{} is given in {}: its amount in mmol is not known, so it is left out of the limiting precursor",
                    r.reagent, r.unit
                )),
            }
        }
        if names.is_empty() {
            return invalid(format!(
                "no precursor in the recipe supplies {el} (a precursor needs a formula and an amount in mmol, umol, mg or g)"
            ));
        }
        let fu = mmol / n_el;
        if best.as_ref().is_none_or(|b| fu < b.formula_units_mmol) {
            best = Some(Limiting {
                element: el.clone(),
                reagents: names,
                formula_units_mmol: fu,
            });
        }
    }
    let best = best.ok_or_else(|| crate::error::Error::Invalid(format!("{material} names no element")))?;
    Ok((best, warnings))
}

/// The reaction volume as the sum of the recipe's liquid lines (mL and uL), if any.
pub fn reaction_volume_ml(lines: &[RecipeAmount]) -> Option<f64> {
    let v: f64 = lines
        .iter()
        .filter_map(|r| match r.unit.as_str() {
            "mL" => Some(r.amount),
            "uL" => Some(r.amount * 1e-3),
            _ => None,
        })
        .sum();
    (v > 0.0).then_some(v)
}
