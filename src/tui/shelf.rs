//! The shelf's order: which vials show, grouped and sorted as the person asked. Pure: it reads
//! the vials and batch facts it is given. A shelf query is the batch list's language; the
//! clauses about where product is and how much (`at`, `by`, `stock`, `conc`) are asked of each
//! vial itself (its location, owner, volume, concentration), the rest of the vial's batch, and a
//! free word matches the batch's text or the vial's own label, location and owner.

use crate::search::{self, Clause, Facts, Field, Query};
use crate::store::model::VialRow;
use std::collections::HashSet;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Group {
    Location,
    Batch,
    Owner,
    Material,
    None,
}

pub const GROUPS: &[Group] = &[
    Group::Location,
    Group::Batch,
    Group::Owner,
    Group::Material,
    Group::None,
];

impl Group {
    pub fn name(self) -> &'static str {
        match self {
            Group::Location => "location",
            Group::Batch => "batch",
            Group::Owner => "owner",
            Group::Material => "material",
            Group::None => "none",
        }
    }

    /// The group a vial falls in, as its header names it.
    pub fn of(self, v: &VialRow) -> String {
        match self {
            Group::Location => v.location.clone(),
            Group::Batch => format!("{} {}", v.batch_id, v.batch_name),
            Group::Owner => v.owner.clone().unwrap_or_else(|| "no owner".into()),
            Group::Material => v.material.clone(),
            Group::None => String::new(),
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sort {
    /// The order vials were put on the shelf.
    Added,
    Label,
    Batch,
    Material,
    Volume,
    Concentration,
    Owner,
}

pub const SORTS: &[Sort] = &[
    Sort::Added,
    Sort::Label,
    Sort::Batch,
    Sort::Material,
    Sort::Volume,
    Sort::Concentration,
    Sort::Owner,
];

impl Sort {
    pub fn name(self) -> &'static str {
        match self {
            Sort::Added => "added",
            Sort::Label => "vial",
            Sort::Batch => "batch",
            Sort::Material => "material",
            Sort::Volume => "mL",
            Sort::Concentration => "µM",
            Sort::Owner => "owner",
        }
    }
}

fn owner_matches(owner: Option<&str>, value: &str) -> bool {
    let v = value.to_lowercase();
    owner.is_some_and(|o| {
        let o = o.to_lowercase();
        o == v || o.split_whitespace().any(|w| w == v)
    })
}

/// Whether a clause is about the vial itself rather than its batch.
fn is_own(c: &Clause) -> bool {
    matches!(
        c,
        Clause::Stock
            | Clause::Text {
                field: Field::At | Field::By,
                ..
            }
            | Clause::Numeric { field: Field::Conc, .. }
    )
}

/// Whether a vial's own facts meet one of its own clauses (see [`is_own`]).
fn vial_meets(v: &VialRow, c: &Clause) -> bool {
    let eps = 1e-9;
    match c {
        Clause::Stock => v.status.on_shelf() && v.volume_ml > eps,
        Clause::Text {
            field: Field::At,
            value,
        } => v.location.to_lowercase().contains(&value.to_lowercase()),
        Clause::Text {
            field: Field::By,
            value,
        } => owner_matches(v.owner.as_deref(), value),
        Clause::Numeric {
            field: Field::Conc,
            lo,
            hi,
            strict_lo,
            strict_hi,
            ..
        } => v.concentration_molar.is_some_and(|c| {
            let slack = 1e-9 * c.abs();
            lo.is_none_or(|l| if *strict_lo { c > l + slack } else { c >= l - slack })
                && hi.is_none_or(|h| if *strict_hi { c < h - slack } else { c <= h + slack })
        }),
        _ => true,
    }
}

/// The vials a query, grouping and sort show, in the order shown.
pub fn arrange(vials: &[VialRow], facts: &[Facts], q: &Query, group: Group, sort: Sort, desc: bool) -> Vec<VialRow> {
    let mut batch_clauses = Vec::new();
    let mut own: Vec<&Clause> = Vec::new();
    let mut words: Vec<(String, HashSet<i64>)> = Vec::new();
    for c in &q.clauses {
        match c {
            Clause::Word(w) => {
                let one = Query {
                    clauses: vec![c.clone()],
                };
                let ids = search::filter(facts, &one).into_iter().map(|h| h.id).collect();
                words.push((w.clone(), ids));
            }
            c if is_own(c) => own.push(c),
            c => batch_clauses.push(c.clone()),
        }
    }
    // With no clause about batches, vials of any batch show (a void batch's vials included).
    let batches: Option<HashSet<i64>> = (!batch_clauses.is_empty()).then(|| {
        search::filter(facts, &Query { clauses: batch_clauses })
            .into_iter()
            .map(|h| h.id)
            .collect()
    });
    let mut out: Vec<VialRow> = vials
        .iter()
        .filter(|v| batches.as_ref().is_none_or(|b| b.contains(&v.batch_id)))
        .filter(|v| own.iter().all(|c| vial_meets(v, c)))
        .filter(|v| {
            words.iter().all(|(w, ids)| {
                let own_text =
                    format!("{} {} {}", v.label, v.location, v.owner.as_deref().unwrap_or("")).to_lowercase();
                ids.contains(&v.batch_id) || own_text.contains(w.as_str())
            })
        })
        .cloned()
        .collect();
    let by = |a: &VialRow, b: &VialRow| {
        let conc = |v: &VialRow| v.concentration_molar.unwrap_or(f64::MIN);
        let o = match sort {
            Sort::Added => a.id.cmp(&b.id),
            Sort::Label => a.label.cmp(&b.label),
            Sort::Batch => a.batch_id.cmp(&b.batch_id),
            Sort::Material => a.material.cmp(&b.material),
            Sort::Volume => a.volume_ml.total_cmp(&b.volume_ml),
            Sort::Concentration => conc(a).total_cmp(&conc(b)),
            Sort::Owner => a.owner.cmp(&b.owner),
        };
        let o = if desc { o.reverse() } else { o };
        o.then(a.id.cmp(&b.id))
    };
    out.sort_by(|a, b| {
        let g = match group {
            Group::Batch => a.batch_id.cmp(&b.batch_id),
            g => g.of(a).cmp(&g.of(b)),
        };
        g.then_with(|| by(a, b))
    });
    out
}
