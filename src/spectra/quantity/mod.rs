//! What a spectrum's y values are, and whether a file may be logged as the kind the user names.
//!
//! Three pure functions, no I/O:
//! - [`stated`]: the y quantity the file itself states (a JCAMP-DX `##YUNITS=`, a delimited
//!   file's y column header or a `YUnits:` / `Y axis:` preamble line, all carried in
//!   [`RawSpectrum::y_unit`]), with the scale of a transmittance or reflectance settled from the
//!   values when the label does not say.
//! - [`admit`]: the door. Given the spectrum and the kind it is being logged as, it accepts,
//!   converts (%T, T, %R, R to absorbance, only when the file says so) or refuses with one line
//!   naming the mismatch. `kind_as_is` lets the user overrule a mismatch; it never lets through
//!   a non-finite value or an absurd one.
//! - [`infer_kind`]: for a folder watch, the most likely kind with its evidence, or none (the
//!   caller must then ask or skip, never guess). It decides through [`admit`], so a kind it
//!   infers is always one the door accepts.
//!
//! The value heuristics are deliberately conservative: they refuse only what no real spectrum of
//! the named kind looks like, so a real absorbance spectrum (about -0.05 to 4, rising toward the
//! blue) and a real PL spectrum (a peak in counts) pass as what they are.
//!
//! Here: the kinds, the y quantities and what a file states ([`stated`]); the door is in
//! `door` and the inference in `infer`.

mod door;
mod infer;

use super::RawSpectrum;

pub use door::Verdict;
pub use door::admit;
pub use infer::Inference;
pub use infer::infer_kind;
pub use infer::kind_from_name;

/// The three kinds of spectrum the store keeps.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum SpectrumKind {
    Absorbance,
    Pl,
    Ple,
}

impl SpectrumKind {
    /// The store's name for the kind: "abs", "pl" or "ple".
    pub fn as_str(self) -> &'static str {
        match self {
            SpectrumKind::Absorbance => "abs",
            SpectrumKind::Pl => "pl",
            SpectrumKind::Ple => "ple",
        }
    }

    /// The store's names, as `as_str` gives them.
    pub fn parse(s: &str) -> Option<SpectrumKind> {
        match s {
            "abs" => Some(SpectrumKind::Absorbance),
            "pl" => Some(SpectrumKind::Pl),
            "ple" => Some(SpectrumKind::Ple),
            _ => None,
        }
    }

    /// How messages name the kind.
    pub fn label(self) -> &'static str {
        match self {
            SpectrumKind::Absorbance => "absorbance",
            SpectrumKind::Pl => "PL",
            SpectrumKind::Ple => "PLE",
        }
    }

    /// The command-line flag that logs a file as this kind.
    fn flag(self) -> &'static str {
        match self {
            SpectrumKind::Absorbance => "--abs",
            SpectrumKind::Pl => "--pl",
            SpectrumKind::Ple => "--ple",
        }
    }
}

/// The y quantity of a spectrum.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum YQuantity {
    Absorbance,
    TransmittancePercent,
    TransmittanceFraction,
    ReflectancePercent,
    ReflectanceFraction,
    /// The Kubelka-Munk function of a diffuse reflectance: absorption-like, not absorbance.
    KubelkaMunk,
    Counts,
    CountsPerSecond,
    ArbitraryIntensity,
    Unknown,
}

impl YQuantity {
    /// How messages name the quantity, with what it belongs to.
    pub fn describe(self) -> &'static str {
        match self {
            YQuantity::Absorbance => "absorbance",
            YQuantity::TransmittancePercent => "%T (a per cent transmittance)",
            YQuantity::TransmittanceFraction => "transmittance (a fraction)",
            YQuantity::ReflectancePercent => "%R (a per cent reflectance)",
            YQuantity::ReflectanceFraction => "reflectance (a fraction)",
            YQuantity::KubelkaMunk => "Kubelka-Munk (a diffuse-reflectance function)",
            YQuantity::Counts => "counts (a PL/intensity quantity)",
            YQuantity::CountsPerSecond => "counts per second (a PL/intensity quantity)",
            YQuantity::ArbitraryIntensity => "an intensity (a PL/intensity quantity)",
            YQuantity::Unknown => "nothing recognisable",
        }
    }

    /// The quantity's symbol, for the optical ones.
    fn symbol(self) -> &'static str {
        match self {
            YQuantity::TransmittancePercent => "%T",
            YQuantity::TransmittanceFraction => "T",
            YQuantity::ReflectancePercent => "%R",
            YQuantity::ReflectanceFraction => "R",
            _ => self.describe(),
        }
    }

    fn is_intensity(self) -> bool {
        matches!(
            self,
            YQuantity::Counts | YQuantity::CountsPerSecond | YQuantity::ArbitraryIntensity
        )
    }

    fn is_optical(self) -> bool {
        matches!(
            self,
            YQuantity::TransmittancePercent
                | YQuantity::TransmittanceFraction
                | YQuantity::ReflectancePercent
                | YQuantity::ReflectanceFraction
        )
    }
}

