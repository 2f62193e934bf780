//! Stage two: size, size dispersion, extinction, concentration, Stokes shift and quantum yield,
//! from the stage-one numbers and the calibration. Cheap: no spectrum is read. Each value says
//! what it rests on, and warns where the method is stretched (a shell, a mismatched pairing of
//! curve and extinction law, a scatter correction that cannot be trusted).

use super::{BatchContext, Derived, SpectrumMeta, d, find_value, value_of};
use crate::derive::calibration::Calibration;
use crate::derive::{extinction, qy, sizing, solvents};
use crate::spectra::analysis;
use crate::store::model::AliquotRow;

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
                                    // Why there is none is in `cw` already.
                                    None => None,
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

/// The absorbance an extinction coefficient goes with, and what to say about it: when there is
/// none, the one reason why (refused as untrustworthy, or not measured).
fn absorbance_for(stage1: &[Derived], ex: &extinction::Extinction, peak: f64) -> (Option<f64>, Vec<String>) {
    let mut w = Vec::new();
    let missing = || format!("no absorbance measured at {:.0} nm", ex.at_nm);
    if (ex.at_nm - peak).abs() < 1e-9 {
        let a = value_of(stage1, "first_exciton_abs");
        if a.is_none() {
            w.push(missing());
        }
        return (a, w);
    }
    let (raw_q, corr_q) = if (ex.at_nm - 400.0).abs() < 1e-9 {
        ("abs_400nm", "abs_400nm_corrected")
    } else if (ex.at_nm - 350.0).abs() < 1e-9 {
        ("abs_350nm", "abs_350nm_corrected")
    } else {
        w.push(missing());
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
            } else {
                w.push(missing());
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

#[cfg(test)]
mod tests {
    use super::*;

    fn at_400() -> extinction::Extinction {
        extinction::Extinction {
            model: "test".into(),
            extinction_m1cm1: 1.0e5,
            at_nm: 400.0,
            warnings: vec![],
        }
    }

    /// A concentration refused because the scatter background swallows the absorbance at
    /// 400 nm says so once; it used to add "no absorbance measured at 400 nm", which is false
    /// (the absorbance was measured: 0.611).
    #[test]
    fn a_refused_absorbance_is_not_called_missing() {
        let stage1 = vec![
            super::super::d("abs_400nm", Some(0.611), "absorbance", "measured", vec![]),
            super::super::d("abs_400nm_corrected", Some(-0.098), "absorbance", "corrected", vec![]),
        ];
        let (a, w) = absorbance_for(&stage1, &at_400(), 900.0);
        assert_eq!(a, None);
        assert!(w.iter().any(|x| x.contains("scattering background at 400 nm")), "{w:?}");
        assert!(!w.iter().any(|x| x.contains("no absorbance measured")), "{w:?}");
        // With nothing measured there, that is what is said.
        let (a, w) = absorbance_for(&[], &at_400(), 900.0);
        assert_eq!(a, None);
        assert_eq!(w, vec!["no absorbance measured at 400 nm".to_string()]);
    }
}
