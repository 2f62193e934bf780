//! Batch-level values: the growth series (diameter, size dispersion, crystal concentration and
//! PL peak against minutes), the growth rate, the turn from size focusing to defocusing
//! (dispersion falling, then rising: the picture of Peng, Wickham & Alivisatos, J. Am. Chem.
//! Soc. 120, 5343 (1998)), a batch's product values, and the repeatability of a recipe version.
//! Pure: the rows come from the store (`report::aliquot_summary` and `report::recipe_stats`
//! read them) and nothing here runs SQL.

use crate::store::model;
use crate::store::values::StoredValue;
use serde::Serialize;

/// An aliquot with its current derived values, as scripts and screens see it.
#[derive(Debug, Clone, Serialize, Default)]
pub struct AliquotSummary {
    pub id: i64,
    pub minutes: Option<f64>,
    pub stage: Option<String>,
    pub dilution_factor: f64,
    pub path_cm: f64,
    pub solvent: String,
    pub first_exciton_nm: Option<f64>,
    pub first_exciton_abs: Option<f64>,
    pub hwhm_nm: Option<f64>,
    pub shoulder: Option<bool>,
    pub diameter_nm: Option<f64>,
    pub edge_nm: Option<f64>,
    pub size_dispersion_pct: Option<f64>,
    pub extinction_m1cm1: Option<f64>,
    pub concentration_molar: Option<f64>,
    pub pl_peak_nm: Option<f64>,
    pub pl_fwhm_nm: Option<f64>,
    pub pl_integral: Option<f64>,
    pub stokes_shift_mev: Option<f64>,
    pub qy: Option<f64>,
    /// The first exciton as first read, where the growth series reassigned it (see
    /// [`super::series`]); `first_exciton_nm` is then the reassigned reading.
    pub first_exciton_as_read_nm: Option<f64>,
    /// The range (nm) the aliquot's neighbours put its first exciton in, where its own reading
    /// fell outside it.
    pub series_expected_nm: Option<(f64, f64)>,
    /// The sizing curve id behind `diameter_nm`.
    pub curve: Option<String>,
    /// The calibration version behind `diameter_nm` (or the newest of the values).
    pub calibration_version: Option<i64>,
    pub stale: bool,
    /// A voided aliquot stays in the record but counts for nothing (growth, product, search).
    pub voided: bool,
    pub void_why: Option<String>,
    pub warnings: Vec<String>,
    pub spectra: Vec<SpectrumBrief>,
}

#[derive(Debug, Clone, Serialize)]
pub struct SpectrumBrief {
    pub id: i64,
    pub kind: String,
    pub file_name: String,
    pub sha256: String,
    pub excitation_nm: Option<f64>,
}

impl From<model::SpectrumRow> for SpectrumBrief {
    fn from(sp: model::SpectrumRow) -> Self {
        SpectrumBrief {
            id: sp.id,
            kind: sp.kind,
            file_name: sp.file_name,
            sha256: sp.sha256,
            excitation_nm: sp.excitation_nm,
        }
    }
}

