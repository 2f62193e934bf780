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

use super::{RawSpectrum, XUnit};
use crate::error::{Error, Result};

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

/// What the door decided.
#[derive(Debug, Clone, PartialEq)]
pub enum Verdict {
    /// Log the file as it is. `y_unit` is what to store as the spectrum's y unit (analysis reads
    /// it back through `to_trace`); it differs from the file's only when `kind_as_is` set aside
    /// a transmittance or reflectance label on a PL or PLE file, so analysis does not convert.
    Accept {
        y_unit: Option<String>,
        warnings: Vec<String>,
    },
    /// The file states %T, T, %R or R and is logged as absorbance: `absorbance` holds the
    /// converted values, point for point. Store the raw values with `y_unit` (the file's own,
    /// which `to_trace` converts the same way) so the record stays as the file stated it.
    Convert {
        from: YQuantity,
        absorbance: Vec<f64>,
        y_unit: Option<String>,
        warnings: Vec<String>,
    },
    /// Not to be logged as asked. `message` is one line beginning with the file name;
    /// `overridable` says whether `--kind-as-is` would have let it through.
    Refuse { message: String, overridable: bool },
}

impl Verdict {
    /// The refusal as the library's typed error; an accepted or converted file as it is.
    pub fn into_result(self) -> Result<Verdict> {
        match self {
            Verdict::Refuse { message, .. } => Err(Error::Invalid(message)),
            v => Ok(v),
        }
    }

    pub fn warnings(&self) -> &[String] {
        match self {
            Verdict::Accept { warnings, .. } | Verdict::Convert { warnings, .. } => warnings,
            Verdict::Refuse { .. } => &[],
        }
    }
}

/// The points in nm, ascending, when the x unit converts; `None` otherwise (no shape evidence).
fn by_wavelength(raw: &RawSpectrum) -> Option<Vec<(f64, f64)>> {
    let unit = XUnit::parse(&raw.x_unit)?;
    let mut pts: Vec<(f64, f64)> = raw.x.iter().zip(&raw.y).map(|(&x, &y)| (unit.to_nm(x), y)).collect();
    if pts.len() < 3 || pts.iter().any(|p| !p.0.is_finite() || !p.1.is_finite()) {
        return None;
    }
    pts.sort_by(|a, b| a.0.total_cmp(&b.0));
    Some(pts)
}

/// The outline of a spectrum that the heuristics read.
#[derive(Debug, Clone, Copy)]
struct Shape {
    max: f64,
    min: f64,
    max_nm: f64,
    /// Where the maximum sits, 0 at the blue end and 1 at the red end (by point index).
    max_at: f64,
    /// Mean of the bluest and the reddest tenth of the points.
    blue_end: f64,
    red_end: f64,
}

fn shape(pts: &[(f64, f64)]) -> Shape {
    let n = pts.len();
    let tenth = (n / 10).max(1);
    let mean = |s: &[(f64, f64)]| s.iter().map(|p| p.1).sum::<f64>() / s.len() as f64;
    let (imax, &(max_nm, max)) = pts
        .iter()
        .enumerate()
        .max_by(|a, b| a.1.1.total_cmp(&b.1.1))
        .unwrap_or((0, &(0.0, 0.0)));
    Shape {
        max,
        min: pts.iter().map(|p| p.1).fold(f64::INFINITY, f64::min),
        max_nm,
        max_at: imax as f64 / (n - 1).max(1) as f64,
        blue_end: mean(&pts[..tenth]),
        red_end: mean(&pts[n - tenth..]),
    }
}

impl Shape {
    /// An absorbance spectrum as a UV-Vis instrument gives it: on the absorbance scale and
    /// rising toward the blue, its maximum at the blue end.
    fn absorbance_like(&self) -> bool {
        let span = self.max - self.min;
        self.max <= PHOTOMETRIC_RANGE && span > 0.0 && self.max_at <= 0.1 && self.blue_end - self.red_end >= 0.5 * span
    }

