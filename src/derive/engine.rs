//! The derived-property engine. Every derived value is stored with its method, the calibration
//! version it used and a hash of all its inputs (the spectra's file hashes, the aliquot's
//! dilution, path and solvent, and the parts of the calibration that touch it). A value whose
//! stored hash differs from the hash its inputs give now is stale. `recompute` streams the
//! aliquots, recomputes only stale values (or all, when asked), keeps superseded values as
//! history and, in a dry run, writes nothing.
//!
//! One value looks beyond its aliquot: a growth series may give an aliquot a second look at its
//! first exciton (see [`super::series`]). The range it is looked at in is stored with the
//! aliquot's stage-one values (`series_expected_lo_nm`/`_hi_nm`), so recomputing it needs only
//! the aliquot's own rows; [`series_pass`], run after any aliquot of a batch is (re)derived and
//! after a recompute, keeps those ranges in step with the neighbours' readings.

use super::calibration::Calibration;
use super::series::{self, SecondLook, SeriesHint};
use super::{extinction, qy, sizing, solvents};
use crate::error::Result;
use crate::spectra::HC_EV_NM;
use crate::spectra::analysis::{self, AbsResult, PlResult};
use crate::spectra::{RawSpectrum, Trace};
use crate::store::model::{AliquotRow, SpectrumRow, VialConcentration};
use serde::Serialize;
use sha2::{Digest, Sha256};

/// One derived quantity of an aliquot.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Derived {
    pub quantity: String,
    pub value: Option<f64>,
    pub unit: String,
    pub method: String,
    pub warnings: Vec<String>,
}

fn d(quantity: &str, value: Option<f64>, unit: &str, method: &str, warnings: Vec<String>) -> Derived {
    Derived {
        quantity: quantity.into(),
        value,
        unit: unit.into(),
        method: method.into(),
        warnings,
    }
}

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
    let mut h = Sha256::new();
    h.update(format!(
        "v1|{core}|{}|{}|{}|",
        a.dilution_factor,
        a.path_cm,
        a.solvent.to_ascii_lowercase()
    ));
    for s in spectra {
        h.update(format!("{}|{}|{:?}|{}|", s.kind, s.sha256, s.excitation_nm, s.x_unit));
        // A spectrum's own cuvette (the PL cuvette's path and dilution) counts when recorded;
        // left out when not, so older hashes stay as they were.
        if s.path_cm.is_some() || s.dilution_factor.is_some() {
            h.update(format!("cuvette {:?} {:?}|", s.path_cm, s.dilution_factor));
        }
    }
    h.update(relevant);
    h.finalize().iter().take(16).map(|b| format!("{b:02x}")).collect()
}

/// What the hash needs of a spectrum (no data).
#[derive(Debug, Clone)]
pub struct SpectrumMeta {
    pub kind: String,
    pub sha256: String,
    pub excitation_nm: Option<f64>,
    pub x_unit: String,
    /// The spectrum's own cuvette, when recorded (schema 0005): for a PL spectrum, the PL
    /// cuvette's path and dilution.
    pub path_cm: Option<f64>,
    pub dilution_factor: Option<f64>,
}

impl From<&SpectrumRow> for SpectrumMeta {
    fn from(s: &SpectrumRow) -> Self {
        SpectrumMeta {
            kind: s.kind.clone(),
            sha256: s.sha256.clone(),
            excitation_nm: s.excitation_nm,
            x_unit: s.x_unit.clone(),
            path_cm: s.path_cm,
            dilution_factor: s.dilution_factor,
        }
    }
}

/// What an aliquot's batch adds to its values: the shell its crystals carry and, for a batch
/// grown on another batch's cores, that parent's core size.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct BatchContext {
    pub material: String,
    pub shell: Option<String>,
    pub parent_core: Option<ParentCore>,
}

/// The core a shelled batch grew on: its parent batch's product.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ParentCore {
    pub batch_id: i64,
    pub aliquot_id: Option<i64>,
    pub diameter_nm: Option<f64>,
    pub curve: Option<String>,
}

impl BatchContext {
    /// The part of the inputs hash the batch context gives: empty for a plain core batch, so
    /// those hashes are as they were.
    pub fn hash_part(&self) -> String {
        match &self.shell {
            None => String::new(),
            Some(sh) => format!(
                "|shell {sh}|parent {:?}",
                self.parent_core
                    .as_ref()
                    .map(|p| (p.batch_id, p.aliquot_id, p.diameter_nm))
            ),
        }
    }
}

pub fn trace_of(s: &SpectrumRow) -> Result<Trace> {
    let raw = RawSpectrum {
        format: String::new(),
        title: None,
        label: None,
        x_unit: s.x_unit.clone(),
        y_unit: s.y_unit.clone(),
        x: s.x.clone(),
        y: s.y.clone(),
        checks: Vec::new(),
        warnings: Vec::new(),
    };
    raw.to_trace(&s.file_name, None)
}

