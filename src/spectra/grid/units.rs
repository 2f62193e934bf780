//! The units a table states: the x and y unit from a column header (`Wavelength (nm)`) or a
//! metadata key (`X units: eV`), compared without case, spaces or punctuation. Promises: a
//! header and metadata that disagree are warned about, never silently reconciled.

use crate::spectra::{XUnit, quantity};

/// Keys that state the x unit ("X units: eV", "Abscissa = nm"), compared without case, spaces
/// or punctuation.
const X_UNIT_KEYS: &[&str] = &[
    "xunits",
    "xunit",
    "xaxis",
    "xaxisunit",
    "xaxisunits",
    "xaxistitle",
    "xlabel",
    "xtitle",
    "abscissa",
    "abscissaunit",
    "abscissaunits",
    "wavelengthunit",
    "wavelengthunits",
    "spectralunit",
    "spectralunits",
];

/// Keys that state the y quantity ("YUnits: counts", "Y axis = %T").
const Y_UNIT_KEYS: &[&str] = &[
    "yunits",
    "yunit",
    "yaxis",
    "yaxisunit",
    "yaxisunits",
    "yaxistitle",
    "ylabel",
    "ytitle",
    "ordinate",
    "ordinateunit",
    "ordinateunits",
    "ordinatemode",
    "datamode",
    "photometricmode",
    "measurementmode",
    "quantity",
    "signal",
];

fn squash_key(key: &str) -> String {
    key.chars()
        .filter(|c| c.is_alphanumeric())
        .flat_map(char::to_lowercase)
        .collect()
}

/// The y quantity a metadata line states: the first whose key is a y-unit key and whose value
/// names a quantity.
pub(crate) fn metadata_y_unit(metadata: &[(String, String)]) -> Option<String> {
    metadata.iter().find_map(|(k, v)| {
        let v = v.trim().trim_matches([',', ';', '"']).trim();
        (Y_UNIT_KEYS.contains(&squash_key(k).as_str()) && quantity::names_a_quantity(v)).then(|| v.to_string())
    })
}

/// The x unit a metadata line states.
pub(crate) fn metadata_x_unit(metadata: &[(String, String)]) -> Option<String> {
    metadata.iter().find_map(|(k, v)| {
        if X_UNIT_KEYS.contains(&squash_key(k).as_str()) {
            unit_from_header(v.trim().trim_matches([',', ';', '"']))
        } else {
            None
        }
    })
}

/// The y column's header when it names a quantity, else a metadata line's, else the header as
/// it is (a time such as "20 s" is kept as the file gave it). Metadata that disagrees with a
/// header that names a quantity is reported.
pub(super) fn choose_y_unit(header_y: Option<&str>, meta: Option<&str>, warnings: &mut Vec<String>) -> Option<String> {
    let header_names = header_y.is_some_and(quantity::names_a_quantity);
    match (header_y, meta) {
        (Some(h), Some(p)) if header_names => {
            if !quantity::same_quantity(h, p) {
                warnings.push(format!(
                    "the file states y as '{p}' but the y column header says '{h}'; the header was used"
                ));
            }
            Some(h.to_string())
        }
        (_, Some(p)) => Some(p.to_string()),
        (h, None) => h.filter(|h| !h.is_empty()).map(str::to_string),
    }
}

/// The x unit a header names: "Wavelength (nm)", "Energy [eV]", "Wavenumber / cm-1", "nm",
/// "Raman shift (1/cm)". None when it names none.
pub(crate) fn unit_from_header(h: &str) -> Option<String> {
    let lower = h.trim().to_lowercase();
    let mut candidates: Vec<&str> = Vec::new();
    for (open, close) in [('(', ')'), ('[', ']')] {
        if let Some(a) = lower.find(open)
            && let Some(b) = lower[a + 1..].find(close)
        {
            candidates.push(lower[a + 1..a + 1 + b].trim());
        }
    }
    if let Some((_, after)) = lower.split_once(" / ") {
        candidates.push(after.trim());
    }
    if let Some((_, after)) = lower.split_once(" in ") {
        candidates.push(after.trim());
    }
    candidates.push(lower.as_str());
    for c in &candidates {
        if XUnit::parse(c).is_some() {
            return Some(c.to_string());
        }
    }
    let tokens: Vec<&str> = lower
        .split(|c: char| !(c.is_alphanumeric() || c == '-' || c == '/' || c == 'µ' || c == '⁻' || c == '¹'))
        .filter(|t| !t.is_empty())
        .collect();
    for (words, unit) in [
        (&["wavenumber", "wavenumbers", "cm-1", "1/cm", "cm⁻¹"][..], "1/cm"),
        (&["ev", "energy"][..], "eV"),
        (&["um", "µm", "micron", "microns", "micrometer", "micrometre"][..], "um"),
        (&["nm", "wavelength", "lambda"][..], "nm"),
    ] {
        if tokens.iter().any(|t| words.contains(t)) {
            return Some(unit.to_string());
        }
    }
    None
}

/// Whether a header cell names an x quantity (and no y quantity).
pub(super) fn is_x_header(h: &str) -> bool {
    unit_from_header(h).is_some() && !quantity::names_a_quantity(h)
}
