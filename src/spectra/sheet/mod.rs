//! Spreadsheet workbooks (.xlsx and .ods) read through the `calamine` crate. One sheet becomes a
//! [`Grid`] (numbers, text and empty cells, each row with its sheet row number) and goes through
//! [`grid::spectra_from_grid`], so header, units, sample columns and x,y pairs are found exactly
//! as in delimited text.
//!
//! Why it is one file of about 600 lines: the two workbook formats share one path from a sheet's
//! cells to a [`Grid`] (sheet choice, first used column, cell kinds, dates, error cells kept as such),
//! and splitting it by format would copy that path; its tests live in `tests.rs`.
//!
//! What it promises:
//! - The sheet is the one `ReadOptions::sheet` names (its name, or its 1-based place among the
//!   workbook's sheets); without a choice, the one sheet that holds a column of numbers. Several
//!   such sheets and no choice is an error that lists them: a workbook is never silently read as
//!   its first sheet.
//! - Columns are counted from the sheet's first used column, as a CSV export of that sheet would
//!   be (a sheet whose table starts in column C reads as if it started in column A).
//! - Bad workbooks are refused in one line naming the sheet and, where there is one, the row: not
//!   a workbook, password-protected, empty, no sheet of numbers, a formula error cell (`#DIV/0!`)
//!   in the data, a sheet past the size limit. Nothing is read from a refused file.
//! - Work is bounded: xlsx cells are streamed (no sheet-sized array is made before the size is
//!   known), and no grid larger than [`MAX_GRID_CELLS`] is built.

use super::grid::{self, Cell, Grid};
use super::{MIN_POINTS, RawSpectrum, ReadOptions, spectrum_error};
use crate::error::{Error, Result};
use calamine::{CellErrorType, Data, DataRef, Ods, OdsError, Reader, SheetType, Xlsx, XlsxError};
use std::io::Cursor;

/// A zip archive (both .xlsx and .ods are one).
pub const ZIP_MAGIC: &[u8] = b"PK\x03\x04";
/// An OLE compound file: how a password-protected .xlsx (and an old binary .xls) begins.
pub const OLE_MAGIC: &[u8] = &[0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];

/// The most cells (counted from a sheet's first used row and column to the last used cell of each
/// row) a sheet may span. A spectra sheet of 100 samples by 5,000 points is half of it.
pub const MAX_GRID_CELLS: usize = 1_000_000;

/// Whether bytes look like a workbook this module should be given (zip or OLE container).
pub fn is_workbook(bytes: &[u8]) -> bool {
    bytes.starts_with(ZIP_MAGIC) || bytes.starts_with(OLE_MAGIC)
}

/// Every spectrum on the chosen sheet of a workbook.
pub fn read(file: &str, bytes: &[u8], opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    let mut book = Book::open(file, bytes)?;
    let sheets = book.sheets();
    let (name, cells) = choose_sheet(file, &mut book, &sheets, opts)?;
    check_errors(file, &name, &cells)?;
    let grid = to_grid(file, &name, cells)?;
    let format = format!("{} (sheet '{name}')", book.kind());
    let mut all = grid::spectra_from_grid(file, &format, &grid, opts).map_err(|e| on_sheet(e, &name))?;
    for s in &mut all {
        for w in &mut s.warnings {
            *w = rows_not_lines(w);
        }
    }
    Ok(all)
}

/// The shared table reader counts lines of text; a sheet has rows, and its messages say so.
fn rows_not_lines(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    let mut word = String::new();
    let flush = |word: &mut String, out: &mut String| {
        out.push_str(match word.as_str() {
            "line" => "row",
            "lines" => "rows",
            "Line" => "Row",
            "Lines" => "Rows",
            w => w,
        });
        word.clear();
    };
    for ch in s.chars() {
        if ch.is_alphanumeric() {
            word.push(ch);
        } else {
            flush(&mut word, &mut out);
            out.push(ch);
        }
    }
    flush(&mut word, &mut out);
    out
}

/// A cell as this module keeps it until the grid is built.
#[derive(Debug, Clone, PartialEq)]
enum Value {
    Number(f64),
    Text(String),
    Error(CellErrorType),
}

/// Used cells of one sheet: 0-based (row, column) and value, in no promised order.
type Cells = Vec<(u32, u32, Value)>;