/// The quantities that come from the spectra alone (under the analysis settings and, for PL,
/// the detector correction). They are stage one: a change of sizing curve, extinction model or
/// QY reference leaves them as they are, so a recompute need not read any spectrum again.
pub const SPECTRAL: &[&str] = &[
    "first_exciton_nm",
    "first_exciton_abs",
    "hwhm_nm",
    "hwhm_mev",
    "shoulder",
    "first_exciton_sd_nm",
    "band_edge_fit",
    "abs_400nm",
    "abs_400nm_corrected",
    "abs_350nm_corrected",
    "abs_at_excitation",
    "abs_at_excitation_measured",
    "abs_at_excitation_sd",
    "abs_at_pl_band",
    "pl_peak_nm",
    "pl_fwhm_nm",
    "pl_fwhm_mev",
    "pl_integral",
    // The growth series' second look (see `series`): the range the neighbours give and, where
    // the first exciton was reassigned, the reading as first made.
    "series_expected_lo_nm",
    "series_expected_hi_nm",
    "first_exciton_as_read_nm",
    "hwhm_as_read_nm",
    "shoulder_as_read",
];

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
    let mut h = Sha256::new();
    h.update("stage1|");
    for s in spectra {
        h.update(format!("{}|{}|{:?}|{}|", s.kind, s.sha256, s.excitation_nm, s.x_unit));
    }
    h.update(part);
    h.finalize().iter().take(16).map(|b| format!("{b:02x}")).collect()
}

/// Everything computed for an aliquot, with the intermediate analysis kept for `explain`.
#[derive(Debug, Clone, Serialize)]
pub struct Computation {
    pub values: Vec<Derived>,
    pub absorbance: Option<AbsResult>,
    pub pl: Option<PlResult>,
    pub sizing: Option<sizing::Sizing>,
    pub extinction: Option<extinction::Extinction>,
}

fn value_of(values: &[Derived], q: &str) -> Option<f64> {
    find_value(values, q).and_then(|v| v.value)
}

fn peak_method(_cal: &Calibration) -> String {
    "first exciton: the band edge fitted in energy (Gaussian first and second transitions on a \
     linear background, starting from second-derivative minima chosen by prominence against \
     the local noise); Pesika, Stebe & Searson 2003, Segets et al. 2012"
        .to_string()
}

/// What the material tells the band-edge search: the first-exciton region its sizing curve
/// covers and its bulk gap (nothing redder can be a first exciton). Empty for an unknown core.
pub fn band_edge_hint(core: &str, cal: &Calibration) -> crate::spectra::band_edge::BandEdgeHint {
    use crate::derive::sizing;
    let bulk = sizing::default_bulk(core);
    let curve = cal
        .curves
        .get(core)
        .map(String::as_str)
        .or_else(|| sizing::default_curve(core))
        .and_then(|id| sizing::Curve::parse(id).ok());
    crate::spectra::band_edge::BandEdgeHint {
        material: (!core.is_empty()).then(|| core.to_string()),
        expected_nm: curve.and_then(|c| sizing::peak_range_nm(c, core, bulk.as_ref())),
        bulk_gap_nm: bulk.map(|b| HC_EV_NM / b.eg_ev),
    }
}

/// Stage one of an absorbance trace: the spectral values it gives.
pub fn absorbance_values(t: &Trace, cal: &Calibration) -> Result<(Vec<Derived>, AbsResult)> {
    absorbance_values_with(t, cal, &crate::spectra::band_edge::BandEdgeHint::default())
}

/// Stage one with what the material tells the search (a lone file analysed with `--material`,
/// a vial's own measurement).
pub fn absorbance_values_with(
    t: &Trace,
    cal: &Calibration,
    hint: &crate::spectra::band_edge::BandEdgeHint,
) -> Result<(Vec<Derived>, AbsResult)> {
    let r = analysis::analyze_absorbance_with(t, &cal.analysis, hint)?;
    Ok((absorbance_rows(t, &r, cal), r))
}

/// Stage one of an aliquot's absorbance trace, knowing what its growth series expects: with a
/// `hint` the spectrum gets a second look inside the range (see [`series::second_look`]); a
/// transition there that stands on its own becomes the reading, with the first one kept as
/// `first_exciton_as_read_nm`, `hwhm_as_read_nm` and `shoulder_as_read`; else the first reading
/// stays, with a warning. Either way the range is stored (`series_expected_lo_nm`/`_hi_nm`),
/// so a recompute repeats the same second look.
pub fn series_absorbance_values(
    t: &Trace,
    cal: &Calibration,
    core: &str,
    hint: Option<&SeriesHint>,
) -> Result<(Vec<Derived>, AbsResult)> {
    let (mut v, first) = absorbance_values(t, cal)?;
    let Some(h) = hint else {
        return Ok((v, first));
    };
    let range = |v: &mut Vec<Derived>| {
        v.push(d("series_expected_lo_nm", Some(h.lo_nm), "nm", &h.basis, vec![]));
        v.push(d("series_expected_hi_nm", Some(h.hi_nm), "nm", &h.basis, vec![]));
    };
    match series::second_look(t, &cal.analysis, &band_edge_hint(core, cal), &first, h)? {
        SecondLook::Unsupported(w) => {
            if let Some(f) = v.iter_mut().find(|x| x.quantity == "first_exciton_nm") {
                f.warnings.insert(0, w);
            }
            range(&mut v);
            Ok((v, first))
        }
        SecondLook::Reassigned(r) => {
            let mut v = absorbance_rows(t, &r, cal);
            let as_read = "the reading as first made, before the growth series reassigned the first exciton";
            v.push(d(
                "first_exciton_as_read_nm",
                first.first_exciton_nm,
                "nm",
                as_read,
                first.warnings.clone(),
            ));
            v.push(d("hwhm_as_read_nm", first.hwhm_nm, "nm", as_read, vec![]));
            v.push(d(
                "shoulder_as_read",
                first.first_exciton_nm.map(|_| if first.shoulder { 1.0 } else { 0.0 }),
                "flag",
                as_read,
                vec![],
            ));
            range(&mut v);
            Ok((v, *r))
        }
    }
}