/// What a file states about its y values.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Stated {
    pub quantity: YQuantity,
    /// A kind the label names ("PL", "Emission", "Excitation"), beyond its quantity.
    pub kind_hint: Option<SpectrumKind>,
    /// The label as the file gave it.
    pub label: Option<String>,
}

/// Above this, an absorbance is not one anyone measured: commercial UV-Vis spectrophotometers
/// read to about 4-6 absorbance units (common practice), so 10 leaves a wide margin for
/// instruments with a long dynamic range before calling a file "not absorbance".
pub const ABSORBANCE_CEILING: f64 = 10.0;
/// The top of the photometric range of most spectrophotometers (common practice); above it a
/// value is accepted with a warning that it is probably noise.
pub const PHOTOMETRIC_RANGE: f64 = 6.0;
/// An absorbance this large is absurd whatever the user says.
pub const ABSURD_ABSORBANCE: f64 = 1e6;
/// No instrument reports a y value this large (a 32-bit counter tops out near 4e9).
pub const ABSURD_VALUE: f64 = 1e12;
/// Transmittance or reflectance at or below this reads as absorbance 6, the floor `to_trace`
/// has always used, instead of an infinite absorbance.
pub const FRACTION_FLOOR: f64 = 1e-6;

/// Reads a y label ("Abs", "%T", "Intensity (a.u.)", "ABSORBANCE", ...). `None` when it names no
/// quantity; a transmittance or reflectance whose label does not say per cent or fraction comes
/// back with `percent` unset.
fn parse_label(label: &str) -> Option<(Parsed, Option<SpectrumKind>)> {
    let original = label.trim().trim_matches(['"', '\'']).trim();
    let lower = original.to_lowercase();
    let tokens: Vec<&str> = lower
        .split(|c: char| !(c.is_alphanumeric() || c == '%'))
        .filter(|t| !t.is_empty())
        .collect();
    // The label's own words, before any unit in brackets: "T (%)" is T, "Sample A" is not A.
    let main = lower.split(['(', '[']).next().unwrap_or("");
    let main_tokens: Vec<&str> = main
        .split(|c: char| !(c.is_alphanumeric() || c == '%'))
        .filter(|t| !t.is_empty())
        .collect();
    let has = |w: &[&str]| tokens.iter().any(|t| w.contains(t));
    let percent = lower.contains('%') || has(&["percent", "pct"]);
    let compact: String = lower.chars().filter(|c| !c.is_whitespace()).collect();

    let hint = if has(&["ple", "excitation", "plex"]) {
        Some(SpectrumKind::Ple)
    } else if has(&[
        "pl",
        "emission",
        "fluorescence",
        "photoluminescence",
        "luminescence",
        "fl",
    ]) {
        Some(SpectrumKind::Pl)
    } else {
        None
    };

    let single = |letter: &str| {
        main_tokens.len() == 1 && {
            let t = main_tokens[0];
            t == letter || t.trim_matches('%') == letter
        }
    };
    let q = if lower.contains("kubelka") {
        Parsed::Known(YQuantity::KubelkaMunk)
    } else if has(&["absorbance", "absorption", "abs", "extinction", "optical"])
        || tokens
            .iter()
            .any(|t| t.starts_with("od") && t[2..].chars().all(|c| c.is_ascii_digit()))
        || single("a")
        || original == "AU"
    {
        Parsed::Known(YQuantity::Absorbance)
    } else if has(&["transmittance", "transmission", "transmissivity", "trans"]) || single("t") {
        Parsed::Transmittance { percent }
    } else if has(&["reflectance", "reflection", "reflectivity", "refl"]) || single("r") {
        Parsed::Reflectance { percent }
    } else if has(&["cps"])
        || compact.contains("counts/s")
        || compact.contains("cts/s")
        || compact.contains("countspersec")
        || compact.contains("countrate")
        || compact.contains("c/s")
    {
        Parsed::Known(YQuantity::CountsPerSecond)
    } else if has(&["counts", "count", "cts", "adu"]) {
        Parsed::Known(YQuantity::Counts)
    } else if has(&["intensity"]) || hint.is_some() {
        Parsed::Known(YQuantity::ArbitraryIntensity)
    } else {
        // Bare "a.u." or "arbitrary units" is left unknown on purpose: absorbance is exported
        // under that label too, so the values decide.
        return hint.map(|h| (Parsed::Known(YQuantity::ArbitraryIntensity), Some(h)));
    };
    Some((q, hint))
}

