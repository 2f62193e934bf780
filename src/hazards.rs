//! GHS hazard statements (the UN Globally Harmonized System, an open standard) and the reagents
//! cuvette ships with their usual classification. The shipped classifications are from memory
//! of typical supplier safety data sheets: they are a reminder, not a substitute. Every screen
//! and report that shows them also says to follow the reagent's own SDS and the lab's rules.

/// The caution shown wherever hazards are listed. cuvette never declares a procedure safe.
pub const SDS_NOTICE: &str =
    "Hazards listed are a reminder only: follow each reagent's safety data sheet and your lab's own safety rules.";

/// The same caution where a screen has one short line for it.
pub const SDS_NOTICE_SHORT: &str = "A reminder only: follow each reagent's SDS and your lab's safety rules.";

/// (code, statement text, GHS pictogram).
pub const STATEMENTS: &[(&str, &str, &str)] = &[
    ("H225", "Highly flammable liquid and vapour", "GHS02 flame"),
    ("H226", "Flammable liquid and vapour", "GHS02 flame"),
    ("H228", "Flammable solid", "GHS02 flame"),
    ("H250", "Catches fire spontaneously if exposed to air", "GHS02 flame"),
    (
        "H260",
        "In contact with water releases flammable gases which may ignite spontaneously",
        "GHS02 flame",
    ),
    ("H261", "In contact with water releases flammable gas", "GHS02 flame"),
    ("H300", "Fatal if swallowed", "GHS06 skull and crossbones"),
    ("H301", "Toxic if swallowed", "GHS06 skull and crossbones"),
    ("H302", "Harmful if swallowed", "GHS07 exclamation mark"),
    (
        "H304",
        "May be fatal if swallowed and enters airways",
        "GHS08 health hazard",
    ),
    ("H310", "Fatal in contact with skin", "GHS06 skull and crossbones"),
    ("H311", "Toxic in contact with skin", "GHS06 skull and crossbones"),
    ("H312", "Harmful in contact with skin", "GHS07 exclamation mark"),
    ("H314", "Causes severe skin burns and eye damage", "GHS05 corrosion"),
    ("H315", "Causes skin irritation", "GHS07 exclamation mark"),
    ("H317", "May cause an allergic skin reaction", "GHS07 exclamation mark"),
    ("H318", "Causes serious eye damage", "GHS05 corrosion"),
    ("H319", "Causes serious eye irritation", "GHS07 exclamation mark"),
    ("H330", "Fatal if inhaled", "GHS06 skull and crossbones"),
    ("H331", "Toxic if inhaled", "GHS06 skull and crossbones"),
    ("H332", "Harmful if inhaled", "GHS07 exclamation mark"),
    (
        "H334",
        "May cause allergy or asthma symptoms or breathing difficulties if inhaled",
        "GHS08 health hazard",
    ),
    ("H335", "May cause respiratory irritation", "GHS07 exclamation mark"),
    ("H336", "May cause drowsiness or dizziness", "GHS07 exclamation mark"),
    ("H340", "May cause genetic defects", "GHS08 health hazard"),
    ("H341", "Suspected of causing genetic defects", "GHS08 health hazard"),
    ("H350", "May cause cancer", "GHS08 health hazard"),
    ("H351", "Suspected of causing cancer", "GHS08 health hazard"),
    (
        "H360",
        "May damage fertility or the unborn child",
        "GHS08 health hazard",
    ),
    (
        "H361",
        "Suspected of damaging fertility or the unborn child",
        "GHS08 health hazard",
    ),
    ("H370", "Causes damage to organs", "GHS08 health hazard"),
    (
        "H372",
        "Causes damage to organs through prolonged or repeated exposure",
        "GHS08 health hazard",
    ),
    (
        "H373",
        "May cause damage to organs through prolonged or repeated exposure",
        "GHS08 health hazard",
    ),
    ("H400", "Very toxic to aquatic life", "GHS09 environment"),
    (
        "H410",
        "Very toxic to aquatic life with long lasting effects",
        "GHS09 environment",
    ),
    (
        "H411",
        "Toxic to aquatic life with long lasting effects",
        "GHS09 environment",
    ),
    (
        "H412",
        "Harmful to aquatic life with long lasting effects",
        "no pictogram",
    ),
    (
        "H413",
        "May cause long lasting harmful effects to aquatic life",
        "no pictogram",
    ),
];

/// The text of a hazard statement, if the code is known.
pub fn statement(code: &str) -> Option<&'static str> {
    STATEMENTS
        .iter()
        .find(|(c, _, _)| c.eq_ignore_ascii_case(code))
        .map(|(_, t, _)| *t)
}

/// The pictogram a hazard statement carries.
pub fn pictogram(code: &str) -> Option<&'static str> {
    STATEMENTS
        .iter()
        .find(|(c, _, _)| c.eq_ignore_ascii_case(code))
        .map(|(_, _, p)| *p)
}

/// The distinct pictograms of a set of statements, in a stable order.
pub fn pictograms<'a>(codes: impl IntoIterator<Item = &'a str>) -> Vec<&'static str> {
    let mut out: Vec<&'static str> = codes
        .into_iter()
        .filter_map(pictogram)
        .filter(|p| *p != "no pictogram")
        .collect();
    out.sort();
    out.dedup();
    out
}

/// A shipped reagent: name, formula, hazard codes, pyrophoric.
pub struct ShippedReagent {
    pub name: &'static str,
    pub formula: &'static str,
    pub hazards: &'static str,
    pub pyrophoric: bool,
    /// A caution beyond the H-statements (stench, air sensitivity), common practice.
    pub note: &'static str,
}

