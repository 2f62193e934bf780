//! The trail: the audit log, each change with who made it, when, and its values before and
//! after. Draws from the app state only.

use super::*;

/// A value of an audit entry as people read it: text without quotes, whole numbers exactly,
/// volumes to 0.01 mL, other fractions to 6 significant figures (no float noise), and lists
/// or objects as compact JSON.
pub(super) fn audit_value(key: &str, v: &serde_json::Value) -> String {
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
pub(super) fn audit_changes(r: &crate::store::model::AuditRow) -> Vec<(String, String, String, bool)> {
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

pub(super) fn draw_trail(f: &mut Frame, app: &App, area: Rect, p: &Palette) {
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
                .key_for(crate::tui::keys::Action::TrailFocus, Scope::Trail)
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
