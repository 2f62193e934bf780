//! Stage one: the values that come from the spectra alone, under the analysis settings and, for
//! PL, the detector correction (first exciton, widths, absorbances with the scattering
//! background off, PL peak, width and integral), and the growth series' second look at a first
//! exciton. A change of sizing curve, extinction model or QY reference leaves them as they are.

use super::{Derived, d, trace_of};
use crate::derive::calibration::Calibration;
use crate::derive::series::{self, SecondLook, SeriesHint};
use crate::error::Result;
use crate::spectra::HC_EV_NM;
use crate::spectra::Trace;
use crate::spectra::analysis::{self, AbsResult, PlResult};
use crate::store::model::SpectrumRow;

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
