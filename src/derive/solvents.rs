//! Solvent refractive indices and reference dyes for relative quantum yields.
//!
//! Refractive indices are n_D at 20 °C from the CRC Handbook of Chemistry and Physics, as
//! recalled (from memory; check against the handbook edition your lab uses). They can be
//! overridden in the calibration, which versions the change.
//!
//! Reference dye quantum yields: Brouwer, Pure Appl. Chem. 83, 2213 (2011) (IUPAC technical
//! report) and Rurack & Spieles, Anal. Chem. 83, 1232 (2011). Values marked `from_memory` are
//! not in those sources as we hold them.
//!
//! Each dye's recommended excitation range is where it absorbs strongly and its absorption
//! band is broad enough that a nanometre of monochromator error does not change the absorbed
//! fraction much. All ranges here are from memory of the dyes' absorption bands (the IUPAC
//! report and Würth et al., Nat. Protoc. 8, 1535 (2013), give the dyes' spectra; we did not
//! read the ranges from a table): check them against the source your lab uses.

use serde::Serialize;

/// (solvent, n_D at 20 °C).
pub const REFRACTIVE_INDEX: &[(&str, f64)] = &[
    ("hexane", 1.3749),
    ("toluene", 1.4961),
    ("chloroform", 1.4459),
    ("ethanol", 1.3611),
    ("methanol", 1.3288),
    ("water", 1.3330),
    ("dmso", 1.4793),
    ("tetrachloroethylene", 1.5053),
    ("octane", 1.3974),
    ("cyclohexane", 1.4262),
    // Dilute aqueous acid is taken as water (common practice, no source).
    ("0.1 M HClO4", 1.3330),
    ("0.05 M H2SO4", 1.3330),
    // From memory, CRC Handbook.
    ("1,2-dichloroethane", 1.4448),
];

pub fn refractive_index(solvent: &str) -> Option<f64> {
    REFRACTIVE_INDEX
        .iter()
        .find(|(s, _)| s.eq_ignore_ascii_case(solvent.trim()))
        .map(|(_, n)| *n)
}

pub fn names() -> Vec<&'static str> {
    REFRACTIVE_INDEX.iter().map(|(s, _)| *s).collect()
}

#[derive(Debug, Clone, Serialize)]
pub struct Dye {
    pub name: &'static str,
    pub solvent: &'static str,
    /// Recommended excitation range, nm.
    pub excitation_nm: (f64, f64),
    /// Where the excitation range comes from.
    pub excitation_source: &'static str,
    pub qy: f64,
    pub source: &'static str,
    pub from_memory: bool,
}

pub const DYES: &[Dye] = &[
    Dye {
        name: "rhodamine 101",
        solvent: "ethanol",
        excitation_nm: (450.0, 580.0),
        excitation_source: "from memory: its main absorption band (maximum near 565 nm)",
        qy: 0.913,
        source: "Brouwer 2011 (IUPAC); Rurack & Spieles 2011",
        from_memory: false,
    },
    Dye {
        name: "coumarin 153",
        solvent: "ethanol",
        excitation_nm: (360.0, 460.0),
        excitation_source: "from memory: its main absorption band (maximum near 420 nm)",
        qy: 0.544,
        source: "Brouwer 2011 (IUPAC); Rurack & Spieles 2011",
        from_memory: false,
    },
    Dye {
        name: "cresyl violet",
        solvent: "ethanol",
        excitation_nm: (500.0, 620.0),
        excitation_source: "from memory: its main absorption band (maximum near 600 nm)",
        qy: 0.578,
        source: "Brouwer 2011 (IUPAC); Rurack & Spieles 2011",
        from_memory: false,
    },
    Dye {
        name: "IR-125",
        solvent: "ethanol",
        excitation_nm: (650.0, 800.0),
        excitation_source: "from memory: its main absorption band (maximum near 785 nm)",
        qy: 0.132,
        source: "Rurack & Spieles 2011",
        from_memory: false,
    },
    Dye {
        name: "quinine sulfate",
        solvent: "0.1 M HClO4",
        excitation_nm: (310.0, 360.0),
        excitation_source: "from memory: its near-UV absorption band (maximum near 347 nm)",
        qy: 0.60,
        source: "Brouwer 2011 (value from memory)",
        from_memory: true,
    },
    Dye {
        name: "rhodamine 6G",
        solvent: "ethanol",
        excitation_nm: (450.0, 530.0),
        excitation_source: "from memory: its main absorption band (maximum near 530 nm)",
        qy: 0.95,
        source: "Brouwer 2011 (value from memory)",
        from_memory: true,
    },
    Dye {
        name: "IR-26",
        solvent: "1,2-dichloroethane",
        excitation_nm: (800.0, 1100.0),
        excitation_source: "from memory: its main absorption band (maximum near 1080 nm)",
        qy: 0.0005,
        source: "disputed: published values 0.05 % to 0.5 %; set your own",
        from_memory: true,
    },
];

pub fn dye(name: &str) -> Option<&'static Dye> {
    DYES.iter().find(|d| d.name.eq_ignore_ascii_case(name.trim()))
}

/// A warning when `excitation_nm` lies outside the dye's recommended excitation range.
pub fn excitation_warning(d: &Dye, excitation_nm: f64) -> Option<String> {
    let (lo, hi) = d.excitation_nm;
    if (lo..=hi).contains(&excitation_nm) {
        return None;
    }
    Some(format!(
        "excitation at {excitation_nm} nm is outside {}'s recommended range {lo:.0}-{hi:.0} nm ({})",
        d.name, d.excitation_source
    ))
}

/// Refuses a solvent the table does not hold, naming the ones it does: an aliquot's solvent
/// sets the refractive index its quantum yield is corrected with, so an unknown one is a
/// mistake to catch when the aliquot is logged, not when its yield is asked for.
pub fn check(name: &str) -> crate::Result<()> {
    if refractive_index(name).is_none() {
        return crate::error::invalid(format!("unknown solvent '{name}' (known: {})", names().join(", ")));
    }
    Ok(())
}
