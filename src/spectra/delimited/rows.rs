//! The text as rows for the table walk ([`RowSource`]): each line scanned cell by cell, or on
//! the one-pass path as plain numbers, with comments and begin/end marker lines recognised.
//! Promises: cells that could be misread (a thousands separator, a whole number in a
//! decimal-comma file) are noted as met, at most [`ODDITY_CAP`] of each sort, for judging once
//! the data block is known.

use crate::error::Result;
use crate::spectra::grid::{RowKind, RowSource};

use super::cells::{Delim, cells, unquote};
use super::numbers::{DeferredColumn, Num, is_whole, parse_num, plain_cells, plain_row};

/// A cell that could be misread, as met, for judging once the data block is known.
#[derive(Debug, Clone)]
pub(super) struct Oddity {
    pub(super) line: usize,
    pub(super) column: usize,
    pub(super) cell: String,
}

/// Keeps at most this many oddities of each sort: enough to judge and name the first in the
/// data, without a pathological file growing a list per cell.
const ODDITY_CAP: usize = 256;

#[derive(Debug, Default)]
pub(super) struct Oddities {
    pub(super) grouped: Vec<Oddity>,
    pub(super) comma_group: Vec<Oddity>,
    pub(super) dot_group: Vec<Oddity>,
    pub(super) comma_group_like: Vec<Oddity>,
    /// Per column: the first line with a whole number, in a decimal-comma file.
    pub(super) whole: Vec<Option<usize>>,
    pub(super) quoted: bool,
}

fn note(v: &mut Vec<Oddity>, line: usize, column: usize, cell: &str) {
    if v.len() < ODDITY_CAP {
        v.push(Oddity {
            line,
            column,
            cell: unquote(cell).to_string(),
        });
    }
}

pub(super) struct TextRows<'a> {
    pub(super) text: &'a str,
    pub(super) spans: &'a [(usize, usize)],
    pub(super) delim: Delim,
    pub(super) comma_decimal: bool,
    pub(super) odd: Oddities,
    /// Count oddities only on the chosen reading, not while trying candidates.
    pub(super) record: bool,
    /// Read plain rows on the one-pass path (off only to test it against the general one).
    pub(super) plain: bool,
}

/// Whether a line is a comment: `#`, `%` or `;` first (not a rule of `#`).
pub(super) fn is_comment(line: &str) -> bool {
    let t = line.trim_start();
    (t.starts_with('#') && !t.bytes().all(|c| c == b'#' || c == b' ')) || t.starts_with("//")
}

impl TextRows<'_> {
    pub(super) fn line_text(&self, i: usize) -> &str {
        let (a, b) = self.spans[i];
        &self.text[a..b]
    }

    /// A row cell by cell: comments, quotes, empty cells, thousands separators, words.
    #[inline(never)]
    fn scan_cells(&mut self, i: usize, out: &mut Vec<Option<f64>>) -> Result<RowKind> {
        let (a, b) = self.spans[i];
        let text: &str = self.text;
        let line = &text[a..b];
        if is_comment(line) {
            return Ok(RowKind::Comment);
        }
        let start = out.len();
        let mut count = 0;
        for (k, cell) in cells(line, self.delim).enumerate() {
            let v = match parse_num(cell, self.comma_decimal) {
                Num::Empty => None,
                Num::Value(v) => {
                    if self.record && self.comma_decimal && is_whole(cell) {
                        if self.odd.whole.len() <= k {
                            self.odd.whole.resize(k + 1, None);
                        }
                        self.odd.whole[k].get_or_insert(i + 1);
                    }
                    Some(v)
                }
                Num::Grouped(v) => {
                    if self.record {
                        note(&mut self.odd.grouped, i + 1, k, cell);
                    }
                    Some(v)
                }
                Num::CommaGroup(v) => {
                    if self.record {
                        note(&mut self.odd.comma_group, i + 1, k, cell);
                    }
                    Some(v)
                }
                Num::CommaGroupLike(v) => {
                    if self.record {
                        note(&mut self.odd.comma_group_like, i + 1, k, cell);
                    }
                    Some(v)
                }
                Num::DotGroup => {
                    if self.record {
                        note(&mut self.odd.dot_group, i + 1, k, cell);
                    }
                    // Read as thousands for now; the judgement after the walk refuses it.
                    Some(f64::NAN)
                }
                Num::Text => return Ok(RowKind::Text { first_text: k }),
            };
            if self.record && !self.odd.quoted && v.is_some() && cell.bytes().find(|c| *c != b' ') == Some(b'"') {
                self.odd.quoted = true;
            }
            count += usize::from(v.is_some());
            out.push(v);
        }
        while out.len() > start && out.last().is_some_and(Option::is_none) {
            out.pop();
        }
        Ok(if count == 0 {
            RowKind::Empty
        } else {
            RowKind::Numbers { count }
        })
    }
}

