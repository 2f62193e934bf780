//! Drawing: pure functions of the app state onto a frame. Nothing here does I/O or changes
//! state. Colour only where it carries meaning (errors, stale values, the selected row), and
//! none at all when NO_COLOR is set.

use super::app::{App, Mode, SortKey, View};
use super::keys::Scope;
use super::units;
use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Axis, Block, Cell, Chart, Clear, Dataset, GraphType, Paragraph, Row, Table, TableState, Wrap};

fn n(v: Option<f64>, d: usize) -> String {
    v.map(|x| format!("{x:.d$}")).unwrap_or_else(|| "-".into())
}

struct Palette {
    on: bool,
}

impl Palette {
    fn sel(&self) -> Style {
        if self.on {
            Style::default().bg(Color::Blue).fg(Color::White)
        } else {
            Style::default().add_modifier(Modifier::REVERSED)
        }
    }
    fn err(&self) -> Style {
        if self.on {
            Style::default().fg(Color::Red).add_modifier(Modifier::BOLD)
        } else {
            Style::default().add_modifier(Modifier::BOLD)
        }
    }
    fn warn(&self) -> Style {
        if self.on {
            Style::default().fg(Color::Yellow)
        } else {
            Style::default().add_modifier(Modifier::ITALIC)
        }
    }
    fn head(&self) -> Style {
        Style::default().add_modifier(Modifier::BOLD)
    }
    fn trace(&self, i: usize, count: usize) -> Style {
        if !self.on {
            return Style::default();
        }
        let t = if count <= 1 { 0.0 } else { i as f64 / (count - 1) as f64 };
        Style::default().fg(Color::Rgb((60.0 + 190.0 * t) as u8, 90, (230.0 - 190.0 * t) as u8))
    }
}

pub fn draw(f: &mut Frame, app: &App) {
    let p = Palette { on: app.colour };
    let [top, body, status, footer] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Min(5),
        Constraint::Length(1),
        Constraint::Length(1),
    ])
    .areas(f.area());
    draw_tabs(f, app, top, &p);
    match app.view {
        View::Batches => draw_batches(f, app, body, &p),
        View::Sheet => draw_sheet(f, app, body, &p),
        View::Shelf => draw_shelf(f, app, body, &p),
        View::Calibrations => draw_calibrations(f, app, body, &p),
        View::Trail => draw_trail(f, app, body, &p),
    }
    draw_status(f, app, status, &p);
    draw_footer(f, app, footer, &p);
    match &app.mode {
        Mode::Help => draw_help(f, app, &p),
        Mode::Form(form) => draw_form(f, app, form, &p),
        Mode::Picker(pk) => draw_picker(f, pk, &p),
        Mode::Confirm(c) => draw_confirm(f, app, c, &p),
        _ => {}
    }
    scrub(f);
}

/// Names, notes and file names reach the screen from many views; whatever drew them, no cell
/// may hand the terminal a control character or bidi override (an escape in a batch name could
/// otherwise set the title, write the clipboard or clear the screen).
fn scrub(f: &mut Frame) {
    for cell in f.buffer_mut().content.iter_mut() {
        if let Some(clean) = crate::safe_text::cell_symbol(cell.symbol()) {
            cell.set_symbol(&clean);
        }
    }
}

fn draw_tabs(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let names = [
        ("1", "Batches", View::Batches),
        ("2", "Shelf", View::Shelf),
        ("3", "Calibrations", View::Calibrations),
        ("4", "Trail", View::Trail),
    ];
    let mut spans = vec![Span::styled(" cuvette ", p.head())];
    for (k, name, v) in names {
        let on = app.view == v || (v == View::Batches && app.view == View::Sheet);
        let style = if on { p.sel() } else { Style::default() };
        spans.push(Span::raw(" "));
        spans.push(Span::styled(format!("{k} {name}"), style));
    }
    if let Some(path) = &app.db_path {
        spans.push(Span::raw(format!(
            "  {}",
            path.file_name()
                .map(|n| n.to_string_lossy().to_string())
                .unwrap_or_default()
        )));
    }
    f.render_widget(Paragraph::new(Line::from(spans)), area);
}