/// The stage-one rows of one absorbance analysis.
fn absorbance_rows(t: &Trace, r: &AbsResult, cal: &Calibration) -> Vec<Derived> {
    let m = peak_method(cal);
    let width = "the first transition's own half width at half maximum (fitted in energy)";
    let v = vec![
        d("first_exciton_nm", r.first_exciton_nm, "nm", &m, r.warnings.clone()),
        d(
            "first_exciton_abs",
            r.first_exciton_abs,
            "absorbance",
            "smoothed, scattering background removed",
            vec![],
        ),
        d("hwhm_nm", r.hwhm_nm, "nm", width, vec![]),
        d("hwhm_mev", r.hwhm_ev.map(|h| h * 1000.0), "meV", width, vec![]),
        d(
            "shoulder",
            r.first_exciton_nm.map(|_| if r.shoulder { 1.0 } else { 0.0 }),
            "flag",
            &m,
            vec![],
        ),
        d(
            "first_exciton_sd_nm",
            r.band_edge.as_ref().map(|b| {
                let e = b.centre_ev;
                HC_EV_NM / (e - b.centre_sd_ev) - HC_EV_NM / e
            }),
            "nm",
            "one standard deviation of the fitted centre (fit covariance), or the derivative's width on a fallback",
            vec![],
        ),
        d(
            "band_edge_fit",
            r.band_edge.as_ref().map(|b| match b.quality {
                "good" => 2.0,
                "poor" => 1.0,
                _ => 0.0,
            }),
            "flag",
            "band-edge fit quality: 2 good, 1 poor (structure left in the residual), 0 fallback to the second derivative",
            vec![],
        ),
        d(
            "abs_400nm",
            analysis::interpolate(t, 400.0),
            "absorbance",
            "interpolated at 400 nm",
            vec![],
        ),
        corrected_at(t, r, 400.0, "abs_400nm_corrected"),
        corrected_at(t, r, 350.0, "abs_350nm_corrected"),
    ];
    v
}

/// The absorbance at `nm` with the analysis's fitted scattering background taken off.
fn corrected_at(t: &Trace, r: &AbsResult, nm: f64, quantity: &str) -> Derived {
    let raw = analysis::interpolate(t, nm);
    let bg = r.background.at(nm);
    let mut w = Vec::new();
    if let Some(a) = raw
        && a > 0.0
        && bg > 0.2 * a
    {
        w.push(format!(
            "scattering is {:.0} % of the absorbance at {nm:.0} nm: the corrected value rests on the background fit",
            100.0 * bg / a
        ));
    }
    d(
        quantity,
        raw.map(|a| a - bg),
        "absorbance",
        &format!(
            "interpolated at {nm:.0} nm, scattering background ({}) removed",
            r.background.model
        ),
        w,
    )
}

/// Both stages for a lone absorbance trace (a file not in the lab, or a vial's own
/// measurement), as an aliquot with this dilution and path would get them.
pub fn derive_from_trace(
    t: &Trace,
    core: &str,
    dilution_factor: f64,
    path_cm: f64,
    cal: &Calibration,
) -> Result<(AbsResult, Vec<Derived>)> {
    let (mut values, r) = absorbance_values_with(t, cal, &band_edge_hint(core, cal))?;
    let a = AliquotRow {
        id: 0,
        batch_id: 0,
        minutes: None,
        stage: None,
        dilution_factor,
        path_cm,
        solvent: "hexane".into(),
        taken_at: String::new(),
        voided: false,
        void_why: None,
    };
    let (more, _, _) = derive_values(&a, core, &[], &values, cal, &BatchContext::default());
    values.extend(more);
    Ok((r, values))
}

/// The value of one quantity in a list of derived values.
pub fn find_value<'a>(values: &'a [Derived], quantity: &str) -> Option<&'a Derived> {
    values.iter().find(|v| v.quantity == quantity)
}

/// Stage one: analyses the spectra. Pure.
pub fn analyse(spectra: &[SpectrumRow], cal: &Calibration) -> (Vec<Derived>, Option<AbsResult>, Option<PlResult>) {
    analyse_in_series(spectra, cal, "", None)
}

