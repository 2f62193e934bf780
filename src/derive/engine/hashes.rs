//! The hashes a stored value is checked against: the inputs hash of everything an aliquot's
//! values depend on, the stage-one hash of what the spectral values depend on (the spectra and
//! the analysis settings only), and a measured vial concentration's. They are stored in every
//! lab, so their text must never change: a part is added only when its setting is set, so labs
//! without it keep the hashes they had.

use super::{BatchContext, SPECTRAL, SpectrumMeta};
use crate::derive::calibration::Calibration;
use crate::spectra::analysis;
use crate::store::model::AliquotRow;
use sha2::{Digest, Sha256};
use std::fmt::Write as _;

/// The parts of a calibration one aliquot's values depend on.
pub fn relevant(cal: &Calibration, core: &str, solvent: &str, has_pl: bool) -> serde_json::Value {
    let mut v = serde_json::json!({
        "curve": cal.curves.get(core),
        "extinction": cal.extinction.get(core),
        "bulk": cal.bulk.get(core),
        "lab_curve": cal.curves.get(core).and_then(|c| c.strip_prefix("lab:")).and_then(|n| cal.lab_curves.get(n)),
        "lab_extinction": cal.extinction.get(core).and_then(|c| c.strip_prefix("lab:")).and_then(|n| cal.lab_extinction.get(n)),
        "analysis": cal.analysis,
        "n": cal.refractive_index(solvent),
    });
    // Added only when set, so labs without these settings keep the hashes they had.
    if let Some(h) = cal.homogeneous_hwhm_ev(core) {
        v["homogeneous_hwhm_ev"] = serde_json::json!(h);
    }
    if let Some(p) = cal.plausible_dispersion_pct {
        v["plausible_dispersion_pct"] = serde_json::json!(p);
    }
    if has_pl {
        v["qy_reference"] = serde_json::to_value(&cal.qy_reference).unwrap_or_default();
        v["detector"] = serde_json::to_value(&cal.detector_correction).unwrap_or_default();
        if let Some(r) = &cal.qy_reference {
            v["n_ref"] = serde_json::to_value(cal.refractive_index(&r.solvent)).unwrap_or_default();
        }
    }
    v
}

/// The hash of everything an aliquot's derived values depend on.
pub fn inputs_hash(
    a: &AliquotRow,
    core: &str,
    spectra: &[SpectrumMeta],
    cal: &Calibration,
    ctx: &BatchContext,
) -> String {
    let has_pl = spectra.iter().any(|s| s.kind == "pl");
    let mut rel = relevant(cal, core, &a.solvent, has_pl).to_string();
    rel.push_str(&ctx.hash_part());
    inputs_hash_with(a, core, spectra, &rel)
}

/// As [`inputs_hash`], with the calibration part already rendered (recompute caches it).
pub fn inputs_hash_with(a: &AliquotRow, core: &str, spectra: &[SpectrumMeta], relevant: &str) -> String {
    // The text hashed is written into one buffer (a recompute hashes every aliquot of the lab);
    // the bytes are exactly those the separate pieces always were.
    let mut t = String::with_capacity(256 + relevant.len());
    let _ = write!(
        t,
        "v1|{core}|{}|{}|{}|",
        a.dilution_factor,
        a.path_cm,
        a.solvent.to_ascii_lowercase()
    );
    for s in spectra {
        let _ = write!(t, "{}|{}|{:?}|{}|", s.kind, s.sha256, s.excitation_nm, s.x_unit);
        // A spectrum's own cuvette (the PL cuvette's path and dilution) counts when recorded;
        // left out when not, so older hashes stay as they were.
        if s.path_cm.is_some() || s.dilution_factor.is_some() {
            let _ = write!(t, "cuvette {:?} {:?}|", s.path_cm, s.dilution_factor);
        }
    }
    t.push_str(relevant);
    short_hex(&Sha256::digest(t.as_bytes()))
}

/// The first 16 bytes of a digest as 32 lower-case hex digits: the form every stored hash has.
fn short_hex(digest: &[u8]) -> String {
    const DIGITS: &[u8; 16] = b"0123456789abcdef";
    let mut out = String::with_capacity(32);
    for &b in digest.iter().take(16) {
        out.push(DIGITS[(b >> 4) as usize] as char);
        out.push(DIGITS[(b & 15) as usize] as char);
    }
    out
}

/// The hash of what stage one depends on: the spectra and the analysis settings.
pub fn analysis_hash(spectra: &[SpectrumMeta], cal: &Calibration) -> String {
    let has_pl = spectra.iter().any(|s| s.kind == "pl");
    analysis_hash_with(spectra, &analysis_part(cal, has_pl))
}

pub fn analysis_part(cal: &Calibration, has_pl: bool) -> String {
    analysis_part_with(cal, has_pl, Some(analysis::METHOD_VERSION))
}

/// What stage one depends on besides the spectra; `method` None is the form from before the
/// analysis method had a version.
fn analysis_part_with(cal: &Calibration, has_pl: bool, method: Option<&str>) -> String {
    let mut v = serde_json::json!({"analysis": cal.analysis});
    if let Some(m) = method {
        v["method"] = serde_json::json!(m);
    }
    let mut s = v.to_string();
    if has_pl {
        s.push_str(&serde_json::to_string(&cal.detector_correction).unwrap_or_default());
    }
    s
}

/// The stage-one hash as cuvette computed it before the method had a version: how values
/// stored by an earlier cuvette are recognised (and told apart from a real inconsistency).
pub fn analysis_hash_before_method_versions(spectra: &[SpectrumMeta], cal: &Calibration) -> String {
    let has_pl = spectra.iter().any(|s| s.kind == "pl");
    analysis_hash_with(spectra, &analysis_part_with(cal, has_pl, None))
}

pub fn analysis_hash_with(spectra: &[SpectrumMeta], part: &str) -> String {
    let mut t = String::with_capacity(128 + part.len());
    t.push_str("stage1|");
    for s in spectra {
        let _ = write!(t, "{}|{}|{:?}|{}|", s.kind, s.sha256, s.excitation_nm, s.x_unit);
    }
    t.push_str(part);
    short_hex(&Sha256::digest(t.as_bytes()))
}

/// The hash a stored value of `quantity` should carry.
pub fn expected_hash<'a>(quantity: &str, stage1: &'a str, full: &'a str) -> &'a str {
    if SPECTRAL.contains(&quantity) { stage1 } else { full }
}

/// The hash a measured vial concentration depends on: its spectrum, the cuvette it was
/// measured in, the material and the calibration parts that size and count it.
pub fn vial_measure_hash(
    sha256: &str,
    x_unit: &str,
    dilution: f64,
    path_cm: f64,
    core: &str,
    cal: &Calibration,
) -> String {
    let mut h = Sha256::new();
    h.update(format!("vial|{core}|{sha256}|{x_unit}|{dilution}|{path_cm}|"));
    h.update(relevant(cal, core, "hexane", false).to_string());
    h.finalize().iter().take(16).map(|b| format!("{b:02x}")).collect()
}