fn sort_mark(app: &App, k: SortKey, label: &str) -> String {
    if app.sort == k {
        format!("{label}{}", if app.sort_desc { "▼" } else { "▲" })
    } else {
        label.to_string()
    }
}

/// A line of text being edited, with the cursor shown as a reversed cell (a space at the end)
/// and the text scrolled so the cursor stays within `width` cells.
fn edited(text: &str, cursor: usize, width: usize, style: Style) -> Vec<Span<'static>> {
    let chars: Vec<char> = text.chars().collect();
    let cursor = cursor.min(chars.len());
    let width = width.max(2);
    let start = (cursor + 1).saturating_sub(width);
    let before: String = chars[start..cursor].iter().collect();
    let at: String = chars.get(cursor).map(|c| c.to_string()).unwrap_or_else(|| " ".into());
    let after: String = chars
        .iter()
        .skip(cursor + 1)
        .take(width.saturating_sub(cursor - start + 1))
        .collect();
    vec![
        Span::styled(before, style),
        Span::styled(at, style.add_modifier(Modifier::REVERSED)),
        Span::styled(after, style),
    ]
}

fn draw_batches(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let [search, table] = Layout::vertical([Constraint::Length(1), Constraint::Min(3)]).areas(area);
    let searching = matches!(app.mode, Mode::Search);
    let mut line = vec![Span::styled("/ ", p.head())];
    if searching {
        let room = (area.width as usize / 2).max(20);
        line.extend(edited(&app.query, app.query_cursor, room, Style::default()));
        f.set_cursor_position((search.x + 2 + app.query_cursor.min(room - 1) as u16, search.y));
    } else {
        line.push(Span::raw(app.query.clone()));
    }
    match &app.query_error {
        Some(e) => line.push(Span::styled(format!("  {e}"), p.err())),
        None => line.push(Span::raw(format!(
            "  {} of {} batches",
            app.hits.len(),
            app.facts.len()
        ))),
    }
    f.render_widget(Paragraph::new(Line::from(line)), search);
    let header = Row::new(vec![
        sort_mark(app, SortKey::Id, "id"),
        sort_mark(app, SortKey::Date, "date"),
        sort_mark(app, SortKey::Material, "material"),
        sort_mark(app, SortKey::Peak, "peak"),
        sort_mark(app, SortKey::Diameter, "D nm"),
        sort_mark(app, SortKey::Qy, "QY"),
        sort_mark(app, SortKey::Stock, "mL"),
        "state".to_string(),
        "name".to_string(),
    ])
    .style(p.head());
    // Only the rows that fit are built, so a lab of any size draws at once.
    let visible = table.height.saturating_sub(1) as usize;
    let start = app.selected.saturating_sub(visible.saturating_sub(1));
    let rows = app.hits.iter().skip(start).take(visible.max(1)).map(|h| {
        let stale = app.stale_batches.contains(&h.id);
        let r = Row::new(vec![
            h.id.to_string(),
            h.started_at.get(..10).unwrap_or("").to_string(),
            h.material.clone(),
            n(h.first_exciton_nm, 1),
            n(h.diameter_nm, 2),
            n(h.qy, 2),
            units::ml(h.stock_ml),
            if stale { "STALE".to_string() } else { String::new() },
            format!(
                "{} {}",
                h.name,
                if h.status == "done" {
                    String::new()
                } else {
                    format!("[{}]", h.status)
                }
            ),
        ]);
        if stale { r.style(p.warn()) } else { r }
    });
    let widths = [
        Constraint::Length(5),
        Constraint::Length(10),
        Constraint::Length(9),
        Constraint::Length(7),
        Constraint::Length(6),
        Constraint::Length(5),
        Constraint::Length(6),
        Constraint::Length(5),
        Constraint::Min(10),
    ];
    let mut state = TableState::default().with_selected(Some(app.selected - start));
    f.render_stateful_widget(
        Table::new(rows, widths).header(header).row_highlight_style(p.sel()),
        table,
        &mut state,
    );
}

