//! Delimited text exports, as instruments and spreadsheets write them: comma, tab, semicolon or
//! whitespace separated; a decimal point or a decimal comma; LF, CRLF or CR-only line endings;
//! quoted cells; thousands separators. The text becomes a table (see [`super::grid`]: preamble,
//! header, data, notes or a trailing block) and the table becomes one spectrum per y column.
//! Data framed by begin/end marker lines are read between the markers, whatever the preamble
//! above holds.
//!
//! The delimiter and decimal mark are chosen as the pair under which the most lines read as
//! rows of numbers. A number that could be read two ways (`1,234`: one and a bit, or twelve
//! hundred and thirty-four) is refused with its line unless the file settles which; a number
//! that cannot be misread is read, and what was odd is said in `warnings`.
//!
//! Speed: the text is not copied; lines and cells are slices of it; the numbers of every row go
//! into one growing buffer, so a line costs no allocation of its own.
//!
//! Here: the entry points, the choice of delimiter and decimal mark, the one-pass reading of a
//! plain two-column text, and the judging of doubtful numbers once the data block is known.
//! `lines` splits the text into lines (any ending); `cells` splits a line into cells;
//! `numbers` reads a cell as a number (decimal point or comma, thousands separators, the
//! exact fast path); `rows` is the text as rows for the table walk, noting cells that could
//! be misread; `tests` (with `tests/agree`, the property tests) holds the tests.

mod cells;
mod lines;
mod numbers;
mod rows;

use super::grid::{self, RowSource, Table};
use super::{RawSpectrum, ReadOptions, spectrum_error};
use crate::error::Result;

use cells::Delim;
use cells::cells;
use cells::unquote;
use lines::split_lines;
use numbers::DeferredColumn;
use numbers::Num;
use numbers::SETTLED;
use numbers::mantissa_at;
use numbers::parse_num;
use numbers::plain_row;
use rows::Oddities;
use rows::Oddity;
use rows::TextRows;
use rows::is_comment;
use rows::marker;

/// Every spectrum the text holds.
pub fn read_all(file: &str, text: &str, opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    read_all_decoded(file, text, None, opts)
}

/// One spectrum; a file with several y columns and no `opts.column` is refused, listing them.
pub fn read(file: &str, text: &str, opts: &ReadOptions) -> Result<RawSpectrum> {
    let mut all = read_all(file, text, opts)?;
    if all.len() > 1 {
        return Err(grid::several_spectra_error(file, &all));
    }
    all.pop().ok_or_else(|| spectrum_error(file, None, "no spectrum found"))
}

/// As [`read_all`], with what decoding found (a UTF-16 text, a Latin-1 one) for `format`.
pub(crate) fn read_all_decoded(
    file: &str,
    text: &str,
    encoding: Option<&str>,
    opts: &ReadOptions,
) -> Result<Vec<RawSpectrum>> {
    read_text(file, text, encoding, opts, true)
}

