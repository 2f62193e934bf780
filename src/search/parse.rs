//! The query parser. It keeps each clause's column (in characters, 1-based) so errors can
//! point at it. Any text gives a query or a one-line error, never a panic: user text is only
//! ever cut at the ASCII operators the parser itself found. Length is bounded so that search
//! stays cheap: a query of at most [`MAX_QUERY_CHARS`] characters, free words of at most
//! [`MAX_WORD_CHARS`] and at most [`MAX_FREE_WORDS`] of them (each is scored against every
//! distinct word of the lab).

use crate::error::{Error, Result};

/// The longest query accepted, in characters.
pub const MAX_QUERY_CHARS: usize = 500;
/// The longest free word (typo-tolerant matching costs the product of two words' lengths).
pub const MAX_WORD_CHARS: usize = 64;
/// The most free words in one query.
pub const MAX_FREE_WORDS: usize = 16;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Field {
    Size,
    Peak,
    Pl,
    Qy,
    Fwhm,
    Dispersion,
    Conc,
    Material,
    By,
    Status,
    At,
    Date,
    Recipe,
    Id,
}

pub const FIELD_NAMES: &[(&str, Field)] = &[
    ("size", Field::Size),
    ("peak", Field::Peak),
    ("pl", Field::Pl),
    ("qy", Field::Qy),
    ("fwhm", Field::Fwhm),
    ("dispersion", Field::Dispersion),
    ("conc", Field::Conc),
    ("material", Field::Material),
    ("by", Field::By),
    ("status", Field::Status),
    ("at", Field::At),
    ("date", Field::Date),
    ("recipe", Field::Recipe),
    ("id", Field::Id),
];

impl Field {
    pub fn name(self) -> &'static str {
        FIELD_NAMES
            .iter()
            .find(|(_, f)| *f == self)
            .map(|(n, _)| *n)
            .unwrap_or("?")
    }
    fn numeric(self) -> bool {
        matches!(
            self,
            Field::Size
                | Field::Peak
                | Field::Pl
                | Field::Qy
                | Field::Fwhm
                | Field::Dispersion
                | Field::Conc
                | Field::Id
        )
    }
}

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
    Word(String),
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
    /// Dates as YYYY-MM-DD strings, inclusive.
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

fn err<T>(column: usize, reason: impl Into<String>) -> Result<T> {
    Err(Error::Query {
        column,
        reason: reason.into(),
    })
}

/// Splits on whitespace, keeping "quoted phrases" and each token's 1-based column.
fn tokens(q: &str) -> Result<Vec<(usize, String)>> {
    let mut out = Vec::new();
    let chars: Vec<char> = q.chars().collect();
    let mut i = 0;
    while i < chars.len() {
        if chars[i].is_whitespace() {
            i += 1;
            continue;
        }
        let start = i;
        let mut tok = String::new();
        let mut in_quote = false;
        while i < chars.len() && (in_quote || !chars[i].is_whitespace()) {
            if chars[i] == '"' {
                in_quote = !in_quote;
            } else {
                tok.push(chars[i]);
            }
            i += 1;
        }
        if in_quote {
            return err(start + 1, "a quote is opened but never closed");
        }
        out.push((start + 1, tok));
    }
    Ok(out)
}

fn parse_number(field: Field, s: &str, column: usize) -> Result<f64> {
    let t = s.trim();
    if t.is_empty() {
        return err(column, format!("expected a number for {}", field.name()));
    }
    let (num, scale): (&str, f64) = match field {
        Field::Qy => t.strip_suffix('%').map_or((t, 1.0), |n| (n, 0.01)),
        Field::Conc => {
            // Unit suffixes are matched without case and with either micro sign; the number is
            // what precedes them in the text as typed, so nothing is cut inside a character.
            let lower = t.to_lowercase();
            let units: [(&str, f64); 6] = [
                ("nm", 1e-9),
                ("um", 1e-6),
                ("µm", 1e-6),
                ("μm", 1e-6),
                ("mm", 1e-3),
                ("m", 1.0),
            ];
            units
                .iter()
                .find(|(u, _)| lower.ends_with(u))
                .and_then(|(u, sc)| {
                    let cut = t.char_indices().rev().nth(u.chars().count() - 1).map(|(i, _)| i)?;
                    Some((&t[..cut], *sc))
                })
                .unwrap_or((t, 1.0))
        }
        Field::Size | Field::Peak | Field::Pl | Field::Fwhm => (t.strip_suffix("nm").unwrap_or(t), 1.0),
        Field::Dispersion => (t.strip_suffix('%').unwrap_or(t), 1.0),
        _ => (t, 1.0),
    };
    match num.trim().parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v * scale),
        _ => err(
            column,
            format!(
                "expected a number for {}, got '{s}'{}",
                field.name(),
                if field == Field::Qy {
                    " (a fraction such as 0.5, or 50%)"
                } else if field == Field::Conc {
                    " (mol/L, or with nM, uM, mM)"
                } else {
                    ""
                }
            ),
        ),
    }
}