enum Book<'a> {
    Xlsx(Box<Xlsx<Cursor<&'a [u8]>>>),
    Ods(Box<Ods<Cursor<&'a [u8]>>>),
}

impl<'a> Book<'a> {
    fn open(file: &str, bytes: &'a [u8]) -> Result<Book<'a>> {
        if bytes.starts_with(OLE_MAGIC) {
            // calamine's xlsx reader recognises an encrypted package inside an OLE container.
            return match Xlsx::new(Cursor::new(bytes)) {
                Err(XlsxError::Password) => Err(password(file)),
                _ => Err(spectrum_error(
                    file,
                    None,
                    "is an OLE file (an old binary .xls or another Office document), not an .xlsx or .ods workbook: save it as .xlsx or .ods",
                )),
            };
        }
        if !bytes.starts_with(ZIP_MAGIC) {
            return Err(spectrum_error(file, None, "is not a workbook (not a zip archive)"));
        }
        if is_opendocument(bytes) {
            if !is_ods(bytes) {
                return Err(spectrum_error(
                    file,
                    None,
                    "is an OpenDocument file but not a spreadsheet (.ods)",
                ));
            }
            // calamine expands every sheet of an ods as it opens it: count first, refuse first.
            let spans = ods_spans(file, bytes)?;
            if let Some((name, _)) = spans.iter().find(|(_, n)| **n > MAX_GRID_CELLS as u64) {
                return Err(too_large(file, name));
            }
            return match Ods::new(Cursor::new(bytes)) {
                Ok(b) => Ok(Book::Ods(Box::new(b))),
                Err(OdsError::Password) => Err(password(file)),
                Err(e) => Err(not_readable(file, "ods", &e.to_string())),
            };
        }
        match Xlsx::new(Cursor::new(bytes)) {
            Ok(b) => Ok(Book::Xlsx(Box::new(b))),
            Err(XlsxError::Password) => Err(password(file)),
            Err(XlsxError::FileNotFound(_)) => Err(spectrum_error(
                file,
                None,
                "is a zip archive but not a workbook (no .xlsx workbook or .ods spreadsheet in it)",
            )),
            Err(e) => Err(not_readable(file, "xlsx", &e.to_string())),
        }
    }

    fn kind(&self) -> &'static str {
        match self {
            Book::Xlsx(_) => "xlsx",
            Book::Ods(_) => "ods",
        }
    }

    /// Sheet names in workbook order, each with whether it is a table of cells.
    fn sheets(&self) -> Vec<(String, bool)> {
        let meta = match self {
            Book::Xlsx(b) => b.sheets_metadata(),
            Book::Ods(b) => b.sheets_metadata(),
        };
        meta.iter()
            .map(|s| (s.name.clone(), s.typ == SheetType::WorkSheet))
            .collect()
    }

    fn cells(&mut self, file: &str, name: &str) -> Result<Cells> {
        let mut out = Vec::new();
        match self {
            Book::Xlsx(b) => {
                let mut reader = b
                    .worksheet_cells_reader(name)
                    .map_err(|e| sheet_error(file, name, &e.to_string()))?;
                while let Some(c) = reader
                    .next_cell()
                    .map_err(|e| sheet_error(file, name, &e.to_string()))?
                {
                    let (row, col) = c.get_position();
                    if let Some(v) = from_ref(c.get_value()) {
                        if out.len() >= MAX_GRID_CELLS {
                            return Err(too_large(file, name));
                        }
                        out.push((row, col, v));
                    }
                }
            }
            Book::Ods(b) => {
                // Repeats were counted at open (see `ods_spans`); the grid limit still holds.
                let range = b
                    .worksheet_range(name)
                    .map_err(|e| sheet_error(file, name, &e.to_string()))?;
                for (r, c, d) in range.used_cells() {
                    let (row0, col0) = range.start().unwrap_or((0, 0));
                    if let Some(v) = from_data(d) {
                        if out.len() >= MAX_GRID_CELLS {
                            return Err(too_large(file, name));
                        }
                        out.push((row0 + r as u32, col0 + c as u32, v));
                    }
                }
            }
        }
        Ok(out)
    }
}

/// The most bytes an ods `content.xml` may unpack to; far past any table of spectra.
const MAX_ODS_CONTENT_BYTES: u64 = 256 * 1024 * 1024;

/// For each sheet of an ods, the cells it spans once repeats are expanded: per row, the columns
/// up to its last cell with content, times the row's repeat count. Empty repeated cells (how a
/// formatted but unused area is saved) cost nothing, as in calamine.
fn ods_spans(file: &str, bytes: &[u8]) -> Result<std::collections::HashMap<String, u64>> {
    use quick_xml::events::{BytesStart, Event};
    use std::io::Read;
    let bad = |why: String| not_readable(file, "ods", &why);
    let mut zip = zip::ZipArchive::new(Cursor::new(bytes)).map_err(|e| bad(e.to_string()))?;
    let content = zip
        .by_name("content.xml")
        .map_err(|e| bad(format!("content.xml: {e}")))?;
    let xml = std::io::BufReader::new(content.take(MAX_ODS_CONTENT_BYTES + 1));
    let mut reader = quick_xml::Reader::from_reader(xml);
    let number = |e: &BytesStart<'_>, key: &str| -> u64 {
        e.try_get_attribute(key)
            .ok()
            .flatten()
            .and_then(|a| a.value.trim().parse().ok())
            .unwrap_or(1)
    };
    let mut spans = std::collections::HashMap::new();
    let (mut table, mut total) = (String::new(), 0u64);
    let (mut row_repeat, mut col, mut last_used) = (1u64, 0u64, 0u64);
    let mut buf = Vec::new();
    loop {
        let event = reader.read_event_into(&mut buf).map_err(|e| bad(e.to_string()))?;
        if reader.buffer_position() > MAX_ODS_CONTENT_BYTES {
            return Err(spectrum_error(
                file,
                None,
                "the workbook's content is too large to read",
            ));
        }
        let (e, has_children) = match &event {
            Event::Start(e) => (e, true),
            Event::Empty(e) => (e, false),
            Event::End(e) => {
                match e.local_name().as_ref() {
                    "table-row" => total = total.saturating_add(row_repeat.saturating_mul(last_used)),
                    "table" => {
                        spans.insert(std::mem::take(&mut table), total);
                    }
                    _ => {}
                }
                buf.clear();
                continue;
            }
            Event::Eof => break,
            _ => {
                buf.clear();
                continue;
            }
        };
        match e.local_name().as_ref() {
            "table" => {
                table = e
                    .try_get_attribute("table:name")
                    .ok()
                    .flatten()
                    .and_then(|a| quick_xml::escape::unescape(&a.value).ok().map(|v| v.into_owned()))
                    .unwrap_or_default();
                total = 0;
            }
            "table-row" => {
                row_repeat = number(e, "table:number-rows-repeated");
                col = 0;
                last_used = 0;
                if !has_children {
                    row_repeat = 0;
                }
            }
            "table-cell" | "covered-table-cell" => {
                col = col.saturating_add(number(e, "table:number-columns-repeated"));
                let used = has_children || e.try_get_attribute("office:value-type").ok().flatten().is_some();
                if used {
                    last_used = col;
                }
            }
            _ => {}
        }
        buf.clear();
    }
    Ok(spans)
}

