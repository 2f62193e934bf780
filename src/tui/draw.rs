//! Drawing: pure functions of the app state onto a frame. Nothing here does I/O or changes
//! state. Colour only where it carries meaning (errors, stale values, the selected row), and
//! none at all when NO_COLOR is set.
//!
//! Long (one function per view, form and overlay); left whole while the terminal library's
//! upgrade edits it, to be split by view after that.

use super::app::{App, Mode, SortKey, View};
use super::keys::Scope;
use super::picker::Picker;
use super::units;
use crate::report::BatchSheet;
use crate::search::Facts;
use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{
    Axis, Block, Borders, Cell, Chart, Clear, Dataset, GraphType, Paragraph, Row, Table, TableState, Wrap,
};

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
    /// What is shown for context rather than as the answer: a query's meaning, results kept
    /// from an earlier query.
    fn dim(&self) -> Style {
        Style::default().add_modifier(Modifier::DIM)
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
    // A long message (a path, a reason) takes up to three lines rather than being cut.
    let width = f.area().width.max(1) as usize;
    let status_rows = wrapped_rows(&[status_line(app, f.area().width, &p)], width).clamp(1, 3) as u16;
    let [top, body, status, footer] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Min(5),
        Constraint::Length(status_rows),
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
        Mode::Picker(pk) => draw_picker(f, app, pk, &p),
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

/// What a search box shows: its text, whether it is being typed in, what the last good query
/// means, the current error and its column, and a count of what is listed.
struct SearchBox<'a> {
    text: &'a str,
    cursor: usize,
    typing: bool,
    meaning: &'a str,
    error: Option<&'a str>,
    column: Option<usize>,
    count: String,
}

impl SearchBox<'_> {
    /// Lines it takes: the query and its meaning, and while the query has an error, the error
    /// under its column and a line saying whose results are still listed.
    fn height(&self) -> u16 {
        if self.error.is_some() { 3 } else { 2 }
    }
}

/// The search box: the query as typed, then what it means as parsed. While the query has an
/// error the list keeps the last good query's results and says so, so a half-typed query never
/// empties the screen.
fn draw_search_box(f: &mut Frame, sb: &SearchBox, area: Rect, p: &Palette) {
    let mut first = vec![Span::styled("/ ", p.head())];
    let room = (area.width as usize / 2).max(20);
    // The first character shown: the edited text scrolls to keep the cursor in view.
    let start = if sb.typing {
        first.extend(edited(sb.text, sb.cursor, room, Style::default()));
        f.set_cursor_position((area.x + 2 + sb.cursor.min(room - 1) as u16, area.y));
        (sb.cursor + 1).saturating_sub(room.max(2))
    } else {
        first.push(Span::raw(sb.text.to_string()));
        0
    };
    let mut lines = Vec::new();
    match sb.error {
        None => {
            first.push(Span::raw(format!("  {}", sb.count)));
            lines.push(Line::from(first));
            lines.push(Line::from(vec![
                Span::styled("  means: ", p.dim()),
                Span::styled(sb.meaning.to_string(), p.dim()),
            ]));
        }
        Some(e) => {
            lines.push(Line::from(first));
            // Under the caret the whole message where it fits, else without its preamble (the
            // column speaks for itself there), else the whole message at the line's start.
            let short = e.strip_prefix("query error at ").unwrap_or(e);
            let at = sb.column.and_then(|c| c.checked_sub(1 + start)).map(|c| c + 2);
            let fits = |t: &str| at.filter(|at| at + 2 + t.chars().count() <= area.width as usize);
            let caret = fits(e).map(|at| (at, e)).or_else(|| fits(short).map(|at| (at, short)));
            lines.push(match caret {
                Some((at, text)) => Line::from(vec![
                    Span::raw(" ".repeat(at)),
                    Span::styled(format!("^ {text}"), p.err()),
                ]),
                None => Line::styled(format!("  {e}"), p.err()),
            });
            lines.push(Line::styled(
                format!("  showing results for: {} ({})", sb.meaning, sb.count),
                p.dim(),
            ));
        }
    }
    f.render_widget(Paragraph::new(lines), area);
}

/// One column of the batch list: its header, its width and how a batch fills it.
struct Column<'a> {
    head: String,
    width: u16,
    cell: Box<dyn Fn(&Facts) -> String + 'a>,
}