fn parse_date(s: &str, column: usize) -> Result<String> {
    match chrono::NaiveDate::parse_from_str(s, "%Y-%m-%d") {
        Ok(d) => Ok(d.format("%Y-%m-%d").to_string()),
        Err(_) => err(column, format!("expected a date YYYY-MM-DD, got '{s}'")),
    }
}

/// Parses a query. An empty query matches everything.
pub fn parse(q: &str) -> Result<Query> {
    let length = q.chars().count();
    if length > MAX_QUERY_CHARS {
        return err(
            MAX_QUERY_CHARS + 1,
            format!("the query is {length} characters long; at most {MAX_QUERY_CHARS} are accepted"),
        );
    }
    let mut clauses = Vec::new();
    let mut free_words = 0;
    for (col, tok) in tokens(q)? {
        if tok.eq_ignore_ascii_case("stock") {
            clauses.push(Clause::Stock);
            continue;
        }
        // Find the operator: the first of ':', '>=', '<=', '>', '<'.
        let op_at = tok.find([':', '>', '<']);
        let Some(p) = op_at else {
            let chars = tok.chars().count();
            // A quoted phrase is matched as a substring, whose cost is linear in its length.
            if chars > MAX_WORD_CHARS && !tok.contains(char::is_whitespace) {
                let start: String = tok.chars().take(20).collect();
                return err(
                    col,
                    format!("the word '{start}…' is {chars} characters long; at most {MAX_WORD_CHARS} are accepted"),
                );
            }
            free_words += 1;
            if free_words > MAX_FREE_WORDS {
                return err(col, format!("more than {MAX_FREE_WORDS} free words in one query"));
            }
            clauses.push(Clause::Word(tok.to_lowercase()));
            continue;
        };
        let name = &tok[..p];
        if name.is_empty() {
            return err(col, format!("expected a field name before '{}'", &tok[p..p + 1]));
        }
        let Some(field) = FIELD_NAMES
            .iter()
            .find(|(n, _)| n.eq_ignore_ascii_case(name))
            .map(|(_, f)| *f)
        else {
            return err(
                col,
                format!(
                    "unknown field '{name}' (fields: {})",
                    FIELD_NAMES.iter().map(|(n, _)| *n).collect::<Vec<_>>().join(", ")
                ),
            );
        };
        let rest = &tok[p..];
        let (cmp, value, vcol) = if let Some(v) = rest.strip_prefix(">=") {
            (Cmp::Ge, v, col + p + 2)
        } else if let Some(v) = rest.strip_prefix("<=") {
            (Cmp::Le, v, col + p + 2)
        } else if let Some(v) = rest.strip_prefix('>') {
            (Cmp::Gt, v, col + p + 1)
        } else if let Some(v) = rest.strip_prefix('<') {
            (Cmp::Lt, v, col + p + 1)
        } else {
            let v = &rest[1..];
            (if v.contains("..") { Cmp::Range } else { Cmp::Eq }, v, col + p + 1)
        };
        // The field name matched an ASCII name, so byte and character offsets agree up to and
        // including the operator.
        if value.is_empty() {
            return err(vcol, format!("expected a value after '{}'", &tok[..vcol - col]));
        }
        match field {
            _ if field.numeric() => {
                let (lo, hi, slo, shi) = match cmp {
                    Cmp::Gt => (Some(parse_number(field, value, vcol)?), None, true, false),
                    Cmp::Ge => (Some(parse_number(field, value, vcol)?), None, false, false),
                    Cmp::Lt => (None, Some(parse_number(field, value, vcol)?), false, true),
                    Cmp::Le => (None, Some(parse_number(field, value, vcol)?), false, false),
                    Cmp::Range => {
                        let (a, b) = value.split_once("..").unwrap_or((value, ""));
                        if a.is_empty() && b.is_empty() {
                            return err(vcol, "expected a number on at least one side of '..'");
                        }
                        let lo = if a.is_empty() {
                            None
                        } else {
                            Some(parse_number(field, a, vcol)?)
                        };
                        let hi = if b.is_empty() {
                            None
                        } else {
                            Some(parse_number(field, b, vcol + a.chars().count() + 2)?)
                        };
                        if let (Some(l), Some(h)) = (lo, hi)
                            && l > h
                        {
                            return err(
                                vcol,
                                format!("the range {value} is empty: its low end is above its high end"),
                            );
                        }
                        (lo, hi, false, false)
                    }
                    Cmp::Eq => {
                        // "size:3.5" means a value that rounds to 3.5 at the precision given.
                        let v = parse_number(field, value, vcol)?;
                        let decimals = value
                            .trim_end_matches(|c: char| !c.is_ascii_digit())
                            .split('.')
                            .nth(1)
                            .map(|d| d.len())
                            .unwrap_or(0);
                        let scale = if field == Field::Qy && value.trim().ends_with('%') {
                            0.01
                        } else {
                            1.0
                        };
                        let half = 0.5 * 10f64.powi(-(decimals as i32)) * scale;
                        if field == Field::Id {
                            (Some(v), Some(v), false, false)
                        } else {
                            (Some(v - half), Some(v + half), false, true)
                        }
                    }
                };
                clauses.push(Clause::Numeric {
                    field,
                    cmp,
                    lo,
                    hi,
                    strict_lo: slo,
                    strict_hi: shi,
                });
            }
            Field::Date => {
                let (lo, hi, slo, shi) = match cmp {
                    Cmp::Gt => (Some(parse_date(value, vcol)?), None, true, false),
                    Cmp::Ge => (Some(parse_date(value, vcol)?), None, false, false),
                    Cmp::Lt => (None, Some(parse_date(value, vcol)?), false, true),
                    Cmp::Le => (None, Some(parse_date(value, vcol)?), false, false),
                    Cmp::Range => {
                        let (a, b) = value.split_once("..").unwrap_or((value, ""));
                        if a.is_empty() && b.is_empty() {
                            return err(vcol, "expected a date on at least one side of '..'");
                        }
                        let lo = if a.is_empty() { None } else { Some(parse_date(a, vcol)?) };
                        let hi = if b.is_empty() {
                            None
                        } else {
                            Some(parse_date(b, vcol + a.chars().count() + 2)?)
                        };
                        (lo, hi, false, false)
                    }
                    Cmp::Eq => {
                        let d = parse_date(value, vcol)?;
                        (Some(d.clone()), Some(d), false, false)
                    }
                };
                clauses.push(Clause::Date {
                    lo,
                    hi,
                    strict_lo: slo,
                    strict_hi: shi,
                });
            }
            _ => {
                if cmp != Cmp::Eq {
                    return err(
                        col + p,
                        format!("{} takes ':' and a value, not a comparison", field.name()),
                    );
                }
                if field == Field::Status
                    && !crate::store::model::BATCH_STATUSES.contains(&value.to_ascii_lowercase().as_str())
                {
                    return err(
                        vcol,
                        format!(
                            "unknown status '{value}' (use one of {})",
                            crate::store::model::BATCH_STATUSES.join(", ")
                        ),
                    );
                }
                clauses.push(Clause::Text {
                    field,
                    value: value.to_string(),
                });
            }
        }
    }
    Ok(Query { clauses })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_the_documented_forms() {
        let q = parse("CdSe size:3.5..4 qy>50% stock peak:..560 by:ada").unwrap();
        assert_eq!(q.clauses.len(), 6);
        assert_eq!(q.clauses[0], Clause::Word("cdse".into()));
        assert_eq!(
            q.clauses[2],
            Clause::Numeric {
                field: Field::Qy,
                cmp: Cmp::Gt,
                lo: Some(0.5),
                hi: None,
                strict_lo: true,
                strict_hi: false
            }
        );
    }

    #[test]
    fn errors_point_at_the_column() {
        let e = parse("CdSe size>abc").unwrap_err().to_string();
        assert_eq!(e, "query error at column 11: expected a number for size, got 'abc'");
        let e = parse("sise:3").unwrap_err().to_string();
        assert!(e.starts_with("query error at column 1: unknown field 'sise'"), "{e}");
        let e = parse("size:4..3").unwrap_err().to_string();
        assert!(e.contains("column 6"), "{e}");
        let e = parse("date:2026-13-01").unwrap_err().to_string();
        assert!(e.contains("column 6") && e.contains("YYYY-MM-DD"), "{e}");
    }
}
