//! A table of cells, and the one path from a table to spectra. Every tabular reader (delimited
//! text, spreadsheets) ends here, so a table means the same thing whichever file it came from.
//!
//! What a table is taken to hold: an optional preamble of key/value lines, an optional header
//! row, one block of rows of numbers (the data; empty rows inside it are skipped), and optional
//! notes or a trailing block of key/value lines below. The data block is the longest run of rows
//! of numbers. A row of numbers that holds a word (`402,oops`) is refused with its line; so is a
//! line of text wedged between rows of numbers. Rows of numbers outside the data block are
//! reported, never silently read.
//!
//! Columns: one x column shared by every y column, or (when the header names an x quantity over
//! several columns) one x column per sample, each y column taking the nearest x column to its
//! left. Each y column is one spectrum, labelled with its header.
//!
//! Here: the cell, grid and table types and the row-source trait both readers implement.
//! `walk` finds the data block, header, preamble and trailing blocks; `units` reads the x and
//! y units from headers and metadata; `columns` pairs y columns with x columns and turns the
//! table into spectra.

mod columns;
mod units;
mod walk;

use super::{RawSpectrum, ReadOptions};
use crate::error::Result;

pub(crate) use columns::several_spectra_error;
pub(crate) use columns::spectra_from_table;
pub(crate) use walk::key_value;
pub(crate) use walk::walk;

/// One cell as the file holds it.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    Number(f64),
    Text(String),
    Empty,
}

/// Rows of cells as the file holds them, with the 1-based line (or sheet row) of each row.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Grid {
    pub rows: Vec<Vec<Cell>>,
    pub lines: Vec<usize>,
    /// key/value metadata lines found around the data
    pub metadata: Vec<(String, String)>,
}

/// Every spectrum a table holds: one per y column (a lone x column shared by all, or one x column
/// per sample in x,y pairs), each with its label (the column header) and its y quantity/unit
/// from the header or metadata. Honors opts.column (a y column by header name or 1-based number
/// among the y columns) by returning just that one.
pub fn spectra_from_grid(file: &str, format: &str, grid: &Grid, opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    let mut src = GridRows { grid };
    let mut table = walk(file, &mut src, 0..grid.rows.len())?;
    table.metadata.splice(0..0, grid.metadata.iter().cloned());
    spectra_from_table(file, format, table, opts)
}

/// What one row turned out to be.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum RowKind {
    Empty,
    /// Only numbers and empty cells; `count` numbers.
    Numbers {
        count: usize,
    },
    /// At least one cell that is not a number; `first_text` is its 0-based index.
    Text {
        first_text: usize,
    },
    /// A comment line (`# ...`): no break in the data, but read for metadata.
    Comment,
}

/// A source of rows the walker can scan: a grid, or lines of delimited text.
pub(crate) trait RowSource {
    /// 1-based line (or sheet row) of row `i`.
    fn line(&self, i: usize) -> usize;
    /// Scans row `i`, appending one entry per cell to `out` (None for an empty cell; trailing
    /// empty cells dropped). On a text row, what was appended is of no use to the caller.
    fn scan(&mut self, i: usize, out: &mut Vec<Option<f64>>) -> Result<RowKind>;
    /// The cells of row `i` as text, trimmed, trailing empty cells dropped.
    fn texts(&self, i: usize) -> Vec<String>;
    /// Row `i` when it is a plain row of numbers (every cell a plain number, nothing else):
    /// its numbers appended to `out` and their count returned, exactly as [`RowSource::scan`]
    /// would append them and count them in `RowKind::Numbers`. None, with nothing appended,
    /// for any other row. A source without such a fast reading takes none.
    fn plain(&mut self, _i: usize, _out: &mut Vec<Option<f64>>) -> Option<usize> {
        None
    }
    /// Rows `range` when they end in a block of plain rows (see [`RowSource::plain`]) of one
    /// width, two or more, that runs from the first plain row of the range to its last row:
    /// the first row of the block and the block's numbers by columns. None for any other rows
    /// (the last row not plain, the first plain row narrower than two, a row of the block not
    /// plain or of another width). A source may read the block faster; it must read the same.
    fn plain_block(&mut self, range: std::ops::Range<usize>) -> Option<(usize, Vec<Vec<f64>>)> {
        let mut row: Vec<Option<f64>> = Vec::with_capacity(8);
        // A table that ends in anything but a plain row (notes, a trailing block) is not this
        // shape: seen at once, before any work.
        let last = range.end.checked_sub(1).filter(|l| range.contains(l))?;
        self.plain(last, &mut row)?;
        let first = range.clone().find(|&i| {
            row.clear();
            self.plain(i, &mut row).is_some()
        })?;
        let width = row.len();
        if width < 2 {
            return None;
        }
        let rows = range.end - first;
        let mut columns: Vec<Vec<f64>> = (0..width).map(|_| Vec::with_capacity(rows)).collect();
        for i in first..range.end {
            if i > first {
                row.clear();
                if self.plain(i, &mut row) != Some(width) {
                    return None;
                }
            }
            for (col, v) in columns.iter_mut().zip(&row) {
                col.push((*v)?);
            }
        }
        Some((first, columns))
    }
    /// Forgets what scanning noted about rows (for judging afterwards), so that a walk that
    /// starts over notes each row once.
    fn forget(&mut self) {}
}