/// Stage one knowing what the aliquot's growth series expects of its first exciton (see
/// [`series_absorbance_values`]). Pure.
pub fn analyse_in_series(
    spectra: &[SpectrumRow],
    cal: &Calibration,
    core: &str,
    hint: Option<&SeriesHint>,
) -> (Vec<Derived>, Option<AbsResult>, Option<PlResult>) {
    let mut out = Vec::new();
    let set = &cal.analysis;
    let peak_method = peak_method(cal);
    let abs_spec = spectra.iter().find(|s| s.kind == "abs");
    let pl_spec = spectra.iter().find(|s| s.kind == "pl");
    let mut abs_res = None;
    let mut abs_trace = None;
    if let Some(s) = abs_spec {
        match trace_of(s).and_then(|t| series_absorbance_values(&t, cal, core, hint).map(|(v, r)| (t, v, r))) {
            Err(e) => out.push(d("first_exciton_nm", None, "nm", &peak_method, vec![e.to_string()])),
            Ok((t, v, r)) => {
                out.extend(v);
                abs_trace = Some(t);
                abs_res = Some(r);
            }
        }
    }
    let mut pl_res = None;
    if let Some(s) = pl_spec {
        if let Some(ex) = s.excitation_nm {
            // Scattered light is not absorbed: the fitted background comes off (issue 12).
            let measured = abs_trace.as_ref().and_then(|t| analysis::interpolate(t, ex));
            let (corrected, method, sd) = match (&abs_res, measured) {
                (Some(r), Some(m)) => (
                    Some(m - r.background.at(ex)),
                    format!(
                        "interpolated at {ex} nm, scattering background ({}) removed; absorbance cuvette",
                        r.background.model
                    ),
                    Some(r.noise),
                ),
                _ => (None, format!("interpolated at {ex} nm"), None),
            };
            out.push(d("abs_at_excitation", corrected, "absorbance", &method, vec![]));
            if measured.is_some() {
                out.push(d(
                    "abs_at_excitation_measured",
                    measured,
                    "absorbance",
                    &format!("interpolated at {ex} nm, as measured"),
                    vec![],
                ));
                out.push(d(
                    "abs_at_excitation_sd",
                    sd,
                    "absorbance",
                    "one standard deviation: the absorbance analysis's point noise",
                    vec![],
                ));
            }
        }
        let traced = trace_of(s).and_then(|t| match &cal.detector_correction {
            Some(c) => analysis::apply_correction(
                &t,
                &Trace {
                    nm: c.nm.clone(),
                    y: c.factor.clone(),
                },
            ),
            None => Ok(t),
        });
        let method = match &cal.detector_correction {
            Some(c) => format!("PL, corrected with '{}'", c.name),
            None => "PL, no detector correction".to_string(),
        };
        match traced.and_then(|t| analysis::analyze_pl(&t, set)) {
            Err(e) => out.push(d("pl_peak_nm", None, "nm", &method, vec![e.to_string()])),
            Ok(p) => {
                out.push(d("pl_peak_nm", p.pl_peak_nm, "nm", &method, p.warnings.clone()));
                out.push(d("pl_fwhm_nm", p.pl_fwhm_nm, "nm", &method, vec![]));
                out.push(d("pl_fwhm_mev", p.pl_fwhm_mev, "meV", &method, vec![]));
                out.push(d("pl_integral", Some(p.pl_integral), "counts nm", &method, vec![]));
                if let (Some(t), Some(r), Some(peak)) = (&abs_trace, &abs_res, p.pl_peak_nm) {
                    out.push(abs_over_band(t, r, peak, p.pl_fwhm_nm));
                }
                pl_res = Some(p);
            }
        }
    }
    (out, abs_res, pl_res)
}

/// The largest scatter-corrected absorbance over the PL band (peak ± half its FWHM), in the
/// absorbance cuvette: what re-absorbs the emission.
fn abs_over_band(t: &Trace, r: &AbsResult, peak_nm: f64, fwhm_nm: Option<f64>) -> Derived {
    let half = fwhm_nm.filter(|f| f.is_finite() && *f > 0.0).unwrap_or(20.0) / 2.0;
    let v = (0..=20)
        .filter_map(|i| {
            let nm = peak_nm - half + 2.0 * half * i as f64 / 20.0;
            analysis::interpolate(t, nm).map(|a| a - r.background.at(nm))
        })
        .fold(None, |m: Option<f64>, a| Some(m.map_or(a, |m| m.max(a))));
    d(
        "abs_at_pl_band",
        v,
        "absorbance",
        &format!(
            "largest absorbance over the PL band {:.0}-{:.0} nm, scattering background removed; absorbance cuvette",
            peak_nm - half,
            peak_nm + half
        ),
        vec![],
    )
}

