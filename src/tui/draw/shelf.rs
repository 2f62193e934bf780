//! The shelf: vials by location with their concentration (and where it came from), volume left
//! and marks for low or stale stock. Draws from the app state only.

use super::*;
use crate::vocab::VialStatus;

/// A label cut to `w` cells from its middle, so the end that tells vials of one batch apart
/// (`-V1`, `-V2`) always shows: `CS-26…-p-V2`.
pub(super) fn keep_end(s: &str, w: usize) -> String {
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

pub(super) fn draw_shelf(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
    use crate::tui::shelf::Group;
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
                        (c + 1, m + if w.status.on_shelf() { w.volume_ml } else { 0.0 })
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
                let disposed = v.status == VialStatus::Disposed;
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