fn draw_sheet(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let Some(b) = &app.sheet else {
        f.render_widget(Paragraph::new("no batch open"), area);
        return;
    };
    let s = |k: &str| b[k].as_str().unwrap_or("").to_string();
    let [head, mid, foot] =
        Layout::vertical([Constraint::Length(2), Constraint::Min(6), Constraint::Length(4)]).areas(area);
    let g = &b["growth"];
    let mut title = vec![
        Span::styled(format!("Batch {} {}", b["id"], s("name")), p.head()),
        Span::raw(format!("  {} · {} · {}", s("material"), s("status"), s("operator"))),
    ];
    if b["voided"] == true {
        title.push(Span::styled(format!("  VOID: {}", s("void_why")), p.warn()));
    }
    let mut marks = String::new();
    if g["mixed_calibrations"] == true {
        marks.push_str(&format!(" · only cal. v{} used", g["calibration_version"]));
    }
    if g["stale"] == true {
        marks.push_str(" · STALE");
    }
    let head_text = vec![
        Line::from(title),
        Line::from(format!(
            "{} · growth: {} · {} nm/min{}",
            b["recipe"]
                .as_str()
                .map(|r| format!("{r} v{}", b["recipe_version"]))
                .unwrap_or_else(|| "no recipe".into()),
            g["regime"].as_str().unwrap_or(""),
            n(g["growth_rate_nm_per_min"].as_f64(), 3),
            g["focusing_turn_min"]
                .as_f64()
                .map(|m| format!(" · turns at {m} min"))
                .unwrap_or_default()
        )),
    ];
    let mut head_text = head_text;
    if !marks.is_empty()
        && let Some(l) = head_text.last_mut()
    {
        l.spans.push(Span::styled(marks, p.warn()));
    }
    f.render_widget(Paragraph::new(head_text), head);
    // The growth table takes half of a wide terminal, so the curve and its marks are never cut.
    let table_w = (mid.width / 2).max(50).min(mid.width);
    let [left, right] = Layout::horizontal([Constraint::Length(table_w), Constraint::Min(0)]).areas(mid);
    let header = Row::new(vec!["state", "min", "peak", "D nm", "σ/D", "PL", "QY", "curve"]).style(p.head());
    let rows: Vec<Row> = b["aliquots"]
        .as_array()
        .into_iter()
        .flatten()
        .map(|a| {
            let stale = a["stale"].as_bool() == Some(true);
            let voided = a["voided"].as_bool() == Some(true);
            let cal = format!(
                "{}{}",
                a["curve"].as_str().map(|c| &c[..c.len().min(4)]).unwrap_or("-"),
                a["calibration_version"]
                    .as_i64()
                    .map(|v| format!(" v{v}"))
                    .unwrap_or_default()
            );
            let cells = vec![
                Cell::from(match (voided, stale) {
                    (true, _) => "VOID",
                    (false, true) => "STALE",
                    _ => "",
                }),
                Cell::from(
                    a["minutes"]
                        .as_f64()
                        .map(units::minutes)
                        .unwrap_or_else(|| a["stage"].as_str().unwrap_or("").to_string()),
                ),
                Cell::from(format!(
                    "{}{}",
                    n(a["first_exciton_nm"].as_f64(), 1),
                    if a["shoulder"].as_bool() == Some(true) { "s" } else { "" }
                )),
                Cell::from(n(a["diameter_nm"].as_f64(), 2)),
                Cell::from(n(a["size_dispersion_pct"].as_f64(), 1)),
                Cell::from(n(a["pl_peak_nm"].as_f64(), 1)),
                Cell::from(n(a["qy"].as_f64(), 2)),
                Cell::from(cal),
            ];
            let r = Row::new(cells);
            if stale || voided { r.style(p.warn()) } else { r }
        })
        .collect();
    let widths = [
        Constraint::Length(5),
        Constraint::Length(4),
        Constraint::Length(6),
        Constraint::Length(5),
        Constraint::Length(4),
        Constraint::Length(5),
        Constraint::Length(4),
        Constraint::Min(6),
    ];
    let mut state = TableState::default().with_selected(Some(app.aliquot_selected));
    f.render_stateful_widget(
        Table::new(rows, widths)
            .header(header)
            .row_highlight_style(p.sel())
            .block(Block::bordered().title("growth series")),
        left,
        &mut state,
    );
    draw_chart(f, app, right, p);
    let mut lines: Vec<Line> = Vec::new();
    let vials: Vec<String> = b["vials"]
        .as_array()
        .into_iter()
        .flatten()
        .filter(|v| v["status"] != "disposed")
        .map(|v| {
            format!(
                "{} {} mL @ {}",
                v["label"].as_str().unwrap_or(""),
                units::ml(v["volume_ml"].as_f64().unwrap_or(0.0)),
                v["location"].as_str().unwrap_or("")
            )
        })
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
    let hazards: Vec<String> = b["recipe_detail"]["reagents"]
        .as_array()
        .into_iter()
        .flatten()
        .filter(|g| g["ghs_hazards"].as_array().is_some_and(|h| !h.is_empty()))
        .map(|g| {
            let codes: Vec<&str> = g["ghs_hazards"]
                .as_array()
                .into_iter()
                .flatten()
                .filter_map(|h| h.as_str())
                .collect();
            format!(
                "{}{} {}",
                g["reagent"].as_str().unwrap_or(""),
                if g["pyrophoric"] == true { " (pyrophoric)" } else { "" },
                codes.join(" ")
            )
        })
        .collect();
    if !hazards.is_empty() {
        lines.push(Line::styled(format!("! {}", hazards.join(" · ")), p.warn()));
    }
    lines.push(Line::styled(
        format!("! {}", crate::hazards::SDS_NOTICE_SHORT),
        p.warn(),
    ));
    f.render_widget(Paragraph::new(lines).wrap(Wrap { trim: true }), foot);
}