/// The reader; `plain` takes plain rows on the one-pass path (false only in the tests that
/// check it reads every file as the general path does).
fn read_text(
    file: &str,
    text: &str,
    encoding: Option<&str>,
    opts: &ReadOptions,
    plain: bool,
) -> Result<Vec<RawSpectrum>> {
    if plain && let Some((delim, table)) = two_columns(text) {
        let reading = Reading {
            delim,
            comma_decimal: false,
            quoted: false,
            cr_only: false,
        };
        return spectra_of(file, &reading, table, encoding, opts);
    }
    let (spans, endings) = split_lines(text);
    let line_of = |i: usize| {
        let (a, b) = spans[i];
        &text[a..b]
    };
    let mut warnings = Vec::new();
    let mut shape: Vec<String> = Vec::new();

    // Framed data: read between the markers, whatever the preamble holds.
    let begin = (0..spans.len()).find(|&i| marker(line_of(i)) == Some(true));
    let range = match begin {
        Some(b) => {
            let end = (b + 1..spans.len()).find(|&i| marker(line_of(i)) == Some(false));
            if end.is_none() {
                warnings.push(format!(
                    "line {}: the data begin marker has no end marker; read to the end of the file",
                    b + 1
                ));
            }
            shape.push("framed by begin/end markers".to_string());
            b + 1..end.unwrap_or(spans.len())
        }
        None => 0..spans.len(),
    };

    let (delim, comma_decimal) = choose_reading(text, &spans, range.clone());
    let mut src = TextRows {
        text,
        spans: &spans,
        delim,
        comma_decimal,
        odd: Oddities::default(),
        record: true,
        plain,
    };
    let mut table = grid::walk(file, &mut src, range.clone())?;
    if begin.is_some() {
        // The preamble and anything after the end marker hold the settings.
        for i in (0..spans.len()).filter(|i| !range.contains(i)) {
            if marker(line_of(i)).is_some() {
                continue;
            }
            if let Some(kv) = grid::key_value(&src.texts(i)) {
                table.metadata.push(kv);
            }
        }
    }
    judge_numbers(file, &src, &table, &mut warnings)?;
    if endings.cr > 0 && endings.lf == 0 && endings.crlf == 0 {
        warnings.push("old CR-only line endings read".to_string());
    }
    if comma_decimal {
        warnings.push("decimal comma read".to_string());
    }
    table.shape.splice(0..0, shape);
    table.warnings.splice(0..0, warnings);
    let reading = Reading {
        delim,
        comma_decimal,
        quoted: src.odd.quoted,
        cr_only: endings.cr > 0 && endings.lf == 0 && endings.crlf == 0,
    };
    spectra_of(file, &reading, table, encoding, opts)
}

/// How a text was read, as `format` names it.
struct Reading {
    delim: Delim,
    comma_decimal: bool,
    quoted: bool,
    cr_only: bool,
}

/// The spectra of a walked table, with the `format` its reading gives.
fn spectra_of(
    file: &str,
    reading: &Reading,
    table: Table,
    encoding: Option<&str>,
    opts: &ReadOptions,
) -> Result<Vec<RawSpectrum>> {
    let mut format = format!(
        "{} ({}, decimal {}",
        if reading.delim == Delim::Comma {
            "csv"
        } else {
            "delimited text"
        },
        reading.delim.name(),
        if reading.comma_decimal { "comma" } else { "point" }
    );
    if reading.quoted {
        format.push_str("; quoted numbers");
    }
    if reading.cr_only {
        format.push_str("; CR line endings");
    }
    if let Some(enc) = encoding {
        format.push_str("; ");
        format.push_str(enc);
    }
    format.push(')');
    grid::spectra_from_table(file, &format, table, opts)
}