impl RowSource for TextRows<'_> {
    fn line(&self, i: usize) -> usize {
        i + 1
    }

    #[inline]
    fn scan(&mut self, i: usize, out: &mut Vec<Option<f64>>) -> Result<RowKind> {
        match self.plain(i, out) {
            Some(count) => Ok(RowKind::Numbers { count }),
            None => self.scan_cells(i, out),
        }
    }

    /// The common row, plain decimals between delimiters, in one pass; it reads exactly as the
    /// comment test and the cell-by-cell loop would (see `plain_row`).
    #[inline]
    fn plain(&mut self, i: usize, out: &mut Vec<Option<f64>>) -> Option<usize> {
        if !self.plain || self.comma_decimal {
            return None;
        }
        let (a, b) = self.spans[i];
        plain_row(self.text.as_bytes(), a, b, self.delim, out)
    }

    /// The block as the trait's reading finds it, each row read straight into the columns.
    fn plain_block(&mut self, range: std::ops::Range<usize>) -> Option<(usize, Vec<Vec<f64>>)> {
        if !self.plain || self.comma_decimal {
            return None;
        }
        let buf = self.text.as_bytes();
        let delim = self.delim;
        let spans = self.spans.get(range.clone())?;
        let mut row: Vec<Option<f64>> = Vec::with_capacity(8);
        let &(a, b) = spans.last()?;
        plain_row(buf, a, b, delim, &mut row)?;
        let first = spans.iter().position(|&(a, b)| {
            row.clear();
            plain_row(buf, a, b, delim, &mut row).is_some()
        })?;
        let width = row.len();
        if width < 2 {
            return None;
        }
        let block = &spans[first..];
        let mut columns: Vec<DeferredColumn> = Vec::with_capacity(width);
        plain_cells(buf, block[0].0, block[0].1, delim, width, |_, m, frac| {
            let mut values = Vec::with_capacity(block.len());
            values.push(m);
            columns.push(DeferredColumn { values, frac });
        })?;
        if width == 2 {
            // The commonest table, x and y: the two columns apart, so that each number goes
            // straight to its own.
            let (xs, ys) = columns.split_at_mut(1);
            let (xs, ys) = (&mut xs[0], &mut ys[0]);
            for &(a, b) in &block[1..] {
                let n = plain_cells(buf, a, b, delim, 2, |k, m, frac| {
                    if k == 0 {
                        xs.push(m, frac);
                    } else {
                        ys.push(m, frac);
                    }
                });
                if n != Some(2) {
                    return None;
                }
            }
        } else {
            for &(a, b) in &block[1..] {
                let n = plain_cells(buf, a, b, delim, width, |k, m, frac| columns[k].push(m, frac));
                if n != Some(width) {
                    return None;
                }
            }
        }
        let columns = columns.into_iter().map(DeferredColumn::finish).collect();
        Some((range.start + first, columns))
    }

    fn forget(&mut self) {
        self.odd = Oddities::default();
    }

    fn texts(&self, i: usize) -> Vec<String> {
        let line = self.line_text(i);
        let line = line.trim();
        // A commented header ("# nm, A") is still a header.
        let line = match line.strip_prefix('#') {
            Some(rest) if !rest.trim().is_empty() && !rest.starts_with('#') => rest,
            _ => line,
        };
        let mut v: Vec<String> = if self.delim == Delim::Space {
            // Headers in whitespace files often hold spaces ("Wavelength (nm)  Abs"): split
            // on runs of two or more blanks or tabs when that gives several cells.
            let wide: Vec<String> = line
                .split('\t')
                .flat_map(|p| p.split("  "))
                .map(str::trim)
                .filter(|s| !s.is_empty())
                .map(str::to_string)
                .collect();
            if wide.len() >= 2 {
                wide
            } else {
                line.split_whitespace().map(str::to_string).collect()
            }
        } else {
            cells(line, self.delim).map(|c| unquote(c).to_string()).collect()
        };
        while v.last().is_some_and(String::is_empty) {
            v.pop();
        }
        v
    }
}

/// A line that opens framed data ("begin spectral data", ">>> start of data <<<") or closes it.
#[inline]
pub(super) fn marker(line: &str) -> Option<bool> {
    // Rows of numbers, the bulk of any file, are no marker: reject them before any work (and
    // without a call, as this is asked of every line).
    if line
        .as_bytes()
        .first()
        .is_some_and(|c| c.is_ascii_digit() || *c == b'.')
    {
        return None;
    }
    marker_words(line)
}

/// [`marker`] for a line that does not start like a number.
#[inline(never)]
fn marker_words(line: &str) -> Option<bool> {
    let t = line.trim();
    if t.is_empty() || t.len() > 80 || t.bytes().any(|c| c.is_ascii_digit() || c == b':' || c == b'=') {
        return None;
    }
    let lower = t.to_ascii_lowercase();
    let words: Vec<&str> = lower
        .split(|c: char| !c.is_ascii_alphabetic())
        .filter(|w| !w.is_empty())
        .collect();
    if words.len() > 6 {
        return None;
    }
    let about_data = words
        .iter()
        .any(|w| matches!(*w, "data" | "spectrum" | "spectral" | "xydata"));
    if !about_data {
        return None;
    }
    if words.iter().any(|w| matches!(*w, "begin" | "start" | "beginning")) {
        Some(true)
    } else if words.iter().any(|w| matches!(*w, "end")) {
        Some(false)
    } else {
        None
    }
}