/// Stage two: sizes, extinction, concentration, Stokes shift and quantum yield from the stage-one
/// numbers and the calibration. Pure and cheap: no spectrum is needed.
pub fn derive_values(
    a: &AliquotRow,
    core: &str,
    metas: &[SpectrumMeta],
    stage1: &[Derived],
    cal: &Calibration,
    ctx: &BatchContext,
) -> (Vec<Derived>, Option<sizing::Sizing>, Option<extinction::Extinction>) {
    let mut out = Vec::new();
    let mut sizing_res = None;
    let mut ext_res = None;
    let peak = value_of(stage1, "first_exciton_nm");
    // A shelled crystal's first exciton is not its core's: the core's size comes from the
    // batch it grew on, and the core curve's reading of this peak says so beside it.
    let core_from_parent = ctx.parent_core.as_ref().and_then(|p| p.diameter_nm.map(|d| (p, d)));
    if let Some(sh) = &ctx.shell {
        match core_from_parent {
            Some((p, dc)) => out.push(d(
                "core_diameter_nm",
                Some(dc),
                "nm",
                &format!(
                    "core from parent batch {}'s product (aliquot {}), {}",
                    p.batch_id,
                    p.aliquot_id.map(|i| i.to_string()).unwrap_or("-".into()),
                    p.curve.clone().unwrap_or_default()
                ),
                vec![],
            )),
            None => out.push(d(
                "core_diameter_nm",
                None,
                "nm",
                "none",
                vec![format!(
                    "a {} batch with a {sh} shell and no sized parent core batch: record the core batch as its parent (relation shell)",
                    ctx.material
                )],
            )),
        }
    }
    if let Some(peak) = peak {
        match cal.curves.get(core) {
            None => out.push(d(
                "diameter_nm",
                None,
                "nm",
                "none",
                vec![format!("no sizing curve set for {core}")],
            )),
            Some(curve) => match cal.size(curve, core, peak) {
                Err(e) => out.push(d("diameter_nm", None, "nm", curve, vec![e.to_string()])),
                Ok(sz) => {
                    let mut size_warnings = sz.warnings.clone();
                    if let Some(sh) = &ctx.shell {
                        size_warnings.push(format!(
                            "a {core} core curve applied to a shelled crystal ({}): the {sh} shell shifts the first exciton, so {:.2} nm is not the core's size{}",
                            ctx.material,
                            sz.diameter_nm,
                            match core_from_parent {
                                Some((p, dc)) => format!("; the core is {dc:.2} nm from parent batch {}", p.batch_id),
                                None => String::new(),
                            }
                        ));
                    }
                    out.push(d("diameter_nm", Some(sz.diameter_nm), "nm", &sz.curve, size_warnings));
                    if let Some(e) = sz.edge_nm {
                        out.push(d("edge_nm", Some(e), "nm", &sz.curve, vec![]));
                    }
                    out.push(dispersion_value(stage1, core, peak, curve, &sz, cal));
                    let hwhm_ev = value_of(stage1, "hwhm_mev").map(|m| m / 1000.0);
                    // The extinction law takes the core's diameter: from the parent batch for a
                    // shelled crystal, when known.
                    let d_eps = core_from_parent.map(|(_, dc)| dc).unwrap_or(sz.diameter_nm);
                    if let Some(model) = cal.extinction.get(core) {
                        match cal.extinction(model, core, d_eps, peak, hwhm_ev) {
                            Err(e) => out.push(d("extinction_m1cm1", None, "M^-1 cm^-1", model, vec![e.to_string()])),
                            Ok(ex) => {
                                let mut ew = ex.warnings.clone();
                                if core_from_parent.is_none() {
                                    ew.extend(pairing(cal, curve, model, core, peak, sz.diameter_nm, hwhm_ev));
                                }
                                if ctx.shell.is_some() && (ex.at_nm - peak).abs() > 1e-9 {
                                    ew.push(format!(
                                        "a core extinction law at {:.0} nm applied to a core/shell crystal: the shell absorbs there too, so the concentration is high",
                                        ex.at_nm
                                    ));
                                }
                                let (a_at, mut cw) = absorbance_for(stage1, &ex, peak);
                                out.push(d(
                                    "extinction_m1cm1",
                                    Some(ex.extinction_m1cm1),
                                    "M^-1 cm^-1",
                                    &format!("{model} at {:.0} nm", ex.at_nm),
                                    ew,
                                ));
                                let c = match a_at {
                                    Some(av) => match extinction::concentration_molar(
                                        av,
                                        ex.extinction_m1cm1,
                                        a.path_cm,
                                        a.dilution_factor,
                                    ) {
                                        Ok(c) => Some(c),
                                        Err(e) => {
                                            cw.push(e.to_string());
                                            None
                                        }
                                    },
                                    None => {
                                        cw.push(format!("no absorbance measured at {:.0} nm", ex.at_nm));
                                        None
                                    }
                                };
                                out.push(d(
                                    "concentration_molar",
                                    c,
                                    "M",
                                    &format!("Beer-Lambert with {model}, undiluted"),
                                    cw,
                                ));
                                ext_res = Some(ex);
                            }
                        }
                    } else {
                        out.push(d(
                            "concentration_molar",
                            None,
                            "M",
                            "none",
                            vec![format!("no extinction model for {core}")],
                        ));
                    }
                    sizing_res = Some(sz);
                }
            },
        }
    }
    let pl_meta = metas.iter().find(|m| m.kind == "pl");
    if let (Some(ab), Some(pp)) = (peak, value_of(stage1, "pl_peak_nm")) {
        let (_, mev) = analysis::stokes_shift(ab, pp);
        out.push(d(
            "stokes_shift_mev",
            Some(mev),
            "meV",
            "first exciton minus PL peak",
            stokes_shift_warnings(mev),
        ));
    }
    if let (Some(pl), Some(integral)) = (pl_meta, value_of(stage1, "pl_integral")) {
        let ex_abs = pl.excitation_nm.and_then(|ex| {
            let measured = value_of(stage1, "abs_at_excitation_measured");
            let corrected = value_of(stage1, "abs_at_excitation")?;
            // Values analysed before the scatter correction have no measured twin: then the
            // stored value is the measured one and no background is known.
            let (m, bg) = match measured {
                Some(m) => (m, m - corrected),
                None => (corrected, 0.0),
            };
            let sd = value_of(stage1, "abs_at_excitation_sd").unwrap_or(f64::NAN);
            let cuv = qy::Cuvettes {
                abs_path_cm: a.path_cm,
                abs_dilution: a.dilution_factor,
                pl_path_cm: pl.path_cm,
                pl_dilution: pl.dilution_factor,
            };
            Some(qy::excitation_absorbance(ex, m, bg, sd, cuv).map(|mut e| {
                if measured.is_none() {
                    e.warnings.push(
                        "analysed before the scatter correction: the absorbance at excitation includes scattering (recompute --all)"
                            .into(),
                    );
                }
                e
            }))
        });
        let ex_abs = match ex_abs {
            Some(Ok(e)) => {
                out.push(d(
                    "abs_at_excitation_pl",
                    Some(e.in_pl_cuvette),
                    "absorbance",
                    &format!(
                        "scatter-corrected, in the PL cuvette ({} cm{}, dilution {})",
                        e.pl_path_cm,
                        if e.pl_path_recorded { "" } else { ", assumed" },
                        e.pl_dilution
                    ),
                    e.warnings.clone(),
                ));
                Some(e)
            }
            Some(Err(err)) => {
                out.push(d(
                    "abs_at_excitation_pl",
                    None,
                    "absorbance",
                    "none",
                    vec![err.to_string()],
                ));
                None
            }
            None => None,
        };
        let scale = qy::Cuvettes {
            abs_path_cm: a.path_cm,
            abs_dilution: a.dilution_factor,
            pl_path_cm: pl.path_cm,
            pl_dilution: pl.dilution_factor,
        }
        .scale();
        let band = value_of(stage1, "abs_at_pl_band")
            .zip(value_of(stage1, "pl_peak_nm"))
            .map(|(a_band, pk)| (a_band * scale, pk));
        out.push(qy_value(a, pl.excitation_nm, ex_abs.as_ref(), band, integral, cal));
    }
    (out, sizing_res, ext_res)
}