/// An OpenDocument package starts with an uncompressed `mimetype` entry (OpenDocument 1.2,
/// part 3, section 3.3).
fn is_opendocument(bytes: &[u8]) -> bool {
    bytes.get(30..38) == Some(b"mimetype")
        && find(bytes.get(38..120).unwrap_or(&[]), b"application/vnd.oasis.opendocument")
}

fn is_ods(bytes: &[u8]) -> bool {
    find(
        bytes.get(38..140).unwrap_or(&[]),
        b"application/vnd.oasis.opendocument.spreadsheet",
    )
}

fn find(hay: &[u8], needle: &[u8]) -> bool {
    hay.windows(needle.len()).any(|w| w == needle)
}

fn from_ref(d: &DataRef<'_>) -> Option<Value> {
    match d {
        DataRef::Int(i) => Some(Value::Number(*i as f64)),
        DataRef::Float(f) => Some(Value::Number(*f)),
        DataRef::String(s) => text(s),
        DataRef::SharedString(s) => text(s),
        DataRef::Bool(b) => Some(Value::Text(if *b { "TRUE" } else { "FALSE" }.into())),
        DataRef::DateTime(dt) => Some(date(&dt.to_string())),
        DataRef::DateTimeIso(s) | DataRef::DurationIso(s) => Some(date(s)),
        DataRef::Error(e) => Some(Value::Error(e.clone())),
        DataRef::Empty => None,
    }
}

fn from_data(d: &Data) -> Option<Value> {
    match d {
        Data::Int(i) => Some(Value::Number(*i as f64)),
        Data::Float(f) => Some(Value::Number(*f)),
        Data::String(s) => text(s),
        Data::Bool(b) => Some(Value::Text(if *b { "TRUE" } else { "FALSE" }.into())),
        Data::DateTime(dt) => Some(date(&dt.to_string())),
        Data::DateTimeIso(s) | Data::DurationIso(s) => Some(date(s)),
        Data::Error(e) => Some(Value::Error(e.clone())),
        Data::Empty => None,
    }
}

