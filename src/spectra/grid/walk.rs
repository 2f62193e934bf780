//! The walk over a table's rows: the data block (the longest run of rows of numbers), the
//! header above it, the key/value preamble and trailing blocks. Promises: a row of numbers
//! outside the data block is reported, never silently read; a word inside it is refused with
//! its line.

use crate::error::Result;
use crate::spectra::spectrum_error;

use super::{Columns, RowKind, RowSource, Table};

/// A line that ends the data and opens a trailing block: a rule of `#`, `-`, `=` or `*`, or a
/// section title such as "Extended information" or "[Sample]".
pub(crate) fn is_block_opener(cells: &[String]) -> bool {
    let nonempty: Vec<&String> = cells.iter().filter(|c| !c.is_empty()).collect();
    let [only] = nonempty.as_slice() else {
        return false;
    };
    let t = only.trim();
    if t.len() >= 3 && t.chars().all(|c| matches!(c, '#' | '-' | '=' | '*' | '_' | '~')) {
        return true;
    }
    if t.starts_with('[') && t.ends_with(']') {
        return true;
    }
    let lower = t.trim_matches(|c: char| !c.is_alphanumeric()).to_lowercase();
    ["information", "info", "metadata", "parameters", "settings", "details"]
        .iter()
        .any(|w| lower.ends_with(w))
        && lower.split_whitespace().count() <= 4
}

/// A preamble or trailing line as a key and a value ("Integration time: 100 ms",
/// "Scans\t3", "# X units = eV"); None for a line that is not one.
pub(crate) fn key_value(cells: &[String]) -> Option<(String, String)> {
    let nonempty: Vec<&str> = cells.iter().map(|c| c.trim()).filter(|c| !c.is_empty()).collect();
    let first = nonempty.first()?.trim_start_matches(['#', '%', ';', '!']).trim();
    if nonempty.len() == 1 {
        let (k, v) = first.split_once([':', '='])?;
        let (k, v) = (k.trim(), v.trim());
        return (!k.is_empty() && !v.is_empty()).then(|| (k.to_string(), v.to_string()));
    }
    let key = first.trim_end_matches([':', '=']).trim();
    if key.is_empty() {
        return None;
    }
    Some((
        key.to_string(),
        nonempty[1..]
            .join(" ")
            .trim_start_matches([':', '='])
            .trim()
            .to_string(),
    ))
}

/// One run of rows of numbers (empty rows inside allowed), as row indices into the source.
#[derive(Debug, Clone, Copy)]
struct Block {
    first: usize,
    last: usize,
    rows: usize,
}

/// Walks rows `range` of a source: finds the data block, its header, and what lies around it.
pub(crate) fn walk<R: RowSource>(file: &str, src: &mut R, range: std::ops::Range<usize>) -> Result<Table> {
    if let Some(table) = walk_plain(src, range.clone()) {
        return Ok(table);
    }
    walk_rows(file, src, range)
}

