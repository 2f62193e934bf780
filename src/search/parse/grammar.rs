//! The grammar: a field word followed by its condition (a comparison, a range with `to` or a
//! dash, a date or a date range, a text value), any other word a free word within the bounds,
//! and `parse`, which turns any text into a `Query` or a one-line error naming its column.

use super::lex::{lex, new_range, old_form, refuse_old_form};
use super::values::{day, day_span, is_unit_word, resolve, scan_amount, unit_factor};
use super::{
    Amount, Clause, Cmp, Error, Field, Kind, MAX_FREE_WORDS, MAX_QUERY_CHARS, MAX_WORD_CHARS, Query, Result, Token,
    fail,
};
use crate::vocab::{BatchStatus, Vocabulary};
use chrono::NaiveDate;

struct Parser {
    tokens: Vec<Token>,
    at: usize,
}

impl Parser {
    fn peek(&self) -> Option<&Token> {
        self.tokens.get(self.at)
    }

    fn take(&mut self) -> Option<Token> {
        let t = self.tokens.get(self.at).cloned();
        self.at += usize::from(t.is_some());
        t
    }

    /// The token a condition must go on with, or an error at `col` saying what was expected.
    fn expect(&mut self, col: usize, what: impl FnOnce() -> String) -> Result<Token> {
        self.take().ok_or_else(|| fail(col, what()))
    }

    /// A field word with nothing after it.
    fn no_condition(field: Field, word: &Token) -> Error {
        fail(
            word.end_col(),
            format!(
                "expected a condition after `{}`, as in `{}` (quote \"{}\" to search for the word itself)",
                word.text,
                field.example(),
                word.text
            ),
        )
    }

    /// One number and its unit, the unit written on it or as the next word.
    fn amount(&mut self, field: Field, after: &str, col: usize) -> Result<(Amount, Option<(String, usize)>)> {
        let t = self.expect(col, || format!("expected a number after `{after}`"))?;
        if t.kind != Kind::Word {
            return Err(fail(
                t.col,
                format!("expected a number after `{after}`, got `{}`", t.text),
            ));
        }
        if let Some(new) = new_range(field.name(), &t.text) {
            return Err(old_form(&t, &new));
        }
        self.scan_with_unit(field, &t.text, t.col)
    }

    /// A number read from `text`, with its unit when the unit is written as the next word.
    fn scan_with_unit(&mut self, field: Field, text: &str, col: usize) -> Result<(Amount, Option<(String, usize)>)> {
        let (mut a, rest) = scan_amount(field, text, col)?;
        if a.unit.is_none()
            && rest.is_none()
            && let Some(u) = self.peek().filter(|u| is_unit_word(u)).cloned()
        {
            a.unit = Some(unit_factor(field, &u.text, u.col)?);
            self.at += 1;
        }
        Ok((a, rest))
    }

    /// The high end of a range, after its dash or `to`: one number, no further dash.
    fn high_end(&mut self, field: Field, after: &str, rest: Option<(String, usize)>, col: usize) -> Result<Amount> {
        let (a, more) = match rest {
            Some((text, at)) if !text.is_empty() => self.scan_with_unit(field, &text, at)?,
            _ => self.amount(field, after, col)?,
        };
        match more {
            Some((_, at)) => Err(fail(at - 1, "a range has two ends: one dash or one `to`")),
            None => Ok(a),
        }
    }

    /// A dash that goes on from a number: on it (`3-4`), alone (`3 - 4`) or on the next
    /// number (`3 -4`). No searchable quantity is negative, so each is a range.
    fn dash_after(&mut self, inline: Option<(String, usize)>) -> Option<(String, usize)> {
        if inline.is_some() {
            return inline;
        }
        let t = self.peek()?;
        let mut chars = t.text.chars();
        let dashed = t.kind == Kind::Word
            && chars.next() == Some('-')
            && chars.next().is_none_or(|c| c.is_ascii_digit() || c == '.');
        let rest = dashed.then(|| (t.text.chars().skip(1).collect(), t.col + 1));
        self.at += usize::from(rest.is_some());
        rest
    }