struct GridRows<'a> {
    grid: &'a Grid,
}

impl RowSource for GridRows<'_> {
    fn line(&self, i: usize) -> usize {
        self.grid.lines.get(i).copied().unwrap_or(i + 1)
    }

    fn scan(&mut self, i: usize, out: &mut Vec<Option<f64>>) -> Result<RowKind> {
        let start = out.len();
        let Some(row) = self.grid.rows.get(i) else {
            return Ok(RowKind::Empty);
        };
        let mut count = 0;
        for (k, cell) in row.iter().enumerate() {
            match cell {
                Cell::Number(v) => {
                    out.push(Some(*v));
                    count += 1;
                }
                Cell::Empty => out.push(None),
                Cell::Text(t) => {
                    let t = t.trim().trim_matches('"').trim();
                    if t.is_empty() {
                        out.push(None);
                    } else if let Ok(v) = t.parse::<f64>() {
                        // A number stored as text (a quoted or text-formatted cell) is a number.
                        out.push(Some(v));
                        count += 1;
                    } else {
                        return Ok(RowKind::Text { first_text: k });
                    }
                }
            }
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

    fn texts(&self, i: usize) -> Vec<String> {
        let mut v: Vec<String> = self
            .grid
            .rows
            .get(i)
            .map(|r| {
                r.iter()
                    .map(|c| match c {
                        Cell::Number(n) => n.to_string(),
                        Cell::Text(t) => t.trim().to_string(),
                        Cell::Empty => String::new(),
                    })
                    .collect()
            })
            .unwrap_or_default();
        while v.last().is_some_and(String::is_empty) {
            v.pop();
        }
        v
    }
}

/// The data block by columns.
#[derive(Debug, Clone)]
pub(crate) enum Columns {
    /// None where a row has no value in that column.
    Sparse(Vec<Vec<Option<f64>>>),
    /// Every row has a value in every column (the one-pass walk's block), kept without the
    /// Option so that a spectrum takes its column as it is.
    Dense(Vec<Vec<f64>>),
}

impl Default for Columns {
    fn default() -> Columns {
        Columns::Sparse(Vec::new())
    }
}

impl Columns {
    pub fn len(&self) -> usize {
        match self {
            Columns::Sparse(c) => c.len(),
            Columns::Dense(c) => c.len(),
        }
    }

    /// Whether column `c` holds a number in any row.
    fn has_values(&self, c: usize) -> bool {
        match self {
            Columns::Sparse(cols) => cols.get(c).is_some_and(|col| col.iter().any(Option::is_some)),
            Columns::Dense(cols) => cols.get(c).is_some_and(|col| !col.is_empty()),
        }
    }
}

/// A table after the walk: the header, the data block by columns, and what lay around it.
#[derive(Debug, Clone, Default)]
pub(crate) struct Table {
    pub header: Option<Vec<String>>,
    pub columns: Columns,
    /// 1-based line of each data row.
    pub lines: Vec<usize>,
    pub metadata: Vec<(String, String)>,
    /// Facts about the shape, for `format` ("trailing block", "notes below the data").
    pub shape: Vec<String>,
    pub warnings: Vec<String>,
}

#[cfg(test)]
mod tests;