    /// A PL spectrum: a peak inside the range on a baseline well below it, in counts (above the
    /// absorbance scale; a normalised PL cannot be told from an absorbance band by shape alone).
    fn pl_like(&self) -> bool {
        self.max > ABSORBANCE_CEILING
            && self.max_at > 0.05
            && self.max_at < 0.95
            && self.blue_end <= 0.4 * self.max
            && self.red_end <= 0.4 * self.max
    }

    /// A per cent transmittance: within 0-100 and falling toward the blue.
    fn percent_t_like(&self) -> bool {
        self.min >= -5.0 && self.max <= 105.0 && self.red_end > self.blue_end
    }
}

fn number(v: f64) -> String {
    if v.abs() >= 1e5 || (v != 0.0 && v.abs() < 1e-3) {
        format!("{v:e}")
    } else {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

fn at_point(raw: &RawSpectrum, i: usize) -> String {
    let x = raw.x.get(i).copied().unwrap_or(f64::NAN);
    format!("point {} (x = {} {})", i + 1, number(x), raw.x_unit)
}

/// The door: may this spectrum be logged as `kind`? `file` names it in messages. With
/// `kind_as_is` a mismatch between the kind and what the file states becomes a warning; a
/// non-finite value, any |y| above [`ABSURD_VALUE`] and, as absorbance, any |A| above
/// [`ABSURD_ABSORBANCE`] are refused regardless.
pub fn admit(file: &str, raw: &RawSpectrum, kind: SpectrumKind, kind_as_is: bool) -> Verdict {
    let refuse_always = |reason: String| Verdict::Refuse {
        message: format!("{file}: {reason}"),
        overridable: false,
    };
    for (i, (x, y)) in raw.x.iter().zip(&raw.y).enumerate() {
        if !x.is_finite() {
            return refuse_always(format!("point {} has x = {x}, not a finite number", i + 1));
        }
        if !y.is_finite() {
            return refuse_always(format!("{} has y = {y}, not a finite number", at_point(raw, i)));
        }
        if y.abs() > ABSURD_VALUE {
            return refuse_always(format!(
                "{} has y = {}, beyond what any instrument reports (|y| > {})",
                at_point(raw, i),
                number(*y),
                number(ABSURD_VALUE)
            ));
        }
    }
    let st = stated(raw);
    let said = |st: &Stated| {
        format!(
            "its header says {} ('{}')",
            st.quantity.describe(),
            st.label.as_deref().unwrap_or_default()
        )
    };
    let pts = by_wavelength(raw);
    let sh = pts.as_deref().map(shape);
    let mut warnings = Vec::new();
    // A mismatch the user may overrule: its reason, then what to do instead.
    let mut mismatch: Option<String> = None;
    let mut conversion = None;

    match kind {
        SpectrumKind::Absorbance => match st.quantity {
            q if q.is_optical() => {
                let (lo, hi) = match q {
                    YQuantity::TransmittancePercent | YQuantity::ReflectancePercent => (-10.0, 200.0),
                    _ => (-0.1, 2.0),
                };
                if let Some(i) = raw.y.iter().position(|v| *v < lo || *v > hi) {
                    // The kind matches what the file says; its values do not, so no override helps.
                    return refuse_always(format!(
                        "{}, but {} has y = {}, outside what a {} can be ({}..{}); it cannot be converted to absorbance",
                        said(&st),
                        at_point(raw, i),
                        number(raw.y[i]),
                        q.symbol(),
                        number(lo),
                        number(hi)
                    ));
                }
                conversion = Some(q);
            }
            YQuantity::KubelkaMunk => {
                mismatch = Some(format!("{}, which is not absorbance and is not converted", said(&st)))
            }
            q if q.is_intensity() => {
                let to = st
                    .kind_hint
                    .filter(|k| *k != SpectrumKind::Absorbance)
                    .unwrap_or(SpectrumKind::Pl);
                mismatch = Some(format!(
                    "{}, but it is being logged as absorbance; log it as {} ({})",
                    said(&st),
                    to.label(),
                    to.flag()
                ));
            }
            _ => {
                if raw.y.iter().any(|v| v.abs() > ABSORBANCE_CEILING) {
                    let i = index_of_largest(&raw.y);
                    let (what, instead) = value_story(raw, sh);
                    let lead = if st.quantity == YQuantity::Absorbance {
                        format!("{}, but its values", said(&st))
                    } else {
                        "its values say it is not absorbance: they".to_string()
                    };
                    mismatch = Some(format!(
                        "{lead} reach {} at {}, far above any absorbance a spectrophotometer reads (about 4-6){what}; {instead}",
                        number(raw.y[i]),
                        at_point(raw, i),
                    ));
                } else if let Some(i) = raw.y.iter().position(|v| v.abs() > PHOTOMETRIC_RANGE) {
                    warnings.push(format!(
                        "{} reads {}, above the photometric range of most spectrophotometers (about 4-6); \
                         values that high are mostly stray light and noise",
                        at_point(raw, i),
                        number(raw.y[i])
                    ));
                }
            }
        },
        SpectrumKind::Pl | SpectrumKind::Ple => match st.quantity {
            YQuantity::Absorbance | YQuantity::KubelkaMunk => {
                mismatch = Some(format!(
                    "{}, but it is being logged as {}; log it as absorbance (--abs)",
                    said(&st),
                    kind.label()
                ))
            }
            q if q.is_optical() => {
                mismatch = Some(format!(
                    "{}, but it is being logged as {}; log it as absorbance (--abs) and it will be converted",
                    said(&st),
                    kind.label()
                ))
            }
            q if q.is_intensity() => {
                if let Some(h) = st.kind_hint.filter(|h| *h != kind) {
                    warnings.push(format!(
                        "its header names {} ('{}') but it is logged as {}",
                        h.label(),
                        st.label.as_deref().unwrap_or_default(),
                        kind.label()
                    ));
                }
            }
            _ => {
                // PLE rises toward the blue as absorbance does; only PL is told apart by shape.
                if kind == SpectrumKind::Pl
                    && let Some(s) = sh
                    && s.absorbance_like()
                {
                    mismatch = Some(format!(
                        "its values look like absorbance (at most {}, rising toward the blue with no emission peak), \
                         but it is being logged as PL; log it as absorbance (--abs)",
                        number(s.max)
                    ));
                }
            }
        },
    }

    let y_unit_kept = |overruled: bool| {
        if overruled && kind != SpectrumKind::Absorbance && st.quantity.is_optical() {
            None
        } else {
            raw.y_unit.clone()
        }
    };
    if let Some(reason) = mismatch {
        if !kind_as_is {
            return Verdict::Refuse {
                message: format!("{file}: {reason}, or say --kind-as-is to keep it as {}", kind.label()),
                overridable: true,
            };
        }
        warnings.push(format!("kept as {} (--kind-as-is) although {reason}", kind.label()));
    }
    if kind == SpectrumKind::Absorbance {
        if let Some(q) = conversion {
            let absorbance: Vec<f64> = raw.y.iter().map(|&v| to_absorbance(q, v)).collect();
            let floor = 100.0 * FRACTION_FLOOR;
            let at_floor = raw
                .y
                .iter()
                .filter(|&&v| match q {
                    YQuantity::TransmittancePercent | YQuantity::ReflectancePercent => v <= floor,
                    _ => v <= FRACTION_FLOOR,
                })
                .count();
            if at_floor > 0 {
                warnings.push(format!(
                    "{at_floor} points at or below zero {} read as absorbance {} (the floor)",
                    st.quantity.describe(),
                    number(-(FRACTION_FLOOR.log10()))
                ));
            }
            if matches!(q, YQuantity::ReflectancePercent | YQuantity::ReflectanceFraction) {
                warnings.push(
                    "absorbance from reflectance as log10(1/R): peak positions and widths hold, \
                     concentrations from it are not Beer-Lambert"
                        .to_string(),
                );
            }
            return Verdict::Convert {
                from: q,
                absorbance,
                y_unit: raw.y_unit.clone(),
                warnings,
            };
        }
        if let Some(i) = raw.y.iter().position(|v| v.abs() > ABSURD_ABSORBANCE) {
            return refuse_always(format!(
                "{} has absorbance {}: no absorbance is that large (|A| > {})",
                at_point(raw, i),
                number(raw.y[i]),
                number(ABSURD_ABSORBANCE)
            ));
        }
    }
    Verdict::Accept {
        y_unit: y_unit_kept(kind_as_is),
        warnings,
    }
}

/// What values too large for absorbance look like, and what to do instead.
fn value_story(raw: &RawSpectrum, sh: Option<Shape>) -> (String, &'static str) {
    let to_pl = "log it as PL (--pl)";
    let whole = raw.y.iter().all(|v| v.fract() == 0.0);
    match sh {
        Some(s) if s.pl_like() => (
            format!(
                ", with a peak at {:.0} nm as an emission spectrum has{}",
                s.max_nm,
                if whole {
                    ", in whole numbers as detector counts are"
                } else {
                    ""
                }
            ),
            to_pl,
        ),
        Some(s) if s.percent_t_like() => (
            format!(
                "; they run {} to {} and fall toward the blue, as a %T does",
                number(s.min),
                number(s.max)
            ),
            "if it is %T, give its y column a %T header and it will be converted",
        ),
        _ if whole => ("; they are whole numbers, as detector counts are".to_string(), to_pl),
        _ => (String::new(), "if it is PL, log it as PL (--pl)"),
    }
}

/// The index of the largest |y|.
fn index_of_largest(y: &[f64]) -> usize {
    y.iter()
        .enumerate()
        .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
        .map(|(i, _)| i)
        .unwrap_or(0)
}

/// The kind a folder watch should log a file as, with why; `kind` is `None` when the evidence
/// is missing or disagrees (the caller must ask or skip).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Inference {
    pub kind: Option<SpectrumKind>,
    pub evidence: String,
}

/// The kind a file's name (or a JCAMP-DX title) suggests: "abs_05min", "uv-vis", "pl_t5",
/// "emission", "ple". Several different suggestions are no suggestion.
pub fn kind_from_name(name: &str) -> Option<SpectrumKind> {
    let stem = std::path::Path::new(name)
        .file_stem()
        .map(|s| s.to_string_lossy().to_lowercase())
        .unwrap_or_default();
    // Split on separators and between letters and digits: "abs05min" is "abs", "05", "min".
    let mut tokens: Vec<String> = Vec::new();
    let mut cur = String::new();
    for c in stem.chars() {
        let boundary = cur
            .chars()
            .last()
            .is_some_and(|p| p.is_ascii_digit() != c.is_ascii_digit());
        if (!c.is_alphanumeric() || boundary) && !cur.is_empty() {
            tokens.push(std::mem::take(&mut cur));
        }
        if c.is_alphanumeric() {
            cur.push(c);
        }
    }
    if !cur.is_empty() {
        tokens.push(cur);
    }
    let compact: String = stem.chars().filter(|c| c.is_alphanumeric()).collect();
    let has = |w: &[&str]| tokens.iter().any(|t| w.contains(&t.as_str()));
    let mut found = Vec::new();
    if has(&["abs", "absorbance", "absorption", "uv", "uvvis", "od"]) || compact.contains("uvvis") {
        found.push(SpectrumKind::Absorbance);
    }
    if has(&["pl", "emission", "em", "fl", "fluorescence", "photoluminescence"]) {
        found.push(SpectrumKind::Pl);
    }
    if has(&["ple", "excitation"]) {
        found.push(SpectrumKind::Ple);
    }
    match found.as_slice() {
        [k] => Some(*k),
        _ => None,
    }
}

/// The most likely kind of a spectrum for a folder watch: what the file states first, then its
/// name (and JCAMP-DX title), then the shape of its values. Whatever is inferred must pass
/// [`admit`]; a file it refuses, or evidence that disagrees, gives no kind.
pub fn infer_kind(file: &str, raw: &RawSpectrum) -> Inference {
    let unknown = |evidence: String| Inference { kind: None, evidence };
    let st = stated(raw);
    let from_name = kind_from_name(file).map(|k| (k, "its name"));
    let from_title = raw
        .title
        .as_deref()
        .and_then(kind_from_name_text)
        .map(|k| (k, "its title"));
    let named = match (from_name, from_title) {
        (Some(a), Some(b)) if a.0 != b.0 => {
            return unknown(format!(
                "its name suggests {} but its title {}",
                a.0.label(),
                b.0.label()
            ));
        }
        (a, b) => a.or(b),
    };
    let header_kind = match st.quantity {
        YQuantity::Absorbance => Some(SpectrumKind::Absorbance),
        q if q.is_optical() => Some(SpectrumKind::Absorbance),
        q if q.is_intensity() => st.kind_hint.or(match named {
            Some((SpectrumKind::Absorbance, _)) | None => None,
            Some((k, _)) => Some(k),
        }),
        _ => None,
    };
    let said = || {
        format!(
            "its header says {} ('{}')",
            st.quantity.describe(),
            st.label.as_deref().unwrap_or_default()
        )
    };
    let sh = by_wavelength(raw).as_deref().map(shape);
    let (kind, evidence) = if let Some(k) = header_kind {
        if let Some((n, src)) = named
            && n != k
        {
            return unknown(format!("{} but {src} suggests {}", said(), n.label()));
        }
        (k, said())
    } else if st.quantity.is_intensity() {
        // Counts without a word for PL or PLE: a peak says PL; anything else must be asked.
        match (named, sh) {
            (Some((n, src)), _) => {
                return unknown(format!("{} but {src} suggests {}", said(), n.label()));
            }
            (None, Some(s)) if s.pl_like() => (
                SpectrumKind::Pl,
                format!("{} and its values peak at {:.0} nm", said(), s.max_nm),
            ),
            _ => return unknown(format!("{}; PL or PLE cannot be told from it", said())),
        }
    } else if st.quantity == YQuantity::KubelkaMunk {
        return unknown(format!("{}, which cuvette does not log as any kind", said()));
    } else if let Some((k, src)) = named {
        (k, format!("{src} suggests {}", k.label()))
    } else {
        match sh {
            Some(s) if s.absorbance_like() => (
                SpectrumKind::Absorbance,
                format!(
                    "its values look like absorbance (at most {}, rising toward the blue)",
                    number(s.max)
                ),
            ),
            Some(s) if s.pl_like() => (
                SpectrumKind::Pl,
                format!(
                    "its values look like PL (a peak of {} at {:.0} nm on a low baseline)",
                    number(s.max),
                    s.max_nm
                ),
            ),
            _ => {
                return unknown(
                    "neither its header, its name nor the shape of its values says absorbance, PL or PLE".to_string(),
                );
            }
        }
    };
    match admit(file, raw, kind, false) {
        Verdict::Refuse { message, .. } => unknown(format!(
            "{evidence}, but logging it as {} is refused: {}",
            kind.label(),
            message.strip_prefix(&format!("{file}: ")).unwrap_or(&message)
        )),
        _ => Inference {
            kind: Some(kind),
            evidence,
        },
    }
}

/// [`kind_from_name`] for free text (a title), not a path.
fn kind_from_name_text(text: &str) -> Option<SpectrumKind> {
    kind_from_name(&format!("{}.t", text.replace(['/', '\\', '.'], " ")))
}
