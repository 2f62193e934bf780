//! SVG plots of a growth series with plotters: the aliquots' absorption and PL spectra
//! overlaid, and diameter and size dispersion against minutes, with axes, units and legends.
//!
//! Promises: the SVG is well-formed XML whatever the names hold (plotters escapes markup; the
//! characters XML forbids are made visible here), and a plot is drawn in bounded work for any
//! numbers. Points that are not finite or lie beyond ±[`PLOTTABLE_LIMIT`] are left out, and the
//! panel says how many; every axis gets a finite, non-empty span, because plotters' tick search
//! asserts on NaN and never ends on an infinite span.

use crate::derive::engine;
use crate::error::{Error, Result};
use crate::safe_text;
use crate::spectra::Trace;
use crate::store::{Db, model};
use plotters::prelude::*;

/// One aliquot's traces and values, for plotting.
pub struct SeriesItem {
    pub label: String,
    pub minutes: Option<f64>,
    pub abs: Option<Trace>,
    pub pl: Option<Trace>,
    pub peak_nm: Option<f64>,
    pub diameter_nm: Option<f64>,
    pub dispersion_pct: Option<f64>,
}

/// One trace of a panel: its index in the series, its item, the trace and its drawable points.
type PanelTrace<'a> = (usize, &'a SeriesItem, &'a Trace, Vec<(f64, f64)>);

/// No spectral or growth quantity comes near this; beyond it a span could overflow.
pub const PLOTTABLE_LIMIT: f64 = 1e100;

/// Minutes as a legend says them (a time computed from file dates came out as
/// `0.017249999999999998 min`): see [`super::minutes`].
pub fn minutes_label(m: f64) -> String {
    format!("{} min", super::minutes(m))
}

fn plottable(v: f64) -> bool {
    v.is_finite() && v.abs() <= PLOTTABLE_LIMIT
}

/// The points of a trace that can be drawn, and how many were left out.
fn drawable(t: &Trace) -> (Vec<(f64, f64)>, usize) {
    let all = t.nm.len().min(t.y.len());
    let pts: Vec<(f64, f64)> =
        t.nm.iter()
            .zip(&t.y)
            .filter(|(x, y)| plottable(**x) && plottable(**y))
            .map(|(x, y)| (*x, *y))
            .collect();
    let dropped = all - pts.len();
    (pts, dropped)
}

/// An axis over `lo..hi` (plottable numbers) with 5 % room at both ends and never an empty
/// span: equal values or a single point get a span of a millionth of their size (at least
/// 1e-12), so the tick search always has room to step.
fn axis(lo: f64, hi: f64) -> std::ops::Range<f64> {
    let (mut lo, mut hi) = (lo.min(hi), lo.max(hi));
    let min_span = (lo.abs().max(hi.abs()) * 1e-6).max(1e-12);
    if hi - lo < min_span {
        let mid = lo / 2.0 + hi / 2.0;
        lo = mid - min_span / 2.0;
        hi = mid + min_span / 2.0;
    }
    let pad = 0.05 * (hi - lo);
    (lo - pad)..(hi + pad)
}

fn extent(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    values.fold(None, |b, v| match b {
        None => Some((v, v)),
        Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
    })
}

fn left_out(n: usize) -> String {
    match n {
        0 => String::new(),
        1 => " (1 point left out: not finite or too large)".into(),
        n => format!(" ({n} points left out: not finite or too large)"),
    }
}

fn plot_err(e: impl std::fmt::Display) -> Error {
    Error::Invalid(format!("plot: {e}"))
}

/// The series of a batch, read from the store.
pub fn series(conn: &Db, batch_id: i64) -> Result<Vec<SeriesItem>> {
    let mut out = Vec::new();
    for a in model::aliquots_of(conn, batch_id)? {
        let s = crate::report::aliquot_summary(conn, &a)?;
        let spectra = model::spectra_of_aliquot(conn, a.id)?;
        let abs = spectra
            .iter()
            .find(|s| s.kind == "abs")
            .and_then(|s| engine::trace_of(s).ok());
        let pl = spectra
            .iter()
            .find(|s| s.kind == "pl")
            .and_then(|s| engine::trace_of(s).ok());
        out.push(SeriesItem {
            label: match (a.minutes, &a.stage) {
                (Some(m), _) => minutes_label(m),
                (None, Some(st)) => st.clone(),
                _ => format!("aliquot {}", a.id),
            },
            minutes: a.minutes,
            abs,
            pl,
            peak_nm: s.first_exciton_nm,
            diameter_nm: s.diameter_nm,
            dispersion_pct: s.size_dispersion_pct,
        });
    }
    Ok(out)
}

