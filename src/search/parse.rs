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

use crate::error::{Error, Result};
use crate::vocab::{BatchStatus, Vocabulary};
use chrono::{Datelike, NaiveDate};

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

    /// The field a word names, without regard to case.
    pub fn named(word: &str) -> Option<Field> {
        FIELD_NAMES
            .iter()
            .find(|(n, _)| n.eq_ignore_ascii_case(word))
            .map(|(_, f)| *f)
    }

    pub(crate) fn numeric(self) -> bool {
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

    /// A condition of this field as people write it, for the hints in errors.
    fn example(self) -> &'static str {
        match self {
            Field::Size => "size 3.5 to 4",
            Field::Peak => "peak > 520 nm",
            Field::Pl => "pl 610-630",
            Field::Qy => "qy >= 50%",
            Field::Fwhm => "fwhm < 30",
            Field::Dispersion => "dispersion < 8 %",
            Field::Conc => "conc > 2 uM",
            Field::Id => "id 12",
            Field::Date => "date 2026-06-01 to 2026-06-30",
            Field::Material => "material CdSe",
            Field::By => "by \"Wren Halloway\"",
            Field::Status => "status done",
            Field::At => "at freezer",
            Field::Recipe => "recipe \"ZnS shell\"",
        }
    }

    /// The units a number of this field may carry, for the hints in errors.
    fn units(self) -> &'static str {
        crate::vocab::quantity::searched_by(self.name()).map_or("no unit", |q| q.search_units)
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

/// The comparison sign at `i`, with its length in characters.
fn sign_at(chars: &[char], i: usize) -> Option<(Cmp, usize)> {
    let next_is_eq = chars.get(i + 1) == Some(&'=');
    match chars.get(i)? {
        '>' if next_is_eq => Some((Cmp::Ge, 2)),
        '<' if next_is_eq => Some((Cmp::Le, 2)),
        '>' => Some((Cmp::Gt, 1)),
        '<' => Some((Cmp::Lt, 1)),
        '=' => Some((Cmp::Eq, 1)),
        '≥' => Some((Cmp::Ge, 1)),
        '≤' => Some((Cmp::Le, 1)),
        _ => None,
    }
}

/// Cuts a query into words, phrases and signs. A word that holds a ':' runs on to the next
/// space, so the whole of an old `field:value` form can be shown back in its error.
fn lex(q: &str) -> Result<Vec<Token>> {
    let chars: Vec<char> = q.chars().collect();
    let mut out = Vec::new();
    let mut i = 0;
    while i < chars.len() {
        let col = i + 1;
        if chars[i].is_whitespace() {
            i += 1;
        } else if chars[i] == '"' {
            let close = chars[i + 1..]
                .iter()
                .position(|&c| c == '"')
                .ok_or_else(|| fail(col, "a quote is opened but never closed"))?;
            out.push(Token {
                col,
                text: chars[i + 1..i + 1 + close].iter().collect(),
                kind: Kind::Phrase,
            });
            i += close + 2;
        } else if let Some((cmp, n)) = sign_at(&chars, i) {
            out.push(Token {
                col,
                text: chars[i..i + n].iter().collect(),
                kind: Kind::Sign(cmp),
            });
            i += n;
        } else {
            let start = i;
            let mut colon = false;
            while i < chars.len()
                && !chars[i].is_whitespace()
                && chars[i] != '"'
                && (colon || sign_at(&chars, i).is_none())
            {
                colon |= chars[i] == ':';
                i += 1;
            }
            out.push(Token {
                col,
                text: chars[start..i].iter().collect(),
                kind: Kind::Word,
            });
        }
    }
    Ok(out)
}

/// The new form of an old `LOW..HIGH` range of a field, when `value` is one.
fn new_range(f: &str, value: &str) -> Option<String> {
    Some(match value.split_once("..")? {
        ("", "") => format!("{f} LOW to HIGH"),
        (a, "") => format!("{f} >= {a}"),
        ("", b) => format!("{f} <= {b}"),
        (a, b) => format!("{f} {a} to {b}"),
    })
}

fn old_form(t: &Token, new: &str) -> Error {
    fail(t.col, format!("`{}` is the old form; write `{new}`", t.text))
}

