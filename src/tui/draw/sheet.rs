//! A batch's sheet and its growth chart: the aliquots with their derived values and marks
//! (stale, void, shoulder), the product and yields below, and the absorbance and PL traces drawn
//! on the chart's own dot grid. Draws from the app state only.

use super::*;

pub(super) fn draw_sheet(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let Some(b) = &app.sheet else {
        f.render_widget(Paragraph::new("no batch open"), area);
        return;
    };
    let bt = &b.batch;
    // The foot takes the lines it needs as wrapped (the safety notice is never cut), up to 7.
    let foot_lines = sheet_foot(app, b, p);
    let width = area.width.max(1) as usize;
    let foot_rows = wrapped_rows(&foot_lines, width);
    let [head, mid, foot] = Layout::vertical([
        Constraint::Length(2),
        Constraint::Min(6),
        Constraint::Length(foot_rows.clamp(3, 7) as u16),
    ])
    .areas(area);
    let g = &b.growth;
    let mut title = vec![
        Span::styled(format!("Batch {} {}", bt.id, bt.name), p.head()),
        Span::raw(format!(
            "  {} · {} · {}",
            bt.material,
            bt.status,
            bt.operator.as_deref().unwrap_or("")
        )),
    ];
    if bt.voided {
        title.push(Span::styled(
            format!("  VOID: {}", bt.void_why.as_deref().unwrap_or("")),
            p.warn(),
        ));
    }
    let mut marks = String::new();
    if g.mixed_calibrations {
        // Mixed versions mean at least one sized aliquot, so the version is there.
        marks.push_str(&format!(
            " · only cal. v{} used",
            g.calibration_version.unwrap_or_default()
        ));
    }
    if g.stale {
        marks.push_str(" · STALE");
    }
    // The growth verdict and the marks come first and the recipe last: on a narrow terminal
    // it is the recipe's name (shown again with its cautions below) that is cut, never the
    // rate's unit or a STALE mark.
    // The rate is the diameter's, between the last two timed aliquots; the regime needs the
    // dispersion of three, so with fewer it says what it waits for rather than a verdict.
    let regime = match g.regime.as_str() {
        "too few points" => "focusing needs 3 aliquots",
        r => r,
    };
    let growth = format!(
        "growth: {regime} · D {} nm/min{}",
        n(g.growth_rate_nm_per_min, 3),
        g.focusing_turn_min
            .map(|m| format!(" · turns at {m} min"))
            .unwrap_or_default()
    );
    // A recipe comes with its version (both are read from the recipe version the batch names).
    let recipe = bt
        .recipe
        .as_deref()
        .map(|r| format!(" · {r} v{}", bt.recipe_version.unwrap_or_default()))
        .unwrap_or_else(|| " · no recipe".into());
    let mut second = vec![Span::raw(growth)];
    if !marks.is_empty() {
        second.push(Span::styled(marks, p.warn()));
    }
    second.push(Span::raw(recipe));
    let head_text = vec![Line::from(title), Line::from(second)];
    f.render_widget(Paragraph::new(head_text), head);
    // The growth table is as wide as its longest cells (curve names, versions, STALE and VOID
    // in full) and at least two fifths of the screen; the plot has the rest.
    let header = ["state", "min", "peak", "D nm", "σ/D", "PL", "QY", "curve"];
    let cells: Vec<(bool, [String; 8])> = b
        .aliquots
        .iter()
        .map(|a| {
            let (stale, voided) = (a.stale, a.voided);
            let cal = format!(
                "{}{}",
                a.curve.as_deref().unwrap_or("-"),
                a.calibration_version.map(|v| format!(" v{v}")).unwrap_or_default()
            );
            let state = match (voided, stale) {
                (true, _) => "VOID",
                (false, true) => "STALE",
                _ => "",
            };
            (
                stale || voided,
                [
                    state.to_string(),
                    a.minutes
                        .map(units::minutes)
                        .unwrap_or_else(|| a.stage.clone().unwrap_or_default()),
                    format!(
                        "{}{}",
                        n(a.first_exciton_nm, 1),
                        if a.shoulder == Some(true) { "s" } else { "" }
                    ),
                    n(a.diameter_nm, 2),
                    n(a.size_dispersion_pct, 1),
                    n(a.pl_peak_nm, 1),
                    n(a.qy, 2),
                    cal,
                ],
            )
        })
        .collect();
    let widths: Vec<u16> = (0..header.len())
        .map(|i| {
            cells
                .iter()
                .map(|(_, c)| c[i].chars().count())
                .chain([header[i].chars().count()])
                .max()
                .unwrap_or(4) as u16
        })
        .collect();
    let needed = widths.iter().sum::<u16>() + widths.len() as u16 - 1 + 2;
    let table_w = needed.max(mid.width * 2 / 5).min(mid.width);
    let [left, right] = Layout::horizontal([Constraint::Length(table_w), Constraint::Min(0)]).areas(mid);
    let rows: Vec<Row> = cells
        .into_iter()
        .map(|(marked, c)| {
            let r = Row::new(c.into_iter().map(Cell::from));
            if marked { r.style(p.warn()) } else { r }
        })
        .collect();
    let constraints: Vec<Constraint> = widths
        .iter()
        .enumerate()
        .map(|(i, w)| {
            if i + 1 == widths.len() {
                Constraint::Fill(1)
            } else {
                Constraint::Length(*w)
            }
        })
        .collect();
    let mut state = TableState::default().with_selected(Some(app.aliquot_selected));
    f.render_stateful_widget(
        Table::new(rows, constraints)
            .header(Row::new(header).style(p.head()))
            .row_highlight_style(p.sel())
            .block(Block::bordered().title("growth series")),
        left,
        &mut state,
    );
    draw_chart(f, app, right, p);
    f.render_widget(Paragraph::new(foot_lines).wrap(Wrap { trim: true }), foot);
}