/// Classifications from memory of typical SDSs; always check the supplier's sheet.
pub const SHIPPED_REAGENTS: &[ShippedReagent] = &[
    ShippedReagent {
        name: "cadmium oxide",
        formula: "CdO",
        hazards: "H330 H341 H350 H361 H372 H410",
        pyrophoric: false,
        note: "toxic, carcinogenic metal",
    },
    ShippedReagent {
        name: "cadmium acetate",
        formula: "Cd(CH3COO)2",
        hazards: "H302 H312 H332 H341 H350 H361 H372 H410",
        pyrophoric: false,
        note: "toxic, carcinogenic metal",
    },
    ShippedReagent {
        name: "selenium",
        formula: "Se",
        hazards: "H301 H331 H373 H413",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "sulfur",
        formula: "S",
        hazards: "H315",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "tellurium",
        formula: "Te",
        hazards: "H317",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "trioctylphosphine",
        formula: "P(C8H17)3",
        hazards: "H314",
        pyrophoric: false,
        note: "air-sensitive; malodorous",
    },
    ShippedReagent {
        name: "tributylphosphine",
        formula: "P(C4H9)3",
        hazards: "H250 H302 H314",
        pyrophoric: true,
        note: "pyrophoric; malodorous",
    },
    ShippedReagent {
        name: "trioctylphosphine oxide",
        formula: "OP(C8H17)3",
        hazards: "H315 H318",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "1-octadecene",
        formula: "C18H36",
        hazards: "H304",
        pyrophoric: false,
        note: "used at 200-320 °C",
    },
    ShippedReagent {
        name: "oleic acid",
        formula: "C18H34O2",
        hazards: "",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "oleylamine",
        formula: "C18H37N",
        hazards: "H302 H304 H314 H335 H373 H410",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "myristic acid",
        formula: "C14H28O2",
        hazards: "H319",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "lead(II) oxide",
        formula: "PbO",
        hazards: "H302 H332 H360 H373 H410",
        pyrophoric: false,
        note: "toxic metal; reproductive toxin",
    },
    ShippedReagent {
        name: "lead(II) chloride",
        formula: "PbCl2",
        hazards: "H302 H332 H360 H373 H410",
        pyrophoric: false,
        note: "toxic metal; reproductive toxin",
    },
    ShippedReagent {
        name: "bis(trimethylsilyl) sulfide",
        formula: "((CH3)3Si)2S",
        hazards: "H225 H261 H315 H319 H331",
        pyrophoric: false,
        note: "releases H2S with moisture; stench",
    },
    ShippedReagent {
        name: "tris(trimethylsilyl)phosphine",
        formula: "((CH3)3Si)3P",
        hazards: "H250 H261 H314",
        pyrophoric: true,
        note: "pyrophoric; releases phosphine with moisture",
    },
    ShippedReagent {
        name: "indium(III) chloride",
        formula: "InCl3",
        hazards: "H302 H314",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "indium(III) acetate",
        formula: "In(CH3COO)3",
        hazards: "H315 H319 H335",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "zinc stearate",
        formula: "Zn(C18H35O2)2",
        hazards: "",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "zinc acetate",
        formula: "Zn(CH3COO)2",
        hazards: "H302 H410",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "diethylzinc",
        formula: "Zn(C2H5)2",
        hazards: "H250 H260 H314 H410",
        pyrophoric: true,
        note: "pyrophoric",
    },
    ShippedReagent {
        name: "1-dodecanethiol",
        formula: "C12H26S",
        hazards: "H315 H317 H319 H410",
        pyrophoric: false,
        note: "stench",
    },
    ShippedReagent {
        name: "hexane",
        formula: "C6H14",
        hazards: "H225 H304 H315 H336 H361 H373 H411",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "toluene",
        formula: "C7H8",
        hazards: "H225 H304 H315 H336 H361 H373",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "chloroform",
        formula: "CHCl3",
        hazards: "H302 H315 H319 H331 H351 H361 H372",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "ethanol",
        formula: "C2H5OH",
        hazards: "H225 H319",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "methanol",
        formula: "CH3OH",
        hazards: "H225 H301 H311 H331 H370",
        pyrophoric: false,
        note: "",
    },
    ShippedReagent {
        name: "acetone",
        formula: "C3H6O",
        hazards: "H225 H319 H336",
        pyrophoric: false,
        note: "",
    },
];

/// The general cautions that hold for any hot-injection synthesis, common practice.
pub fn general_cautions(core: &str, reagents_pyrophoric: bool) -> Vec<String> {
    let mut out = Vec::new();
    if core.contains("Cd") {
        out.push("Cadmium compounds are toxic and carcinogenic.".to_string());
    }
    if core.contains("Pb") {
        out.push("Lead compounds are toxic and reproductive toxins.".to_string());
    }
    if reagents_pyrophoric {
        out.push("A reagent is pyrophoric: handle it under inert gas only.".to_string());
    }
    out.push("Hot-injection runs handle solvents at 200-320 °C under inert gas.".to_string());
    out.push(SDS_NOTICE.to_string());
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_shipped_hazard_code_is_known() {
        for r in SHIPPED_REAGENTS {
            for h in r.hazards.split_whitespace() {
                assert!(statement(h).is_some(), "{} has unknown {h}", r.name);
            }
        }
    }

    #[test]
    fn pictograms_follow_the_ghs_classes() {
        // GHS (UN, Rev. 9) assigns the flame to H250 and the health hazard to H350.
        assert_eq!(pictogram("H250"), Some("GHS02 flame"));
        assert_eq!(pictogram("H350"), Some("GHS08 health hazard"));
        assert_eq!(
            pictograms(["H350", "H341", "H410"]),
            vec!["GHS08 health hazard", "GHS09 environment"]
        );
    }
}