/// The commonest export read in one pass over its bytes, without splitting it into lines
/// first: an optional header line that starts with a letter, then rows of exactly two plain
/// decimals (decimal point) separated by one comma, tab, semicolon or blank, each ending in LF
/// or CRLF (the last one may end the text instead). For such a text the general reader finds
/// exactly this table: no marker frames it (the header is none; a row of numbers never is);
/// every sampled line that says what separates numbers is a row, so the reading is that
/// delimiter with a decimal point (the first candidate with the most rows, see
/// [`choose_reading`]); the header is text under every reading (its first cell begins with a
/// letter and is not the float word `nan`, `inf` or `infinity`), so it is the header of the
/// block of plain rows below it ([`grid::walk`]'s one-pass walk), with no metadata, oddity or
/// warning. Any other text returns None and is read by the general reader; what the two
/// give is compared in the tests on generated files.
fn two_columns(text: &str) -> Option<(Delim, Table)> {
    let b = text.as_bytes();
    let n = b.len();
    let first = *b.first()?;
    let (header_end, data) = if first.is_ascii_alphabetic() {
        let lf = b.iter().position(|&c| c == b'\n')?;
        let end = if b[lf - 1] == b'\r' { lf - 1 } else { lf };
        // A CR anywhere else makes the general split a byte-by-byte one.
        if b[..end].contains(&b'\r') {
            return None;
        }
        let head = &text[..end];
        let word_end = head.bytes().position(|c| !c.is_ascii_alphabetic()).unwrap_or(end);
        let word = &head[..word_end];
        if ["nan", "inf", "infinity"].iter().any(|w| word.eq_ignore_ascii_case(w)) || marker(head).is_some() {
            return None;
        }
        (Some(end), lf + 1)
    } else if first.is_ascii_digit() {
        (None, 0)
    } else {
        return None;
    };
    let (_, _, after) = mantissa_at(b, data, n, b'.')?;
    let delim = match b.get(after)? {
        b',' => Delim::Comma,
        b'\t' => Delim::Tab,
        b';' => Delim::Semicolon,
        b' ' => Delim::Space,
        _ => return None,
    };
    let d = delim.byte();
    // Rows of the first row's length, for the columns' capacity.
    let row_len = b[data..].iter().position(|&c| c == b'\n').map_or(n - data, |p| p + 1);
    let rows_guess = (n - data) / row_len.max(1) + 1;
    let mut xs = DeferredColumn {
        values: Vec::with_capacity(rows_guess),
        frac: SETTLED,
    };
    let mut ys = DeferredColumn {
        values: Vec::with_capacity(rows_guess),
        frac: SETTLED,
    };
    let mut i = data;
    let mut rows = 0;
    loop {
        let (mx, fx, j) = mantissa_at(b, i, n, b'.')?;
        if b.get(j) != Some(&d) {
            return None;
        }
        let (my, fy, k) = mantissa_at(b, j + 1, n, b'.')?;
        if rows == 0 {
            // The first row sets the count of decimals each column defers.
            xs.frac = fx;
            ys.frac = fy;
        }
        xs.push(mx, fx);
        ys.push(my, fy);
        rows += 1;
        i = match b.get(k) {
            None => break,
            Some(b'\n') => k + 1,
            Some(b'\r') if b.get(k + 1) == Some(&b'\n') => k + 2,
            Some(_) => return None,
        };
        if i == n {
            break;
        }
    }
    let first_row = usize::from(header_end.is_some());
    let header = header_end.map(|end| {
        let spans = [(0, end)];
        TextRows {
            text,
            spans: &spans,
            delim,
            comma_decimal: false,
            odd: Oddities::default(),
            record: true,
            plain: true,
        }
        .texts(0)
    });
    let table = Table {
        header,
        columns: grid::Columns::Dense(vec![xs.finish(), ys.finish()]),
        lines: (first_row + 1..=first_row + rows).collect(),
        ..Table::default()
    };
    Some((delim, table))
}

/// Chooses the delimiter and decimal mark: the pair under which the most lines of a sample
/// (the start and the end of the range) read as rows of two or more numbers; on a tie, the
/// reading with fewer numbers that need a thousands separator to make sense.
fn choose_reading(text: &str, spans: &[(usize, usize)], range: std::ops::Range<usize>) -> (Delim, bool) {
    let idx: Vec<usize> = if range.len() > 60 {
        range.clone().take(30).chain(range.end - 30..range.end).collect()
    } else {
        range.collect()
    };
    let mut has = [false; 4];
    for &i in &idx {
        let (a, b) = spans[i];
        // Only lines that start like a row of numbers say what separates the numbers (a
        // header's spaces say nothing).
        let line = &text.as_bytes()[a..b];
        let starts_numeric = line
            .iter()
            .find(|c| **c != b' ' && **c != b'"')
            .is_some_and(|c| c.is_ascii_digit() || matches!(c, b'-' | b'+' | b'.'));
        if !starts_numeric {
            continue;
        }
        for &c in line {
            match c {
                b'\t' => has[0] = true,
                b';' => has[1] = true,
                b',' => has[2] = true,
                b' ' => has[3] = true,
                _ => {}
            }
        }
    }
    let mut candidates = Vec::with_capacity(7);
    if has[0] {
        candidates.push((Delim::Tab, false));
        candidates.push((Delim::Tab, true));
    }
    if has[1] {
        candidates.push((Delim::Semicolon, false));
        candidates.push((Delim::Semicolon, true));
    }
    if has[2] {
        candidates.push((Delim::Comma, false));
    }
    if has[3] || has[0] {
        candidates.push((Delim::Space, false));
        candidates.push((Delim::Space, true));
    }
    let mut best: Option<((Delim, bool), usize, usize)> = None;
    let mut scratch = Vec::new();
    for (d, dc) in candidates {
        let mut rows = 0;
        let mut odd = 0;
        for &i in &idx {
            let (a, b) = spans[i];
            let line = &text[a..b];
            // A plain row under a decimal point: every cell a plain number (each one
            // `Num::Value`), as the loop below would count it.
            scratch.clear();
            if !dc && let Some(n) = plain_row(text.as_bytes(), a, b, d, &mut scratch) {
                rows += usize::from(n >= 2);
                continue;
            }
            if is_comment(line) {
                continue;
            }
            let mut n = 0;
            let mut ok = true;
            for cell in cells(line, d) {
                match parse_num(cell, dc) {
                    Num::Empty => {}
                    Num::Value(_) => n += 1,
                    Num::Text => {
                        ok = false;
                        break;
                    }
                    _ => {
                        n += 1;
                        odd += 1;
                    }
                }
            }
            if ok && n >= 2 {
                rows += 1;
            }
        }
        if rows > 0 && best.is_none_or(|(_, r, o)| rows > r || (rows == r && odd < o)) {
            best = Some(((d, dc), rows, odd));
        }
    }
    best.map_or((Delim::Comma, false), |b| b.0)
}