/// A batch sheet's foot: its vials, the recipe's reagents with their GHS codes, and the
/// material's cautions with the notice to follow the SDS.
pub(super) fn sheet_foot(app: &App, b: &BatchSheet, p: &Palette) -> Vec<Line<'static>> {
    let mut lines: Vec<Line> = Vec::new();
    let vials: Vec<String> = b
        .vials
        .iter()
        .filter(|v| v.status.on_shelf())
        .map(|v| format!("{} {} mL @ {}", v.label, units::ml(v.volume_ml), v.location))
        .collect();
    lines.push(Line::from(format!(
        "vials: {}",
        if vials.is_empty() {
            "none".to_string()
        } else {
            vials.join("; ")
        }
    )));
    // The recipe's reagents with their GHS statements, compactly, then the standing notice.
    let reagents = b.recipe_detail.iter().flat_map(|r| &r.reagents);
    let hazards: Vec<String> = reagents
        .clone()
        .filter(|g| !g.ghs_hazards.is_empty())
        .map(|g| {
            format!(
                "{}{} {}",
                g.reagent,
                if g.pyrophoric { " (pyrophoric)" } else { "" },
                g.ghs_hazards.join(" ")
            )
        })
        .collect();
    if !hazards.is_empty() {
        lines.push(Line::styled(format!("! {}", hazards.join(" · ")), p.warn()));
    }
    // The material's own cautions (cadmium, lead, a pyrophoric reagent, hot solvents), as
    // `batch show` gives them, with the short form of the notice to follow the SDS.
    let pyrophoric = reagents.clone().any(|g| g.pyrophoric);
    let mut general = crate::hazards::general_cautions(&b.batch.core, pyrophoric);
    general.retain(|c| c != crate::hazards::SDS_NOTICE);
    general.push(crate::hazards::SDS_NOTICE_SHORT.to_string());
    lines.push(Line::styled(format!("! {}", general.join(" ")), p.warn()));
    // A relative QY needs the lab's reference; without one every QY is `-`, so say why
    // (last: where rows run short it is this hint, never the safety notice, that is cut).
    let has_pl = b.aliquots.iter().any(|x| x.pl_peak_nm.is_some());
    let has_reference = app.calibrations.last().is_some_and(|c| c.body.qy_reference.is_some());
    if has_pl && !has_reference {
        lines.push(Line::styled(
            "QY needs the lab's QY reference: calib set-reference (a dye measured as the samples are)",
            p.dim(),
        ));
    }
    lines
}