/// The absorbance an extinction coefficient goes with, and what to say about it.
fn absorbance_for(stage1: &[Derived], ex: &extinction::Extinction, peak: f64) -> (Option<f64>, Vec<String>) {
    let mut w = Vec::new();
    if (ex.at_nm - peak).abs() < 1e-9 {
        return (value_of(stage1, "first_exciton_abs"), w);
    }
    let (raw_q, corr_q) = if (ex.at_nm - 400.0).abs() < 1e-9 {
        ("abs_400nm", "abs_400nm_corrected")
    } else if (ex.at_nm - 350.0).abs() < 1e-9 {
        ("abs_350nm", "abs_350nm_corrected")
    } else {
        return (None, w);
    };
    let raw = value_of(stage1, raw_q);
    if let Some(c) = find_value(stage1, corr_q) {
        w.extend(c.warnings.iter().cloned());
    }
    let corrected = value_of(stage1, corr_q);
    // The measured value decides trust: stray light and detector range limit it, whatever the
    // background is.
    let measured = raw.or(corrected);
    if let Some(m) = measured
        && m > extinction::MAX_TRUSTED_ABS_SHORT
    {
        w.push(format!(
            "absorbance {m:.2} at {:.0} nm is above {}: too high to trust (stray light, detector range); dilute and measure again",
            ex.at_nm,
            extinction::MAX_TRUSTED_ABS_SHORT
        ));
    }
    match corrected {
        Some(c) if c <= 0.0 => {
            w.push(format!(
                "the scattering background at {:.0} nm is as large as the measured absorbance{}: the scatter correction cannot be trusted there, so no concentration",
                ex.at_nm,
                raw.map(|r| format!(" ({r:.3})")).unwrap_or_default()
            ));
            (None, w)
        }
        Some(c) => (Some(c), w),
        None => {
            if raw.is_some() {
                w.push(format!(
                    "no scatter-corrected absorbance at {:.0} nm (analysed before the correction): the measured value is used (recompute --all)",
                    ex.at_nm
                ));
            }
            (raw, w)
        }
    }
}

/// Says when the diameter and the extinction law come from different calibrations, and by
/// how much the concentration would move with the law's own diameter.
fn pairing(
    cal: &Calibration,
    curve: &str,
    model: &str,
    core: &str,
    peak: f64,
    d_nm: f64,
    hwhm_ev: Option<f64>,
) -> Option<String> {
    let own_curve = extinction::paired_curves(model)?.into_iter().next()?;
    let own = cal.size(&own_curve, core, peak).ok().map(|s| s.diameter_nm);
    let eps = |dd: f64| {
        cal.extinction(model, core, dd, peak, hwhm_ev)
            .map(|e| e.extinction_m1cm1)
            .unwrap_or(f64::NAN)
    };
    extinction::pairing_warning(curve, model, d_nm, own, &eps)
}