fn draw_chart(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
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
    let count = traces.len();
    let mut sets: Vec<Dataset> = traces
        .iter()
        .zip(&data)
        .map(|((i, s, _), d)| {
            Dataset::default()
                .name(s.label.clone())
                .marker(Marker::Braille)
                .graph_type(GraphType::Line)
                .style(p.trace(*i, count))
                .data(d)
        })
        .collect();
    for m in &marks {
        sets.push(
            Dataset::default()
                .marker(Marker::Dot)
                .graph_type(GraphType::Scatter)
                .style(p.head())
                .data(m),
        );
    }
    let chart = Chart::new(sets)
        .block(Block::bordered().title(title))
        .x_axis(
            Axis::default()
                .title("nm")
                .bounds([x0, x1])
                .labels([format!("{x0:.0}"), format!("{x1:.0}")]),
        )
        .y_axis(
            Axis::default()
                .bounds([y0, y1 * 1.05])
                .labels([format!("{y0:.1}"), format!("{y1:.2}")]),
        )
        .hidden_legend_constraints((Constraint::Ratio(1, 2), Constraint::Ratio(1, 2)));
    f.render_widget(chart, area);
}

fn draw_shelf(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let header = Row::new(vec![
        "location", "vial", "batch", "material", "mL", "µM", "conc.", "nmol", "owner",
    ])
    .style(p.head());
    let visible = area.height.saturating_sub(1) as usize;
    let start = app.vial_selected.saturating_sub(visible.saturating_sub(1));
    let rows = app.vials.iter().skip(start).take(visible.max(1)).map(|v| {
        let disposed = v.status == "disposed";
        let low = !disposed && v.volume_ml < crate::report::LOW_STOCK_ML;
        let r = Row::new(vec![
            v.location.clone(),
            v.label.clone(),
            v.batch_id.to_string(),
            v.material.clone(),
            if disposed {
                "disposed".to_string()
            } else {
                format!("{}{}", units::ml(v.volume_ml), if low { " low" } else { "" })
            },
            v.concentration_molar
                .map(units::micromolar)
                .unwrap_or_else(|| "-".into()),
            crate::report::concentration_note(v).to_string(),
            v.concentration_molar
                .map(|c| units::sig3(c * v.volume_ml * 1e6))
                .unwrap_or_else(|| "-".into()),
            v.owner.clone().unwrap_or_default(),
        ]);
        if low || v.concentration_stale || disposed {
            r.style(p.warn())
        } else {
            r
        }
    });
    let widths = [
        Constraint::Length(11),
        Constraint::Length(14),
        Constraint::Length(5),
        Constraint::Length(9),
        Constraint::Length(8),
        Constraint::Length(6),
        Constraint::Length(10),
        Constraint::Length(6),
        Constraint::Min(6),
    ];
    let mut state = TableState::default().with_selected(if app.vials.is_empty() {
        None
    } else {
        Some(app.vial_selected - start)
    });
    f.render_stateful_widget(
        Table::new(rows, widths).header(header).row_highlight_style(p.sel()),
        area,
        &mut state,
    );
}

