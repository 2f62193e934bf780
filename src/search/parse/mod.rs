//! The query parser: a lab-notebook phrase, a field word followed by its condition.
//!
//! Text is first cut into tokens (words, "quoted phrases" and the comparison signs
//! `> >= < <= = ≥ ≤`, which need no space around them), each with its 1-based column in
//! characters so that an error can point at it. A field word then reads its condition from the
//! tokens after it; any other word is a free word. Any text gives a query or a one-line error,
//! never a panic: text is cut only on whole characters. Length is bounded so that search stays
//! cheap: a query of at most [`MAX_QUERY_CHARS`] characters, free words of at most
//! [`MAX_WORD_CHARS`] and at most [`MAX_FREE_WORDS`] of them (each is scored against every
//! distinct word of the lab).
//!
//! Where a reading is ambiguous the parser takes one reading, always the same, or refuses:
//! - a field word always starts a condition (quote it, `"size"`, to search for the word);
//! - no searchable quantity is negative, so a dash between numbers is always a range
//!   (`3-4`, `3 - 4`, `3 -4`), and a leading minus is refused;
//! - dates have dashes of their own, so a range of dates takes `to`, never a dash;
//! - a bare QY above 1 and a bare concentration of 1 mol/L or more are refused with the form
//!   that was probably meant (QY is stored as a fraction, concentration in mol/L).
//!
//! This file holds the query's types and the tokens the steps pass each other; `fields.rs`
//! the field words, `lex.rs` the tokens and the old forms, `values.rs` amounts and dates,
//! `grammar.rs` the conditions and [`parse`], `typing.rs` [`parse_typing`].

mod fields;
mod grammar;
mod lex;
#[cfg(test)]
mod tests;
mod typing;
mod values;

pub use fields::{FIELD_NAMES, Field};
pub use grammar::parse;
pub use typing::parse_typing;

use crate::error::{Error, Result};

/// The longest query accepted, in characters.
pub const MAX_QUERY_CHARS: usize = 500;
/// The longest free word (typo-tolerant matching costs the product of two words' lengths).
pub const MAX_WORD_CHARS: usize = 64;
/// The most free words in one query.
pub const MAX_FREE_WORDS: usize = 16;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Cmp {
    Gt,
    Ge,
    Lt,
    Le,
    Range,
    Eq,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Clause {
    /// A free word or quoted phrase, lower-cased.
    Word(String),
    /// Bounds in stored units (nm, a fraction for QY, % for dispersion, mol/L). `Eq` is the
    /// window of the precision written: `size 3.5` is `lo` 3.45 to `hi` 3.55, `hi` excluded.
    Numeric {
        field: Field,
        cmp: Cmp,
        lo: Option<f64>,
        hi: Option<f64>,
        strict_lo: bool,
        strict_hi: bool,
    },
    Text {
        field: Field,
        value: String,
    },
    /// Dates as YYYY-MM-DD strings.
    Date {
        lo: Option<String>,
        hi: Option<String>,
        strict_lo: bool,
        strict_hi: bool,
    },
    Stock,
}

#[derive(Debug, Clone, PartialEq, Default)]
pub struct Query {
    pub clauses: Vec<Clause>,
}

impl Query {
    pub fn words(&self) -> Vec<&str> {
        self.clauses
            .iter()
            .filter_map(|c| {
                if let Clause::Word(w) = c {
                    Some(w.as_str())
                } else {
                    None
                }
            })
            .collect()
    }
}

fn fail(column: usize, reason: impl Into<String>) -> Error {
    Error::Query {
        column,
        reason: reason.into(),
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
    Word,
    Phrase,
    Sign(Cmp),
}

#[derive(Debug, Clone)]
struct Token {
    /// 1-based column of the token's first character (the opening quote of a phrase).
    col: usize,
    text: String,
    kind: Kind,
}

impl Token {
    /// The column just after the token.
    fn end_col(&self) -> usize {
        let quotes = if self.kind == Kind::Phrase { 2 } else { 0 };
        self.col + self.text.chars().count() + quotes
    }
    fn is(&self, word: &str) -> bool {
        self.kind == Kind::Word && self.text.eq_ignore_ascii_case(word)
    }
    /// A word that would start something of its own: a field word or `stock`.
    fn is_keyword(&self) -> bool {
        self.kind == Kind::Word && (Field::named(&self.text).is_some() || self.is("stock"))
    }
}

/// A number as written, before its unit is applied.
#[derive(Debug, Clone)]
struct Amount {
    number: f64,
    /// Half a unit of the last digit written, in the number's own terms.
    half: f64,
    /// The unit's factor to stored units; `None` when no unit is written.
    unit: Option<f64>,
    col: usize,
    text: String,
}
