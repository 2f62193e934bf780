//! SVG plots of a growth series with plotters: the aliquots' absorption and PL spectra
//! overlaid, and diameter and size dispersion against minutes, with axes, units and legends.

use crate::derive::{engine, growth};
use crate::error::{Error, Result};
use crate::spectra::Trace;
use crate::store::model;
use plotters::prelude::*;
use rusqlite::Connection;

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

fn plot_err(e: impl std::fmt::Display) -> Error {
    Error::Invalid(format!("plot: {e}"))
}

/// The series of a batch, read from the store.
pub fn series(conn: &Connection, batch_id: i64) -> Result<Vec<SeriesItem>> {
    let mut out = Vec::new();
    for a in model::aliquots_of(conn, batch_id)? {
        let s = growth::aliquot_summary(conn, &a)?;
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
                (Some(m), _) => format!("{m} min"),
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

pub fn plot_batch_svg(conn: &Connection, batch_id: i64) -> Result<String> {
    let b = model::get_batch(conn, batch_id)?;
    let items = series(conn, batch_id)?;
    plot_series_svg(&format!("Batch {} {} ({})", b.id, b.name, b.material), &items)
}

fn colour(i: usize, n: usize) -> RGBColor {
    // Blue to red along the series, so later aliquots read as redder (they grow).
    let t = if n <= 1 { 0.0 } else { i as f64 / (n - 1) as f64 };
    RGBColor((40.0 + 200.0 * t) as u8, 60, (220.0 - 180.0 * t) as u8)
}

fn bounds(traces: &[&Trace]) -> Option<(f64, f64, f64, f64)> {
    let mut b: Option<(f64, f64, f64, f64)> = None;
    for t in traces {
        for (x, y) in t.nm.iter().zip(&t.y) {
            b = Some(match b {
                None => (*x, *x, *y, *y),
                Some((a, c, d, e)) => (a.min(*x), c.max(*x), d.min(*y), e.max(*y)),
            });
        }
    }
    b
}

pub fn plot_series_svg(title: &str, items: &[SeriesItem]) -> Result<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (1200, 900)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_err)?;
        let root = root.titled(title, ("sans-serif", 28)).map_err(plot_err)?;
        let (top, bottom) = root.split_vertically(560);
        let panels = top.split_evenly((1, 2));
        let n = items.len();
        for (panel, kind) in panels.iter().zip(["abs", "pl"]) {
            let traces: Vec<(usize, &SeriesItem, &Trace)> = items
                .iter()
                .enumerate()
                .filter_map(|(i, it)| if kind == "abs" { it.abs.as_ref() } else { it.pl.as_ref() }.map(|t| (i, it, t)))
                .collect();
            let refs: Vec<&Trace> = traces.iter().map(|t| t.2).collect();
            let Some((x0, x1, y0, y1)) = bounds(&refs) else {
                panel
                    .draw(&Text::new(
                        format!("no {} spectra", if kind == "abs" { "absorbance" } else { "PL" }),
                        (40, 40),
                        ("sans-serif", 20),
                    ))
                    .map_err(plot_err)?;
                continue;
            };
            let pad = 0.05 * (y1 - y0).max(1e-9);
            let mut chart = ChartBuilder::on(panel)
                .caption(
                    if kind == "abs" {
                        "Absorption"
                    } else {
                        "Photoluminescence"
                    },
                    ("sans-serif", 22),
                )
                .margin(12)
                .x_label_area_size(50)
                .y_label_area_size(70)
                .build_cartesian_2d(x0..x1, (y0 - pad).min(0.0)..(y1 + pad))
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
            for (i, it, t) in &traces {
                let c = colour(*i, n);
                chart
                    .draw_series(LineSeries::new(
                        t.nm.iter().copied().zip(t.y.iter().copied()),
                        c.stroke_width(2),
                    ))
                    .map_err(plot_err)?
                    .label(it.label.clone())
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], c.stroke_width(3)));
                if kind == "abs"
                    && let Some(p) = it.peak_nm
                    && let Some(a) = crate::spectra::analysis::interpolate(t, p)
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
        let pts_d: Vec<(f64, f64)> = items
            .iter()
            .filter_map(|i| Some((i.minutes?, i.diameter_nm?)))
            .collect();
        let pts_s: Vec<(f64, f64)> = items
            .iter()
            .filter_map(|i| Some((i.minutes?, i.dispersion_pct?)))
            .collect();
        if pts_d.is_empty() {
            bottom
                .draw(&Text::new("no sized, timed aliquots", (40, 40), ("sans-serif", 20)))
                .map_err(plot_err)?;
        } else {
            let t1 = pts_d.iter().map(|p| p.0).fold(0.0, f64::max).max(1.0);
            let d1 = pts_d.iter().map(|p| p.1).fold(0.0, f64::max) * 1.15;
            let s1 = pts_s.iter().map(|p| p.1).fold(1.0, f64::max) * 1.15;
            let mut chart = ChartBuilder::on(&bottom)
                .caption("Growth", ("sans-serif", 22))
                .margin(12)
                .x_label_area_size(50)
                .y_label_area_size(70)
                .right_y_label_area_size(70)
                .build_cartesian_2d(0.0..t1 * 1.05, 0.0..d1)
                .map_err(plot_err)?
                .set_secondary_coord(0.0..t1 * 1.05, 0.0..s1);
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
