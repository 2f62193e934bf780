//! The lists as the views show them, from what is in memory: the batch list filtered by its
//! query and sorted, the shelf arranged by its query, grouping and sort, the trail's paging,
//! and moving the selection through any of them. Cheap enough for every keystroke; nothing
//! here reads the lab (older trail entries are asked of the worker).

use super::app::{App, Follow, View};
use super::shelf;
use crate::search;
use crate::store::model;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SortKey {
    Id,
    Date,
    Material,
    Peak,
    Diameter,
    Qy,
    Stock,
}

pub const SORT_KEYS: &[SortKey] = &[
    SortKey::Id,
    SortKey::Date,
    SortKey::Material,
    SortKey::Peak,
    SortKey::Diameter,
    SortKey::Qy,
    SortKey::Stock,
];

/// The shelf's own query, grouping and sort (see [`super::shelf`]).
#[derive(Debug, Clone)]
pub struct ShelfOrder {
    pub query: String,
    /// Where the cursor is in the shelf's search box (a character index).
    pub cursor: usize,
    pub error: Option<String>,
    /// The 1-based column of the error, while the query has one.
    pub error_column: Option<usize>,
    /// What the last query that parsed means: the vials on screen are its vials.
    pub meaning: String,
    pub group: shelf::Group,
    pub sort: shelf::Sort,
    pub desc: bool,
}

impl Default for ShelfOrder {
    fn default() -> ShelfOrder {
        ShelfOrder {
            query: String::new(),
            cursor: 0,
            error: None,
            error_column: None,
            meaning: "every vial".into(),
            group: shelf::Group::Location,
            sort: shelf::Sort::Added,
            desc: false,
        }
    }
}

/// How many audit entries the trail reads at a time; scrolling past them reads more.
pub const TRAIL_PAGE: i64 = 300;

/// The 1-based column a query error names.
fn error_column(e: &crate::Error) -> Option<usize> {
    match e {
        crate::Error::Query { column, .. } => Some(*column),
        _ => None,
    }
}

impl App {
    /// Re-filters the batch list from the facts in memory: cheap enough for every keystroke.
    /// A query with an error leaves the last good query's results (and their meaning) in
    /// place, filtered again from the facts as they are now.
    pub fn refilter(&mut self) {
        match self.parse_query(&self.query) {
            Ok((q, typing)) => {
                self.query_error = None;
                self.query_error_column = None;
                self.query_meaning = search::describe(&q) + &typing;
                self.last_good_query = q;
            }
            Err(e) => {
                self.query_error_column = error_column(&e);
                self.query_error = Some(e.to_string());
            }
        }
        self.hits = search::filter(&self.facts, &self.last_good_query);
        if self.last_good_query.words().is_empty() {
            self.sort_hits();
        }
        if self.selected >= self.hits.len() {
            self.selected = self.hits.len().saturating_sub(1);
        }
    }

    /// A search box's query: while it is being typed, a last word that is only the start of a
    /// field name waits (see [`search::parse_typing`]), and the meaning says so.
    fn parse_query(&self, text: &str) -> crate::Result<(search::Query, String)> {
        if !self.typing_query {
            return search::parse(text).map(|q| (q, String::new()));
        }
        let (q, word, names) = search::parse_typing(text)?;
        let note = match names.as_slice() {
            [] => String::new(),
            [one] => format!(" · typing '{word}' ({one}?)"),
            [rest @ .., last] => format!(" · typing '{word}' ({} or {last}?)", rest.join(", ")),
        };
        Ok((q, note))
    }

