//! Finding past batches. A small query language of our own, read like a lab-notebook phrase:
//! a field word, then its condition.
//!
//! ```text
//! CdSe oleylamine "ZnS shell"    free words and phrases, matched fuzzily against name, recipe,
//!                                notes, operator and material (a typo or two is forgiven)
//! material CdSe  by Halloway     a field and its value (case does not matter)
//! size 3.5 to 4   pl 610-630     inclusive ranges
//! qy >= 50%  size>3.2  conc < 2 uM   comparisons; units converted (nm, %, M to pM)
//! date 2026-06-01 to 2026-06-30  at fridge  status done  stock
//! ```
//! Filters narrow; the fuzzy score ranks. Values are each batch's product values (the marked
//! product aliquot, else the last of the growth series), current (not superseded) ones only.
//! A parse error names the 1-based column where the query goes wrong and what was expected;
//! [`describe`] tells a parsed query back in words.

mod describe;
mod eval;
mod parse;

pub use describe::describe;
pub use eval::{Facts, Hit, filter, load_facts, run};
pub use parse::{
    Clause, Cmp, FIELD_NAMES, Field, MAX_FREE_WORDS, MAX_QUERY_CHARS, MAX_WORD_CHARS, Query, parse, parse_typing,
};

use crate::error::Result;
use crate::store::Db;

/// Stores the numeric bounds of a query so that recompute previews can name crossings.
pub fn record_thresholds(tx: &Db, q: &Query) -> Result<()> {
    for (field, v) in bounds_of(q) {
        crate::store::facts::record_search_bound(tx, &field, v)?;
    }
    Ok(())
}

/// The numeric bounds of a query as (field, value) pairs, for the remembered search bounds.
pub fn bounds_of(q: &Query) -> Vec<(String, f64)> {
    let mut out = Vec::new();
    for c in &q.clauses {
        if let Clause::Numeric { field, lo, hi, .. } = c {
            for v in [lo, hi].into_iter().flatten() {
                out.push((field.name().to_string(), *v));
            }
        }
    }
    out
}