/// An aliquot with its current values `vals` and its spectra, as scripts and screens see it.
pub fn summarise(a: &model::AliquotRow, vals: &[StoredValue], spectra: Vec<SpectrumBrief>) -> AliquotSummary {
    let mut s = AliquotSummary {
        id: a.id,
        minutes: a.minutes,
        stage: a.stage.clone(),
        dilution_factor: a.dilution_factor,
        path_cm: a.path_cm,
        solvent: a.solvent.clone(),
        voided: a.voided,
        void_why: a.void_why.clone(),
        ..Default::default()
    };
    for v in vals {
        let x = v.value;
        match v.quantity.as_str() {
            "first_exciton_nm" => s.first_exciton_nm = x,
            "first_exciton_abs" => s.first_exciton_abs = x,
            "hwhm_nm" => s.hwhm_nm = x,
            "shoulder" => s.shoulder = x.map(|f| f > 0.5),
            "diameter_nm" => {
                s.diameter_nm = x;
                s.curve = Some(v.method.clone());
                s.calibration_version = Some(v.calibration_version);
            }
            "edge_nm" => s.edge_nm = x,
            "size_dispersion_pct" => s.size_dispersion_pct = x,
            "extinction_m1cm1" => s.extinction_m1cm1 = x,
            "concentration_molar" => s.concentration_molar = x,
            "pl_peak_nm" => s.pl_peak_nm = x,
            "pl_fwhm_nm" => s.pl_fwhm_nm = x,
            "pl_integral" => s.pl_integral = x,
            "stokes_shift_mev" => s.stokes_shift_mev = x,
            "qy" => s.qy = x,
            "first_exciton_as_read_nm" => s.first_exciton_as_read_nm = x,
            "series_expected_lo_nm" => {
                s.series_expected_nm = x.map(|lo| (lo, s.series_expected_nm.map_or(f64::NAN, |r| r.1)))
            }
            "series_expected_hi_nm" => {
                s.series_expected_nm = x.map(|hi| (s.series_expected_nm.map_or(f64::NAN, |r| r.0), hi))
            }
            _ => {}
        }
        s.stale |= v.stale;
        for w in &v.warnings {
            if !s.warnings.contains(w) {
                s.warnings.push(w.clone());
            }
        }
    }
    if s.calibration_version.is_none() {
        s.calibration_version = vals.iter().map(|v| v.calibration_version).max();
    }
    s.spectra = spectra;
    s
}

#[derive(Debug, Clone, Serialize)]
pub struct Growth {
    /// nm of diameter per minute between the last two timed aliquots.
    pub growth_rate_nm_per_min: Option<f64>,
    /// Least-squares slope of diameter against minutes over the whole series.
    pub mean_growth_rate_nm_per_min: Option<f64>,
    /// "focusing", "defocusing", "focusing then defocusing" or "too few points".
    pub regime: String,
    /// Minutes at which size dispersion stopped falling and began to rise.
    pub focusing_turn_min: Option<f64>,
    /// The calibration version the growth picture is computed under: only aliquots sized under
    /// the newest version in the series are used, so a rate never mixes two sizing curves.
    pub calibration_version: Option<i64>,
    /// Some aliquots were sized under another version and were left out (recompute them).
    pub mixed_calibrations: bool,
    /// Some of the values used are stale.
    pub stale: bool,
    /// Aliquots whose first exciton moves blue, against the growth, by more than the two
    /// readings' uncertainty: the crystals did not shrink; one of the two is misread (a
    /// shoulder taken for a peak, a dilution error) and is worth a look.
    pub jumps: Vec<Jump>,
    /// Aliquots whose first exciton the series reassigned: the reading as first made, the one
    /// that replaced it and the range the neighbours gave.
    pub reassigned: Vec<Reassigned>,
    /// Aliquots read outside the range their neighbours give with nothing there to take
    /// instead: kept as read, worth a look.
    pub unsupported: Vec<Reassigned>,
}

/// A first exciton the growth series looked at twice.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Reassigned {
    pub aliquot_id: i64,
    pub minutes: Option<f64>,
    /// The reading as first made.
    pub as_read_nm: Option<f64>,
    /// The reading now used (the same as `as_read_nm` when unsupported).
    pub first_exciton_nm: Option<f64>,
    pub expected_lo_nm: f64,
    pub expected_hi_nm: f64,
}

/// A first exciton that moved against the growth direction.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Jump {
    pub aliquot_id: i64,
    pub minutes: f64,
    pub from_nm: f64,
    pub to_nm: f64,
    /// The uncertainty the move was judged against (nm, two standard deviations combined).
    pub tolerance_nm: f64,
}

/// One reading's uncertainty of the first exciton (nm): a tenth of its half width, at least
/// 1 nm, doubled for a shoulder (common practice for a fitted centre on real spectra; the
/// fit's own standard deviation is usually smaller and too optimistic on real lineshapes).
pub(crate) fn first_exciton_uncertainty_nm(hwhm_nm: Option<f64>, shoulder: Option<bool>) -> f64 {
    let base = hwhm_nm.map(|h| 0.1 * h).unwrap_or(2.0).max(1.0);
    if shoulder == Some(true) { 2.0 * base } else { base }
}

