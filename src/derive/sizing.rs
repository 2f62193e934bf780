//! Sizing curves: diameter from the first-exciton wavelength, each with its source, its
//! validity range and its slope (for size dispersion). Outside a curve's range the value is
//! still given, with a warning; it is never silently extrapolated.

use crate::error::{Result, invalid};
use crate::spectra::HC_EV_NM;
use serde::{Deserialize, Serialize};

/// What a sizing curve gives for one peak.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Sizing {
    pub diameter_nm: f64,
    /// InP (Almeida 2023) sizes tetrahedra by edge length; the diameter is the sphere of equal
    /// volume.
    pub edge_nm: Option<f64>,
    pub curve: String,
    /// Diameters over which the curve was fitted.
    pub valid_range_nm: [f64; 2],
    /// dD/dλ at the peak, nm of diameter per nm of wavelength.
    pub slope: f64,
    pub warnings: Vec<String>,
}

/// Bulk parameters for the effective-mass model, with their source.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct BulkParams {
    pub eg_ev: f64,
    /// Electron and hole effective masses in units of the free-electron mass.
    pub me: f64,
    pub mh: f64,
    /// Relative static permittivity.
    pub eps_r: f64,
    pub source: String,
}

/// Bulk values from memory of common textbook tables (check before relying on them).
pub fn default_bulk(core: &str) -> Option<BulkParams> {
    let (eg, me, mh, eps) = match core {
        "CdSe" => (1.74, 0.13, 0.45, 10.6),
        "CdS" => (2.42, 0.21, 0.80, 8.9),
        "CdTe" => (1.50, 0.10, 0.40, 10.2),
        "PbS" => (0.41, 0.085, 0.085, 17.2),
        "PbSe" => (0.278, 0.047, 0.041, 22.9),
        "InP" => (1.34, 0.077, 0.64, 12.5),
        "ZnSe" => (2.70, 0.21, 0.60, 9.1),
        _ => return None,
    };
    Some(BulkParams {
        eg_ev: eg,
        me,
        mh,
        eps_r: eps,
        source: "textbook bulk values, from memory".into(),
    })
}

/// A curve the lab can choose.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Curve {
    Yu2003,
    Jasieniak2009,
    Moreels2009,
    Moreels2007,
    Almeida2023,
    Brus,
}

pub const CURVE_IDS: &[&str] = &[
    "yu2003",
    "jasieniak2009",
    "moreels2009",
    "moreels2007",
    "almeida2023",
    "brus",
];

impl Curve {
    pub fn parse(id: &str) -> Result<Curve> {
        Ok(match id.to_ascii_lowercase().as_str() {
            "yu2003" => Curve::Yu2003,
            "jasieniak2009" => Curve::Jasieniak2009,
            "moreels2009" => Curve::Moreels2009,
            "moreels2007" => Curve::Moreels2007,
            "almeida2023" => Curve::Almeida2023,
            "brus" => Curve::Brus,
            _ => return invalid(format!("unknown curve '{id}' (use one of {})", CURVE_IDS.join(", "))),
        })
    }
    pub fn id(self) -> &'static str {
        match self {
            Curve::Yu2003 => "yu2003",
            Curve::Jasieniak2009 => "jasieniak2009",
            Curve::Moreels2009 => "moreels2009",
            Curve::Moreels2007 => "moreels2007",
            Curve::Almeida2023 => "almeida2023",
            Curve::Brus => "brus",
        }
    }
    pub fn source(self) -> &'static str {
        match self {
            Curve::Yu2003 => "Yu, Qu, Guo & Peng, Chem. Mater. 15, 2854 (2003)",
            Curve::Jasieniak2009 => {
                "Jasieniak, Smith, van Embden, Mulvaney & Califano, J. Phys. Chem. C 113, 19468 (2009)"
            }
            Curve::Moreels2009 => "Moreels et al., ACS Nano 3, 3023 (2009), Eq. 4",
            Curve::Moreels2007 => "Moreels et al., Chem. Mater. 19, 6101 (2007)",
            Curve::Almeida2023 => "Almeida et al., Nano Lett. 23, 8697 (2023)",
            Curve::Brus => "Brus, J. Chem. Phys. 80, 4403 (1984), with Kayanuma, Phys. Rev. B 38, 9797 (1988)",
        }
    }
    /// The materials (cores) a curve was made for; brus takes any with bulk parameters.
    pub fn materials(self) -> &'static [&'static str] {
        match self {
            Curve::Yu2003 => &["CdSe", "CdTe", "CdS"],
            Curve::Jasieniak2009 => &["CdSe"],
            Curve::Moreels2009 => &["PbS"],
            Curve::Moreels2007 => &["PbSe"],
            Curve::Almeida2023 => &["InP"],
            Curve::Brus => &[],
        }
    }
    /// Diameter (or, for InP, edge) range over which the curve holds.
    pub fn valid_range_nm(self, core: &str) -> [f64; 2] {
        match (self, core) {
            // The paper states no range we could confirm; its fits cover about 1.5-8 nm
            // (from memory).
            (Curve::Yu2003, _) => [1.5, 8.0],
            // As quoted by public analysis scripts for this curve.
            (Curve::Jasieniak2009, _) => [2.0, 8.0],
            // Sizes measured in the papers, from memory.
            (Curve::Moreels2009, _) => [2.8, 10.0],
            (Curve::Moreels2007, _) => [2.5, 12.0],
            // Tetrahedron edge lengths of the crystals in Almeida et al. 2023: about 1.5-4.1 nm
            // (first exciton about 460-620 nm), digitised from the paper's figure, not read
            // from a table.
            (Curve::Almeida2023, _) => [1.5, 4.1],
            // Confinement is strong below about the Bohr diameter; the model is rough anyway.
            (Curve::Brus, _) => [2.0, 10.0],
        }
    }
}