impl<'a> Column<'a> {
    /// A column as wide as its header (with room for the sort arrow) and its widest cell over
    /// every batch, not only the hits, so columns stay put while a query is typed.
    fn fitted(app: &App, head: String, cell: Box<dyn Fn(&Facts) -> String + 'a>) -> Column<'a> {
        let widest = app.facts.iter().map(|b| cell(b).chars().count()).max().unwrap_or(0);
        let width = widest.max(head.chars().count() + 1).min(48) as u16;
        Column { head, width, cell }
    }
}

/// The batch list's columns for a width: at 80 columns id, date, material, peak, D, QY, mL,
/// the STALE mark and the name (with its status); as the terminal widens, status, operator,
/// σ/D, PL and recipe join, in that order, each only while the name still fits uncut (the
/// recipe, last, may be cut once 12 cells are free for it).
fn batch_columns<'a>(app: &'a App, width: u16) -> Vec<Column<'a>> {
    let fit = |head: String, cell: Box<dyn Fn(&Facts) -> String + 'a>| Column::fitted(app, head, cell);
    let bracketed = |b: &Facts| {
        if b.status == "done" {
            b.name.clone()
        } else {
            format!("{} [{}]", b.name, units::words(&b.status))
        }
    };
    let name = fit("name".into(), Box::new(|b| b.name.clone()));
    let name_with_status = fit("name".into(), Box::new(bracketed));
    let mut status = Some(fit("status".into(), Box::new(|b| units::words(&b.status))));
    let mut operator = Some(fit(
        "operator".into(),
        Box::new(|b| b.operator.clone().unwrap_or_default()),
    ));
    let mut dispersion = Some(fit("σ/D".into(), Box::new(|b| n(b.size_dispersion_pct, 1))));
    let mut pl = Some(fit("PL".into(), Box::new(|b| n(b.pl_peak_nm, 1))));
    let mut recipe = Some(fit("recipe".into(), Box::new(|b| b.recipe.clone().unwrap_or_default())));
    let base: Vec<Column> = vec![
        fit(sort_mark(app, SortKey::Id, "id"), Box::new(|b| b.id.to_string())),
        fit(
            sort_mark(app, SortKey::Date, "date"),
            Box::new(|b| b.started_at.get(..10).unwrap_or("").to_string()),
        ),
        fit(
            sort_mark(app, SortKey::Material, "material"),
            Box::new(|b| b.material.clone()),
        ),
        fit(
            sort_mark(app, SortKey::Peak, "peak"),
            Box::new(|b| n(b.first_exciton_nm, 1)),
        ),
        fit(
            sort_mark(app, SortKey::Diameter, "D nm"),
            Box::new(|b| n(b.diameter_nm, 2)),
        ),
        fit(sort_mark(app, SortKey::Qy, "QY"), Box::new(|b| n(b.qy, 2))),
        fit(
            sort_mark(app, SortKey::Stock, "mL"),
            // No vial at all is not an empty vial: `-`, not 0.00.
            Box::new(|b| {
                if b.locations.is_empty() && b.stock_ml == 0.0 {
                    "-".into()
                } else {
                    units::ml(b.stock_ml)
                }
            }),
        ),
        fit(
            "state".into(),
            Box::new(|b| {
                if app.stale_batches.contains(&b.id) {
                    "STALE".into()
                } else {
                    String::new()
                }
            }),
        ),
    ];
    // Each column is followed by a one-cell gap.
    let mut used: u16 = base.iter().map(|c| c.width + 1).sum();
    let mut with_status = false;
    for slot in [&mut status, &mut operator, &mut dispersion, &mut pl, &mut recipe] {
        let Some(c) = slot.as_ref() else { continue };
        let is_status = c.head == "status";
        let is_recipe = c.head == "recipe";
        let name_need = if with_status || is_status {
            name.width
        } else {
            name_with_status.width
        };
        let need = if is_recipe { c.width.min(12) } else { c.width };
        if used + need + 1 + name_need <= width {
            used += c.width + 1;
            with_status |= is_status;
        } else {
            *slot = None;
        }
    }
    let mut cols = base;
    // σ/D after D, PL after QY, then mL and the STALE mark; status, operator, name, recipe last.
    let state = cols.pop();
    let ml = cols.pop();
    let qy = cols.pop();
    cols.extend(dispersion);
    cols.extend(qy);
    cols.extend(pl);
    cols.extend(ml);
    cols.extend(state);
    cols.extend(status);
    cols.extend(operator);
    cols.push(if with_status { name } else { name_with_status });
    cols.extend(recipe);
    cols
}