fn uncertainty_of(a: &AliquotSummary) -> f64 {
    first_exciton_uncertainty_nm(a.hwhm_nm, a.shoulder)
}

/// First excitons that step blue against the growth by more than their uncertainty.
pub fn growth_jumps(timed: &[&AliquotSummary]) -> Vec<Jump> {
    let mut pts: Vec<&AliquotSummary> = timed
        .iter()
        .copied()
        .filter(|a| a.minutes.is_some() && a.first_exciton_nm.is_some())
        .collect();
    pts.sort_by(|a, b| a.minutes.unwrap_or(0.0).total_cmp(&b.minutes.unwrap_or(0.0)));
    let mut out = Vec::new();
    for w in pts.windows(2) {
        let (a, b) = (w[0], w[1]);
        let (Some(pa), Some(pb), Some(t)) = (a.first_exciton_nm, b.first_exciton_nm, b.minutes) else {
            continue;
        };
        let tol = 2.0 * uncertainty_of(a).hypot(uncertainty_of(b));
        if pb < pa - tol {
            out.push(Jump {
                aliquot_id: b.id,
                minutes: t,
                from_nm: pa,
                to_nm: pb,
                tolerance_nm: tol,
            });
        }
    }
    out
}

/// The growth picture from the timed aliquots that are not void, sized under one calibration
/// version (the newest in the series; aliquots of older versions are left out and marked).
pub fn growth(series: &[AliquotSummary]) -> Growth {
    let live: Vec<&AliquotSummary> = series.iter().filter(|a| a.minutes.is_some() && !a.voided).collect();
    let version = live
        .iter()
        .filter(|a| a.diameter_nm.is_some())
        .filter_map(|a| a.calibration_version)
        .max();
    let mixed = live
        .iter()
        .any(|a| a.diameter_nm.is_some() && a.calibration_version != version);
    let timed: Vec<&AliquotSummary> = live
        .into_iter()
        .filter(|a| a.diameter_nm.is_none() || a.calibration_version == version)
        .collect();
    let stale = timed.iter().any(|a| a.stale);
    let dpts: Vec<(f64, f64)> = timed
        .iter()
        .filter_map(|a| Some((a.minutes?, a.diameter_nm?)))
        .collect();
    let rate = if dpts.len() >= 2 {
        let (t0, d0) = dpts[dpts.len() - 2];
        let (t1, d1) = dpts[dpts.len() - 1];
        (t1 > t0).then(|| (d1 - d0) / (t1 - t0))
    } else {
        None
    };
    let mean = super::qy::linear_fit(&dpts).ok().map(|f| f.0);
    let disp: Vec<(f64, f64)> = timed
        .iter()
        .filter_map(|a| Some((a.minutes?, a.size_dispersion_pct?)))
        .collect();
    // A change smaller than the readings' uncertainty is not a trend: at least 0.25 points of
    // σ/D (common practice, no source) and a tenth of the value, which is what a 10 % width
    // uncertainty carries into the dispersion.
    let margin = |a: f64, b: f64| (0.1 * a.max(b)).max(0.25);
    let (regime, turn) = if disp.len() < 3 {
        ("too few points".to_string(), None)
    } else {
        let (imin, _) = disp
            .iter()
            .enumerate()
            .fold((0, f64::MAX), |acc, (i, p)| if p.1 < acc.1 { (i, p.1) } else { acc });
        let fell = disp[0].1 - disp[imin].1 > margin(disp[0].1, disp[imin].1);
        let last = disp[disp.len() - 1].1;
        let rose = last - disp[imin].1 > margin(last, disp[imin].1);
        match (fell, rose) {
            (true, true) => ("focusing then defocusing".to_string(), Some(disp[imin].0)),
            (true, false) => ("focusing".to_string(), None),
            (false, true) => ("defocusing".to_string(), None),
            (false, false) => ("steady".to_string(), None),
        }
    };
    Growth {
        growth_rate_nm_per_min: rate,
        mean_growth_rate_nm_per_min: mean,
        regime,
        focusing_turn_min: turn,
        calibration_version: version,
        mixed_calibrations: mixed,
        stale,
        jumps: growth_jumps(&timed),
        reassigned: second_looks(&timed, true),
        unsupported: second_looks(&timed, false),
    }
}