/// Refuses the forms of the earlier language, showing the form that replaces each; `next` is
/// the token after, which holds the value of an old `by:"two words"`.
fn refuse_old_form(t: &Token, next: Option<&Token>) -> Result<()> {
    if let Some((name, value)) = t.text.split_once(':')
        && let Some(field) = Field::named(name)
    {
        let f = field.name();
        let new = match new_range(f, value) {
            Some(new) => new,
            None if value.is_empty() => match next.filter(|n| n.kind == Kind::Phrase) {
                Some(n) => format!("{f} \"{}\"", n.text),
                None => field.example().to_string(),
            },
            None => {
                let chars: Vec<char> = value.chars().collect();
                match sign_at(&chars, 0) {
                    Some((_, n)) => format!(
                        "{f} {} {}",
                        chars[..n].iter().collect::<String>(),
                        chars[n..].iter().collect::<String>()
                    ),
                    None => format!("{f} {value}"),
                }
            }
        };
        return Err(old_form(t, &new));
    }
    if t.text.contains("..")
        && t.text.starts_with(|c: char| c.is_ascii_digit() || c == '.')
        && t.text.contains(|c: char| c.is_ascii_digit())
    {
        return Err(fail(
            t.col,
            format!(
                "`{}` is the old range form; a range follows its field and takes `to`, as in `size 3.5 to 4`",
                t.text
            ),
        ));
    }
    Ok(())
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

/// The factor from a unit word to the field's stored units.
fn unit_factor(field: Field, unit: &str, col: usize) -> Result<f64> {
    let u = unit.to_lowercase();
    let factor = match (field, u.as_str()) {
        (Field::Size | Field::Peak | Field::Pl | Field::Fwhm, "nm") => Some(1.0),
        (Field::Qy, "%") => Some(0.01),
        (Field::Dispersion, "%") => Some(1.0),
        (Field::Conc, "m") => Some(1.0),
        (Field::Conc, "mm") => Some(1e-3),
        (Field::Conc, "um" | "µm" | "μm") => Some(1e-6),
        (Field::Conc, "nm") => Some(1e-9),
        (Field::Conc, "pm") => Some(1e-12),
        _ => None,
    };
    factor.ok_or_else(|| {
        fail(
            col,
            format!(
                "`{unit}` is not a unit of {} ({} takes {})",
                field.name(),
                field.name(),
                field.units()
            ),
        )
    })
}

/// Whether a word stands for a unit of some field, so that it may follow its number.
fn is_unit_word(t: &Token) -> bool {
    t.kind == Kind::Word
        && matches!(
            t.text.to_lowercase().as_str(),
            "nm" | "%" | "m" | "mm" | "um" | "µm" | "μm" | "pm"
        )
}

/// Reads a number with the unit written onto it (`520nm`, `45%`, `2uM`) from the start of
/// `s`; returns it and, when a dash follows, the text after the dash with its column.
fn scan_amount(field: Field, s: &str, col: usize) -> Result<(Amount, Option<(String, usize)>)> {
    let chars: Vec<char> = s.chars().collect();
    let not_a_number = || fail(col, format!("expected a number for {}, got `{s}`", field.name()));
    if chars.first() == Some(&'-') {
        return Err(fail(
            col,
            format!(
                "{} is never negative; a dash joins the two ends of a range, as in `{}`",
                field.name(),
                if field == Field::Size { "size 3-4" } else { "pl 610-630" }
            ),
        ));
    }
    let mut i = chars.iter().take_while(|c| c.is_ascii_digit() || **c == '.').count();
    let mantissa: String = chars[..i].iter().collect();
    if !mantissa.contains(|c: char| c.is_ascii_digit()) {
        return Err(not_a_number());
    }
    if chars.get(i) == Some(&',') {
        return Err(fail(
            col + i,
            format!("`{s}`: write numbers without commas, with a point for decimals (`3.5`, `1100`)"),
        ));
    }
    let mut exponent = 0i32;
    if matches!(chars.get(i), Some('e' | 'E')) {
        let mut j = i + 1;
        if matches!(chars.get(j), Some('+' | '-')) {
            j += 1;
        }
        let digits = chars[j.min(chars.len())..]
            .iter()
            .take_while(|c| c.is_ascii_digit())
            .count();
        if digits > 0 {
            exponent = chars[i + 1..j + digits]
                .iter()
                .collect::<String>()
                .parse()
                .map_err(|_| not_a_number())?;
            i = j + digits;
        }
    }
    let number: f64 = chars[..i]
        .iter()
        .collect::<String>()
        .parse()
        .map_err(|_| not_a_number())?;
    if !number.is_finite() {
        return Err(fail(col, format!("the number `{s}` is too large")));
    }
    let decimals = mantissa.split_once('.').map_or(0, |(_, d)| d.len()) as i32;
    let half = 0.5 * 10f64.powi(exponent.saturating_sub(decimals));
    let dash = chars[i..].iter().position(|&c| c == '-').map(|k| i + k);
    let unit_end = dash.unwrap_or(chars.len());
    let unit_text: String = chars[i..unit_end].iter().collect();
    let unit = if unit_text.is_empty() {
        None
    } else if unit_text.contains(|c: char| c.is_ascii_digit() || c == '.') {
        return Err(not_a_number());
    } else {
        Some(unit_factor(field, &unit_text, col + i)?)
    };
    let amount = Amount {
        number,
        half,
        unit,
        col,
        text: chars[..unit_end].iter().collect(),
    };
    let rest = dash.map(|k| (chars[k + 1..].iter().collect(), col + k + 1));
    Ok((amount, rest))
}

/// A value in stored units, refusing the bare numbers that cannot be what was meant. `said`
/// is what comes before the number (`qy >`), for the hint; `None` for an end of a range.
fn resolve(field: Field, a: &Amount, said: Option<&str>) -> Result<f64> {
    use super::describe::number;
    let v = a.number * a.unit.unwrap_or(1.0);
    let n = &a.text;
    match field {
        Field::Qy if a.unit.is_none() && v > 1.0 => Err(fail(
            a.col,
            match said {
                Some(s) => format!(
                    "QY is a fraction: write `{s} {}` or `{s} {n}%` (`{s} {n}` would be {} %)",
                    number(v / 100.0),
                    number(v * 100.0)
                ),
                None => format!(
                    "QY is a fraction: write {} or {n}% for {n} per cent (a bare {n} would be {} %)",
                    number(v / 100.0),
                    number(v * 100.0)
                ),
            },
        )),
        Field::Conc if a.unit.is_none() && v >= 1.0 => Err(fail(
            a.col,
            match said {
                Some(s) => format!(
                    "conc without a unit is mol/L, so `{s} {n}` would be {n} M; write the unit: `{s} {n} uM` (or nM, mM)"
                ),
                None => {
                    format!("conc without a unit is mol/L, so {n} would be {n} M; write the unit, as in `conc 1-2 uM`")
                }
            },
        )),
        Field::Id if v.fract() != 0.0 => Err(fail(a.col, format!("id is a whole batch number, got `{n}`"))),
        _ => Ok(v),
    }
}

/// A day span of a date written as YYYY, YYYY-MM or YYYY-MM-DD: its first and last day.
fn day_span(t: &Token) -> Result<(NaiveDate, NaiveDate)> {
    let bad = || {
        fail(
            t.col,
            format!("expected a date YYYY-MM-DD (or YYYY-MM, YYYY), got `{}`", t.text),
        )
    };
    if t.kind != Kind::Word {
        return Err(bad());
    }
    let parts: Vec<&str> = t.text.split('-').collect();
    let number = |p: &str, most: usize| {
        (!p.is_empty() && p.len() <= most && p.bytes().all(|b| b.is_ascii_digit()))
            .then(|| p.parse::<u32>().ok())
            .flatten()
    };
    if parts.len() > 3 && day_span_of(&parts[..3], number).is_some() {
        return Err(fail(
            t.col,
            "dates have dashes of their own: write a range of dates with `to`, as in `date 2026-06-01 to 2026-06-30`",
        ));
    }
    day_span_of(&parts, number).ok_or_else(bad)
}

fn day_span_of(parts: &[&str], number: impl Fn(&str, usize) -> Option<u32>) -> Option<(NaiveDate, NaiveDate)> {
    let year = parts.first().filter(|y| y.len() == 4).and_then(|y| number(y, 4))? as i32;
    match parts[1..] {
        [] => Some((
            NaiveDate::from_ymd_opt(year, 1, 1)?,
            NaiveDate::from_ymd_opt(year, 12, 31)?,
        )),
        [m] => {
            let first = NaiveDate::from_ymd_opt(year, number(m, 2)?, 1)?;
            let next = if first.month() == 12 {
                NaiveDate::from_ymd_opt(year + 1, 1, 1)?
            } else {
                NaiveDate::from_ymd_opt(year, first.month() + 1, 1)?
            };
            Some((first, next.pred_opt()?))
        }
        [m, d] => {
            let day = NaiveDate::from_ymd_opt(year, number(m, 2)?, number(d, 2)?)?;
            Some((day, day))
        }
        _ => None,
    }
}

fn day(d: NaiveDate) -> Option<String> {
    Some(d.format("%Y-%m-%d").to_string())
}

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

#[cfg(test)]
mod tests {
    use super::*;

    fn num(field: Field, cmp: Cmp, lo: Option<f64>, hi: Option<f64>, strict_lo: bool, strict_hi: bool) -> Clause {
        Clause::Numeric {
            field,
            cmp,
            lo,
            hi,
            strict_lo,
            strict_hi,
        }
    }

    fn one(q: &str) -> Clause {
        let parsed = parse(q).unwrap_or_else(|e| panic!("{q}: {e}"));
        assert_eq!(parsed.clauses.len(), 1, "{q}: {parsed:?}");
        parsed.clauses[0].clone()
    }

    /// Numeric clauses compared with a hair of slack for decimal round-off.
    fn close(a: &Clause, b: &Clause) -> bool {
        let near = |x: Option<f64>, y: Option<f64>| match (x, y) {
            (Some(x), Some(y)) => (x - y).abs() <= 1e-12 * x.abs().max(y.abs()).max(1e-12),
            (None, None) => true,
            _ => false,
        };
        match (a, b) {
            (
                Clause::Numeric {
                    field: f1,
                    cmp: c1,
                    lo: l1,
                    hi: h1,
                    strict_lo: sl1,
                    strict_hi: sh1,
                },
                Clause::Numeric {
                    field: f2,
                    cmp: c2,
                    lo: l2,
                    hi: h2,
                    strict_lo: sl2,
                    strict_hi: sh2,
                },
            ) => f1 == f2 && c1 == c2 && sl1 == sl2 && sh1 == sh2 && near(*l1, *l2) && near(*h1, *h2),
            _ => a == b,
        }
    }

    #[test]
    fn the_contract_forms_parse_to_their_meaning() {
        use Cmp::*;
        use Field::*;
        let cases: &[(&str, Clause)] = &[
            ("size 3.5-4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
            ("size 3.5 to 4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
            ("size 3.5 TO 4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
            ("size 3.5 - 4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
            ("size 3.5 -4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
            ("size 3.5- 4", num(Size, Range, Some(3.5), Some(4.0), false, false)),
            ("size 3.5nm-4nm", num(Size, Range, Some(3.5), Some(4.0), false, false)),
            (
                "size 3.5 nm to 4 nm",
                num(Size, Range, Some(3.5), Some(4.0), false, false),
            ),
            ("size > 3.2", num(Size, Gt, Some(3.2), None, true, false)),
            ("size>3.2", num(Size, Gt, Some(3.2), None, true, false)),
            ("size >= 3", num(Size, Ge, Some(3.0), None, false, false)),
            ("size ≥ 3", num(Size, Ge, Some(3.0), None, false, false)),
            ("size<=3", num(Size, Le, None, Some(3.0), false, false)),
            ("qy < 0.3", num(Qy, Lt, None, Some(0.3), false, true)),
            ("qy >= 45%", num(Qy, Ge, Some(0.45), None, false, false)),
            ("qy>=45 %", num(Qy, Ge, Some(0.45), None, false, false)),
            ("QY 40-60%", num(Qy, Range, Some(0.4), Some(0.6), false, false)),
            ("qy 0.4 to 0.6", num(Qy, Range, Some(0.4), Some(0.6), false, false)),
            ("qy 1", num(Qy, Eq, Some(0.5), Some(1.5), false, true)),
            ("peak 520 nm", num(Peak, Eq, Some(519.5), Some(520.5), false, true)),
            ("peak 520nm", num(Peak, Eq, Some(519.5), Some(520.5), false, true)),
            ("pl < 620", num(Pl, Lt, None, Some(620.0), false, true)),
            ("fwhm <= 30 nm", num(Fwhm, Le, None, Some(30.0), false, false)),
            ("dispersion < 8 %", num(Dispersion, Lt, None, Some(8.0), false, true)),
            ("dispersion<8", num(Dispersion, Lt, None, Some(8.0), false, true)),
            ("conc > 2 uM", num(Conc, Gt, Some(2e-6), None, true, false)),
            ("conc > 2 µM", num(Conc, Gt, Some(2e-6), None, true, false)),
            ("conc>2μM", num(Conc, Gt, Some(2e-6), None, true, false)),
            ("conc > 2000 nM", num(Conc, Gt, Some(2e-6), None, true, false)),
            ("conc > 2e-6", num(Conc, Gt, Some(2e-6), None, true, false)),
            ("conc 1 to 2 mM", num(Conc, Range, Some(1e-3), Some(2e-3), false, false)),
            ("conc 2e-6-3e-6", num(Conc, Range, Some(2e-6), Some(3e-6), false, false)),
            ("id 12", num(Id, Eq, Some(12.0), Some(12.0), false, false)),
            ("id 10 to 20", num(Id, Range, Some(10.0), Some(20.0), false, false)),
            // Equal at the precision written, as the earlier language had it.
            ("size 3.5", num(Size, Eq, Some(3.45), Some(3.55), false, true)),
            ("size 3.50", num(Size, Eq, Some(3.495), Some(3.505), false, true)),
            ("size = 3.5", num(Size, Eq, Some(3.45), Some(3.55), false, true)),
            ("size 4", num(Size, Eq, Some(3.5), Some(4.5), false, true)),
            ("qy 45%", num(Qy, Eq, Some(0.445), Some(0.455), false, true)),
            ("qy 0.45", num(Qy, Eq, Some(0.445), Some(0.455), false, true)),
            ("conc 2 uM", num(Conc, Eq, Some(1.5e-6), Some(2.5e-6), false, true)),
            ("conc 2.5e-6", num(Conc, Eq, Some(2.45e-6), Some(2.55e-6), false, true)),
        ];
        for (q, want) in cases {
            let got = one(q);
            assert!(close(&got, want), "{q}: got {got:?}, want {want:?}");
        }
    }

    #[test]
    fn text_fields_dates_stock_and_words() {
        let text = |field, value: &str| Clause::Text {
            field,
            value: value.into(),
        };
        let date = |lo: Option<&str>, hi: Option<&str>, strict_lo, strict_hi| Clause::Date {
            lo: lo.map(String::from),
            hi: hi.map(String::from),
            strict_lo,
            strict_hi,
        };
        let cases: &[(&str, Clause)] = &[
            ("material CdSe", text(Field::Material, "CdSe")),
            ("Material CdSe/ZnS", text(Field::Material, "CdSe/ZnS")),
            ("material ZnSe:Mn", text(Field::Material, "ZnSe:Mn")),
            ("by \"Wren Halloway\"", text(Field::By, "Wren Halloway")),
            ("by wren", text(Field::By, "wren")),
            ("status done", text(Field::Status, "done")),
            ("at freezer", text(Field::At, "freezer")),
            ("recipe \"ZnS shell\"", text(Field::Recipe, "ZnS shell")),
            ("stock", Clause::Stock),
            ("STOCK", Clause::Stock),
            (
                "date 2026-06-01",
                date(Some("2026-06-01"), Some("2026-06-01"), false, false),
            ),
            (
                "date 2026-06-01 to 2026-06-30",
                date(Some("2026-06-01"), Some("2026-06-30"), false, false),
            ),
            (
                "date 2026-06",
                date(Some("2026-06-01"), Some("2026-06-30"), false, false),
            ),
            (
                "date 2024-02",
                date(Some("2024-02-01"), Some("2024-02-29"), false, false),
            ),
            (
                "date 2026-12",
                date(Some("2026-12-01"), Some("2026-12-31"), false, false),
            ),
            ("date 2026", date(Some("2026-01-01"), Some("2026-12-31"), false, false)),
            (
                "date 2026-06 to 2026-08",
                date(Some("2026-06-01"), Some("2026-08-31"), false, false),
            ),
            ("date > 2026-06", date(Some("2026-06-30"), None, true, false)),
            ("date >= 2026-06", date(Some("2026-06-01"), None, false, false)),
            ("date<2026-06", date(None, Some("2026-06-01"), false, true)),
            ("date <= 2026-06", date(None, Some("2026-06-30"), false, false)),
            (
                "date 2026-6-1",
                date(Some("2026-06-01"), Some("2026-06-01"), false, false),
            ),
            ("CdSe", Clause::Word("cdse".into())),
            ("\"ZnS shell\"", Clause::Word("zns shell".into())),
            // A quoted field word is a word to search for.
            ("\"size\"", Clause::Word("size".into())),
            // A word with a colon that names no field is text (doping is written `CdSe:Mn`).
            ("CdSe:Mn", Clause::Word("cdse:mn".into())),
            ("to", Clause::Word("to".into())),
            ("...", Clause::Word("...".into())),
        ];
        for (q, want) in cases {
            assert_eq!(&one(q), want, "{q}");
        }
        let q = parse("CdSe size 3.5 to 4 qy >= 50% stock by wren oleylamine").unwrap();
        assert_eq!(q.clauses.len(), 6);
        assert_eq!(q.words(), ["cdse", "oleylamine"]);
        assert_eq!(parse("").unwrap(), Query::default());
        assert_eq!(parse("  \"\"  ").unwrap(), Query::default());
    }

    #[test]
    fn errors_name_the_column_and_what_is_wrong() {
        let cases: &[(&str, &str)] = &[
            (
                "size 5-3",
                "query error at column 6: the range 5 to 3 is empty: its low end is above its high end",
            ),
            (
                "size 5 to 3",
                "query error at column 6: the range 5 to 3 is empty: its low end is above its high end",
            ),
            ("qy >", "query error at column 5: expected a number after `qy >`"),
            ("qy>", "query error at column 4: expected a number after `qy >`"),
            (
                "size abc",
                "query error at column 6: expected a number for size, got `abc`",
            ),
            (
                "CdSe size>abc",
                "query error at column 11: expected a number for size, got `abc`",
            ),
            (
                "size:3.5..4",
                "query error at column 1: `size:3.5..4` is the old form; write `size 3.5 to 4`",
            ),
            (
                "CdSe peak:..560",
                "query error at column 6: `peak:..560` is the old form; write `peak <= 560`",
            ),
            (
                "size:3..",
                "query error at column 1: `size:3..` is the old form; write `size >= 3`",
            ),
            (
                "material:CdSe",
                "query error at column 1: `material:CdSe` is the old form; write `material CdSe`",
            ),
            (
                "qy:>0.5",
                "query error at column 1: `qy:>0.5` is the old form; write `qy > 0.5`",
            ),
            (
                "by:\"Ilse Varga\"",
                "query error at column 1: `by:` is the old form; write `by \"Ilse Varga\"`",
            ),
            (
                "size 3..4",
                "query error at column 6: `3..4` is the old form; write `size 3 to 4`",
            ),
            (
                "date:2026-06-01..2026-06-30",
                "query error at column 1: `date:2026-06-01..2026-06-30` is the old form; write `date 2026-06-01 to 2026-06-30`",
            ),
            (
                "3..4",
                "query error at column 1: `3..4` is the old range form; a range follows its field and takes `to`, as in `size 3.5 to 4`",
            ),
            (
                "qy > 50",
                "query error at column 6: QY is a fraction: write `qy > 0.5` or `qy > 50%` (`qy > 50` would be 5000 %)",
            ),
            (
                "qy 45",
                "query error at column 4: QY is a fraction: write `qy 0.45` or `qy 45%` (`qy 45` would be 4500 %)",
            ),
            (
                "qy 40 to 60",
                "query error at column 4: QY is a fraction: write 0.4 or 40% for 40 per cent (a bare 40 would be 4000 %)",
            ),
            (
                "conc > 2",
                "query error at column 8: conc without a unit is mol/L, so `conc > 2` would be 2 M; write the unit: `conc > 2 uM` (or nM, mM)",
            ),
            (
                "size -3",
                "query error at column 6: size is never negative; a dash joins the two ends of a range, as in `size 3-4`",
            ),
            (
                "size > -3",
                "query error at column 8: size is never negative; a dash joins the two ends of a range, as in `size 3-4`",
            ),
            (
                "size 3-4-5",
                "query error at column 9: a range has two ends: one dash or one `to`",
            ),
            ("size 3 to", "query error at column 10: expected a number after `3 to`"),
            ("size 3 -", "query error at column 9: expected a number after `3 -`"),
            (
                "size > 3 to 4",
                "query error at column 10: a comparison takes one number; a range is written without it, as in `size 3.5 to 4`",
            ),
            (
                "size > 3-4",
                "query error at column 9: a comparison takes one number; a range is written without it, as in `size 3.5 to 4`",
            ),
            (
                "size 3 um",
                "query error at column 8: `um` is not a unit of size (size takes nm)",
            ),
            (
                "size 3%",
                "query error at column 7: `%` is not a unit of size (size takes nm)",
            ),
            (
                "qy > 0.5 nm",
                "query error at column 10: `nm` is not a unit of qy (qy takes a fraction or %)",
            ),
            (
                "peak 2.3eV",
                "query error at column 9: `eV` is not a unit of peak (peak takes nm)",
            ),
            (
                "id 3 nm",
                "query error at column 6: `nm` is not a unit of id (id takes no unit)",
            ),
            (
                "id 3.5",
                "query error at column 4: id is a whole batch number, got `3.5`",
            ),
            (
                "peak 1,100",
                "query error at column 7: `1,100`: write numbers without commas, with a point for decimals (`3.5`, `1100`)",
            ),
            ("size 1e999", "query error at column 6: the number `1e999` is too large"),
            (
                "size 3.5.4",
                "query error at column 6: expected a number for size, got `3.5.4`",
            ),
            (
                "size \"3\"",
                "query error at column 6: expected a number after `size`, got `3`",
            ),
            (
                "size >> 3",
                "query error at column 7: expected a number after `size >`, got `>`",
            ),
            (
                "size",
                "query error at column 5: expected a condition after `size`, as in `size 3.5 to 4` (quote \"size\" to search for the word itself)",
            ),
            (
                "CdSe material",
                "query error at column 14: expected a value after `material`, as in `material CdSe` (quote \"material\" to search for the word itself)",
            ),
            (
                "material > CdSe",
                "query error at column 10: material takes a value, not a comparison: write `material CdSe`",
            ),
            (
                "at stock",
                "query error at column 4: expected a value for at, found the word `stock` that starts a condition of its own; quote a value that is such a word: `at \"stock\"`",
            ),
            (
                "by \"\"",
                "query error at column 4: expected a value for by, got an empty phrase",
            ),
            (
                "status cooking",
                "query error at column 8: unknown status 'cooking' (use one of planned, growing, done, failed, archived)",
            ),
            (
                "> 3",
                "query error at column 1: `>` needs a field before it, as in `size > 3.2`",
            ),
            (
                "date 2026-06-01-2026-06-30",
                "query error at column 6: dates have dashes of their own: write a range of dates with `to`, as in `date 2026-06-01 to 2026-06-30`",
            ),
            (
                "date 2026-06-01 - 2026-06-30",
                "query error at column 17: dates have dashes of their own: write a range of dates with `to`, as in `date 2026-06-01 to 2026-06-30`",
            ),
            (
                "date 2026-02-30",
                "query error at column 6: expected a date YYYY-MM-DD (or YYYY-MM, YYYY), got `2026-02-30`",
            ),
            (
                "date 2026-13",
                "query error at column 6: expected a date YYYY-MM-DD (or YYYY-MM, YYYY), got `2026-13`",
            ),
            (
                "date 26-06-01",
                "query error at column 6: expected a date YYYY-MM-DD (or YYYY-MM, YYYY), got `26-06-01`",
            ),
            (
                "date 2026-06-30 to 2026-06-01",
                "query error at column 6: the range 2026-06-30 to 2026-06-01 is empty: its first day is after its last",
            ),
            (
                "date > 2026-06 to 2026-07",
                "query error at column 16: a comparison takes one date; a range is written without it, as in `date 2026-06-01 to 2026-06-30`",
            ),
            ("date >", "query error at column 7: expected a date after `date >`"),
            (
                "CdSe \"open",
                "query error at column 6: a quote is opened but never closed",
            ),
            // Columns count characters, not bytes: "µµ" is four bytes.
            (
                "µµ size abc",
                "query error at column 9: expected a number for size, got `abc`",
            ),
            (
                "conc > 1µµM",
                "query error at column 9: `µµM` is not a unit of conc (conc takes M, mM, uM (µM), nM or pM; mol/L when none is written)",
            ),
        ];
        for (q, want) in cases {
            match parse(q) {
                Ok(p) => panic!("{q} parsed: {p:?}"),
                Err(e) => assert_eq!(&e.to_string(), want, "{q}"),
            }
        }
    }

    #[test]
    fn lengths_are_bounded() {
        let e = parse(&"a ".repeat(300)).unwrap_err().to_string();
        assert!(e.contains("column 501") && e.contains("600 characters long"), "{e}");
        let e = parse(&format!("CdSe {}", "w".repeat(65))).unwrap_err().to_string();
        assert!(e.contains("column 6") && e.contains("65 characters long"), "{e}");
        let many = (0..17).map(|i| format!("w{i}")).collect::<Vec<_>>().join(" ");
        assert!(
            parse(&many)
                .unwrap_err()
                .to_string()
                .contains("more than 16 free words")
        );
        // Field conditions are not free words: many of them pass.
        let fields = "size > 1 ".repeat(40);
        assert_eq!(parse(&fields).unwrap().clauses.len(), 40);
    }
}

/// The words a query's last word may be the start of: the field names and `stock`.
fn unfinished_names(word: &str) -> Vec<&'static str> {
    if word.is_empty() || !word.chars().all(|c| c.is_ascii_alphabetic()) {
        return Vec::new();
    }
    let w = word.to_ascii_lowercase();
    let names: Vec<&'static str> = FIELD_NAMES.iter().map(|(n, _)| *n).chain(["stock"]).collect();
    if names.contains(&w.as_str()) {
        return Vec::new();
    }
    names.into_iter().filter(|n| n.starts_with(&w)).collect()
}

/// A query as it stands while it is being typed. A last word that is only the start of a
/// field name (`siz`, `mat`), with nothing after it, is left out until it is finished, so the
/// results do not flash to "no batch has the word siz" on the way to `size 3 to 4`. Returns the
/// query without that word, the word, and the names it could become (empty when the query is
/// whole). Finishing the query (Enter) takes the word as a free word, as [`parse`] does.
pub fn parse_typing(q: &str) -> Result<(Query, String, Vec<&'static str>)> {
    let whole = || parse(q).map(|p| (p, String::new(), Vec::new()));
    if q.ends_with(char::is_whitespace) || q.matches('"').count() % 2 == 1 {
        return whole();
    }
    let start = q.rfind(char::is_whitespace).map(|i| i + 1).unwrap_or(0);
    let last = &q[start..];
    let names = unfinished_names(last);
    if names.is_empty() {
        return whole();
    }
    match parse(&q[..start]) {
        Ok(head) => Ok((head, last.to_string(), names)),
        Err(_) => whole(),
    }
}

#[cfg(test)]
mod typing_tests {
    #![allow(clippy::unwrap_used)]
    use super::*;

    #[test]
    fn the_start_of_a_field_name_waits_until_it_is_finished() {
        let (q, word, names) = parse_typing("material CdSe siz").unwrap();
        assert_eq!(word, "siz");
        assert_eq!(names, ["size"]);
        assert!(q.words().is_empty(), "siz is not yet a free word");
        let (_, _, names) = parse_typing("s").unwrap();
        assert_eq!(names, ["size", "status", "stock"]);
        // A finished word, a word followed by a space, a non-prefix and a quoted one are whole.
        // A finished field name with no condition yet is what `parse` says: an error naming
        // the condition it expects, which the UI shows while keeping the last results.
        for whole in ["size", "siz ", "CdSe", "\"siz", "pbs", "stock"] {
            match (parse_typing(whole), parse(whole)) {
                (Ok((_, word, names)), Ok(_)) => {
                    assert!(word.is_empty() && names.is_empty(), "{whole}")
                }
                (Err(typing), Err(whole_error)) => {
                    assert_eq!(typing.to_string(), whole_error.to_string())
                }
                (typing, parsed) => panic!("{whole}: {typing:?} but parse says {parsed:?}"),
            }
        }
        assert!(
            parse_typing("size")
                .unwrap_err()
                .to_string()
                .contains("expected a condition")
        );
        // Whatever the head, the whole query is what `parse` says when the head fails.
        assert!(parse_typing("size > si").is_err());
    }
}