fn draw_batches(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let sb = SearchBox {
        text: &app.query,
        cursor: app.query_cursor,
        typing: matches!(app.mode, Mode::Search),
        meaning: &app.query_meaning,
        error: app.query_error.as_deref(),
        column: app.query_error_column,
        count: format!("{} of {} batches", app.hits.len(), app.facts.len()),
    };
    let [search, table] = Layout::vertical([Constraint::Length(sb.height()), Constraint::Min(3)]).areas(area);
    draw_search_box(f, &sb, search, p);
    let cols = batch_columns(app, table.width);
    let header = Row::new(cols.iter().map(|c| c.head.clone())).style(p.head());
    // Only the rows that fit are built, so a lab of any size draws at once.
    let visible = table.height.saturating_sub(1) as usize;
    let start = app.selected.saturating_sub(visible.saturating_sub(1));
    let rows = app.hits.iter().skip(start).take(visible.max(1)).map(|h| {
        let r = Row::new(cols.iter().map(|c| (c.cell)(&h.facts)));
        // Results of an earlier query, kept while the one typed has an error, are dimmed.
        if app.stale_batches.contains(&h.id) {
            r.style(p.warn())
        } else if app.query_error.is_some() {
            r.style(p.dim())
        } else {
            r
        }
    });
    let last = cols.len() - 1;
    let widths: Vec<Constraint> = cols
        .iter()
        .enumerate()
        .map(|(i, c)| {
            if i == last {
                Constraint::Fill(1)
            } else {
                Constraint::Length(c.width)
            }
        })
        .collect();
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
fn sheet_foot(app: &App, b: &BatchSheet, p: &Palette) -> Vec<Line<'static>> {
    let mut lines: Vec<Line> = Vec::new();
    let vials: Vec<String> = b
        .vials
        .iter()
        .filter(|v| v.status != "disposed")
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
fn plot_cells(area: Rect, x_labels: &[String], y_labels: &[String]) -> (u16, u16) {
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
struct Dots {
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

/// A label cut to `w` cells from its middle, so the end that tells vials of one batch apart
/// (`-V1`, `-V2`) always shows: `CS-26…-p-V2`.
fn keep_end(s: &str, w: usize) -> String {
    let chars: Vec<char> = s.chars().collect();
    if chars.len() <= w || w < 3 {
        return s.to_string();
    }
    let tail = (w - 1) / 2 + (w - 1) % 2;
    let head = w - 1 - tail;
    let mut out: String = chars[..head].iter().collect();
    out.push('…');
    out.extend(&chars[chars.len() - tail..]);
    out
}

fn draw_shelf(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    use super::shelf::Group;
    let o = &app.shelf;
    let arrow = if o.desc { "▼" } else { "▲" };
    let grouping = match o.group {
        Group::None => "not grouped".to_string(),
        g => format!("by {}", g.name()),
    };
    let sb = SearchBox {
        text: &o.query,
        cursor: o.cursor,
        typing: matches!(app.mode, Mode::Search),
        meaning: &o.meaning,
        error: o.error.as_deref(),
        column: o.error_column,
        count: format!(
            "{} of {} vials · {grouping} · sorted by {}{arrow}",
            app.vials.len(),
            app.all_vials.len(),
            o.sort.name()
        ),
    };
    let [search, table] = Layout::vertical([Constraint::Length(sb.height()), Constraint::Min(3)]).areas(area);
    draw_search_box(f, &sb, search, p);
    // The column a grouping names in its header rows is not repeated on every row.
    let label_w = app
        .vials
        .iter()
        .map(|v| v.label.chars().count())
        .max()
        .unwrap_or(4)
        .max(4);
    let owner_w = app
        .vials
        .iter()
        .filter_map(|v| v.owner.as_ref().map(|o| o.chars().count()))
        .max()
        .unwrap_or(5)
        .max(5);
    let location_w = app
        .vials
        .iter()
        .map(|v| v.location.chars().count())
        .max()
        .unwrap_or(8)
        .max(8);
    let material_w = app
        .vials
        .iter()
        .map(|v| v.material.chars().count())
        .max()
        .unwrap_or(8)
        .max(8);
    let mut heads: Vec<(&str, usize)> = Vec::new();
    if o.group != Group::Location {
        heads.push(("location", location_w));
    }
    heads.push(("vial", label_w));
    heads.push(("batch", 5));
    if o.group != Group::Material {
        heads.push(("material", material_w));
    }
    heads.extend([("mL", 8), ("µM", 6), ("conc.", 10), ("nmol", 6)]);
    if o.group != Group::Owner {
        heads.push(("owner", owner_w));
    }
    // When the terminal is too narrow for every label whole, labels are cut in the middle and
    // every other column keeps its width.
    let others: usize = heads.iter().filter(|(h, _)| *h != "vial").map(|(_, w)| w + 1).sum();
    let label_room = (table.width as usize)
        .saturating_sub(others)
        .min(label_w)
        .max(label_w.min(8));
    let header = Row::new(heads.iter().map(|(h, _)| {
        let key = match *h {
            "vial" => "vial",
            "batch" => "batch",
            "material" => "material",
            "mL" => "mL",
            "µM" => "µM",
            "owner" => "owner",
            _ => "",
        };
        if key == o.sort.name() {
            format!("{h}{arrow}")
        } else {
            h.to_string()
        }
    }))
    .style(p.head());
    // Rows as shown: a header row where a group begins, then its vials.
    enum ShelfLine {
        Group(String),
        Vial(usize),
    }
    let mut shown: Vec<ShelfLine> = Vec::new();
    let mut selected_row = 0;
    let mut last_group: Option<String> = None;
    for (i, v) in app.vials.iter().enumerate() {
        if o.group != Group::None {
            let g = o.group.of(v);
            if last_group.as_ref() != Some(&g) {
                let (count, ml) = app
                    .vials
                    .iter()
                    .filter(|w| o.group.of(w) == g)
                    .fold((0, 0.0), |(c, m), w| {
                        (c + 1, m + if w.status == "disposed" { 0.0 } else { w.volume_ml })
                    });
                shown.push(ShelfLine::Group(format!(
                    "{} {g} · {count} vial{} · {} mL",
                    o.group.name(),
                    if count == 1 { "" } else { "s" },
                    units::ml(ml)
                )));
                last_group = Some(g);
            }
        }
        if i == app.vial_selected {
            selected_row = shown.len();
        }
        shown.push(ShelfLine::Vial(i));
    }
    let visible = (table.height.saturating_sub(1) as usize).max(1);
    // The selected vial in view, its group's header too where there is room.
    let start = selected_row.saturating_sub(visible.saturating_sub(1));
    let window: Vec<&ShelfLine> = shown.iter().skip(start).take(visible).collect();
    let mut group_lines: Vec<(u16, String)> = Vec::new();
    let rows: Vec<Row> = window
        .iter()
        .enumerate()
        .map(|(k, line)| match line {
            ShelfLine::Group(text) => {
                group_lines.push((k as u16, text.clone()));
                Row::new(Vec::<String>::new())
            }
            ShelfLine::Vial(i) => {
                let v = &app.vials[*i];
                let disposed = v.status == "disposed";
                let low = !disposed && v.volume_ml < crate::report::LOW_STOCK_ML;
                let cells = heads.iter().map(|(h, _)| match *h {
                    "location" => v.location.clone(),
                    "vial" => keep_end(&v.label, label_room),
                    "batch" => v.batch_id.to_string(),
                    "material" => v.material.clone(),
                    "mL" if disposed => "disposed".to_string(),
                    "mL" => format!("{}{}", units::ml(v.volume_ml), if low { " low" } else { "" }),
                    "µM" => v
                        .concentration_molar
                        .map(units::micromolar)
                        .unwrap_or_else(|| "-".into()),
                    "conc." => crate::report::concentration_note(v).to_string(),
                    "nmol" => v
                        .concentration_molar
                        .map(|c| units::sig3(c * v.volume_ml * 1e6))
                        .unwrap_or_else(|| "-".into()),
                    _ => v.owner.clone().unwrap_or_default(),
                });
                let r = Row::new(cells.collect::<Vec<String>>());
                if low || v.concentration_stale || disposed {
                    r.style(p.warn())
                } else if o.error.is_some() {
                    r.style(p.dim())
                } else {
                    r
                }
            }
        })
        .collect();
    let widths: Vec<Constraint> = heads
        .iter()
        .enumerate()
        .map(|(i, (h, w))| {
            let w = if *h == "vial" { label_room } else { *w } as u16;
            if i + 1 == heads.len() {
                Constraint::Fill(1)
            } else {
                Constraint::Length(w)
            }
        })
        .collect();
    let selected = if app.vials.is_empty() {
        None
    } else {
        Some(selected_row - start)
    };
    let mut state = TableState::default().with_selected(selected);
    f.render_stateful_widget(
        Table::new(rows, widths).header(header).row_highlight_style(p.sel()),
        table,
        &mut state,
    );
    // A group's header spans the row, over the empty row left for it.
    for (k, text) in group_lines {
        let y = table.y + 1 + k;
        if y < table.y + table.height {
            f.render_widget(
                Paragraph::new(Line::styled(text, p.head())),
                Rect::new(table.x, y, table.width, 1),
            );
        }
    }
}

fn draw_calibrations(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let [list, detail] = Layout::vertical([Constraint::Percentage(45), Constraint::Min(4)]).areas(area);
    // Every version's reason and curves are shown whole, wrapped within their columns: the
    // curve a version changed is the point of the list, so it is never cut off at the edge.
    let inner = list.width.saturating_sub(2) as usize;
    let by_w = app
        .calibrations
        .iter()
        .map(|c| c.created_by.chars().count())
        .max()
        .unwrap_or(2)
        .clamp(2, 24);
    let rest = inner.saturating_sub(4 + 10 + by_w + 4).max(20);
    let why_w = (rest * 2 / 5).max(10);
    let curves_w = rest.saturating_sub(why_w + 1).max(10);
    // Each version lists the curves it changed from the one before (the first, all of them):
    // what a version did is what the list is read for.
    let changed = |i: usize| -> String {
        let c = &app.calibrations[i];
        let Some(before) = i.checked_sub(1).map(|j| &app.calibrations[j]) else {
            let all: Vec<String> = c.body.curves.iter().map(|(m, k)| format!("{m}:{k}")).collect();
            return all.join(" ");
        };
        let moved: Vec<String> = c
            .body
            .curves
            .iter()
            .filter(|(m, k)| before.body.curves.get(*m) != Some(*k))
            .map(|(m, k)| match before.body.curves.get(m) {
                Some(old) => format!("{m}:{k} (was {old})"),
                None => format!("{m}:{k} (new)"),
            })
            .collect();
        if moved.is_empty() {
            "curves as before".into()
        } else {
            moved.join(" ")
        }
    };
    // A row is at most three lines: a long reason ends in … rather than push older versions
    // off a small screen.
    let capped = |mut lines: Vec<String>| {
        if lines.len() > 3 {
            lines.truncate(3);
            if let Some(l) = lines.last_mut() {
                l.push('…');
            }
        }
        lines
    };
    // Only the versions that fit whole are drawn: a version cut off at its first line would
    // read as one that changed nothing (the table would draw such a partial row).
    let mut room = list.height.saturating_sub(3);
    let rows = (0..app.calibrations.len())
        .rev()
        .map(|i| {
            let c = &app.calibrations[i];
            let why = capped(wrap_words(&c.why, why_w.saturating_sub(1)));
            let curves = capped(wrap_words(&changed(i), curves_w.saturating_sub(1)));
            let height = why.len().max(curves.len()).max(1) as u16;
            let row = Row::new(vec![
                Cell::from(format!("v{}", c.version)),
                Cell::from(c.created_at.get(..10).unwrap_or("").to_string()),
                Cell::from(c.created_by.clone()),
                Cell::from(why.join("\n")),
                Cell::from(curves.join("\n")),
            ])
            .height(height);
            (height, row)
        })
        .take_while(|(height, _)| match room.checked_sub(*height) {
            Some(left) => {
                room = left;
                true
            }
            None => false,
        })
        .map(|(_, row)| row);
    let widths = [
        Constraint::Length(4),
        Constraint::Length(10),
        Constraint::Length(by_w as u16),
        Constraint::Length(why_w as u16),
        Constraint::Min(10),
    ];
    f.render_widget(
        Table::new(rows, widths)
            .header(Row::new(vec!["ver", "date", "by", "why", "curves changed"]).style(p.head()))
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
        Paragraph::new(lines)
            .wrap(Wrap { trim: false })
            .block(Block::bordered().title("recompute")),
        detail,
    );
}

/// The rows `lines` take when wrapped at words to `width`, as a panel sizes itself to them.
fn wrapped_rows(lines: &[Line], width: usize) -> usize {
    lines
        .iter()
        .map(|l| {
            let text: String = l.spans.iter().map(|s| s.content.as_ref()).collect();
            if text.is_empty() {
                1
            } else {
                wrap_words(&text, width).len()
            }
        })
        .sum()
}

/// Text broken into lines of at most `width` characters at spaces; a word longer than a line
/// is split, so nothing is lost.
pub fn wrap_words(text: &str, width: usize) -> Vec<String> {
    let width = width.max(1);
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in text.split_whitespace() {
        let mut word: Vec<char> = word.chars().collect();
        while word.len() > width {
            if !line.is_empty() {
                lines.push(std::mem::take(&mut line));
            }
            lines.push(word.drain(..width).collect());
        }
        let word: String = word.into_iter().collect();
        let len = line.chars().count();
        if len > 0 && len + 1 + word.chars().count() > width {
            lines.push(std::mem::take(&mut line));
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(&word);
    }
    if !line.is_empty() || lines.is_empty() {
        lines.push(line);
    }
    lines
}

/// A value of an audit entry as people read it: text without quotes, whole numbers exactly,
/// volumes to 0.01 mL, other fractions to 6 significant figures (no float noise), and lists
/// or objects as compact JSON.
fn audit_value(key: &str, v: &serde_json::Value) -> String {
    use serde_json::Value;
    match v {
        Value::Null => "—".into(),
        Value::String(s) => s.clone(),
        Value::Number(x) if x.is_i64() || x.is_u64() => x.to_string(),
        Value::Number(x) => {
            let f = x.as_f64().unwrap_or(f64::NAN);
            if key.ends_with("_ml") {
                units::ml(f)
            } else if f == 0.0 || !f.is_finite() {
                format!("{f}")
            } else {
                let places = (5 - f.abs().log10().floor() as i32).clamp(0, 15) as usize;
                let s = format!("{f:.places$}");
                if s.contains('.') {
                    s.trim_end_matches('0').trim_end_matches('.').to_string()
                } else {
                    s
                }
            }
        }
        other => other.to_string(),
    }
}

/// The fields of an entry's before and after, each with its two values and whether it changed;
/// changed fields first, then the rest, each in name order.
fn audit_changes(r: &crate::store::model::AuditRow) -> Vec<(String, String, String, bool)> {
    use serde_json::Value;
    let as_map = |v: &Option<Value>| -> Vec<(String, Value)> {
        match v {
            Some(Value::Object(m)) => m.iter().map(|(k, v)| (k.clone(), v.clone())).collect(),
            Some(Value::Null) | None => Vec::new(),
            Some(other) => vec![("value".into(), other.clone())],
        }
    };
    let (before, after) = (as_map(&r.before), as_map(&r.after));
    let mut keys: Vec<String> = before.iter().chain(&after).map(|(k, _)| k.clone()).collect();
    keys.sort();
    keys.dedup();
    let get = |m: &[(String, Value)], k: &str| m.iter().find(|(x, _)| x == k).map(|(_, v)| v.clone());
    let mut out: Vec<(String, String, String, bool)> = keys
        .into_iter()
        .map(|k| {
            let (b, a) = (get(&before, &k), get(&after, &k));
            let changed = r.before.is_some() && r.after.is_some() && b != a;
            let show = |v: Option<Value>| v.map(|v| audit_value(&k, &v)).unwrap_or_else(|| "—".into());
            (k.clone(), show(b), show(a), changed)
        })
        .collect();
    out.sort_by_key(|c| !c.3);
    out
}

fn draw_trail(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    // Side by side where there is room for both, else the list above the entry.
    let who_w = app
        .trail
        .iter()
        .map(|r| r.who.chars().count())
        .max()
        .unwrap_or(3)
        .clamp(3, 20) as u16;
    let list_w = 16 + who_w + 12 + 6 + 14 + 4 + 2;
    let [list, detail] = if area.width >= 140 {
        Layout::horizontal([Constraint::Length(list_w.min(area.width / 2)), Constraint::Fill(1)]).areas(area)
    } else {
        Layout::vertical([Constraint::Percentage(50), Constraint::Fill(1)]).areas(area)
    };
    let visible = (list.height.saturating_sub(3) as usize).max(1);
    let start = app.trail_selected.saturating_sub(visible.saturating_sub(1));
    let rows = app.trail.iter().skip(start).take(visible).map(|r| {
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
        Constraint::Length(who_w),
        Constraint::Length(12),
        Constraint::Length(6),
        Constraint::Min(8),
    ];
    let shown_to = (start + visible).min(app.trail.len());
    let title = match &app.trail_focus {
        Some((entity, id)) => format!(
            "trail of {} {id}: {} entries · {}: every entry",
            units::words(entity),
            app.trail.len(),
            app.keys
                .key_for(super::keys::Action::TrailFocus, Scope::Trail)
                .unwrap_or_default()
        ),
        None if app.trail.is_empty() => "trail: no entries".into(),
        None => format!(
            "trail: {}-{shown_to} of the newest {}{}",
            start + 1,
            app.trail.len(),
            if app.trail.len() as i64 >= app.trail_limit {
                " (↓ past the end reads older)"
            } else {
                ""
            }
        ),
    };
    let mut state = TableState::default().with_selected(if app.trail.is_empty() {
        None
    } else {
        Some(app.trail_selected - start)
    });
    f.render_stateful_widget(
        Table::new(rows, widths)
            .header(Row::new(vec!["when (UTC)", "who", "what", "id", "action"]).style(p.head()))
            .row_highlight_style(p.sel())
            .block(Block::bordered().title(title)),
        list,
        &mut state,
    );
    let Some(r) = app.trail.get(app.trail_selected) else {
        f.render_widget(Paragraph::new("").block(Block::bordered().title("entry")), detail);
        return;
    };
    let title = format!(
        "entry {}: {} {}{} by {} at {}",
        r.id,
        units::words(&r.action),
        units::words(&r.entity),
        r.entity_id.map(|i| format!(" {i}")).unwrap_or_default(),
        r.who,
        r.at.get(..16).unwrap_or("").replace('T', " ")
    );
    let changes = audit_changes(r);
    let key_w = changes
        .iter()
        .map(|c| c.0.chars().count())
        .max()
        .unwrap_or(5)
        .clamp(5, 28) as u16
        + 2;
    let (heads, only): (Vec<&str>, Option<bool>) = match (&r.before, &r.after) {
        (Some(_), Some(_)) => (vec!["field", "before", "after"], None),
        (None, _) => (vec!["field", "recorded"], Some(false)),
        (_, None) => (vec!["field", "before (now gone)"], Some(true)),
    };
    // Values longer than their column end in an ellipsis, so a cut one never passes for whole.
    let value_w = {
        let room = detail.width.saturating_sub(2 + key_w + 1) as usize;
        if only.is_none() {
            room.saturating_sub(1) / 2
        } else {
            room
        }
    };
    let cut = |t: String| {
        if t.chars().count() > value_w && value_w > 1 {
            let mut s: String = t.chars().take(value_w - 1).collect();
            s.push('…');
            s
        } else {
            t
        }
    };
    let rows: Vec<Row> = changes
        .into_iter()
        .map(|(k, b, a, changed)| {
            let mark = if changed { "• " } else { "  " };
            let cells = match only {
                None => vec![format!("{mark}{k}"), cut(b), cut(a)],
                Some(true) => vec![format!("  {k}"), cut(b)],
                Some(false) => vec![format!("  {k}"), cut(a)],
            };
            let row = Row::new(cells);
            if changed { row.style(p.warn()) } else { row }
        })
        .collect();
    let widths: Vec<Constraint> = if only.is_none() {
        vec![
            Constraint::Length(key_w),
            Constraint::Length(value_w as u16),
            Constraint::Fill(1),
        ]
    } else {
        vec![Constraint::Length(key_w), Constraint::Fill(1)]
    };
    let empty = rows.is_empty();
    f.render_widget(
        Table::new(rows, widths)
            .header(Row::new(heads).style(p.head()))
            .block(Block::bordered().title(title)),
        detail,
    );
    if empty {
        let inner = Block::bordered().inner(detail);
        f.render_widget(
            Paragraph::new("nothing recorded before or after"),
            Rect::new(inner.x, inner.y + 1, inner.width, 1),
        );
    }
}

fn draw_status(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let line = status_line(app, area.width, p);
    f.render_widget(Paragraph::new(line).wrap(Wrap { trim: true }), area);
}

fn status_line(app: &App, width: u16, p: &Palette) -> Line<'static> {
    // A message answers the user's last action, so it is never hidden behind a job's progress:
    // both share the line, the message first.
    // Keys held back as a form closed come first: they are what the person just typed.
    let mut spans = Vec::new();
    // A running watch is always on show: it logs into the lab while the person does other
    // things, so they must be able to see that it runs, and how to stop it.
    if let Some(w) = &app.watching {
        let folder = w
            .folder
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| w.folder.display().to_string());
        let state = if w.stopping() { "stopping" } else { "W stops" };
        let text = if width >= 120 {
            format!(
                "● watching {folder}/ → batch {} ({} logged; {state})",
                w.batch, w.logged
            )
        } else {
            format!("● watching: {} logged, {state}", w.logged)
        };
        spans.push(Span::styled(text, p.head()));
    }
    if !app.held_back.is_empty() {
        if !spans.is_empty() {
            spans.push(Span::raw("  ·  "));
        }
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
    // What the UI's worker is doing while the person waits (a write held up by the lab's
    // lock, a large sheet being read); the screen and the keys go on meanwhile.
    if let Some(w) = app.working() {
        if !spans.is_empty() {
            spans.push(Span::raw("  ·  "));
        }
        spans.push(Span::styled(format!("working… {w}"), p.dim()));
    }
    Line::from(spans)
}

fn draw_footer(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    let scope = app.mode_scope();
    let spans: Vec<Span> = match scope {
        Scope::Search => vec![Span::raw(app.keys.search_footer())],
        s => {
            let mut v = Vec::new();
            let keys = if s.is_view() {
                app.keys.footer(s)
            } else {
                app.keys.footer_in(s)
            };
            let mut keys: Vec<(String, &str)> = keys.into_iter().collect();
            if s == Scope::Sheet {
                let back = app.keys.key_for(super::keys::Action::Back, Scope::Everywhere);
                keys.push((back.unwrap_or_default(), "back"));
            }
            // What does not fit is left out whole, never cut mid-name, and the line says
            // where the rest is.
            let width = area.width as usize;
            let cost = |(k, n): &(String, &str)| k.chars().count() + n.chars().count() + 3;
            let more = "? all keys";
            let total: usize = keys.iter().map(cost).sum();
            if total > width {
                keys.retain(|(_, n)| *n != "help");
                let mut used = more.chars().count();
                let fit = keys.iter().take_while(|e| {
                    used += cost(e);
                    used <= width
                });
                let fit = fit.count();
                keys.truncate(fit);
            }
            for (k, name) in &keys {
                v.push(Span::styled(k.clone(), p.head()));
                v.push(Span::raw(format!(" {name}  ")));
            }
            if total > width {
                v.push(Span::styled("?", p.head()));
                v.push(Span::raw(" all keys"));
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
    let lines_shown = (total > page).then_some((start + 1, end, total));
    let block = Block::bordered().title(app.keys.help_title(lines_shown));
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
    // Each line wrapped at words, its continuation lines under its own indent.
    let wrapped: Vec<String> = c
        .lines
        .iter()
        .flat_map(|l| {
            let indent = l.len() - l.trim_start().len();
            let pad = " ".repeat(indent.min(inner_w / 2));
            let body = wrap_words(l.trim_start(), inner_w.saturating_sub(pad.len()).max(1));
            if body.is_empty() {
                vec![String::new()]
            } else {
                body.into_iter().map(|w| format!("{pad}{w}")).collect()
            }
        })
        .collect();
    let rows = wrapped.len();
    let area = centred(full, width, (rows as u16 + 4).min(full.height));
    f.render_widget(Clear, area);
    let mut lines: Vec<Line> = wrapped.into_iter().map(Line::from).collect();
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

/// Eighth-block characters for the preview's small plot, lowest first.
const BLOCKS: [char; 8] = ['▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];

/// A small plot of `values` in `rows` text rows, scaled from their lowest to highest.
pub fn outline_rows(values: &[f64], rows: usize) -> Vec<String> {
    let (lo, hi) = values
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| (a.min(v), b.max(v)));
    let span = if hi > lo { hi - lo } else { 1.0 };
    let levels = rows * 8;
    let heights: Vec<usize> = values
        .iter()
        .map(|v| (((v - lo) / span) * (levels - 1) as f64).round() as usize + 1)
        .collect();
    (0..rows)
        .rev()
        .map(|r| {
            heights
                .iter()
                .map(|&h| {
                    let above = h.saturating_sub(r * 8);
                    match above {
                        0 => ' ',
                        n if n >= 8 => '█',
                        n => BLOCKS[n - 1],
                    }
                })
                .collect()
        })
        .collect()
}

fn kind_word(k: Option<&str>) -> &'static str {
    match k {
        Some("abs") => "absorbance",
        Some("pl") => "PL",
        Some("ple") => "PL excitation",
        _ => "unknown kind",
    }
}

fn preview_lines(pk: &Picker, width: usize, p: &Palette) -> Vec<Line<'static>> {
    let Some(e) = pk.selected_entry() else {
        return vec![];
    };
    if e.is_dir {
        let n = super::picker::list_folder(&e.path).map(|v| v.len().saturating_sub(1));
        return vec![
            Line::styled(format!("{}/", e.name), p.head()),
            Line::from(match n {
                Ok(n) => format!("folder, {n} entries: Enter opens it"),
                Err(err) => err,
            }),
        ];
    }
    let mut out = vec![Line::styled(e.name.clone(), p.head())];
    match &pk.preview {
        Some((path, Ok(v))) if *path == e.path => {
            out.push(Line::from(format!("{} · {} points", v.format, v.points)));
            if let Some((lo, hi)) = v.nm_range {
                out.push(Line::from(format!(
                    "{lo:.0}–{hi:.0} nm · y {}",
                    v.y_unit.clone().unwrap_or_else(|| "not stated".into())
                )));
            }
            if v.spectra.len() > 1 {
                out.push(Line::from(format!("columns: {}", v.spectra.join(", "))));
            }
            out.push(Line::from(format!("looks like {}", kind_word(v.kind))));
            out.push(Line::styled(format!("  why: {}", v.kind_evidence), p.dim()));
            let feature = match (v.kind, v.feature_nm) {
                (Some("pl"), Some(nm)) => format!("PL peak {nm:.1} nm"),
                (Some("abs"), Some(nm)) => format!("first exciton {nm:.1} nm"),
                (Some("abs" | "pl"), None) => "no feature found".into(),
                _ => String::new(),
            };
            let minutes = v
                .minutes_in_name
                .map(|m| format!("{} min in its name", units::minutes(m)))
                .unwrap_or_default();
            let both = [feature, minutes]
                .into_iter()
                .filter(|s| !s.is_empty())
                .collect::<Vec<_>>()
                .join(" · ");
            if !both.is_empty() {
                out.push(Line::from(both));
            }
            let w = width.min(v.outline.len());
            if w > 0 {
                let step = v.outline.len() as f64 / w as f64;
                let vals: Vec<f64> = (0..w).map(|i| v.outline[(i as f64 * step) as usize]).collect();
                for r in outline_rows(&vals, 3) {
                    out.push(Line::styled(r, p.head()));
                }
            }
            for w in &v.warnings {
                out.push(Line::styled(w.clone(), p.warn()));
            }
        }
        Some((path, Err(err))) if *path == e.path => out.push(Line::styled(err.clone(), p.err())),
        _ => {}
    }
    out
}

fn draw_picker(f: &mut Frame, app: &App, pk: &Picker, p: &Palette) {
    let full = f.area();
    let w = full.width.saturating_sub(4).min(120);
    let h = full.height.saturating_sub(3).min(34);
    let area = centred(full, w, h);
    f.render_widget(Clear, area);
    let title = match pk.batch {
        Some(id) => format!("Add an aliquot to {}: choose export files", app.batch_words(id)),
        None => "Add an aliquot: choose export files".into(),
    };
    let block = Block::bordered().title(title);
    let inner = block.inner(area);
    f.render_widget(block, area);
    let [path_row, taken_row, body, note_row] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Length(1),
        Constraint::Min(3),
        Constraint::Length(1),
    ])
    .areas(inner);
    let path_line = if pk.typing {
        let (before, after) = pk.path_text.split_at(
            pk.path_text
                .char_indices()
                .nth(pk.path_cursor)
                .map(|(b, _)| b)
                .unwrap_or(pk.path_text.len()),
        );
        Line::from(vec![
            Span::styled("path ", p.head()),
            Span::raw(before.to_string()),
            Span::styled("▏", p.head()),
            Span::raw(after.to_string()),
        ])
    } else {
        Line::from(vec![
            Span::styled("folder ", p.head()),
            Span::raw(pk.folder.display().to_string()),
        ])
    };
    f.render_widget(Paragraph::new(path_line), path_row);
    let name = |x: &Option<std::path::PathBuf>| {
        x.as_ref()
            .and_then(|x| x.file_name())
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| "-".into())
    };
    f.render_widget(
        Paragraph::new(Line::from(vec![
            Span::styled("absorbance ", p.head()),
            Span::raw(name(&pk.abs)),
            Span::styled("   PL ", p.head()),
            Span::raw(name(&pk.pl)),
        ])),
        taken_row,
    );
    // The list beside the preview where there is room, above it where there is not.
    let wide = body.width >= 70;
    let (list_area, preview_area) = if wide {
        let [a, b] = Layout::horizontal([Constraint::Percentage(45), Constraint::Percentage(55)]).areas(body);
        (a, b)
    } else {
        let [a, b] = Layout::vertical([Constraint::Percentage(45), Constraint::Percentage(55)]).areas(body);
        (a, b)
    };
    let visible = list_area.height as usize;
    let start = pk.selected.saturating_sub(visible.saturating_sub(1));
    let mut lines = Vec::new();
    for (i, e) in pk.entries.iter().enumerate().skip(start).take(visible) {
        let tag = if pk.abs.as_ref() == Some(&e.path) {
            "[abs] "
        } else if pk.pl.as_ref() == Some(&e.path) {
            "[PL]  "
        } else {
            "      "
        };
        let label = if e.is_dir {
            format!("{}/", e.name)
        } else {
            e.name.clone()
        };
        let style = if i == pk.selected { p.sel() } else { Style::default() };
        lines.push(Line::styled(format!("{tag}{label}"), style));
    }
    if pk.entries.is_empty() {
        lines.push(Line::from("nothing here"));
    }
    f.render_widget(Paragraph::new(lines), list_area);
    let preview = preview_lines(pk, preview_area.width.saturating_sub(2) as usize, p);
    f.render_widget(
        Paragraph::new(preview)
            .wrap(Wrap { trim: false })
            .block(Block::new().borders(if wide { Borders::LEFT } else { Borders::TOP })),
        preview_area,
    );
    let note = if let Some(problem) = &pk.problem {
        Line::styled(problem.clone(), p.err())
    } else if !pk.completions.is_empty() {
        Line::from(format!("fits: {}", pk.completions.join("  ")))
    } else if pk.typing {
        Line::styled(app.keys.path_hint(), p.dim())
    } else {
        Line::default()
    };
    f.render_widget(Paragraph::new(note), note_row);
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