pub(super) fn draw_chart(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let traces: Vec<(usize, &crate::report::plot::SeriesItem, &crate::spectra::Trace)> = app
        .series
        .iter()
        .enumerate()
        .filter_map(|(i, s)| if app.show_pl { s.pl.as_ref() } else { s.abs.as_ref() }.map(|t| (i, s, t)))
        .collect();
    let title = if app.show_pl {
        "PL (p: absorbance)"
    } else {
        "absorbance (p: PL)"
    };
    if traces.is_empty() {
        f.render_widget(
            Paragraph::new("no spectra yet: a adds an aliquot").block(Block::bordered().title(title)),
            area,
        );
        return;
    }
    // Decimate to the chart's resolution: a Braille cell holds 2 points across.
    let width = (area.width as usize * 2).max(10);
    let data: Vec<Vec<(f64, f64)>> = traces
        .iter()
        .map(|(_, _, t)| {
            let step = (t.nm.len() / width).max(1);
            t.nm.iter().zip(&t.y).step_by(step).map(|(a, b)| (*a, *b)).collect()
        })
        .collect();
    // Absorbance is shown around the first excitons (from 150 nm to the blue of the bluest to
    // 120 nm to the red of the reddest), where the growth shows; PL over its whole range.
    let peaks: Vec<f64> = traces.iter().filter_map(|(_, s, _)| s.peak_nm).collect();
    let window = if app.show_pl || peaks.is_empty() {
        None
    } else {
        let lo = peaks.iter().copied().fold(f64::MAX, f64::min) - 150.0;
        let hi = peaks.iter().copied().fold(f64::MIN, f64::max) + 120.0;
        Some((lo, hi))
    };
    let data: Vec<Vec<(f64, f64)>> = data
        .into_iter()
        .map(|d| {
            d.into_iter()
                .filter(|(x, _)| window.is_none_or(|(lo, hi)| *x >= lo && *x <= hi))
                .collect()
        })
        .collect();
    let (mut x0, mut x1, mut y1) = (f64::MAX, f64::MIN, f64::MIN);
    let mut y0 = 0.0f64;
    for d in &data {
        for (x, y) in d {
            x0 = x0.min(*x);
            x1 = x1.max(*x);
            y0 = y0.min(*y);
            y1 = y1.max(*y);
        }
    }
    if x0 >= x1 {
        f.render_widget(
            Paragraph::new("no data in range").block(Block::bordered().title(title)),
            area,
        );
        return;
    }
    // The first-exciton marks: a short vertical tick at each peak.
    let marks: Vec<Vec<(f64, f64)>> = traces
        .iter()
        .filter(|_| !app.show_pl)
        .filter_map(|(_, s, t)| {
            let pk = s.peak_nm?;
            let a = crate::spectra::analysis::interpolate(t, pk)?;
            Some((0..6).map(|k| (pk, a + (y1 - y0) * 0.02 * k as f64)).collect())
        })
        .collect();
    let x_labels = [format!("{x0:.0}"), format!("{x1:.0}")];
    let y_labels = [super::units::fixed(y0, 1), super::units::fixed(y1, 2)];
    let (x_bounds, y_bounds) = ([x0, x1], [y0, y1 * 1.05]);
    let (cols, rows) = plot_cells(area, &x_labels, &y_labels);
    let braille = Dots {
        x: x_bounds,
        y: y_bounds,
        across: f64::from(cols) * 2.0,
        down: f64::from(rows) * 4.0,
    };
    let dot = Dots {
        across: f64::from(cols),
        down: f64::from(rows),
        ..braille
    };
    let runs: Vec<Vec<Vec<(f64, f64)>>> = data.iter().map(|d| braille.runs(d)).collect();
    let marks: Vec<Vec<(f64, f64)>> = marks
        .iter()
        .map(|m| m.iter().map(|&pt| dot.place(pt)).collect())
        .collect();
    let count = traces.len();
    let mut sets: Vec<Dataset> = Vec::new();
    for ((i, s, _), runs) in traces.iter().zip(&runs) {
        for (k, run) in runs.iter().enumerate() {
            let set = Dataset::default()
                .marker(Marker::Braille)
                .graph_type(GraphType::Line)
                .style(p.trace(*i, count))
                .data(run);
            // The legend names a trace once, however many pieces the bounds cut it into.
            sets.push(if k == 0 { set.name(s.label.clone()) } else { set });
        }
    }
    for m in &marks {
        sets.push(
            Dataset::default()
                .marker(Marker::Dot)
                .graph_type(GraphType::Scatter)
                .style(p.head())
                .data(m),
        );
    }
    let [x_low, x_high] = x_labels;
    let [y_low, y_high] = y_labels;
    let chart = Chart::new(sets)
        .block(Block::bordered().title(title))
        .x_axis(Axis::default().title("nm").bounds(x_bounds).labels([x_low, x_high]))
        .y_axis(Axis::default().bounds(y_bounds).labels([y_low, y_high]))
        .hidden_legend_constraints((Constraint::Ratio(1, 2), Constraint::Ratio(1, 2)));
    f.render_widget(chart, area);
}

/// The cells of the graph area inside a bordered chart with two labels on each axis: the x
/// labels and the x axis take the two bottom rows, the y labels (or the part of the first x
/// label left of the y axis, at most a third of the width) and the y axis the left columns.
pub(super) fn plot_cells(area: Rect, x_labels: &[String], y_labels: &[String]) -> (u16, u16) {
    let inner = Block::bordered().inner(area);
    if inner.width == 0 || inner.height == 0 {
        return (0, 0);
    }
    let width = |l: &String| Line::from(l.as_str()).width();
    let mut bottom = inner.bottom() - 1;
    if bottom > inner.top() {
        bottom -= 1;
    }
    let y_label_w = y_labels.iter().map(width).max().unwrap_or(0);
    let x_label_w = x_labels.first().map(width).unwrap_or(0).saturating_sub(1);
    let labels_w = u16::try_from(y_label_w.max(x_label_w)).unwrap_or(u16::MAX);
    let mut left = inner.left() + labels_w.min(inner.width / 3);
    if bottom > inner.top() {
        bottom -= 1;
    }
    if left + 1 < inner.right() {
        left += 1;
    }
    (inner.right().saturating_sub(left), bottom - inner.top() + 1)
}