/// The curves available for a core material.
pub fn curves_for(core: &str) -> Vec<&'static str> {
    let mut v: Vec<&'static str> = [
        Curve::Yu2003,
        Curve::Jasieniak2009,
        Curve::Moreels2009,
        Curve::Moreels2007,
        Curve::Almeida2023,
    ]
    .iter()
    .filter(|c| c.materials().contains(&core))
    .map(|c| c.id())
    .collect();
    if default_bulk(core).is_some() {
        v.push("brus");
    }
    v
}

/// The curve a fresh lab uses for each core.
pub fn default_curve(core: &str) -> Option<&'static str> {
    match core {
        "CdSe" | "CdTe" | "CdS" => Some("yu2003"),
        "PbS" => Some("moreels2009"),
        "PbSe" => Some("moreels2007"),
        "InP" => Some("almeida2023"),
        _ if default_bulk(core).is_some() => Some("brus"),
        _ => None,
    }
}

/// Yu 2003 polynomials (coefficients from memory of the paper), D in nm for λ in nm.
pub fn yu2003_diameter_nm(core: &str, l: f64) -> Result<f64> {
    Ok(match core {
        "CdSe" => 1.6122e-9 * l.powi(4) - 2.6575e-6 * l.powi(3) + 1.6242e-3 * l * l - 0.4277 * l + 41.57,
        "CdTe" => 9.8127e-7 * l.powi(3) - 1.7147e-3 * l * l + 1.0064 * l - 194.84,
        "CdS" => -6.6521e-8 * l.powi(3) + 1.9557e-4 * l * l - 9.2352e-2 * l + 13.29,
        _ => return invalid(format!("yu2003 has no curve for {core} (it covers CdSe, CdTe, CdS)")),
    })
}

/// Jasieniak 2009, CdSe: D in nm for λ in nm.
pub fn jasieniak2009_diameter_nm(l: f64) -> f64 {
    59.60816 - 0.54736 * l + 1.8873e-3 * l * l - 2.85743e-6 * l.powi(3) + 1.62974e-9 * l.powi(4)
}

/// Moreels 2009, PbS, Eq. 4: E0 = 0.41 + 1/(0.0252 d² + 0.283 d) eV.
pub fn moreels2009_gap_ev(d: f64) -> f64 {
    0.41 + 1.0 / (0.0252 * d * d + 0.283 * d)
}

/// Moreels 2007, PbSe: E0 = 0.278 + 1/(0.016 d² + 0.209 d + 0.45) eV.
pub fn moreels2007_gap_ev(d: f64) -> f64 {
    0.278 + 1.0 / (0.016 * d * d + 0.209 * d + 0.45)
}

/// Almeida 2023, InP: E(1S) = 1.33 + 9.128 L^-0.684 eV with L the tetrahedron edge in Å.
pub fn almeida2023_gap_ev(edge_angstrom: f64) -> f64 {
    1.33 + 9.128 * edge_angstrom.powf(-0.684)
}

