//! Finding past batches. A small query language of our own:
//!
//! ```text
//! CdSe oleylamine            free words, matched fuzzily against name, recipe, notes,
//!                            operator and material (typos of a letter or two are forgiven)
//! material:CdSe by:ada       field equals value (case does not matter)
//! size:3.5..4  peak:..560    inclusive ranges; either end may be left open
//! qy>50%  size>=3  pl<620    comparisons; qy takes a fraction or a per cent
//! date:2026-03-01..2026-03-31  at:fridge  status:done  stock
//! ```
//! Filters narrow; the fuzzy score ranks. Values are each batch's product values (the marked
//! product aliquot, else the last of the growth series), current (not superseded) ones only.
//! A parse error names the 1-based column where the query goes wrong and what was expected.

mod eval;
mod parse;

pub use eval::{Facts, Hit, filter, load_facts, run};
pub use parse::{Clause, Cmp, Field, Query, parse};

use crate::error::Result;
use rusqlite::{Connection, params};

/// Stores the numeric bounds of a query so that recompute previews can name crossings.
pub fn record_thresholds(tx: &Connection, q: &Query) -> Result<()> {
    for c in &q.clauses {
        if let Clause::Numeric { field, lo, hi, .. } = c {
            for v in [lo, hi].into_iter().flatten() {
                tx.execute(
                    "INSERT INTO search_threshold (field, value, last_used) VALUES (?1, ?2, ?3)
                     ON CONFLICT(field, value) DO UPDATE SET uses = uses + 1, last_used = excluded.last_used",
                    params![field.name(), v, crate::store::now()],
                )?;
            }
        }
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