/// The aliquots the series looked at twice: those reassigned (`reassigned`) or kept as read.
fn second_looks(timed: &[&AliquotSummary], reassigned: bool) -> Vec<Reassigned> {
    timed
        .iter()
        .filter_map(|a| {
            let (lo, hi) = a.series_expected_nm?;
            (a.first_exciton_as_read_nm.is_some() == reassigned).then(|| Reassigned {
                aliquot_id: a.id,
                minutes: a.minutes,
                as_read_nm: a.first_exciton_as_read_nm.or(a.first_exciton_nm),
                first_exciton_nm: a.first_exciton_nm,
                expected_lo_nm: lo,
                expected_hi_nm: hi,
            })
        })
        .collect()
}

#[derive(Debug, Clone, Serialize)]
pub struct Spread {
    pub n: usize,
    pub mean: f64,
    pub sd: Option<f64>,
}

fn spread(v: &[f64]) -> Option<Spread> {
    if v.is_empty() {
        return None;
    }
    let n = v.len();
    let mean = v.iter().sum::<f64>() / n as f64;
    let sd = (n > 1).then(|| (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt());
    Some(Spread { n, mean, sd })
}

#[derive(Debug, Clone, Serialize)]
pub struct RecipeStats {
    pub recipe: String,
    pub version: i64,
    pub batches: usize,
    pub diameter_nm: Option<Spread>,
    pub size_dispersion_pct: Option<Spread>,
    pub pl_peak_nm: Option<Spread>,
    pub qy: Option<Spread>,
    pub failed: usize,
}

/// Whether a batch counts as failed for a recipe's repeatability (its aliquots are then not
/// looked at).
pub fn failed(b: &model::BatchRow) -> bool {
    b.status == crate::vocab::BatchStatus::Failed
}

/// How repeatable a recipe version is: mean and spread of its batches' product values, from
/// each batch with its product aliquot (chosen by the store's one product rule; none needed for
/// a [`failed`] batch).
pub fn recipe_stats(
    recipe: String,
    version: i64,
    batches: &[(model::BatchRow, Option<AliquotSummary>)],
) -> RecipeStats {
    let (mut d, mut s, mut p, mut q) = (vec![], vec![], vec![], vec![]);
    let mut failed_n = 0;
    for (b, product) in batches {
        if failed(b) {
            failed_n += 1;
            continue;
        }
        if let Some(prod) = product {
            d.extend(prod.diameter_nm);
            s.extend(prod.size_dispersion_pct);
            p.extend(prod.pl_peak_nm);
            q.extend(prod.qy);
        }
    }
    RecipeStats {
        recipe,
        version,
        batches: batches.len(),
        diameter_nm: spread(&d),
        size_dispersion_pct: spread(&s),
        pl_peak_nm: spread(&p),
        qy: spread(&q),
        failed: failed_n,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn point(id: i64, minutes: f64, d: f64, disp: f64) -> AliquotSummary {
        AliquotSummary {
            id,
            minutes: Some(minutes),
            diameter_nm: Some(d),
            size_dispersion_pct: Some(disp),
            ..Default::default()
        }
    }

    // The focusing/defocusing picture of Peng, Wickham & Alivisatos (1998): the dispersion falls
    // while the crystals grow fast, then rises once the growth slows (Ostwald ripening).
    #[test]
    fn focusing_then_defocusing_turns_at_the_narrowest_point() {
        let s = vec![
            point(1, 1.0, 2.0, 12.0),
            point(2, 3.0, 2.6, 8.0),
            point(3, 6.0, 3.0, 6.5),
            point(4, 10.0, 3.2, 9.0),
        ];
        let g = growth(&s);
        assert_eq!(g.regime, "focusing then defocusing");
        assert_eq!(g.focusing_turn_min, Some(6.0));
        assert!(
            (g.growth_rate_nm_per_min.unwrap() - 0.05).abs() < 1e-12,
            "last step: 0.2 nm in 4 min"
        );
        let f = growth(&s[..3]);
        assert_eq!(f.regime, "focusing");
        assert_eq!(growth(&s[..2]).regime, "too few points");
    }
}