/// Diameter of the sphere with the volume of a regular tetrahedron of edge `edge`:
/// V = a³/(6√2) = (π/6) d³, so d = a (1/(√2 π))^(1/3).
pub fn tetrahedron_equivalent_diameter(edge: f64) -> f64 {
    edge * (1.0 / (std::f64::consts::SQRT_2 * std::f64::consts::PI)).cbrt()
}

/// Brus effective-mass gap with Kayanuma's Coulomb coefficient and correlation term:
/// E = Eg + (ħ²π²/2R²)(1/me + 1/mh) - 1.786 e²/(4πε0 εr R) - 0.248 E*Ry.
pub fn brus_gap_ev(d_nm: f64, b: &BulkParams) -> f64 {
    // ħ²/(2 m0) = 0.0380998 eV nm² (CODATA), e²/(4πε0) = 1.439964 eV nm, Ry = 13.605693 eV.
    let r = d_nm / 2.0;
    let confinement = 0.0380998 * std::f64::consts::PI.powi(2) / (r * r) * (1.0 / b.me + 1.0 / b.mh);
    let coulomb = 1.786 * 1.439964 / (b.eps_r * r);
    let mu = b.me * b.mh / (b.me + b.mh);
    let rydberg = 13.605693 * mu / (b.eps_r * b.eps_r);
    b.eg_ev + confinement - coulomb - 0.248 * rydberg
}

/// Inverts a gap that falls monotonically with size, by bisection over `lo..hi` nm.
fn invert_gap(gap_ev: f64, lo: f64, hi: f64, f: impl Fn(f64) -> f64) -> Option<f64> {
    let (mut a, mut b) = (lo, hi);
    if !(f(b) <= gap_ev && gap_ev <= f(a)) {
        return None;
    }
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        if f(m) > gap_ev { a = m } else { b = m }
    }
    Some(0.5 * (a + b))
}

fn diameter_raw(curve: Curve, core: &str, peak_nm: f64, bulk: Option<&BulkParams>) -> Result<(f64, Option<f64>)> {
    let e = HC_EV_NM / peak_nm;
    let none = |what: &str| {
        invalid::<(f64, Option<f64>)>(format!(
            "peak at {peak_nm:.1} nm ({e:.3} eV) is beyond what {what} can size"
        ))
    };
    match curve {
        Curve::Yu2003 => Ok((yu2003_diameter_nm(core, peak_nm)?, None)),
        Curve::Jasieniak2009 => Ok((jasieniak2009_diameter_nm(peak_nm), None)),
        Curve::Moreels2009 => {
            if e <= 0.41 {
                return none("moreels2009 (bulk PbS gap 0.41 eV)");
            }
            // Solve 0.0252 d² + 0.283 d = 1/(E-0.41).
            let k = 1.0 / (e - 0.41);
            Ok((
                (-0.283 + (0.283f64.powi(2) + 4.0 * 0.0252 * k).sqrt()) / (2.0 * 0.0252),
                None,
            ))
        }
        Curve::Moreels2007 => {
            if e <= 0.278 {
                return none("moreels2007 (bulk PbSe gap 0.278 eV)");
            }
            let k = 1.0 / (e - 0.278) - 0.45;
            if k <= 0.0 {
                return none("moreels2007");
            }
            Ok((
                (-0.209 + (0.209f64.powi(2) + 4.0 * 0.016 * k).sqrt()) / (2.0 * 0.016),
                None,
            ))
        }
        Curve::Almeida2023 => {
            if e <= 1.33 {
                return none("almeida2023 (1.33 eV limit)");
            }
            let edge_a = (9.128 / (e - 1.33)).powf(1.0 / 0.684);
            let edge_nm = edge_a / 10.0;
            Ok((tetrahedron_equivalent_diameter(edge_nm), Some(edge_nm)))
        }
        Curve::Brus => {
            let b =
                bulk.ok_or_else(|| crate::error::Error::Invalid(format!("brus needs bulk parameters for {core}")))?;
            match invert_gap(e, 0.5, 100.0, |d| brus_gap_ev(d, b)) {
                Some(d) => Ok((d, None)),
                None => none("the effective-mass model with these bulk parameters"),
            }
        }
    }
}