/// The walk of the commonest table, in one pass and without keeping every row's kind: a
/// preamble with no row of numbers in it (a header, key/value lines, comments, blank lines),
/// then plain rows of numbers of one width (two or more) to the last row. For such a table
/// the general walk ([`walk_rows`]) finds exactly this: one block (the plain rows, so the
/// data), no bad cell below it (nothing is below it) and none above (the row above the data
/// is no row of numbers, and nothing above that is a row of numbers to wedge it, so only a
/// text row beginning with a number would be refused, and that one is left to the general
/// walk), the header as the last non-empty row above when it is text or a commented
/// list, every other non-empty preamble row that is a key/value line as metadata, and no
/// notes, trailing block or warning. Any other table (a row that is not plain after the
/// first plain one, rows of numbers in the preamble, uneven widths) returns None, with what
/// scanning noted forgotten, and is walked by the general walk.
fn walk_plain<R: RowSource>(src: &mut R, range: std::ops::Range<usize>) -> Option<Table> {
    let (first, columns) = src.plain_block(range.clone())?;
    let mut row: Vec<Option<f64>> = Vec::with_capacity(8);
    // The preamble, scanned as the general walk scans it.
    let mut kinds = Vec::with_capacity(first - range.start);
    for i in range.start..first {
        row.clear();
        match src.scan(i, &mut row) {
            Ok(RowKind::Numbers { .. }) | Err(_) => {
                src.forget();
                return None;
            }
            Ok(kind) => kinds.push(kind),
        }
    }
    let kind_of = |i: usize| kinds[i - range.start];
    let mut table = Table::default();
    let above = (range.start..first)
        .rev()
        .find(|&j| !matches!(kind_of(j), RowKind::Empty));
    let mut header_row = None;
    if let Some(j) = above {
        let cells = src.texts(j);
        match kind_of(j) {
            RowKind::Text { first_text } => {
                if first_text > 0 && cells.first().is_some_and(|c| looks_numeric(c)) {
                    // A word in a row of numbers: the general walk names it.
                    src.forget();
                    return None;
                }
                header_row = Some(j);
            }
            RowKind::Comment if cells.len() >= 2 && !cells.iter().any(|c| c.contains(':') || c.contains('=')) => {
                header_row = Some(j);
            }
            _ => {}
        }
        if header_row.is_some() {
            table.header = Some(cells);
        }
    }
    for i in range.start..first {
        if Some(i) == header_row || matches!(kind_of(i), RowKind::Empty) {
            continue;
        }
        if let Some(kv) = key_value(&src.texts(i)) {
            table.metadata.push(kv);
        }
    }
    table.columns = Columns::Dense(columns);
    table.lines = (first..range.end).map(|i| src.line(i)).collect();
    Some(table)
}

