//! The door ([`admit`]): whether a spectrum may be logged as the kind named, converting a
//! transmittance or reflectance only when the file says so. Promises: a refusal is one line
//! naming the mismatch and the point it saw; `kind_as_is` never lets through a non-finite or
//! absurd value.

use crate::error::{Error, Result};
use crate::spectra::{RawSpectrum, XUnit};

use super::{
    ABSORBANCE_CEILING, ABSURD_ABSORBANCE, ABSURD_VALUE, FRACTION_FLOOR, PHOTOMETRIC_RANGE, SpectrumKind, Stated,
    YQuantity, stated, to_absorbance,
};

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
pub(super) fn by_wavelength(raw: &RawSpectrum) -> Option<Vec<(f64, f64)>> {
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
pub(super) struct Shape {
    pub(super) max: f64,
    min: f64,
    pub(super) max_nm: f64,
    /// Where the maximum sits, 0 at the blue end and 1 at the red end (by point index).
    max_at: f64,
    /// Mean of the bluest and the reddest tenth of the points.
    blue_end: f64,
    red_end: f64,
}

pub(super) fn shape(pts: &[(f64, f64)]) -> Shape {
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
    pub(super) fn absorbance_like(&self) -> bool {
        let span = self.max - self.min;
        self.max <= PHOTOMETRIC_RANGE && span > 0.0 && self.max_at <= 0.1 && self.blue_end - self.red_end >= 0.5 * span
    }

    /// A PL spectrum: a peak inside the range on a baseline well below it, in counts (above the
    /// absorbance scale; a normalised PL cannot be told from an absorbance band by shape alone).
    pub(super) fn pl_like(&self) -> bool {
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

pub(super) fn number(v: f64) -> String {
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
