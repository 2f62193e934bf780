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

use super::{RawSpectrum, ReadOptions, XUnit, quantity, spectrum_error, validate_xy};
use crate::error::Result;

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

/// Keys that state the x unit ("X units: eV", "Abscissa = nm"), compared without case, spaces
/// or punctuation.
const X_UNIT_KEYS: &[&str] = &[
    "xunits",
    "xunit",
    "xaxis",
    "xaxisunit",
    "xaxisunits",
    "xaxistitle",
    "xlabel",
    "xtitle",
    "abscissa",
    "abscissaunit",
    "abscissaunits",
    "wavelengthunit",
    "wavelengthunits",
    "spectralunit",
    "spectralunits",
];

/// Keys that state the y quantity ("YUnits: counts", "Y axis = %T").
const Y_UNIT_KEYS: &[&str] = &[
    "yunits",
    "yunit",
    "yaxis",
    "yaxisunit",
    "yaxisunits",
    "yaxistitle",
    "ylabel",
    "ytitle",
    "ordinate",
    "ordinateunit",
    "ordinateunits",
    "ordinatemode",
    "datamode",
    "photometricmode",
    "measurementmode",
    "quantity",
    "signal",
];

fn squash_key(key: &str) -> String {
    key.chars()
        .filter(|c| c.is_alphanumeric())
        .flat_map(char::to_lowercase)
        .collect()
}

/// The y quantity a metadata line states: the first whose key is a y-unit key and whose value
/// names a quantity.
pub(crate) fn metadata_y_unit(metadata: &[(String, String)]) -> Option<String> {
    metadata.iter().find_map(|(k, v)| {
        let v = v.trim().trim_matches([',', ';', '"']).trim();
        (Y_UNIT_KEYS.contains(&squash_key(k).as_str()) && quantity::names_a_quantity(v)).then(|| v.to_string())
    })
}

/// The x unit a metadata line states.
pub(crate) fn metadata_x_unit(metadata: &[(String, String)]) -> Option<String> {
    metadata.iter().find_map(|(k, v)| {
        if X_UNIT_KEYS.contains(&squash_key(k).as_str()) {
            unit_from_header(v.trim().trim_matches([',', ';', '"']))
        } else {
            None
        }
    })
}

/// The y column's header when it names a quantity, else a metadata line's, else the header as
/// it is (a time such as "20 s" is kept as the file gave it). Metadata that disagrees with a
/// header that names a quantity is reported.
fn choose_y_unit(header_y: Option<&str>, meta: Option<&str>, warnings: &mut Vec<String>) -> Option<String> {
    let header_names = header_y.is_some_and(quantity::names_a_quantity);
    match (header_y, meta) {
        (Some(h), Some(p)) if header_names => {
            if !quantity::same_quantity(h, p) {
                warnings.push(format!(
                    "the file states y as '{p}' but the y column header says '{h}'; the header was used"
                ));
            }
            Some(h.to_string())
        }
        (_, Some(p)) => Some(p.to_string()),
        (h, None) => h.filter(|h| !h.is_empty()).map(str::to_string),
    }
}

/// The x unit a header names: "Wavelength (nm)", "Energy [eV]", "Wavenumber / cm-1", "nm",
/// "Raman shift (1/cm)". None when it names none.
pub(crate) fn unit_from_header(h: &str) -> Option<String> {
    let lower = h.trim().to_lowercase();
    let mut candidates: Vec<&str> = Vec::new();
    for (open, close) in [('(', ')'), ('[', ']')] {
        if let Some(a) = lower.find(open)
            && let Some(b) = lower[a + 1..].find(close)
        {
            candidates.push(lower[a + 1..a + 1 + b].trim());
        }
    }
    if let Some((_, after)) = lower.split_once(" / ") {
        candidates.push(after.trim());
    }
    if let Some((_, after)) = lower.split_once(" in ") {
        candidates.push(after.trim());
    }
    candidates.push(lower.as_str());
    for c in &candidates {
        if XUnit::parse(c).is_some() {
            return Some(c.to_string());
        }
    }
    let tokens: Vec<&str> = lower
        .split(|c: char| !(c.is_alphanumeric() || c == '-' || c == '/' || c == 'µ' || c == '⁻' || c == '¹'))
        .filter(|t| !t.is_empty())
        .collect();
    for (words, unit) in [
        (&["wavenumber", "wavenumbers", "cm-1", "1/cm", "cm⁻¹"][..], "1/cm"),
        (&["ev", "energy"][..], "eV"),
        (&["um", "µm", "micron", "microns", "micrometer", "micrometre"][..], "um"),
        (&["nm", "wavelength", "lambda"][..], "nm"),
    ] {
        if tokens.iter().any(|t| words.contains(t)) {
            return Some(unit.to_string());
        }
    }
    None
}