fn draw_calibrations(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let [list, detail] = Layout::vertical([Constraint::Percentage(45), Constraint::Min(4)]).areas(area);
    let rows = app.calibrations.iter().rev().map(|c| {
        let curves: Vec<String> = c.body.curves.iter().map(|(m, k)| format!("{m}:{k}")).collect();
        Row::new(vec![
            format!("v{}", c.version),
            c.created_at.get(..10).unwrap_or("").to_string(),
            c.created_by.clone(),
            c.why.clone(),
            curves.join(" "),
        ])
    });
    let widths = [
        Constraint::Length(4),
        Constraint::Length(10),
        Constraint::Length(14),
        Constraint::Length(22),
        Constraint::Min(10),
    ];
    f.render_widget(
        Table::new(rows, widths)
            .header(Row::new(vec!["ver", "date", "by", "why", "curves"]).style(p.head()))
            .block(Block::bordered().title("calibration versions")),
        list,
    );
    let mut lines = Vec::new();
    match &app.preview {
        None => lines.push(Line::from(
            "p previews what a recompute would change; A recomputes (it previews, then asks).",
        )),
        Some(r) => {
            lines.push(Line::styled(
                format!(
                    "{} stale aliquots: {} values to recompute, {} change",
                    r.stale_found, r.recomputed, r.changed
                ),
                p.head(),
            ));
            for m in r.largest_moves.iter().take(4) {
                lines.push(Line::from(format!(
                    "  aliquot {} (batch {}) {} {} → {}{}",
                    m.aliquot_id,
                    m.batch_id,
                    units::quantity_name(&m.quantity),
                    units::quantity(&m.quantity, m.old),
                    units::quantity(&m.quantity, m.new),
                    m.relative_change
                        .map(|r| format!(" ({:+.0} %)", r * 100.0))
                        .unwrap_or_default()
                )));
            }
            for c in r.threshold_crossings.iter().take(3) {
                lines.push(Line::styled(
                    format!("  batch {} crosses {} {}", c.batch_id, c.field, c.threshold),
                    p.warn(),
                ));
            }
        }
    }
    f.render_widget(
        Paragraph::new(lines).block(Block::bordered().title("recompute")),
        detail,
    );
}

fn draw_trail(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let rows = app.trail.iter().take(area.height as usize).map(|r| {
        Row::new(vec![
            r.at.get(..16).unwrap_or("").replace('T', " "),
            r.who.clone(),
            units::words(&r.entity),
            r.entity_id.map(|i| i.to_string()).unwrap_or_default(),
            units::words(&r.action),
        ])
    });
    let widths = [
        Constraint::Length(16),
        Constraint::Length(16),
        Constraint::Length(12),
        Constraint::Length(6),
        Constraint::Min(8),
    ];
    f.render_widget(
        Table::new(rows, widths).header(Row::new(vec!["when (UTC)", "who", "what", "id", "action"]).style(p.head())),
        area,
    );
}

