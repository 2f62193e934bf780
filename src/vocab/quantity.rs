//! The derived quantities the search language reads, in one table: the stored name, the unit
//! it is stored in, the stage that computes it, and the search field that reads it with the
//! units a number there may carry. `search` maps product values onto its facts through it and
//! `lab::derivation::recompute` reads a searched threshold's quantity from it, so a quantity
//! searched by a new field is added here once.
//!
//! Stage one is computed from the spectra alone (under the analysis settings); stage two from
//! those numbers and the calibration (`derive::engine`).

/// Which stage of the derivation computes a quantity.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Stage {
    /// From the spectra alone: a calibration change leaves it as it is.
    One,
    /// From the stage-one numbers and the calibration.
    Two,
}

/// One derived quantity as the search reads it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DerivedQuantity {
    /// The stored name (`derived_value.quantity`, the `--json` key).
    pub name: &'static str,
    /// The unit the value is stored in.
    pub unit: &'static str,
    pub stage: Stage,
    /// The search field that reads it (`size 3.5 to 4`).
    pub search_field: &'static str,
    /// The units a number of that field may carry, as the query errors' hints say them.
    pub search_units: &'static str,
}

/// The searched derived quantities, in the order the query language lists its fields.
pub const SEARCHED_QUANTITIES: &[DerivedQuantity] = &[
    DerivedQuantity {
        name: "diameter_nm",
        unit: "nm",
        stage: Stage::Two,
        search_field: "size",
        search_units: "nm",
    },
    DerivedQuantity {
        name: "first_exciton_nm",
        unit: "nm",
        stage: Stage::One,
        search_field: "peak",
        search_units: "nm",
    },
    DerivedQuantity {
        name: "pl_peak_nm",
        unit: "nm",
        stage: Stage::One,
        search_field: "pl",
        search_units: "nm",
    },
    DerivedQuantity {
        name: "qy",
        unit: "fraction",
        stage: Stage::Two,
        search_field: "qy",
        search_units: "a fraction or %",
    },
    DerivedQuantity {
        name: "pl_fwhm_nm",
        unit: "nm",
        stage: Stage::One,
        search_field: "fwhm",
        search_units: "nm",
    },
    DerivedQuantity {
        name: "size_dispersion_pct",
        unit: "%",
        stage: Stage::Two,
        search_field: "dispersion",
        search_units: "%",
    },
    DerivedQuantity {
        name: "concentration_molar",
        unit: "mol/L",
        stage: Stage::Two,
        search_field: "conc",
        search_units: "M, mM, uM (µM), nM or pM; mol/L when none is written",
    },
];

/// The searched quantity a search field reads.
pub fn searched_by(field: &str) -> Option<&'static DerivedQuantity> {
    SEARCHED_QUANTITIES.iter().find(|q| q.search_field == field)
}

/// The searched quantity of a stored name.
pub fn searched_named(name: &str) -> Option<&'static DerivedQuantity> {
    SEARCHED_QUANTITIES.iter().find(|q| q.name == name)
}