/// σ/D from the first transition's width through the curve's slope (an estimate).
fn dispersion_value(
    stage1: &[Derived],
    core: &str,
    peak: f64,
    curve: &str,
    sz: &sizing::Sizing,
    cal: &Calibration,
) -> Derived {
    let hom = cal.homogeneous_hwhm_ev(core);
    let method = format!(
        "{}: σ/D from the first transition's HWHM x dD/dE (an estimate){}",
        sz.curve,
        match hom {
            Some(h) => format!(", homogeneous HWHM {:.0} meV taken out in quadrature", h * 1000.0),
            None => String::new(),
        }
    );
    let Some(hwhm_ev) = value_of(stage1, "hwhm_mev").map(|m| m / 1000.0) else {
        return d("size_dispersion_pct", None, "%", &method, vec![]);
    };
    let size_at = |l: f64| cal.size(curve, core, l).ok().map(|s| s.diameter_nm);
    match sizing::size_dispersion(peak, hwhm_ev, hom, &size_at) {
        Ok(disp) => {
            let mut warnings = disp.warnings;
            let plausible = cal.plausible_dispersion_pct();
            if disp.sigma_over_d_pct > plausible {
                warnings.push(format!(
                    "σ/D {:.1} % is above the {plausible:.0} % this lab takes as plausible: the first transition's width may be misread (a shoulder, overlapping transitions, scattering), or the batch is very polydisperse",
                    disp.sigma_over_d_pct
                ));
            }
            d(
                "size_dispersion_pct",
                Some(disp.sigma_over_d_pct),
                "%",
                &method,
                warnings,
            )
        }
        Err(e) => d("size_dispersion_pct", None, "%", &method, vec![e.to_string()]),
    }
}

/// Band-edge emission of these crystals sits a few to about 150 meV red of the first exciton
/// (common practice; larger for the smallest lead-chalcogenide crystals): a PL peak bluer than
/// the absorption, or far redder, means one of the two readings is likely wrong.
const STOKES_SHIFT_FLOOR_MEV: f64 = -15.0;
const STOKES_SHIFT_CEILING_MEV: f64 = 250.0;

fn stokes_shift_warnings(mev: f64) -> Vec<String> {
    if mev < STOKES_SHIFT_FLOOR_MEV {
        vec![format!(
            "negative Stokes shift ({mev:.0} meV): the PL peak is bluer than the first exciton, so one of the two readings is likely wrong"
        )]
    } else if mev > STOKES_SHIFT_CEILING_MEV {
        vec![format!(
            "Stokes shift of {mev:.0} meV is far larger than band-edge emission commonly shows (up to about 150 meV): trap emission read as the band edge, or a misread first exciton"
        )]
    } else {
        vec![]
    }
}

/// Computes an aliquot's derived values from its spectra under one calibration. Pure.
pub fn compute(
    a: &AliquotRow,
    core: &str,
    spectra: &[SpectrumRow],
    cal: &Calibration,
    ctx: &BatchContext,
) -> Computation {
    compute_in_series(a, core, spectra, cal, ctx, None)
}

/// As [`compute`], with the range the aliquot's growth series expects (stored with its values
/// by [`series_pass`]). Pure.
pub fn compute_in_series(
    a: &AliquotRow,
    core: &str,
    spectra: &[SpectrumRow],
    cal: &Calibration,
    ctx: &BatchContext,
    hint: Option<&SeriesHint>,
) -> Computation {
    let (mut values, absorbance, pl) = analyse_in_series(spectra, cal, core, hint);
    let metas: Vec<SpectrumMeta> = spectra.iter().map(SpectrumMeta::from).collect();
    let (more, sizing, extinction) = derive_values(a, core, &metas, &values, cal, ctx);
    values.extend(more);
    Computation {
        values,
        absorbance,
        pl,
        sizing,
        extinction,
    }
}