fn draw_status(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    // A message answers the user's last action, so it is never hidden behind a job's progress:
    // both share the line, the message first.
    // Keys held back as a form closed come first: they are what the person just typed.
    let mut spans = Vec::new();
    if !app.held_back.is_empty() {
        spans.push(Span::styled(
            format!("held back \"{}\": typed as the form closed", app.held_back),
            p.warn(),
        ));
    }
    if let Some((err, msg)) = &app.message {
        if !spans.is_empty() {
            spans.push(Span::raw("  ·  "));
        }
        spans.push(Span::styled(msg.clone(), if *err { p.err() } else { Style::default() }));
    }
    if let Some((label, done, total)) = &app.progress {
        if !spans.is_empty() {
            spans.push(Span::raw("  ·  "));
        }
        spans.push(Span::raw(format!("{label}: {done}/{total}")));
    }
    let line = Line::from(spans);
    f.render_widget(Paragraph::new(line), area);
}

fn draw_footer(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let scope = match app.mode {
        Mode::Search => None,
        Mode::Form(_) => Some(Scope::Form),
        Mode::Confirm(_) => Some(Scope::Confirm),
        _ => Some(app.scope()),
    };
    let spans: Vec<Span> = match scope {
        None => vec![Span::raw("type a query · Enter/Esc leave the search box")],
        Some(s) => {
            let mut v = Vec::new();
            let keys = if matches!(s, Scope::Form | Scope::Confirm) {
                app.keys.footer_in(s)
            } else {
                app.keys.footer(s)
            };
            for (k, name) in keys {
                v.push(Span::styled(k, p.head()));
                v.push(Span::raw(format!(" {name}  ")));
            }
            if s == Scope::Sheet {
                v.push(Span::styled("Esc", p.head()));
                v.push(Span::raw(" back"));
            }
            v
        }
    };
    f.render_widget(Paragraph::new(Line::from(spans)), area);
}

fn centred(area: Rect, w: u16, h: u16) -> Rect {
    let w = w.min(area.width);
    let h = h.min(area.height);
    Rect {
        x: area.x + (area.width - w) / 2,
        y: area.y + (area.height - h) / 2,
        width: w,
        height: h,
    }
}

/// The help box: nearly the whole screen, so at 80x24 most of the table shows at once.
fn help_area(w: u16, h: u16) -> Rect {
    let area = Rect::new(0, 0, w, h);
    centred(
        area,
        w.min(if w >= 150 { 150 } else { 100 }),
        h.saturating_sub(1).max(3),
    )
}

fn help_columns(w: u16) -> usize {
    if w >= 150 { 2 } else { 1 }
}

/// How many lines of help one page shows at a terminal size (the key handler pages by it).
pub fn help_page_lines(w: u16, h: u16) -> usize {
    let inner = help_area(w, h).height.saturating_sub(2) as usize;
    (inner * help_columns(w)).max(1)
}

fn draw_help(f: &mut Frame, app: &App, p: &Palette) {
    let full = f.area();
    let area = help_area(full.width, full.height);
    let area = Rect {
        x: area.x + full.x,
        y: area.y + full.y,
        ..area
    };
    f.render_widget(Clear, area);
    // Grouped by where they apply, one scope after another in the key table's order.
    let mut lines: Vec<Line> = Vec::new();
    let mut last = "";
    for (scope, key, help) in app.keys.help() {
        if scope != last {
            lines.push(Line::styled(scope.to_string(), p.head()));
            last = scope;
        }
        lines.push(Line::from(vec![
            Span::styled(format!("{key:>10} "), p.head()),
            Span::raw(help),
        ]));
    }
    let total = lines.len();
    let page = help_page_lines(full.width, full.height);
    let start = app.help_scroll.min(total.saturating_sub(page));
    let end = (start + page).min(total);
    let more = if total > page {
        format!(" · lines {}-{end} of {total}, ↓/PgDn more, ↑/PgUp back", start + 1)
    } else {
        String::new()
    };
    let block = Block::bordered().title(format!("keys{more} · Esc or ? closes"));
    let inner = block.inner(area);
    f.render_widget(block, area);
    let mut shown: Vec<Line> = lines.drain(start..end).collect();
    if help_columns(full.width) == 2 {
        let half = (inner.height as usize).min(shown.len());
        let right = shown.split_off(half);
        let [l, r] = Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(inner);
        f.render_widget(Paragraph::new(shown), l);
        f.render_widget(Paragraph::new(right), r);
    } else {
        f.render_widget(Paragraph::new(shown), inner);
    }
}