#[derive(Debug, Clone, Copy)]
enum Parsed {
    Known(YQuantity),
    Transmittance { percent: bool },
    Reflectance { percent: bool },
}

/// Whether a label names a y quantity at all; the delimited reader uses it to choose between a
/// column header and a preamble line.
pub fn names_a_quantity(label: &str) -> bool {
    parse_label(label).is_some()
}

/// Whether two labels name the same quantity ("Abs" and "ABSORBANCE" do).
pub fn same_quantity(a: &str, b: &str) -> bool {
    stated_from(Some(a), &[]).quantity == stated_from(Some(b), &[]).quantity
}

/// The y quantity the file states. A transmittance or reflectance label without a per cent
/// sign is read as per cent when any value exceeds 1.5 (a fraction cannot), as a fraction
/// otherwise.
pub fn stated(raw: &RawSpectrum) -> Stated {
    stated_from(raw.y_unit.as_deref(), &raw.y)
}

fn stated_from(y_unit: Option<&str>, y: &[f64]) -> Stated {
    let Some(label) = y_unit else {
        return Stated {
            quantity: YQuantity::Unknown,
            kind_hint: None,
            label: None,
        };
    };
    // Asked only of a transmittance or reflectance label that does not say per cent.
    let over_one = || y.iter().any(|v| *v > 1.5);
    let (quantity, kind_hint) = match parse_label(label) {
        None => (YQuantity::Unknown, None),
        Some((Parsed::Known(q), h)) => (q, h),
        Some((Parsed::Transmittance { percent }, h)) => (
            if percent || over_one() {
                YQuantity::TransmittancePercent
            } else {
                YQuantity::TransmittanceFraction
            },
            h,
        ),
        Some((Parsed::Reflectance { percent }, h)) => (
            if percent || over_one() {
                YQuantity::ReflectancePercent
            } else {
                YQuantity::ReflectanceFraction
            },
            h,
        ),
    };
    Stated {
        quantity,
        kind_hint,
        label: Some(label.to_string()),
    }
}

/// The absorbance a transmittance or reflectance value gives; other quantities pass unchanged.
///
/// Transmittance: A = -log10(T) (the IUPAC definition of decadic absorbance, IUPAC Gold Book
/// "absorbance"). Reflectance: A = log10(1/R), the apparent absorbance of a reflectance
/// measurement. Kubelka-Munk, F(R) = (1-R)^2 / 2R (Kubelka & Munk, Z. Tech. Phys. 12, 593
/// (1931)), is the alternative and was not chosen: it holds for diffuse reflectance from an
/// optically thick layer of a scattering powder, which a colloid in a cuvette or a thin film is
/// not, and its values are not on the absorbance scale the analysis reads (an exciton peak and
/// its width keep their positions under log10(1/R), which is monotonic in R). A file that states
/// Kubelka-Munk values is refused as absorbance instead of being converted.
pub fn to_absorbance(quantity: YQuantity, value: f64) -> f64 {
    let fraction = match quantity {
        YQuantity::TransmittancePercent | YQuantity::ReflectancePercent => value / 100.0,
        YQuantity::TransmittanceFraction | YQuantity::ReflectanceFraction => value,
        _ => return value,
    };
    -(fraction.max(FRACTION_FLOOR)).log10()
}

/// The y values converted as [`to_absorbance`] does, for a y unit as stored with a spectrum.
/// `RawSpectrum::to_trace` uses this, so analysis and the door convert alike.
pub fn y_as_analysed(y_unit: Option<&str>, y: &[f64]) -> Vec<f64> {
    let q = stated_from(y_unit, y).quantity;
    if q.is_optical() {
        y.iter().map(|&v| to_absorbance(q, v)).collect()
    } else {
        // Every other quantity passes `to_absorbance` unchanged.
        y.to_vec()
    }
}
