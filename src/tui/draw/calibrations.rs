//! The calibrations view: each version with its reason and the curves it changed, and the
//! preview of what a recompute would move. Draws from the app state only.

use super::*;

pub(super) fn draw_calibrations(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
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
            for c in units::crossing_lines(&r.threshold_crossings) {
                lines.push(Line::styled(c, p.warn()));
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
