//! What is drawn over a view: the help (from the key table), forms, confirmations and the file
//! picker with its preview of the spectrum chosen. Draws from the app state only.

use super::*;

pub(super) fn draw_help(f: &mut Frame, app: &App, p: &Palette) {
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

pub(super) fn key_line(keys: Vec<(String, &'static str)>, p: &Palette) -> Line<'static> {
    let mut v = Vec::new();
    for (k, name) in keys {
        v.push(Span::styled(k, p.head()));
        v.push(Span::raw(format!(" {name}  ")));
    }
    Line::from(v)
}

pub(super) fn draw_form(f: &mut Frame, app: &App, form: &crate::tui::app::Form, p: &Palette) {
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

pub(super) fn draw_confirm(f: &mut Frame, app: &App, c: &crate::tui::app::Confirm, p: &Palette) {
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
        keys.push(Span::styled(crate::tui::keys::describe(k), p.head()));
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
pub(super) const BLOCKS: [char; 8] = ['▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];

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

pub(super) fn kind_word(k: Option<&str>) -> &'static str {
    match k {
        Some("abs") => "absorbance",
        Some("pl") => "PL",
        Some("ple") => "PL excitation",
        _ => "unknown kind",
    }
}

pub(super) fn preview_lines(pk: &Picker, width: usize, p: &Palette) -> Vec<Line<'static>> {
    let Some(e) = pk.selected_entry() else {
        return vec![];
    };
    if e.is_dir {
        let n = crate::tui::picker::list_folder(&e.path).map(|v| v.len().saturating_sub(1));
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

pub(super) fn draw_picker(f: &mut Frame, app: &App, pk: &Picker, p: &Palette) {
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
