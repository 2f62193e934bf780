//! Series awareness: an aliquot's first exciton read knowing its neighbours in the growth
//! series. Hot-injection crystals grow monotonically through a run (Peng, Wickham & Alivisatos,
//! J. Am. Chem. Soc. 120, 5343 (1998)), so a reading that falls outside the range its two
//! neighbours bracket, while the neighbours agree with each other, is more likely misread than
//! real. Such an aliquot's spectrum is analysed again with that range as the expected region;
//! a transition found there that stands on its own (a Gaussian fit of quality good or poor,
//! chosen by the band-edge search's own significance, width and strength checks) replaces the
//! reading, and the reading as first made is kept beside it. Where nothing there stands on its
//! own, the reading stays and is flagged: a value is never made up from the neighbours.
//!
//! Everything here is pure. Which ranges apply is decided from the readings as first made
//! (never from reassigned ones), so the outcome does not depend on the order aliquots were
//! derived in, and running it again changes nothing.

use super::growth::first_exciton_uncertainty_nm;
use crate::error::Result;
use crate::spectra::Trace;
use crate::spectra::analysis::{self, AbsResult, AnalysisSettings};
use crate::spectra::band_edge::BandEdgeHint;

/// One aliquot of a growth series as first read (not reassigned).
#[derive(Debug, Clone, PartialEq)]
pub struct SeriesPoint {
    pub aliquot_id: i64,
    pub minutes: f64,
    pub first_exciton_nm: f64,
    pub hwhm_nm: Option<f64>,
    pub shoulder: Option<bool>,
}

/// Where an aliquot's neighbours put its first exciton.
#[derive(Debug, Clone, PartialEq)]
pub struct SeriesHint {
    /// The expected range (nm), blue end first.
    pub lo_nm: f64,
    pub hi_nm: f64,
    /// Which neighbours, at which readings: kept as the stored range's method.
    pub basis: String,
}

/// The uncertainty (nm) of a point's reading, as the growth flags judge it.
fn u(p: &SeriesPoint) -> f64 {
    first_exciton_uncertainty_nm(p.hwhm_nm, p.shoulder)
}

/// Two readings' combined tolerance: two standard deviations (as `growth_jumps`).
fn tol(a: &SeriesPoint, b: &SeriesPoint) -> f64 {
    2.0 * u(a).hypot(u(b))
}

/// The aliquots whose reading lies outside the range their neighbours bracket, with that range.
/// An aliquot needs a neighbour on each side, and the two must agree that the crystals grow
/// (the later one not bluer than the earlier beyond their tolerance); the first and last of a
/// series, and a reading between two neighbours that disagree, get none.
pub fn expected_ranges(points: &[SeriesPoint]) -> Vec<(i64, SeriesHint)> {
    let mut pts: Vec<&SeriesPoint> = points.iter().collect();
    pts.sort_by(|a, b| a.minutes.total_cmp(&b.minutes).then(a.aliquot_id.cmp(&b.aliquot_id)));
    let mut out = Vec::new();
    for w in pts.windows(3) {
        let (p, x, s) = (w[0], w[1], w[2]);
        if s.first_exciton_nm < p.first_exciton_nm - tol(p, s) {
            continue;
        }
        let blue = x.first_exciton_nm < p.first_exciton_nm - tol(p, x);
        let red = x.first_exciton_nm > s.first_exciton_nm + tol(x, s);
        if !(blue || red) {
            continue;
        }
        let lo = p.first_exciton_nm.min(s.first_exciton_nm) - 2.0 * u(p);
        let hi = p.first_exciton_nm.max(s.first_exciton_nm) + 2.0 * u(s);
        out.push((
            x.aliquot_id,
            SeriesHint {
                lo_nm: lo,
                hi_nm: hi,
                basis: format!(
                    "the first-exciton range the growth series puts aliquot {} in: between aliquot {} ({:.1} nm at {} min) and aliquot {} ({:.1} nm at {} min), widened by two standard deviations of their readings",
                    x.aliquot_id,
                    p.aliquot_id,
                    p.first_exciton_nm,
                    p.minutes,
                    s.aliquot_id,
                    s.first_exciton_nm,
                    s.minutes
                ),
            },
        ));
    }
    out
}

