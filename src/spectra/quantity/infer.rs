//! A folder watch's guess at a file's kind ([`infer_kind`]) from its name and its values, with
//! the evidence. Promises: it decides through the door, so a kind it infers is one the door
//! accepts; missing or disagreeing evidence gives no kind, never a guess.

use crate::spectra::RawSpectrum;

use super::door::{Verdict, admit, by_wavelength, number, shape};
use super::{SpectrumKind, YQuantity, stated};

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