fn text(s: &str) -> Option<Value> {
    (!s.trim().is_empty()).then(|| Value::Text(s.to_string()))
}

/// A date or time cell is never a spectral number: kept as text that cannot parse as one (its
/// serial number alone would).
fn date(s: &str) -> Value {
    Value::Text(format!("date/time {s}"))
}

fn is_number(v: &Value) -> bool {
    match v {
        Value::Number(_) => true,
        Value::Text(t) => t.trim().parse::<f64>().is_ok(),
        Value::Error(_) => false,
    }
}

/// A sheet holds spectral data when one of its columns has at least [`MIN_POINTS`] numbers; a
/// cover sheet with a path length or a date on it does not.
fn holds_numbers(cells: &Cells) -> bool {
    let mut per_col: std::collections::HashMap<u32, usize> = std::collections::HashMap::new();
    for (_, c, v) in cells {
        if is_number(v) {
            let n = per_col.entry(*c).or_insert(0);
            *n += 1;
            if *n >= MIN_POINTS {
                return true;
            }
        }
    }
    false
}

fn choose_sheet(
    file: &str,
    book: &mut Book<'_>,
    sheets: &[(String, bool)],
    opts: &ReadOptions,
) -> Result<(String, Cells)> {
    if sheets.is_empty() {
        return Err(spectrum_error(file, None, "the workbook has no sheets"));
    }
    let listing = || {
        sheets
            .iter()
            .enumerate()
            .map(|(i, (n, _))| format!("{} '{n}'", i + 1))
            .collect::<Vec<_>>()
            .join(", ")
    };
    if let Some(want) = opts.sheet.as_deref() {
        let w = want.trim();
        let found = sheets
            .iter()
            .position(|(n, _)| n == want)
            .or_else(|| sheets.iter().position(|(n, _)| n.trim().eq_ignore_ascii_case(w)))
            .or_else(|| {
                w.parse::<usize>()
                    .ok()
                    .filter(|&k| (1..=sheets.len()).contains(&k))
                    .map(|k| k - 1)
            });
        let Some(i) = found else {
            return Err(spectrum_error(
                file,
                None,
                &format!("has no sheet '{want}' (sheets: {})", listing()),
            ));
        };
        let (name, is_table) = &sheets[i];
        if !is_table {
            return Err(spectrum_error(
                file,
                None,
                &format!("sheet '{name}' is a chart or macro sheet, not a table of cells"),
            ));
        }
        let cells = book.cells(file, name)?;
        if cells.is_empty() {
            return Err(sheet_error(file, name, "the sheet is empty"));
        }
        return Ok((name.clone(), cells));
    }
    let mut with_numbers = Vec::new();
    let mut any_cells = false;
    for (i, (name, is_table)) in sheets.iter().enumerate() {
        if !is_table {
            continue;
        }
        let cells = book.cells(file, name)?;
        any_cells |= !cells.is_empty();
        if holds_numbers(&cells) {
            with_numbers.push((i, name.clone(), cells));
        }
    }
    match with_numbers.len() {
        0 if !any_cells => Err(spectrum_error(
            file,
            None,
            "the workbook is empty (no sheet holds any cell)",
        )),
        0 => Err(spectrum_error(
            file,
            None,
            &format!(
                "no sheet holds a column of at least {MIN_POINTS} numbers (sheets: {})",
                listing()
            ),
        )),
        1 => {
            let (_, name, cells) = with_numbers.remove(0);
            Ok((name, cells))
        }
        _ => {
            let names: Vec<String> = with_numbers
                .iter()
                .map(|(i, n, _)| format!("{} '{n}'", i + 1))
                .collect();
            Err(spectrum_error(
                file,
                None,
                &format!(
                    "holds data on {} sheets ({}); choose one with --sheet NAME|N",
                    names.len(),
                    names.join(", ")
                ),
            ))
        }
    }
}