    fn numeric(&mut self, field: Field, word: &Token) -> Result<Clause> {
        let Some(next) = self.peek().cloned() else {
            return Err(Self::no_condition(field, word));
        };
        let one_sided = |cmp: Cmp, v: f64| {
            let (lo, hi) = if matches!(cmp, Cmp::Gt | Cmp::Ge) {
                (Some(v), None)
            } else {
                (None, Some(v))
            };
            Clause::Numeric {
                field,
                cmp,
                lo,
                hi,
                strict_lo: cmp == Cmp::Gt,
                strict_hi: cmp == Cmp::Lt,
            }
        };
        let mut after = word.text.clone();
        let mut col = word.end_col();
        if let Kind::Sign(cmp) = next.kind {
            self.at += 1;
            after = format!("{after} {}", next.text);
            col = next.end_col();
            if cmp != Cmp::Eq {
                let (a, rest) = self.amount(field, &after, col)?;
                let to = self.peek().filter(|t| t.is("to")).map(|t| t.col);
                if let Some(at) = rest.map(|(_, at)| at - 1).or(to) {
                    return Err(fail(
                        at,
                        format!(
                            "a comparison takes one number; a range is written without it, as in `{}`",
                            field.example()
                        ),
                    ));
                }
                return Ok(one_sided(cmp, resolve(field, &a, Some(&after))?));
            }
        }
        let (mut lo, inline) = self.amount(field, &after, col)?;
        let high = match self.dash_after(inline) {
            Some(rest) => {
                let after = format!("{} -", lo.text);
                let col = rest.1;
                Some(self.high_end(field, &after, Some(rest), col)?)
            }
            None if self.peek().is_some_and(|t| t.is("to")) => {
                let to = self.take().map_or(col, |t| t.end_col());
                Some(self.high_end(field, &format!("{} to", lo.text), None, to)?)
            }
            None => None,
        };
        let Some(hi) = high else {
            let v = resolve(field, &lo, Some(&after))?;
            if field == Field::Id {
                return Ok(Clause::Numeric {
                    field,
                    cmp: Cmp::Eq,
                    lo: Some(v),
                    hi: Some(v),
                    strict_lo: false,
                    strict_hi: false,
                });
            }
            let half = lo.half * lo.unit.unwrap_or(1.0);
            return Ok(Clause::Numeric {
                field,
                cmp: Cmp::Eq,
                lo: Some(v - half),
                hi: Some(v + half),
                strict_lo: false,
                strict_hi: true,
            });
        };
        // A unit written once, after the high end, serves both ends: `qy 40-60%`.
        if lo.unit.is_none() {
            lo.unit = hi.unit;
        }
        let (l, h) = (resolve(field, &lo, None)?, resolve(field, &hi, None)?);
        if l > h {
            return Err(fail(
                lo.col,
                format!(
                    "the range {} to {} is empty: its low end is above its high end",
                    lo.text, hi.text
                ),
            ));
        }
        Ok(Clause::Numeric {
            field,
            cmp: Cmp::Range,
            lo: Some(l),
            hi: Some(h),
            strict_lo: false,
            strict_hi: false,
        })
    }

    fn date(&mut self, word: &Token) -> Result<Clause> {
        let Some(next) = self.peek().cloned() else {
            return Err(Self::no_condition(Field::Date, word));
        };
        let mut col = word.end_col();
        let mut after = word.text.clone();
        let mut cmp = Cmp::Eq;
        if let Kind::Sign(c) = next.kind {
            self.at += 1;
            cmp = c;
            col = next.end_col();
            after = format!("{after} {}", next.text);
        }
        let first = self.expect(col, || format!("expected a date after `{after}`"))?;
        let (start, end) = day_span(&first)?;
        if let Some(t) = self.peek()
            && (t.text == "-" || (t.kind == Kind::Word && t.text.starts_with('-')))
        {
            return Err(fail(
                t.col,
                "dates have dashes of their own: write a range of dates with `to`, as in `date 2026-06-01 to 2026-06-30`",
            ));
        }
        let to = self.peek().filter(|t| t.is("to")).cloned();
        let clause = |lo: Option<NaiveDate>, hi: Option<NaiveDate>, strict_lo, strict_hi| Clause::Date {
            lo: lo.and_then(day),
            hi: hi.and_then(day),
            strict_lo,
            strict_hi,
        };
        match (cmp, to) {
            (Cmp::Eq, Some(to)) => {
                self.at += 1;
                let last = self.expect(to.end_col(), || format!("expected a date after `{} to`", first.text))?;
                let (_, last_end) = day_span(&last)?;
                if start > last_end {
                    return Err(fail(
                        first.col,
                        format!(
                            "the range {} to {} is empty: its first day is after its last",
                            first.text, last.text
                        ),
                    ));
                }
                Ok(clause(Some(start), Some(last_end), false, false))
            }
            (_, Some(to)) => Err(fail(
                to.col,
                "a comparison takes one date; a range is written without it, as in `date 2026-06-01 to 2026-06-30`",
            )),
            // A date written to the month or year spans its days: after June is after its
            // last day, before June before its first.
            (Cmp::Gt, None) => Ok(clause(Some(end), None, true, false)),
            (Cmp::Ge, None) => Ok(clause(Some(start), None, false, false)),
            (Cmp::Lt, None) => Ok(clause(None, Some(start), false, true)),
            (Cmp::Le, None) => Ok(clause(None, Some(end), false, false)),
            _ => Ok(clause(Some(start), Some(end), false, false)),
        }
    }

