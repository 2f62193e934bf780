//! Series awareness (issue 12, point 3): a first exciton that steps blue against the growth by
//! more than its uncertainty is flagged, and the focusing verdict is not drawn from changes
//! below the readings' uncertainty. The series are invented; the physics is that hot-injection
//! crystals grow monotonically (Peng, Wickham & Alivisatos, J. Am. Chem. Soc. 120, 5343 (1998)).

use cuvette::derive::growth::{AliquotSummary, growth};

fn aliquot(id: i64, minutes: f64, peak: f64, hwhm: f64, disp: f64, shoulder: bool) -> AliquotSummary {
    AliquotSummary {
        id,
        minutes: Some(minutes),
        first_exciton_nm: Some(peak),
        hwhm_nm: Some(hwhm),
        shoulder: Some(shoulder),
        diameter_nm: Some(peak / 150.0),
        size_dispersion_pct: Some(disp),
        calibration_version: Some(1),
        ..Default::default()
    }
}

#[test]
fn a_first_exciton_that_steps_blue_while_the_crystals_grow_is_flagged() {
    // A shoulder read at 540 nm, then a resolved peak read 14 nm bluer at the next aliquot:
    // the jump of the kind issue 12 describes (10-19 nm blue on the change to a resolved peak).
    let series = vec![
        aliquot(1, 1.0, 530.0, 14.0, 9.0, true),
        aliquot(2, 2.0, 540.0, 14.0, 8.5, true),
        aliquot(3, 4.0, 526.0, 13.0, 8.0, false),
        aliquot(4, 8.0, 552.0, 13.0, 7.8, false),
    ];
    let g = growth(&series);
    assert_eq!(g.jumps.len(), 1, "{:?}", g.jumps);
    assert_eq!(g.jumps[0].aliquot_id, 3);
    assert!((g.jumps[0].from_nm - 540.0).abs() < 1e-9 && (g.jumps[0].to_nm - 526.0).abs() < 1e-9);
}

#[test]
fn ordinary_scatter_of_a_growing_series_is_not_a_jump() {
    let series = vec![
        aliquot(1, 1.0, 530.0, 14.0, 9.0, false),
        aliquot(2, 2.0, 536.0, 14.0, 8.5, false),
        aliquot(3, 4.0, 535.2, 13.0, 8.0, false),
        aliquot(4, 8.0, 545.0, 13.0, 7.8, false),
    ];
    assert!(growth(&series).jumps.is_empty());
}

#[test]
fn no_focusing_verdict_from_changes_below_the_uncertainty() {
    // σ/D moving 8.0 -> 7.6 -> 7.9 %: every change is below a tenth of the value.
    let series = vec![
        aliquot(1, 1.0, 530.0, 14.0, 8.0, false),
        aliquot(2, 2.0, 536.0, 14.0, 7.6, false),
        aliquot(3, 4.0, 540.0, 13.0, 7.9, false),
    ];
    assert_eq!(growth(&series).regime, "steady");
    // 10 -> 6 -> 9 %: a real focusing then defocusing.
    let series = vec![
        aliquot(1, 1.0, 530.0, 14.0, 10.0, false),
        aliquot(2, 2.0, 536.0, 14.0, 6.0, false),
        aliquot(3, 4.0, 540.0, 13.0, 9.0, false),
    ];
    assert_eq!(growth(&series).regime, "focusing then defocusing");
}

mod common;

/// The batch sheet says the reaction yield in words a chemist reads (the JSON carries its terms).
#[test]
fn the_batch_sheet_shows_the_reaction_yield() {
    let lab = common::Lab::new();
    lab.ok(&["demo"]);
    let sheet = lab.ok(&["batch", "show", "1"]).stdout;
    let line = sheet
        .lines()
        .find(|l| l.contains("reaction yield"))
        .unwrap_or_else(|| panic!("no reaction yield on the sheet:\n{sheet}"));
    assert!(line.contains("% against the limiting"), "{line}");
}