/// After the walk: numbers that could be misread are refused where they fall in the data, with
/// the line and the reason; thousands separators that cannot be misread are reported.
fn judge_numbers(file: &str, src: &TextRows<'_>, table: &Table, warnings: &mut Vec<String>) -> Result<()> {
    let (Some(&first), Some(&last)) = (table.lines.first(), table.lines.last()) else {
        return Ok(());
    };
    let in_data = |o: &&Oddity| (first..=last).contains(&o.line);
    if let Some(o) = src.odd.dot_group.iter().find(in_data) {
        return Err(spectrum_error(
            file,
            Some(o.line),
            &format!(
                "'{}' could be {} (a decimal point) or {} (a thousands separator) in a file with decimal commas",
                o.cell,
                o.cell,
                o.cell.replace('.', "")
            ),
        ));
    }
    if let Some(o) = src.odd.comma_group_like.iter().find(|o| {
        in_data(o)
            && src
                .odd
                .whole
                .get(o.column)
                .copied()
                .flatten()
                .is_some_and(|l| (first..=last).contains(&l))
    }) {
        let whole_line = src.odd.whole.get(o.column).copied().flatten().unwrap_or(0);
        return Err(spectrum_error(
            file,
            Some(o.line),
            &format!(
                "'{}' could be {} (a decimal comma) or {} (a thousands separator): this column also holds whole numbers (line {whole_line}), as counts are written",
                o.cell,
                o.cell.replace(',', "."),
                o.cell.replace(',', "")
            ),
        ));
    }
    if let Some(o) = src.odd.comma_group.iter().find(in_data) {
        // "1,234" in a decimal-point file is thousands only if the data hold a decimal point
        // somewhere; otherwise the comma could be a decimal comma.
        let points = (0..src.spans.len())
            .filter(|&i| (first..=last).contains(&(i + 1)))
            .any(|i| {
                cells(src.line_text(i), src.delim)
                    .any(|c| unquote(c).contains('.') && matches!(parse_num(c, false), Num::Value(_) | Num::Grouped(_)))
            });
        if !points {
            return Err(spectrum_error(
                file,
                Some(o.line),
                &format!(
                    "'{}' could be {} (a decimal comma) or {} (a thousands separator); nothing else in the data says which",
                    o.cell,
                    o.cell.replace(',', "."),
                    o.cell.replace(',', "")
                ),
            ));
        }
    }
    let grouped = src
        .odd
        .grouped
        .iter()
        .chain(&src.odd.comma_group)
        .filter(|o| in_data(o))
        .min_by_key(|o| o.line);
    if let Some(o) = grouped {
        warnings.push(format!(
            "thousands separators read (first on line {}: '{}')",
            o.line, o.cell
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests;