/// Sizes a crystal of `core` from its first-exciton peak with `curve`.
pub fn size(curve_id: &str, core: &str, peak_nm: f64, bulk: Option<&BulkParams>) -> Result<Sizing> {
    if !peak_nm.is_finite() || peak_nm <= 0.0 {
        return invalid(format!(
            "peak wavelength must be a positive number of nm, got {peak_nm}"
        ));
    }
    let curve = Curve::parse(curve_id)?;
    if curve != Curve::Brus && !curve.materials().contains(&core) {
        return invalid(format!(
            "curve {} is for {}, not {core} (curves for {core}: {})",
            curve.id(),
            curve.materials().join(", "),
            curves_for(core).join(", ")
        ));
    }
    let default_bulk_params = default_bulk(core);
    let bulk = bulk.or(default_bulk_params.as_ref());
    let (d, edge) = diameter_raw(curve, core, peak_nm, bulk)?;
    let h = 0.5;
    let slope = match (
        diameter_raw(curve, core, peak_nm + h, bulk),
        diameter_raw(curve, core, peak_nm - h, bulk),
    ) {
        (Ok((a, _)), Ok((b, _))) => (a - b) / (2.0 * h),
        _ => f64::NAN,
    };
    let range = curve.valid_range_nm(core);
    let mut warnings = Vec::new();
    let sized = edge.unwrap_or(d);
    if !(range[0]..=range[1]).contains(&sized) {
        warnings.push(format!(
            "{} {sized:.2} nm is outside {}'s range {:.1}-{:.1} nm: extrapolated",
            if edge.is_some() { "edge" } else { "diameter" },
            curve.id(),
            range[0],
            range[1]
        ));
    }
    if !(slope > 0.0) {
        warnings.push(format!(
            "{} is not increasing at {peak_nm:.1} nm: the size is not reliable",
            curve.id()
        ));
    }
    if curve == Curve::Brus {
        warnings.push("effective-mass model: a rough estimate that overestimates the gap of small crystals".into());
    }
    Ok(Sizing {
        diameter_nm: d,
        edge_nm: edge,
        curve: curve.id().into(),
        valid_range_nm: range,
        slope,
        warnings,
    })
}

/// Size dispersion from the width of the first transition.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Dispersion {
    /// σ/D in per cent: an estimate, since the measured width holds more than the size spread.
    pub sigma_over_d_pct: f64,
    /// The width that was converted, after any homogeneous part was taken out (eV, HWHM).
    pub inhomogeneous_hwhm_ev: f64,
    /// The homogeneous HWHM subtracted in quadrature (eV), when the calibration sets one.
    pub homogeneous_hwhm_ev: Option<f64>,
    /// dD/dE at the peak, nm per eV.
    pub slope_nm_per_ev: f64,
    pub warnings: Vec<String>,
}

/// Below this |d ln D / d ln E| a sizing curve is flatter than any confinement law: with
/// E - Eg ∝ D^-n and n at most 2, |d ln D / d ln E| = E / (n (E - Eg)) is above 1/2.
pub const FLAT_ELASTICITY: f64 = 0.5;