pub fn plot_batch_svg(conn: &Db, batch_id: i64) -> Result<String> {
    let b = model::get_batch(conn, batch_id)?;
    let items = series(conn, batch_id)?;
    plot_series_svg(&format!("Batch {} {} ({})", b.id, b.name, b.material), &items)
}

fn colour(i: usize, n: usize) -> RGBColor {
    // Blue to red along the series, so later aliquots read as redder (they grow).
    let t = if n <= 1 { 0.0 } else { i as f64 / (n - 1) as f64 };
    RGBColor((40.0 + 200.0 * t) as u8, 60, (220.0 - 180.0 * t) as u8)
}

pub fn plot_series_svg(title: &str, items: &[SeriesItem]) -> Result<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (1200, 900)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_err)?;
        let root = root
            .titled(&safe_text::xml_chars(title), ("sans-serif", 28))
            .map_err(plot_err)?;
        let (top, bottom) = root.split_vertically(560);
        let panels = top.split_evenly((1, 2));
        let n = items.len();
        for (panel, kind) in panels.iter().zip(["abs", "pl"]) {
            let mut dropped = 0;
            let traces: Vec<PanelTrace> = items
                .iter()
                .enumerate()
                .filter_map(|(i, it)| if kind == "abs" { it.abs.as_ref() } else { it.pl.as_ref() }.map(|t| (i, it, t)))
                .map(|(i, it, t)| {
                    let (pts, d) = drawable(t);
                    dropped += d;
                    (i, it, t, pts)
                })
                .filter(|t| !t.3.is_empty())
                .collect();
            let xs = extent(traces.iter().flat_map(|t| t.3.iter().map(|p| p.0)));
            let ys = extent(traces.iter().flat_map(|t| t.3.iter().map(|p| p.1)));
            let (Some((x0, x1)), Some((y0, y1))) = (xs, ys) else {
                panel
                    .draw(&Text::new(
                        format!(
                            "no {} spectra{}",
                            if kind == "abs" { "absorbance" } else { "PL" },
                            left_out(dropped)
                        ),
                        (40, 40),
                        ("sans-serif", 20),
                    ))
                    .map_err(plot_err)?;
                continue;
            };
            let caption = format!(
                "{}{}",
                if kind == "abs" {
                    "Absorption"
                } else {
                    "Photoluminescence"
                },
                left_out(dropped)
            );
            let mut chart = ChartBuilder::on(panel)
                .caption(caption, ("sans-serif", 22))
                .margin(12)
                .x_label_area_size(50)
                .y_label_area_size(70)
                .build_cartesian_2d(axis(x0, x1), axis(y0.min(0.0), y1))
                .map_err(plot_err)?;
            chart
                .configure_mesh()
                .x_desc("Wavelength (nm)")
                .y_desc(if kind == "abs" {
                    "Absorbance"
                } else {
                    "PL intensity (counts)"
                })
                .draw()
                .map_err(plot_err)?;
            for (i, it, t, pts) in &traces {
                let c = colour(*i, n);
                chart
                    .draw_series(LineSeries::new(pts.iter().copied(), c.stroke_width(2)))
                    .map_err(plot_err)?
                    .label(safe_text::xml_chars(&it.label))
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], c.stroke_width(3)));
                if kind == "abs"
                    && let Some(p) = it.peak_nm
                    && let Some(a) = crate::spectra::analysis::interpolate(t, p)
                    && plottable(p)
                    && plottable(a)
                {
                    chart
                        .draw_series(std::iter::once(Circle::new((p, a), 5, c.filled())))
                        .map_err(plot_err)?;
                }
            }
            chart
                .configure_series_labels()
                .background_style(WHITE.mix(0.85))
                .border_style(BLACK)
                .position(SeriesLabelPosition::UpperRight)
                .draw()
                .map_err(plot_err)?;
        }
        // Diameter and dispersion against minutes.
        let timed = |v: fn(&SeriesItem) -> Option<f64>| -> (Vec<(f64, f64)>, usize) {
            let all: Vec<(f64, f64)> = items.iter().filter_map(|i| Some((i.minutes?, v(i)?))).collect();
            let n = all.len();
            let ok: Vec<(f64, f64)> = all.into_iter().filter(|p| plottable(p.0) && plottable(p.1)).collect();
            let dropped = n - ok.len();
            (ok, dropped)
        };
        let (pts_d, dropped_d) = timed(|i| i.diameter_nm);
        let (pts_s, dropped_s) = timed(|i| i.dispersion_pct);
        let dropped = dropped_d + dropped_s;
        if pts_d.is_empty() {
            bottom
                .draw(&Text::new(
                    format!("no sized, timed aliquots{}", left_out(dropped)),
                    (40, 40),
                    ("sans-serif", 20),
                ))
                .map_err(plot_err)?;
        } else {
            // Time, size and dispersion start at zero unless a value lies below it.
            let zero_to = |pts: &[(f64, f64)], f: fn(&(f64, f64)) -> f64, floor: f64| {
                let (lo, hi) = extent(pts.iter().map(f)).unwrap_or((0.0, floor));
                (lo.min(0.0), hi.max(floor))
            };
            let (t0, t1) = zero_to(&pts_d, |p| p.0, 1.0);
            let (d0, d1) = zero_to(&pts_d, |p| p.1, 0.0);
            let (s0, s1) = zero_to(&pts_s, |p| p.1, 1.0);
            let mut chart = ChartBuilder::on(&bottom)
                .caption(format!("Growth{}", left_out(dropped)), ("sans-serif", 22))
                .margin(12)
                .x_label_area_size(50)
                .y_label_area_size(70)
                .right_y_label_area_size(70)
                .build_cartesian_2d(axis(t0, t1), axis(d0, d1 * 1.1))
                .map_err(plot_err)?
                .set_secondary_coord(axis(t0, t1), axis(s0, s1 * 1.1));
            chart
                .configure_mesh()
                .x_desc("Time after injection (min)")
                .y_desc("Diameter (nm)")
                .draw()
                .map_err(plot_err)?;
            chart
                .configure_secondary_axes()
                .y_desc("Size dispersion σ/D (%)")
                .draw()
                .map_err(plot_err)?;
            chart
                .draw_series(LineSeries::new(pts_d.clone(), BLUE.stroke_width(2)))
                .map_err(plot_err)?
                .label("diameter (nm)")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], BLUE.stroke_width(3)));
            chart
                .draw_series(pts_d.iter().map(|p| Circle::new(*p, 5, BLUE.filled())))
                .map_err(plot_err)?;
            chart
                .draw_secondary_series(LineSeries::new(pts_s.clone(), RED.stroke_width(2)))
                .map_err(plot_err)?
                .label("size dispersion (%)")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], RED.stroke_width(3)));
            chart
                .draw_secondary_series(pts_s.iter().map(|p| TriangleMarker::new(*p, 6, RED.filled())))
                .map_err(plot_err)?;
            chart
                .configure_series_labels()
                .background_style(WHITE.mix(0.85))
                .border_style(BLACK)
                .position(SeriesLabelPosition::UpperLeft)
                .draw()
                .map_err(plot_err)?;
        }
        root.present().map_err(plot_err)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod minutes_tests {
    use super::minutes_label;

    #[test]
    fn minutes_in_a_legend_are_rounded_for_people() {
        assert_eq!(minutes_label(0.017249999999999998), "0.02 min");
        assert_eq!(minutes_label(5.0), "5 min");
        assert_eq!(minutes_label(2.5), "2.5 min");
        assert_eq!(minutes_label(-0.001), "0 min");
    }
}