/// The general walk: every row scanned and its kind kept, then the data block found among them.
fn walk_rows<R: RowSource>(file: &str, src: &mut R, range: std::ops::Range<usize>) -> Result<Table> {
    // One flat store of every scanned number, so a row costs no allocation of its own.
    // Room for two numbers a row (x and y), the common table, so it seldom grows.
    let mut flat: Vec<Option<f64>> = Vec::with_capacity(2 * range.len());
    let mut starts: Vec<(usize, usize)> = Vec::with_capacity(range.len());
    let mut kinds: Vec<RowKind> = Vec::with_capacity(range.len());
    let mut blocks: Vec<Block> = Vec::new();
    let mut open: Option<Block> = None;
    let mut single_numbers = false;
    for i in range.clone() {
        let start = flat.len();
        let kind = src.scan(i, &mut flat)?;
        if !matches!(kind, RowKind::Numbers { .. }) {
            flat.truncate(start);
        }
        starts.push((start, flat.len()));
        kinds.push(kind);
        match kind {
            RowKind::Numbers { count } if count >= 2 || open.is_some() => {
                let b = open.get_or_insert(Block {
                    first: i,
                    last: i,
                    rows: 0,
                });
                b.last = i;
                b.rows += 1;
            }
            RowKind::Numbers { .. } => single_numbers = true,
            RowKind::Empty | RowKind::Comment => {}
            RowKind::Text { .. } => {
                if let Some(b) = open.take() {
                    blocks.push(b);
                }
            }
        }
    }
    if let Some(b) = open.take() {
        blocks.push(b);
    }
    let base = range.start;
    let kind_of = |i: usize| kinds[i - base];
    // The longest run of rows of numbers is the data; ties go to the first.
    let Some(&data) = blocks.iter().reduce(|a, b| if b.rows > a.rows { b } else { a }) else {
        let nonempty = kinds.iter().filter(|k| !matches!(k, RowKind::Empty)).count();
        let reason = if single_numbers {
            "only one column of numbers; a spectrum needs x and y columns"
        } else if nonempty <= 2 {
            "header only: no rows of numbers"
        } else {
            "no rows of numbers found"
        };
        return Err(spectrum_error(file, None, reason));
    };
    let prev_nonempty = |i: usize| (base..i).rev().find(|&j| !matches!(kind_of(j), RowKind::Empty));
    let next_nonempty = |i: usize| (i + 1..range.end).find(|&j| !matches!(kind_of(j), RowKind::Empty));

    // A word in a row of numbers, just after or just before the data, is a bad cell.
    for j in [next_nonempty(data.last), prev_nonempty(data.first)]
        .into_iter()
        .flatten()
    {
        if let RowKind::Text { first_text } = kind_of(j) {
            let cells = src.texts(j);
            let first_is_number = cells.first().is_some_and(|c| looks_numeric(c));
            let adjacent = j + 1 == data.first || j == data.last + 1;
            let numbers_beyond = if j > data.last {
                next_nonempty(j).is_some_and(|k| matches!(kind_of(k), RowKind::Numbers { count } if count >= 2))
            } else {
                prev_nonempty(j).is_some_and(|k| matches!(kind_of(k), RowKind::Numbers { count } if count >= 2))
            };
            let wedged = adjacent && numbers_beyond && !is_block_opener(&cells);
            if (first_is_number && first_text > 0) || wedged {
                let bad = cells.get(first_text).cloned().unwrap_or_default();
                return Err(spectrum_error(
                    file,
                    Some(src.line(j)),
                    &format!("non-numeric cell '{bad}'"),
                ));
            }
        }
    }

    let mut table = Table::default();
    // The header: the last non-empty row before the data, when it holds text.
    // A commented header ("# nm, A") counts when it has several cells and is no key: value.
    let header_row = prev_nonempty(data.first).filter(|&j| match kind_of(j) {
        RowKind::Text { .. } => true,
        RowKind::Comment => {
            let cells = src.texts(j);
            cells.len() >= 2 && !cells.iter().any(|c| c.contains(':') || c.contains('='))
        }
        _ => false,
    });
    if let Some(j) = header_row {
        table.header = Some(src.texts(j));
    }
    let width = (data.first..=data.last)
        .map(|i| {
            let (a, b) = starts[i - base];
            b - a
        })
        .max()
        .unwrap_or(0);
    let mut columns: Vec<Vec<Option<f64>>> = (0..width).map(|_| Vec::with_capacity(data.rows)).collect();
    table.lines.reserve(data.rows);
    for i in data.first..=data.last {
        if !matches!(kind_of(i), RowKind::Numbers { .. }) {
            continue;
        }
        let (a, b) = starts[i - base];
        // A row of numbers inside the block, one number only (an x without its y) still counts.
        for (c, col) in columns.iter_mut().enumerate() {
            col.push(if a + c < b { flat[a + c] } else { None });
        }
        table.lines.push(src.line(i));
    }
    table.columns = Columns::Sparse(columns);

    // Around the data: key/value lines become metadata; stray rows of numbers are reported.
    let mut trailing_lines = 0;
    let mut trailing_from = None;
    let mut opener = false;
    for i in range.clone() {
        if (data.first..=data.last).contains(&i) || Some(i) == header_row {
            continue;
        }
        let kind = kind_of(i);
        if matches!(kind, RowKind::Empty) {
            continue;
        }
        if i > data.last {
            trailing_lines += 1;
            trailing_from.get_or_insert(src.line(i));
        }
        match kind {
            RowKind::Numbers { .. } => {
                table.warnings.push(format!(
                    "line {}: a row of numbers outside the data block (lines {}-{}) was not read",
                    src.line(i),
                    src.line(data.first),
                    src.line(data.last)
                ));
            }
            _ => {
                let cells = src.texts(i);
                if i > data.last && is_block_opener(&cells) {
                    opener = true;
                }
                if let Some(kv) = key_value(&cells) {
                    table.metadata.push(kv);
                }
            }
        }
    }
    if let Some(from) = trailing_from {
        let (shape, what) = if opener {
            ("trailing block", "a trailing block")
        } else {
            ("notes below the data", "notes")
        };
        table.shape.push(shape.to_string());
        table.warnings.push(format!(
            "{trailing_lines} line{} below the data (from line {from}) read as {what}, not as data",
            if trailing_lines == 1 { "" } else { "s" }
        ));
    }
    Ok(table)
}

fn looks_numeric(cell: &str) -> bool {
    let t = cell.trim().trim_matches('"');
    !t.is_empty() && t.replace(',', ".").parse::<f64>().is_ok()
}