/// Whether a header cell names an x quantity (and no y quantity).
fn is_x_header(h: &str) -> bool {
    unit_from_header(h).is_some() && !quantity::names_a_quantity(h)
}

/// One y column and the x column it goes with (0-based).
#[derive(Debug, Clone)]
struct Pairing {
    x: usize,
    y: usize,
}

/// The one path from a walked table to spectra.
pub(crate) fn spectra_from_table(file: &str, format: &str, t: Table, opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    let Table {
        header: t_header,
        mut columns,
        lines: t_lines,
        metadata: t_metadata,
        shape: t_shape,
        warnings: t_warnings,
    } = t;
    let width = columns.len();
    let has_values = |c: usize| columns.has_values(c);
    let header = |c: usize| -> Option<&str> {
        t_header
            .as_ref()
            .and_then(|h| h.get(c))
            .map(|s| s.trim().trim_matches('"').trim())
            .filter(|s| !s.is_empty())
    };
    if opts.x_col == Some(0) || opts.y_col == Some(0) {
        return Err(spectrum_error(file, None, "columns are numbered from 1"));
    }
    let mut pairs_layout = false;
    let pairings: Vec<Pairing> = if let Some(y) = opts.y_col {
        let x = opts.x_col.unwrap_or(1);
        let need = x.max(y);
        if need > width {
            return Err(spectrum_error(
                file,
                t_lines.first().copied(),
                &format!("has {width} columns; column {need} was asked for"),
            ));
        }
        vec![Pairing { x: x - 1, y: y - 1 }]
    } else if let Some(x) = opts.x_col {
        if x > width {
            return Err(spectrum_error(
                file,
                t_lines.first().copied(),
                &format!("has {width} columns; column {x} was asked for"),
            ));
        }
        (0..width)
            .filter(|&c| c != x - 1 && has_values(c))
            .map(|c| Pairing { x: x - 1, y: c })
            .collect()
    } else {
        let x_cols: Vec<usize> = (0..width).filter(|&c| header(c).is_some_and(is_x_header)).collect();
        if x_cols.len() >= 2 {
            pairs_layout = true;
            let mut v = Vec::new();
            for c in 0..width {
                if x_cols.contains(&c) || !has_values(c) {
                    continue;
                }
                let x = x_cols
                    .iter()
                    .rev()
                    .find(|&&x| x < c)
                    .or(x_cols.first())
                    .copied()
                    .unwrap_or(0);
                v.push(Pairing { x, y: c });
            }
            v
        } else {
            let x = x_cols.first().copied().unwrap_or(0);
            (0..width)
                .filter(|&c| c != x && has_values(c))
                .map(|c| Pairing { x, y: c })
                .collect()
        }
    };
    if pairings.is_empty() {
        return Err(spectrum_error(
            file,
            None,
            "only one column of numbers; a spectrum needs x and y columns",
        ));
    }
    let name_of = |c: usize| header(c).map_or_else(|| format!("column {}", c + 1), |h| format!("'{h}'"));

    let chosen: Vec<&Pairing> = match &opts.column {
        None => pairings.iter().collect(),
        Some(want) => vec![pick_column(file, want, &pairings, &|c| header(c).map(str::to_string))?],
    };

    let meta_y = metadata_y_unit(&t_metadata);
    let meta_x = metadata_x_unit(&t_metadata);
    let n_samples = pairings.len();
    let mut shape: Vec<String> = Vec::new();
    if pairs_layout {
        shape.push(format!("x,y column pairs for {n_samples} samples"));
    } else if n_samples > 1 {
        shape.push(format!("{n_samples} sample columns"));
    }
    shape.extend(t_shape);
    let format = with_shape(format, &shape);

    let mut out = Vec::with_capacity(chosen.len());
    // A lone spectrum takes its columns instead of copying them.
    let take = chosen.len() == 1;
    for p in chosen {
        let mut warnings = t_warnings.clone();
        let (xs, ys, lines) = points(file, &mut columns, &t_lines, p, take, &name_of, &mut warnings)?;
        validate_xy(file, &xs, &ys, Some(&lines)).map_err(|e| match e {
            crate::error::Error::Spectrum { file, line, reason } if n_samples > 1 => crate::error::Error::Spectrum {
                file,
                line,
                reason: format!("column {}: {reason}", name_of(p.y)),
            },
            other => other,
        })?;
        let y_unit = choose_y_unit(header(p.y), meta_y.as_deref(), &mut warnings);
        let x_unit = match &opts.x_unit {
            Some(u) => u.clone(),
            None => match header(p.x).and_then(unit_from_header).or_else(|| meta_x.clone()) {
                Some(u) => u,
                None => {
                    warnings.push("x unit not stated; taken as nm".to_string());
                    "nm".to_string()
                }
            },
        };
        out.push(RawSpectrum {
            format: format.clone(),
            title: None,
            label: header(p.y).map(str::to_string),
            x_unit,
            y_unit,
            x: xs,
            y: ys,
            checks: Vec::new(),
            warnings,
        });
    }
    Ok(out)
}