    /// Arranges the shelf from the vials in memory: its query, grouping and sort. The
    /// selection stays on the vial it was on while that vial still shows. A query with an error
    /// leaves the last good arrangement in place.
    pub fn reshelve(&mut self) {
        let was = self.vials.get(self.vial_selected).map(|v| v.id);
        match self.parse_query(&self.shelf.query) {
            Ok((q, typing)) => {
                self.shelf.error = None;
                self.shelf.error_column = None;
                self.shelf.meaning = if q.clauses.is_empty() {
                    "every vial".to_string() + &typing
                } else {
                    search::describe(&q) + &typing
                };
                let o = &self.shelf;
                self.vials = shelf::arrange(&self.all_vials, &self.facts, &q, o.group, o.sort, o.desc);
            }
            Err(e) => {
                self.shelf.error_column = error_column(&e);
                self.shelf.error = Some(e.to_string());
                // The vials shown stay; their rows are refreshed from what was just read.
                let fresh: std::collections::HashMap<i64, &model::VialRow> =
                    self.all_vials.iter().map(|v| (v.id, v)).collect();
                self.vials = self
                    .vials
                    .iter()
                    .filter_map(|v| fresh.get(&v.id).map(|f| (*f).clone()))
                    .collect();
            }
        }
        if let Some(i) = was.and_then(|id| self.vials.iter().position(|v| v.id == id)) {
            self.vial_selected = i;
        }
        if self.vial_selected >= self.vials.len() {
            self.vial_selected = self.vials.len().saturating_sub(1);
        }
    }

    /// Moves the trail's selection by `step` entries, reading older entries when it passes
    /// the last one read.
    pub(super) fn trail_step(&mut self, step: isize) {
        let want = self.trail_selected as isize + step;
        if want >= self.trail.len() as isize
            && self.trail_focus.is_none()
            && self.trail.len() as i64 >= self.trail_limit
        {
            self.trail_limit += TRAIL_PAGE.max(step as i64);
            let last = self.trail.len().saturating_sub(1) as isize;
            let at = want.clamp(0, last.max(0)) as usize;
            let then = super::replies::Then::Trail {
                select: Some((want, at)),
            };
            let ask = super::worker::Read::Trail(self.trail_ask());
            self.ask(ask, then, Some("reading older entries of the trail".into()));
        }
        let last = self.trail.len().saturating_sub(1) as isize;
        self.trail_selected = want.clamp(0, last.max(0)) as usize;
    }

    /// Rows a page of a list moves by: the body of the screen less its headers.
    pub(super) fn page_rows(&self) -> usize {
        (self.size.1 as usize).saturating_sub(9).max(1)
    }

    /// Moves the selection of the view's list by `step` rows (negative: up).
    pub(super) fn step(&mut self, step: isize) {
        let moved = |at: usize, len: usize| (at as isize + step).clamp(0, len.saturating_sub(1) as isize) as usize;
        match self.view {
            View::Shelf => self.vial_selected = moved(self.vial_selected, self.vials.len()),
            View::Sheet => {
                let n = self.sheet.as_ref().map(|s| s.aliquots.len()).unwrap_or(0);
                self.aliquot_selected = moved(self.aliquot_selected, n);
            }
            View::Trail => self.trail_step(step),
            _ => self.selected = moved(self.selected, self.hits.len()),
        }
    }

    pub(super) fn sort_hits(&mut self) {
        let key = self.sort;
        let cmp_opt = |a: Option<f64>, b: Option<f64>| a.unwrap_or(f64::MIN).total_cmp(&b.unwrap_or(f64::MIN));
        self.hits.sort_by(|a, b| match key {
            SortKey::Id => a.id.cmp(&b.id),
            SortKey::Date => a.started_at.cmp(&b.started_at),
            SortKey::Material => a.material.cmp(&b.material).then(a.id.cmp(&b.id)),
            SortKey::Peak => cmp_opt(a.first_exciton_nm, b.first_exciton_nm),
            SortKey::Diameter => cmp_opt(a.diameter_nm, b.diameter_nm),
            SortKey::Qy => cmp_opt(a.qy, b.qy),
            SortKey::Stock => a.stock_ml.total_cmp(&b.stock_ml),
        });
        if self.sort_desc {
            self.hits.reverse();
        }
    }

    pub(super) fn follow(&mut self, to: Follow) {
        match to {
            Follow::Vial(id) => {
                if let Some(i) = self.vials.iter().position(|v| v.id == id) {
                    self.vial_selected = i;
                }
            }
            Follow::Batch(id) => {
                if let Some(i) = self.hits.iter().position(|h| h.id == id) {
                    self.selected = i;
                }
            }
        }
    }
}