/// The dots a chart's graph area is drawn with, so a spectrum can be put exactly on them.
///
/// A point lands on the dot at or before it (not the nearest one), and a trace is drawn in
/// pieces where it leaves the bounds (not joined to the edge): the plots keep the look they
/// have always had, which the charting library no longer gives by itself.
#[derive(Clone, Copy)]
pub(super) struct Dots {
    x: [f64; 2],
    y: [f64; 2],
    across: f64,
    down: f64,
}

impl Dots {
    /// Within the bounds, tested as the chart tests it (a NaN passes and lands on the first dot).
    fn inside(&self, (x, y): (f64, f64)) -> bool {
        !(x < self.x[0] || x > self.x[1] || y < self.y[0] || y > self.y[1])
    }

    /// The point moved to its dot; a point out of bounds, or bounds with no extent, as given.
    fn place(&self, (x, y): (f64, f64)) -> (f64, f64) {
        let [left, right] = self.x;
        let [bottom, top] = self.y;
        let (w, h) = (right - left, top - bottom);
        if !self.inside((x, y)) || !(w > 0.0) || !(h > 0.0) {
            return (x, y);
        }
        // Dots are counted from the left and from the top; `as usize` floors (and takes a NaN
        // to the first dot).
        let dot_x = ((x - left) * (self.across - 1.0) / w) as usize as f64;
        let dot_y = ((top - y) * (self.down - 1.0) / h) as usize as f64;
        let x = if self.across > 1.0 {
            left + dot_x * w / (self.across - 1.0)
        } else {
            left
        };
        let y = if self.down > 1.0 {
            top - dot_y * h / (self.down - 1.0)
        } else {
            top
        };
        (x.clamp(left, right), y.clamp(bottom, top))
    }

    /// The trace as the runs of its points within the bounds, each placed on its dot; at least
    /// one run, so a trace wholly out of bounds still has its name in the legend.
    fn runs(&self, data: &[(f64, f64)]) -> Vec<Vec<(f64, f64)>> {
        let mut runs = vec![Vec::new()];
        for &pt in data {
            if self.inside(pt) {
                if let Some(run) = runs.last_mut() {
                    run.push(self.place(pt));
                }
            } else if runs.last().is_some_and(|r| !r.is_empty()) {
                runs.push(Vec::new());
            }
        }
        if runs.len() > 1 && runs.last().is_some_and(|r| r.is_empty()) {
            runs.pop();
        }
        runs
    }
}

#[cfg(test)]
mod tests {
    use super::Dots;

    /// A grid of 21 × 9 dots over x 0..10 and y 0..1: a dot every 0.5 across, every 0.125 down.
    const GRID: Dots = Dots {
        x: [0.0, 10.0],
        y: [0.0, 1.0],
        across: 21.0,
        down: 9.0,
    };

    #[test]
    fn a_point_goes_to_the_dot_at_or_before_it_not_the_nearest() {
        // x 0.9 is 1.8 dots across: it goes to dot 1 (x 0.5), where the nearest is dot 2 (1.0);
        // y 0.30 is 5.6 dots down from the top: dot 5 (y 0.375), where the nearest is 6 (0.25).
        let (x, y) = GRID.place((0.9, 0.30));
        assert!((x - 0.5).abs() < 1e-12, "x {x}");
        assert!((y - 0.375).abs() < 1e-12, "y {y}");
        // The edges stay on the edges.
        assert_eq!(GRID.place((10.0, 0.0)), (10.0, 0.0));
        assert_eq!(GRID.place((0.0, 1.0)), (0.0, 1.0));
        // Out of bounds is left as given, for the chart to leave out.
        assert_eq!(GRID.place((3.0, 1.5)), (3.0, 1.5));
    }

    #[test]
    fn a_trace_that_leaves_the_bounds_is_cut_into_pieces_not_joined_to_the_edge() {
        let runs = GRID.runs(&[(0.0, 0.5), (1.0, 2.0), (2.0, 0.5), (3.0, 0.5), (4.0, -1.0)]);
        assert_eq!(runs, vec![vec![(0.0, 0.5)], vec![(2.0, 0.5), (3.0, 0.5)]]);
        // Wholly out of bounds: one empty piece, which still carries the trace's name.
        assert_eq!(GRID.runs(&[(1.0, 5.0)]), vec![Vec::<(f64, f64)>::new()]);
    }
}