/// "csv (comma, decimal point)" + ["3 sample columns"] → "csv (comma, decimal point; 3 sample columns)".
pub(crate) fn with_shape(format: &str, shape: &[String]) -> String {
    if shape.is_empty() {
        return format.to_string();
    }
    let extra = shape.join("; ");
    match format.strip_suffix(')') {
        Some(head) => format!("{head}; {extra})"),
        None => format!("{format} ({extra})"),
    }
}

/// x, y and the line of each point.
type Points<'l> = (Vec<f64>, Vec<f64>, std::borrow::Cow<'l, [usize]>);

/// The (x, y) points of one pairing, in file order, with the line of each. A row with a y but
/// no x is refused (the y would be put at the wrong wavelength); a y column that ends early,
/// starts late or has a gap is read where it has values, with a warning. `take` lets the
/// points take their columns out of a dense table (the last use of them) instead of copying.
fn points<'l>(
    file: &str,
    columns: &mut Columns,
    t_lines: &'l [usize],
    p: &Pairing,
    take: bool,
    name_of: &dyn Fn(usize) -> String,
    warnings: &mut Vec<String>,
) -> Result<Points<'l>> {
    let cols = match columns {
        // Every row has both values: the points are the columns as they are, on every line of
        // the block (no gap, no uneven length, so nothing to say).
        Columns::Dense(cols) => {
            let ys = if take && p.x != p.y {
                std::mem::take(&mut cols[p.y])
            } else {
                cols[p.y].clone()
            };
            let xs = if take {
                std::mem::take(&mut cols[p.x])
            } else {
                cols[p.x].clone()
            };
            return Ok((xs, ys, std::borrow::Cow::Borrowed(t_lines)));
        }
        Columns::Sparse(cols) => cols,
    };
    let xc = &cols[p.x];
    let yc = &cols[p.y];
    let n = xc.len();
    let mut xs = Vec::with_capacity(n);
    let mut ys = Vec::with_capacity(n);
    let mut lines = Vec::with_capacity(n);
    let first_y = yc.iter().position(Option::is_some).unwrap_or(0);
    let last_y = yc.iter().rposition(Option::is_some).unwrap_or(0);
    let mut gaps = 0;
    let mut first_gap = None;
    for i in 0..n {
        match (xc[i], yc[i]) {
            (Some(x), Some(y)) => {
                xs.push(x);
                ys.push(y);
                lines.push(t_lines[i]);
            }
            (None, Some(_)) => {
                return Err(spectrum_error(
                    file,
                    Some(t_lines[i]),
                    &format!(
                        "column {} has a value but its x column {} has none",
                        name_of(p.y),
                        name_of(p.x)
                    ),
                ));
            }
            (Some(_), None) if i > first_y && i < last_y => {
                gaps += 1;
                first_gap.get_or_insert(t_lines[i]);
            }
            _ => {}
        }
    }
    let x_rows = xc.iter().filter(|v| v.is_some()).count();
    if gaps > 0 {
        warnings.push(format!(
            "column {} has {gaps} empty cell{} inside its data (first on line {}); those points are left out",
            name_of(p.y),
            if gaps == 1 { "" } else { "s" },
            first_gap.unwrap_or(0)
        ));
    }
    if xs.len() + gaps < x_rows {
        warnings.push(format!(
            "column {} has {} values, its x column {} has {x_rows} (uneven column lengths)",
            name_of(p.y),
            xs.len(),
            name_of(p.x)
        ));
    }
    Ok((xs, ys, std::borrow::Cow::Owned(lines)))
}

/// The pairing `want` names: a y column header (without case or surrounding spaces), or a
/// 1-based number among the y columns.
fn pick_column<'a>(
    file: &str,
    want: &str,
    pairings: &'a [Pairing],
    header: &dyn Fn(usize) -> Option<String>,
) -> Result<&'a Pairing> {
    let w = want.trim();
    let by_name = pairings
        .iter()
        .find(|p| header(p.y).is_some_and(|h| h.trim().eq_ignore_ascii_case(w)));
    if let Some(p) = by_name {
        return Ok(p);
    }
    if let Ok(n) = w.parse::<usize>()
        && n >= 1
        && let Some(p) = pairings.get(n - 1)
    {
        return Ok(p);
    }
    Err(spectrum_error(
        file,
        None,
        &format!("no y column '{w}'; {}", list_columns(pairings, header)),
    ))
}