/// σ/D from the first transition's low-energy HWHM (`hwhm_ev`, in energy) through the sizing
/// curve's slope, assuming a Gaussian (σ_E = HWHM / √(2 ln 2)) and σ_D = |dD/dE| σ_E (common
/// practice). `homogeneous_hwhm_ev`, when given, is taken out in quadrature first:
/// HWHM_inh = √(HWHM² - HWHM_hom²). `diameter_at` sizes a peak wavelength with the same curve.
/// The result is an estimate, not a bound: the width also holds homogeneous broadening (which
/// the optional subtraction only models) and any fit error in the first transition's width.
pub fn size_dispersion(
    peak_nm: f64,
    hwhm_ev: f64,
    homogeneous_hwhm_ev: Option<f64>,
    diameter_at: &dyn Fn(f64) -> Option<f64>,
) -> Result<Dispersion> {
    if !(peak_nm > 0.0 && peak_nm.is_finite() && hwhm_ev > 0.0 && hwhm_ev.is_finite()) {
        return invalid(format!(
            "size dispersion needs a peak and a positive width (got {peak_nm} nm, {hwhm_ev} eV)"
        ));
    }
    let mut warnings = Vec::new();
    let inh = match homogeneous_hwhm_ev {
        Some(h) if h >= hwhm_ev => {
            return invalid(format!(
                "the homogeneous HWHM {:.0} meV is as wide as the measured {:.0} meV: no size spread left to convert",
                h * 1000.0,
                hwhm_ev * 1000.0
            ));
        }
        Some(h) if h > 0.0 => (hwhm_ev * hwhm_ev - h * h).sqrt(),
        _ => hwhm_ev,
    };
    let e = HC_EV_NM / peak_nm;
    let d0 = diameter_at(peak_nm)
        .ok_or_else(|| crate::error::Error::Invalid(format!("the curve cannot size {peak_nm:.1} nm")))?;
    // dD/dE by a central difference of a few meV; the slope at the two half-maximum points
    // tells whether one slope holds across the peak.
    let slope_e = |e0: f64| -> Option<f64> {
        let h = 0.002;
        let a = diameter_at(HC_EV_NM / (e0 - h))?;
        let b = diameter_at(HC_EV_NM / (e0 + h))?;
        Some((b - a) / (2.0 * h))
    };
    let s0 =
        slope_e(e).ok_or_else(|| crate::error::Error::Invalid(format!("the curve has no slope at {peak_nm:.1} nm")))?;
    if !(s0 < 0.0) {
        return invalid(format!(
            "the curve does not shrink with energy at {peak_nm:.1} nm: no size dispersion from its slope"
        ));
    }
    let elasticity = (s0 * e / d0).abs();
    if elasticity < FLAT_ELASTICITY {
        warnings.push(format!(
            "the sizing curve is locally flat at {peak_nm:.1} nm (|dlnD/dlnE| {elasticity:.2}, flatter than any confinement law): σ/D from the width is unreliable here"
        ));
    }
    if let (Some(lo), Some(hi)) = (slope_e(e - inh), slope_e(e + inh)) {
        let (a, b) = (lo.abs().min(hi.abs()), lo.abs().max(hi.abs()));
        if a < 0.5 * b {
            warnings.push(format!(
                "the sizing curve's slope changes more than twofold across the peak ({:.1}-{:.1} nm per eV): one slope converts the width roughly",
                a, b
            ));
        }
    }
    let sigma_e = inh / (2.0 * 2f64.ln()).sqrt();
    Ok(Dispersion {
        sigma_over_d_pct: 100.0 * s0.abs() * sigma_e / d0,
        inhomogeneous_hwhm_ev: inh,
        homogeneous_hwhm_ev: homogeneous_hwhm_ev.filter(|h| *h > 0.0),
        slope_nm_per_ev: s0,
        warnings,
    })
}

/// Checks that a curve is monotonic (increasing size with wavelength) over its validity range;
/// a calibration that would use a non-monotonic curve is refused.
pub fn check_monotonic(curve_id: &str, core: &str, bulk: Option<&BulkParams>) -> Result<()> {
    let curve = Curve::parse(curve_id)?;
    let range = curve.valid_range_nm(core);
    let mut prev: Option<f64> = None;
    // Walk the gap from large to small crystals through the peak wavelengths they give.
    let (lo_nm, hi_nm) = peak_range_nm(curve, core, bulk).ok_or_else(|| {
        crate::error::Error::Invalid(format!("curve {curve_id} cannot size {core} over {range:?} nm"))
    })?;
    for i in 0..=200 {
        let l = lo_nm + (hi_nm - lo_nm) * i as f64 / 200.0;
        let (d, _) = diameter_raw(curve, core, l, bulk)?;
        if let Some(p) = prev
            && d < p - 1e-9
        {
            return invalid(format!("curve {curve_id} is not monotonic for {core} near {l:.0} nm"));
        }
        prev = Some(d);
    }
    Ok(())
}

/// The first-exciton wavelengths that correspond to a curve's validity range.
pub fn peak_range_nm(curve: Curve, core: &str, bulk: Option<&BulkParams>) -> Option<(f64, f64)> {
    let range = curve.valid_range_nm(core);
    let default_bulk_params = default_bulk(core);
    let bulk = bulk.or(default_bulk_params.as_ref());
    let sized = |l: f64| diameter_raw(curve, core, l, bulk).ok().map(|(d, e)| e.unwrap_or(d));
    let find = |target: f64| -> Option<f64> {
        // Scan 200-3500 nm in 2 nm steps for the first bracket, then bisect.
        let mut prev: Option<(f64, f64)> = None;
        let mut bracket = None;
        let mut l = 200.0;
        while l < 3500.0 {
            if let Some(v) = sized(l) {
                if let Some((pl, pv)) = prev
                    && (pv - target) * (v - target) <= 0.0
                    && v >= pv
                {
                    bracket = Some((pl, l));
                    break;
                }
                prev = Some((l, v));
            }
            l += 2.0;
        }
        let (mut a, mut b) = bracket?;
        let s0 = sized(a)? - target;
        for _ in 0..100 {
            let m = 0.5 * (a + b);
            let sm = sized(m)? - target;
            if sm * s0 > 0.0 { a = m } else { b = m }
        }
        Some(0.5 * (a + b))
    };
    Some((find(range[0])?, find(range[1])?))
}
