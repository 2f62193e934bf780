//! Drawing: pure functions of the app state onto a frame. Nothing here does I/O or changes
//! state. Colour only where it carries meaning (errors, stale values, the selected row), and
//! none at all when NO_COLOR is set.
//!
//! One file per view (`batches`, `sheet`, `shelf`, `calibrations`, `trail`) and one for what is
//! drawn over them (`overlays`); here the frame's layout, the tabs, the status line and footer,
//! and the small helpers the views share.

use super::units;
use crate::report::BatchSheet;
use crate::search::Facts;
use crate::tui::app::{App, Mode, SortKey, View};
use crate::tui::keys::Scope;
use crate::tui::picker::Picker;
use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{
    Axis, Block, Borders, Cell, Chart, Clear, Dataset, GraphType, Paragraph, Row, Table, TableState, Wrap,
};

mod batches;
mod calibrations;
mod overlays;
mod sheet;
mod shelf;
mod trail;

use batches::*;
use calibrations::*;
use overlays::*;
use sheet::*;
use shelf::*;
use trail::*;

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
                let back = app.keys.key_for(crate::tui::keys::Action::Back, Scope::Everywhere);
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