/// "the y columns are 1 '20 s', 2 '40 s'".
fn list_columns(pairings: &[Pairing], header: &dyn Fn(usize) -> Option<String>) -> String {
    let names: Vec<String> = pairings
        .iter()
        .enumerate()
        .map(|(i, p)| match header(p.y) {
            Some(h) => format!("{} '{h}'", i + 1),
            None => format!("{} (file column {})", i + 1, p.y + 1),
        })
        .collect();
    format!("the y columns are {}", names.join(", "))
}

/// The refusal for a file with several spectra and no choice made.
pub(crate) fn several_spectra_error(file: &str, spectra: &[RawSpectrum]) -> crate::error::Error {
    let names: Vec<String> = spectra
        .iter()
        .enumerate()
        .map(|(i, s)| match &s.label {
            Some(l) => format!("{} '{l}'", i + 1),
            None => format!("{}", i + 1),
        })
        .collect();
    spectrum_error(
        file,
        None,
        &format!(
            "{} y columns, so several spectra: {}; choose one with --column NAME|N (or read them all as a series)",
            spectra.len(),
            names.join(", ")
        ),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    fn n(v: f64) -> Cell {
        Cell::Number(v)
    }
    fn t(s: &str) -> Cell {
        Cell::Text(s.into())
    }

    fn grid(rows: Vec<Vec<Cell>>) -> Grid {
        let lines = (1..=rows.len()).collect();
        Grid {
            rows,
            lines,
            metadata: Vec::new(),
        }
    }

    #[test]
    fn two_samples_read_as_two_labelled_spectra() {
        let mut rows = vec![vec![t("Wavelength (nm)"), t("20 s"), t("40 s")]];
        for i in 0..10 {
            rows.push(vec![n(500.0 + f64::from(i)), n(0.1), n(0.2)]);
        }
        let s = spectra_from_grid("g", "sheet", &grid(rows.clone()), &ReadOptions::default()).unwrap();
        assert_eq!(s.len(), 2);
        assert_eq!(s[1].label.as_deref(), Some("40 s"));
        assert_eq!(s[0].x_unit, "nm");
        assert_eq!(s[0].format, "sheet (2 sample columns)");
        let opts = ReadOptions {
            column: Some("40 S".into()),
            ..Default::default()
        };
        let one = spectra_from_grid("g", "sheet", &grid(rows.clone()), &opts).unwrap();
        assert_eq!(one.len(), 1);
        assert_eq!(one[0].y[0], 0.2);
        let opts = ReadOptions {
            column: Some("3".into()),
            ..Default::default()
        };
        let e = spectra_from_grid("g", "sheet", &grid(rows), &opts)
            .unwrap_err()
            .to_string();
        assert_eq!(e, "g: no y column '3'; the y columns are 1 '20 s', 2 '40 s'");
    }

    #[test]
    fn x_y_pairs_each_take_their_own_x() {
        let mut rows = vec![vec![t("nm"), t("A"), t("nm"), t("B")]];
        for i in 0..10 {
            let short = if i < 9 { n(700.0 + f64::from(i)) } else { Cell::Empty };
            let short_y = if i < 9 { n(1.0) } else { Cell::Empty };
            rows.push(vec![n(500.0 + f64::from(i)), n(0.5), short, short_y]);
        }
        let s = spectra_from_grid("g", "sheet", &grid(rows), &ReadOptions::default()).unwrap();
        assert_eq!(s.len(), 2);
        assert_eq!(s[1].x[0], 700.0);
        assert_eq!(s[1].x.len(), 9);
        assert!(s[0].format.contains("x,y column pairs for 2 samples"));
    }

    #[test]
    fn a_word_in_the_data_names_its_row() {
        let mut rows = vec![vec![t("nm"), t("A")]];
        for i in 0..10 {
            rows.push(vec![n(500.0 + f64::from(i)), if i == 4 { t("oops") } else { n(0.1) }]);
        }
        let e = spectra_from_grid("g", "sheet", &grid(rows), &ReadOptions::default())
            .unwrap_err()
            .to_string();
        assert_eq!(e, "g line 6: non-numeric cell 'oops'");
    }

    #[test]
    fn header_units_are_read() {
        assert_eq!(unit_from_header("Raman shift (1/cm)").as_deref(), Some("1/cm"));
        assert_eq!(unit_from_header("Energy [eV]").as_deref(), Some("ev"));
        assert_eq!(unit_from_header("Wavelength (µm)").as_deref(), Some("µm"));
        assert_eq!(unit_from_header("Sample seven"), None);
        assert_eq!(unit_from_header("Wavenumber / cm-1").as_deref(), Some("cm-1"));
    }
}