fn key_line(keys: Vec<(String, &'static str)>, p: &Palette) -> Line<'static> {
    let mut v = Vec::new();
    for (k, name) in keys {
        v.push(Span::styled(k, p.head()));
        v.push(Span::raw(format!(" {name}  ")));
    }
    Line::from(v)
}

fn draw_form(f: &mut Frame, app: &App, form: &super::app::Form, p: &Palette) {
    let full = f.area();
    // Wide terminals give long values (folders, file paths) room; never wider than 100.
    let width = full.width.saturating_sub(4).clamp(full.width.min(70), 100);
    let area = centred(full, width, form.fields.len() as u16 + 3);
    f.render_widget(Clear, area);
    let room = (area.width as usize).saturating_sub(2 + 16).max(4);
    let mut lines: Vec<Line> = form
        .fields
        .iter()
        .enumerate()
        .map(|(i, field)| {
            let mut spans = vec![Span::styled(format!("{:>14}: ", field.label), p.head())];
            if i == form.focus {
                spans.extend(edited(&field.text, field.cursor, room, p.sel()));
            } else {
                spans.push(Span::raw(field.text.clone()));
            }
            Line::from(spans)
        })
        .collect();
    if let Some(field) = form.fields.get(form.focus) {
        let col = field.cursor.min(room - 1) as u16;
        f.set_cursor_position((area.x + 1 + 16 + col, area.y + 1 + form.focus as u16));
    }
    lines.push(key_line(app.keys.footer_in(Scope::Form), p));
    f.render_widget(
        Paragraph::new(lines).block(Block::bordered().title(form.title.clone())),
        area,
    );
}

fn draw_confirm(f: &mut Frame, app: &App, c: &super::app::Confirm, p: &Palette) {
    let full = f.area();
    let width = full.width.min(96);
    // Room for every line as wrapped, so the answer keys at the bottom are never cut off.
    let inner_w = width.saturating_sub(2).max(1) as usize;
    let rows: usize = c.lines.iter().map(|l| l.chars().count().div_ceil(inner_w).max(1)).sum();
    let area = centred(full, width, (rows as u16 + 4).min(full.height));
    f.render_widget(Clear, area);
    let mut lines: Vec<Line> = c.lines.iter().map(|l| Line::from(l.clone())).collect();
    lines.push(Line::from(""));
    let mut keys = Vec::new();
    for (k, b) in app.keys.entries.iter().filter(|(_, b)| b.scope == Scope::Confirm) {
        keys.push(Span::styled(super::keys::describe(k), p.head()));
        keys.push(Span::raw(format!(" {}   ", b.help)));
    }
    lines.push(Line::from(keys));
    f.render_widget(
        Paragraph::new(lines)
            .wrap(Wrap { trim: false })
            .block(Block::bordered().title(c.title.clone()).border_style(p.warn())),
        area,
    );
}

fn draw_picker(f: &mut Frame, pk: &super::app::Picker, p: &Palette) {
    let area = centred(f.area(), 74, 18);
    f.render_widget(Clear, area);
    let mut lines = vec![Line::from(format!("folder {}", pk.folder.display()))];
    let visible = area.height.saturating_sub(5) as usize;
    let start = pk.selected.saturating_sub(visible.saturating_sub(1));
    for (i, file) in pk.files.iter().enumerate().skip(start).take(visible) {
        let tag = if pk.abs.as_ref() == Some(file) {
            "[abs] "
        } else if pk.pl.as_ref() == Some(file) {
            "[PL]  "
        } else {
            "      "
        };
        let name = file
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        let style = if i == pk.selected { p.sel() } else { Style::default() };
        lines.push(Line::styled(format!("{tag}{name}"), style));
    }
    if pk.files.is_empty() {
        lines.push(Line::from("no files here"));
    }
    lines.push(Line::from("Enter absorbance · p PL · Tab continue · Esc cancel"));
    let title = match pk.batch {
        Some(id) => format!("add an aliquot to batch {id}: pick export files"),
        None => "add an aliquot: pick export files".into(),
    };
    f.render_widget(Paragraph::new(lines).block(Block::bordered().title(title)), area);
}
