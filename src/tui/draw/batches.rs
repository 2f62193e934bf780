//! The batch list and the search box it shares with the shelf: the columns chosen for the width,
//! the sort marks, the selected row. Draws from the app state only.

use super::*;
use crate::vocab::BatchStatus;

/// What a search box shows: its text, whether it is being typed in, what the last good query
/// means, the current error and its column, and a count of what is listed.
pub(super) struct SearchBox<'a> {
    pub(super) text: &'a str,
    pub(super) cursor: usize,
    pub(super) typing: bool,
    pub(super) meaning: &'a str,
    pub(super) error: Option<&'a str>,
    pub(super) column: Option<usize>,
    pub(super) count: String,
}

impl SearchBox<'_> {
    /// Lines it takes: the query and its meaning, and while the query has an error, the error
    /// under its column and a line saying whose results are still listed.
    pub(super) fn height(&self) -> u16 {
        if self.error.is_some() { 3 } else { 2 }
    }
}

/// The search box: the query as typed, then what it means as parsed. While the query has an
/// error the list keeps the last good query's results and says so, so a half-typed query never
/// empties the screen.
pub(super) fn draw_search_box(f: &mut Frame, sb: &SearchBox, area: Rect, p: &Palette) {
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
pub(super) struct Column<'a> {
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
pub(super) fn batch_columns<'a>(app: &'a App, width: u16) -> Vec<Column<'a>> {
    let fit = |head: String, cell: Box<dyn Fn(&Facts) -> String + 'a>| Column::fitted(app, head, cell);
    let bracketed = |b: &Facts| {
        if b.status == BatchStatus::Done {
            b.name.clone()
        } else {
            format!("{} [{}]", b.name, units::words(b.status.as_str()))
        }
    };
    let name = fit("name".into(), Box::new(|b| b.name.clone()));
    let name_with_status = fit("name".into(), Box::new(bracketed));
    let mut status = Some(fit("status".into(), Box::new(|b| units::words(b.status.as_str()))));
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

pub(super) fn draw_batches(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
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