/// What the second look at an aliquot's spectrum found.
#[derive(Debug, Clone)]
pub enum SecondLook {
    /// A transition inside the expected range that stands on its own: the new reading.
    Reassigned(Box<AbsResult>),
    /// Nothing inside the range stands on its own: the first reading stays, flagged.
    Unsupported(String),
}

/// Analyses `t` again with the expected range of `hint` (and what the material tells the
/// search, `material`) and judges whether what it finds there is evidence. `first` is the
/// reading as first made.
pub fn second_look(
    t: &Trace,
    set: &AnalysisSettings,
    material: &BandEdgeHint,
    first: &AbsResult,
    hint: &SeriesHint,
) -> Result<SecondLook> {
    let from = first.first_exciton_nm.unwrap_or(f64::NAN);
    let unsupported = || {
        SecondLook::Unsupported(format!(
            "the growth series runs through {:.1}-{:.1} nm here, but no feature there stands on its own: the first exciton at {from:.1} nm is kept; check this reading",
            hint.lo_nm, hint.hi_nm
        ))
    };
    let guided = BandEdgeHint {
        material: material.material.clone(),
        expected_nm: Some((hint.lo_nm, hint.hi_nm)),
        bulk_gap_nm: material.bulk_gap_nm,
    };
    let mut r = analysis::analyze_absorbance_with(t, set, &guided)?;
    let Some(edge) = &r.band_edge else {
        return Ok(unsupported());
    };
    let Some(to) = r.first_exciton_nm else {
        return Ok(unsupported());
    };
    // The band-edge search allows its region a margin: the series range is held exactly. A
    // derivative fallback is no fit at all, so no evidence.
    let fitted = edge.method != "second derivative" && matches!(edge.quality, "good" | "poor");
    if !fitted || to < hint.lo_nm || to > hint.hi_nm {
        return Ok(unsupported());
    }
    // The search's note on the feature it passed over says "outside the range the sizing
    // curve covers"; here the range is the series', and the reassignment note names it.
    r.warnings.retain(|w| !w.starts_with("a weaker feature at "));
    r.warnings.insert(
        0,
        format!(
            "first exciton reassigned from {from:.1} nm to {to:.1} nm: the series grows through here ({:.1}-{:.1} nm), and a feature at {to:.1} nm stands on its own ({} band-edge fit); the first reading is kept as first_exciton_as_read_nm",
            hint.lo_nm, hint.hi_nm, edge.quality
        ),
    );
    Ok(SecondLook::Reassigned(Box::new(r)))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(id: i64, minutes: f64, nm: f64) -> SeriesPoint {
        SeriesPoint {
            aliquot_id: id,
            minutes,
            first_exciton_nm: nm,
            hwhm_nm: Some(14.0),
            shoulder: Some(false),
        }
    }

    #[test]
    fn an_outlier_between_agreeing_neighbours_gets_their_range() {
        // 609 nm between 540 and 560 nm: redder than its successor beyond 2 x √2 x 1.4 nm.
        let r = expected_ranges(&[
            p(1, 1.0, 530.0),
            p(2, 2.0, 540.0),
            p(3, 3.0, 609.0),
            p(4, 4.0, 560.0),
            p(5, 5.0, 570.0),
        ]);
        assert_eq!(r.len(), 1, "{r:?}");
        assert_eq!(r[0].0, 3);
        assert!((r[0].1.lo_nm - (540.0 - 2.8)).abs() < 1e-9 && (r[0].1.hi_nm - (560.0 + 2.8)).abs() < 1e-9);
        // Aliquot 4 sits after the outlier: its neighbours (609 and 570 nm) disagree, so it
        // gets no range, though the step 609 -> 560 is the one the growth flags mark.
        let blue = expected_ranges(&[p(1, 1.0, 530.0), p(2, 2.0, 540.0), p(3, 3.0, 520.0), p(4, 4.0, 560.0)]);
        assert_eq!(blue.iter().map(|x| x.0).collect::<Vec<_>>(), vec![3]);
    }

    #[test]
    fn a_steadily_growing_series_and_its_ends_get_none() {
        assert!(expected_ranges(&[p(1, 1.0, 530.0), p(2, 2.0, 540.0), p(3, 3.0, 551.0)]).is_empty());
        // The last aliquot has no successor to vouch for the growth: flagged only.
        assert!(expected_ranges(&[p(1, 1.0, 530.0), p(2, 2.0, 540.0), p(3, 3.0, 500.0)]).is_empty());
    }
}