/// A formula error is refused where it stands in the data: in a row that holds numbers, or in a
/// column with numbers above and below it. Elsewhere (a header, notes) it is kept as text.
fn check_errors(file: &str, name: &str, cells: &Cells) -> Result<()> {
    if !cells.iter().any(|c| matches!(c.2, Value::Error(_))) {
        return Ok(());
    }
    use std::collections::{HashMap, HashSet};
    let mut rows_with_numbers = HashSet::new();
    let mut numbers_in_col: HashMap<u32, (u32, u32)> = HashMap::new();
    for (r, c, v) in cells {
        if is_number(v) {
            rows_with_numbers.insert(*r);
            let span = numbers_in_col.entry(*c).or_insert((*r, *r));
            span.0 = span.0.min(*r);
            span.1 = span.1.max(*r);
        }
    }
    let in_data = |r: u32, c: u32| {
        rows_with_numbers.contains(&r) || numbers_in_col.get(&c).is_some_and(|&(lo, hi)| lo < r && r < hi)
    };
    let first = cells
        .iter()
        .filter_map(|(r, c, v)| match v {
            Value::Error(e) if in_data(*r, *c) => Some((*r, *c, e)),
            _ => None,
        })
        .min_by_key(|&(r, c, _)| (r, c));
    match first {
        None => Ok(()),
        Some((r, c, e)) => Err(spectrum_error(
            file,
            None,
            &format!(
                "sheet '{name}' row {}: cell {}{} holds the formula error {e}; correct it or clear the cell in the workbook",
                r + 1,
                column_letters(c),
                r + 1
            ),
        )),
    }
}

/// `0` → `A`, `25` → `Z`, `26` → `AA`.
fn column_letters(mut c: u32) -> String {
    let mut s = Vec::new();
    loop {
        s.push(b'A' + (c % 26) as u8);
        if c < 26 {
            break;
        }
        c = c / 26 - 1;
    }
    s.reverse();
    String::from_utf8_lossy(&s).into_owned()
}

/// Rows from the first used row to the last (empty rows kept, as the sheet has them), columns
/// from the first used column.
fn to_grid(file: &str, name: &str, mut cells: Cells) -> Result<Grid> {
    cells.sort_by_key(|&(r, c, _)| (r, c));
    let (Some(first_row), Some(last_row)) = (cells.first().map(|c| c.0), cells.last().map(|c| c.0)) else {
        return Err(sheet_error(file, name, "the sheet is empty"));
    };
    let first_col = cells.iter().map(|c| c.1).min().unwrap_or(0);
    // Count what the grid will hold before making it.
    let mut span = 0usize;
    let mut row_end: Option<(u32, u32)> = None;
    for &(r, c, _) in &cells {
        if let Some((pr, pc)) = row_end
            && pr != r
        {
            span += (pc - first_col) as usize + 1;
        }
        row_end = Some((r, c));
    }
    if let Some((_, pc)) = row_end {
        span += (pc - first_col) as usize + 1;
    }
    let n_rows = (last_row - first_row) as usize + 1;
    if span > MAX_GRID_CELLS || n_rows > MAX_GRID_CELLS {
        return Err(too_large(file, name));
    }
    let mut rows: Vec<Vec<Cell>> = (0..n_rows).map(|_| Vec::new()).collect();
    for (r, c, v) in cells {
        let Some(row) = rows.get_mut((r - first_row) as usize) else {
            continue;
        };
        let at = (c - first_col) as usize;
        while row.len() < at {
            row.push(Cell::Empty);
        }
        row.push(match v {
            Value::Number(x) => Cell::Number(x),
            Value::Text(t) => Cell::Text(t),
            Value::Error(e) => Cell::Text(e.to_string()),
        });
    }
    Ok(Grid {
        rows,
        lines: (0..n_rows).map(|i| first_row as usize + i + 1).collect(),
        metadata: Vec::new(),
    })
}

/// Puts the sheet (and the row, for an error with a line) into a reader's error.
fn on_sheet(e: Error, name: &str) -> Error {
    match e {
        Error::Spectrum { file, line, reason } => Error::Spectrum {
            file,
            line: None,
            reason: match line {
                Some(l) => format!("sheet '{name}' row {l}: {}", rows_not_lines(&reason)),
                None => format!("sheet '{name}': {}", rows_not_lines(&reason)),
            },
        },
        other => other,
    }
}

fn sheet_error(file: &str, name: &str, reason: &str) -> Error {
    spectrum_error(file, None, &format!("sheet '{name}': {}", one_line(reason)))
}

fn password(file: &str) -> Error {
    spectrum_error(
        file,
        None,
        "the workbook is password-protected (encrypted): save a copy without a password",
    )
}

fn not_readable(file: &str, kind: &str, why: &str) -> Error {
    spectrum_error(
        file,
        None,
        &format!("is not a readable {kind} workbook ({})", one_line(why)),
    )
}

fn too_large(file: &str, name: &str) -> Error {
    sheet_error(
        file,
        name,
        &format!("the sheet spans more than {MAX_GRID_CELLS} cells; copy the spectra to a sheet of their own"),
    )
}

fn one_line(s: &str) -> String {
    s.split_whitespace().collect::<Vec<_>>().join(" ")
}

#[cfg(test)]
mod tests;