fn qy_value(
    a: &AliquotRow,
    excitation: Option<f64>,
    a_ex: Option<&qy::ExcitationAbsorbance>,
    pl_band: Option<(f64, f64)>,
    integral: f64,
    cal: &Calibration,
) -> Derived {
    let method = "relative, single point (Brouwer 2011)";
    let Some(r) = &cal.qy_reference else {
        return d(
            "qy",
            None,
            "fraction",
            method,
            vec!["no QY reference in the calibration (cuvette calib set-reference)".into()],
        );
    };
    let Some(ex) = excitation else {
        return d(
            "qy",
            None,
            "fraction",
            method,
            vec!["the PL spectrum has no excitation wavelength".into()],
        );
    };
    let Some(a_ex) = a_ex else {
        return d(
            "qy",
            None,
            "fraction",
            method,
            vec![format!("no absorbance at the excitation wavelength {ex} nm")],
        );
    };
    let (Some(n), Some(nr)) = (cal.refractive_index(&a.solvent), cal.refractive_index(&r.solvent)) else {
        return d(
            "qy",
            None,
            "fraction",
            method,
            vec!["no refractive index for a solvent".into()],
        );
    };
    match qy::single_point_with_sd(
        integral,
        a_ex.in_pl_cuvette,
        a_ex.sd,
        r.integral,
        r.abs_at_excitation,
        r.qy,
        n,
        nr,
    ) {
        Err(e) => d("qy", None, "fraction", method, vec![e.to_string()]),
        Ok(q) => {
            let mut w = q.warnings;
            if (ex - r.excitation_nm).abs() > 2.0 {
                w.push(format!(
                    "sample excited at {ex} nm, reference at {} nm",
                    r.excitation_nm
                ));
            }
            if let Some(dye) = solvents::dye(&r.dye) {
                w.extend(solvents::excitation_warning(dye, r.excitation_nm));
                if (ex - r.excitation_nm).abs() > 1e-9 {
                    w.extend(solvents::excitation_warning(dye, ex));
                }
            }
            if cal.detector_correction.is_none() {
                w.push(qy::NO_DETECTOR_CORRECTION.into());
            }
            if let Some((a_band, pk)) = pl_band {
                w.extend(qy::emission_inner_filter(a_band, pk));
            }
            d(
                "qy",
                Some(q.qy),
                "fraction",
                &format!("{method} against {} ({})", r.dye, r.qy),
                w,
            )
        }
    }
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

/// A vial's concentration from its own absorbance spectrum under one calibration version.
pub fn vial_measured(
    spectrum: &SpectrumRow,
    core: &str,
    dilution: f64,
    path_cm: f64,
    version: i64,
    cal: &Calibration,
) -> Result<(AbsResult, Vec<Derived>, VialConcentration)> {
    let t = trace_of(spectrum)?;
    let (r, values) = derive_from_trace(&t, core, dilution, path_cm, cal)?;
    let conc = find_value(&values, "concentration_molar");
    let mut warnings = r.warnings.clone();
    for q in ["diameter_nm", "extinction_m1cm1", "concentration_molar"] {
        warnings.extend(find_value(&values, q).map(|d| d.warnings.clone()).unwrap_or_default());
    }
    let c = VialConcentration {
        source: "measured".into(),
        spectrum_id: Some(spectrum.id),
        aliquot_id: None,
        value: conc.and_then(|c| c.value),
        method: format!(
            "measured: spectrum {} ({}), dilution {dilution}, path {path_cm} cm; {}",
            spectrum.id,
            spectrum.file_name,
            conc.map(|c| c.method.clone())
                .unwrap_or_else(|| "no concentration".into())
        ),
        calibration_version: Some(version),
        inputs_hash: vial_measure_hash(&spectrum.sha256, &spectrum.x_unit, dilution, path_cm, core, cal),
        warnings,
    };
    Ok((r, values, c))
}

/// A batch's reaction yield: crystals × formula units against the limiting precursor, from
/// its product aliquot's diameter and concentration and its recipe's amounts.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ReactionYieldView {
    /// Formula units in the crystals over the most the limiting precursor could give (0-1).
    pub yield_fraction: Option<f64>,
    pub product_mmol: Option<f64>,
    pub crystals: Option<f64>,
    pub formula_units_per_crystal: Option<f64>,
    pub limiting_element: Option<String>,
    pub limiting_reagents: Vec<String>,
    pub limiting_mmol: Option<f64>,
    pub reaction_volume_ml: Option<f64>,
    pub aliquot_id: Option<i64>,
    pub diameter_nm: Option<f64>,
    pub concentration_molar: Option<f64>,
    pub method: String,
    pub warnings: Vec<String>,
}

const YIELD_METHOD: &str =
    "crystals (c · V · N_A) x formula units per crystal (ρ (π/6) D³ N_A / M) over the limiting precursor";

impl ReactionYieldView {
    pub fn none(why: String) -> ReactionYieldView {
        ReactionYieldView {
            yield_fraction: None,
            product_mmol: None,
            crystals: None,
            formula_units_per_crystal: None,
            limiting_element: None,
            limiting_reagents: Vec::new(),
            limiting_mmol: None,
            reaction_volume_ml: None,
            aliquot_id: None,
            diameter_nm: None,
            concentration_molar: None,
            method: YIELD_METHOD.into(),
            warnings: vec![why],
        }
    }
}

/// The pure part of the reaction yield: from the product's diameter and (undiluted)
/// concentration, the reaction volume and the recipe lines.
pub fn reaction_yield_from(
    core: &str,
    diameter_nm: f64,
    concentration_molar: f64,
    lines: &[super::yields::RecipeAmount],
) -> ReactionYieldView {
    let (lim, mut warnings) = match super::yields::limiting_precursor(core, lines) {
        Ok(x) => x,
        Err(e) => return ReactionYieldView::none(e.to_string()),
    };
    let Some(volume) = super::yields::reaction_volume_ml(lines) else {
        return ReactionYieldView::none("the recipe gives no liquid volume (mL): no reaction volume".into());
    };
    warnings.push(format!(
        "reaction volume taken as the recipe's liquids ({volume:.1} mL): expansion when hot and aliquots taken out are not counted"
    ));
    match super::yields::reaction_yield(core, diameter_nm, concentration_molar, volume, lim.formula_units_mmol) {
        Err(e) => ReactionYieldView::none(e.to_string()),
        Ok(y) => {
            if y.yield_fraction > 1.0 {
                warnings.push(format!(
                    "yield {:.0} % is above 100 %: check the concentration (extinction law, dilution) and the recipe amounts",
                    100.0 * y.yield_fraction
                ));
            }
            ReactionYieldView {
                yield_fraction: Some(y.yield_fraction),
                product_mmol: Some(y.product_mmol),
                crystals: Some(y.crystals),
                formula_units_per_crystal: Some(y.formula_units_per_crystal),
                limiting_element: Some(lim.element),
                limiting_reagents: lim.reagents,
                limiting_mmol: Some(lim.formula_units_mmol),
                reaction_volume_ml: Some(volume),
                aliquot_id: None,
                diameter_nm: Some(diameter_nm),
                concentration_molar: Some(concentration_molar),
                method: YIELD_METHOD.into(),
                warnings,
            }
        }
    }
}