    fn text(&mut self, field: Field, word: &Token) -> Result<Clause> {
        let f = field.name();
        let Some(t) = self.take() else {
            return Err(fail(
                word.end_col(),
                format!(
                    "expected a value after `{}`, as in `{}` (quote \"{}\" to search for the word itself)",
                    word.text,
                    field.example(),
                    word.text
                ),
            ));
        };
        if let Kind::Sign(_) = t.kind {
            return Err(fail(
                t.col,
                format!("{f} takes a value, not a comparison: write `{}`", field.example()),
            ));
        }
        if t.is_keyword() {
            return Err(fail(
                t.col,
                format!(
                    "expected a value for {f}, found the word `{}` that starts a condition of its own; quote a value that is such a word: `{f} \"{}\"`",
                    t.text, t.text
                ),
            ));
        }
        if t.text.trim().is_empty() {
            return Err(fail(t.col, format!("expected a value for {f}, got an empty phrase")));
        }
        if field == Field::Status && t.text.to_ascii_lowercase().parse::<BatchStatus>().is_err() {
            return Err(fail(
                t.col,
                format!(
                    "unknown status '{}' (use one of {})",
                    t.text,
                    BatchStatus::WORDS.join(", ")
                ),
            ));
        }
        Ok(Clause::Text { field, value: t.text })
    }
}

/// A free word or phrase, refused when it is a form of the earlier language or over the bounds.
fn free_word(t: &Token, next: Option<&Token>, free_words: &mut usize) -> Result<Clause> {
    if t.kind == Kind::Word {
        refuse_old_form(t, next)?;
    }
    let chars = t.text.chars().count();
    // A quoted phrase is matched as a substring, whose cost is linear in its length.
    if chars > MAX_WORD_CHARS && !t.text.contains(char::is_whitespace) {
        let start: String = t.text.chars().take(20).collect();
        return Err(fail(
            t.col,
            format!("the word '{start}…' is {chars} characters long; at most {MAX_WORD_CHARS} are accepted"),
        ));
    }
    *free_words += 1;
    if *free_words > MAX_FREE_WORDS {
        return Err(fail(
            t.col,
            format!("more than {MAX_FREE_WORDS} free words in one query"),
        ));
    }
    Ok(Clause::Word(t.text.to_lowercase()))
}

/// Parses a query. An empty query matches everything.
pub fn parse(q: &str) -> Result<Query> {
    let length = q.chars().count();
    if length > MAX_QUERY_CHARS {
        return Err(fail(
            MAX_QUERY_CHARS + 1,
            format!("the query is {length} characters long; at most {MAX_QUERY_CHARS} are accepted"),
        ));
    }
    let mut p = Parser { tokens: lex(q)?, at: 0 };
    let mut clauses = Vec::new();
    let mut free_words = 0;
    while let Some(t) = p.take() {
        let clause = match t.kind {
            Kind::Sign(_) => {
                return Err(fail(
                    t.col,
                    format!("`{}` needs a field before it, as in `size {} 3.2`", t.text, t.text),
                ));
            }
            Kind::Phrase if t.text.is_empty() => continue,
            Kind::Phrase => free_word(&t, p.peek(), &mut free_words)?,
            Kind::Word => match Field::named(&t.text) {
                _ if t.is("stock") => Clause::Stock,
                Some(Field::Date) => p.date(&t)?,
                Some(field) if field.numeric() => p.numeric(field, &t)?,
                Some(field) => p.text(field, &t)?,
                None => free_word(&t, p.peek(), &mut free_words)?,
            },
        };
        clauses.push(clause);
    }
    Ok(Query { clauses })
}
