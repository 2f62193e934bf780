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

use super::grid::{self, RowKind, RowSource, Table};
use super::{RawSpectrum, ReadOptions, spectrum_error};
use crate::error::Result;

#[derive(Debug, Clone, Copy, PartialEq)]
enum Delim {
    Tab,
    Semicolon,
    Comma,
    Space,
}

impl Delim {
    fn byte(self) -> u8 {
        match self {
            Delim::Tab => b'\t',
            Delim::Semicolon => b';',
            Delim::Comma => b',',
            Delim::Space => b' ',
        }
    }
    fn name(self) -> &'static str {
        match self {
            Delim::Tab => "tab",
            Delim::Semicolon => "semicolon",
            Delim::Comma => "comma",
            Delim::Space => "whitespace",
        }
    }
}

/// The cells of one line, as slices (quotes kept; see [`unquote`]).
struct Cells<'a> {
    rest: &'a [u8],
    src: &'a str,
    pos: usize,
    delim: Delim,
    done: bool,
}

fn cells(line: &str, delim: Delim) -> Cells<'_> {
    Cells {
        rest: line.as_bytes(),
        src: line,
        pos: 0,
        delim,
        done: false,
    }
}

impl<'a> Iterator for Cells<'a> {
    type Item = &'a str;
    fn next(&mut self) -> Option<&'a str> {
        if self.done {
            return None;
        }
        let b = self.rest;
        let mut i = self.pos;
        if self.delim == Delim::Space {
            while i < b.len() && (b[i] == b' ' || b[i] == b'\t') {
                i += 1;
            }
            if i >= b.len() {
                self.done = true;
                return None;
            }
            let start = i;
            while i < b.len() && b[i] != b' ' && b[i] != b'\t' {
                i += 1;
            }
            self.pos = i;
            return Some(&self.src[start..i]);
        }
        let d = self.delim.byte();
        let start = i;
        // Skip leading blanks to see whether the cell is quoted; a quoted cell may hold the
        // delimiter ("1,234" in a comma file).
        let mut j = i;
        while j < b.len() && b[j] == b' ' {
            j += 1;
        }
        if j < b.len() && b[j] == b'"' {
            j += 1;
            while j < b.len() {
                if b[j] == b'"' {
                    if j + 1 < b.len() && b[j + 1] == b'"' {
                        j += 2;
                        continue;
                    }
                    break;
                }
                j += 1;
            }
            i = j.min(b.len());
        }
        while i < b.len() && b[i] != d {
            i += 1;
        }
        let cell = &self.src[start..i];
        if i >= b.len() {
            self.done = true;
        } else {
            self.pos = i + 1;
        }
        Some(cell)
    }
}

/// A cell without surrounding blanks and quotes.
fn unquote(cell: &str) -> &str {
    let t = cell.trim();
    t.strip_prefix('"')
        .and_then(|s| s.strip_suffix('"'))
        .map_or(t, str::trim)
}

/// What one cell reads as.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Num {
    Empty,
    Value(f64),
    /// Thousands separators that cannot be misread ("1,234.5", "1,234,567"; "12.345,6").
    Grouped(f64),
    /// `d,ddd` in a decimal-point file: thousands, unless the file settles otherwise. The value
    /// is read as thousands.
    CommaGroup(f64),
    /// `d.ddd` in a decimal-comma file: could be thousands or a decimal point; refused.
    DotGroup,
    /// In a decimal-comma file, `d,ddd` with a non-zero leading group: read as a decimal.
    CommaGroupLike(f64),
    Text,
}

/// Whether `s` is `[+-]?[1-9]\d{0,2}(SEP\d{3})+` followed by an optional `DEC\d*` fraction and
/// exponent; returns the number of separators. `s` is ASCII-checked by the caller.
fn grouping(s: &[u8], sep: u8, dec: u8) -> Option<usize> {
    let mut i = usize::from(matches!(s.first(), Some(b'+' | b'-')));
    let lead = i;
    while i < s.len() && s[i].is_ascii_digit() {
        i += 1;
    }
    let lead_len = i - lead;
    if !(1..=3).contains(&lead_len) || s[lead] == b'0' {
        return None;
    }
    let mut groups = 0;
    while i < s.len() && s[i] == sep {
        if i + 4 > s.len() || !s[i + 1..i + 4].iter().all(u8::is_ascii_digit) {
            return None;
        }
        if i + 4 < s.len() && s[i + 4].is_ascii_digit() {
            return None;
        }
        i += 4;
        groups += 1;
    }
    if groups == 0 {
        return None;
    }
    if i < s.len() && s[i] == dec {
        i += 1;
        while i < s.len() && s[i].is_ascii_digit() {
            i += 1;
        }
    }
    if i < s.len() && (s[i] == b'e' || s[i] == b'E') {
        i += 1;
        if i < s.len() && (s[i] == b'+' || s[i] == b'-') {
            i += 1;
        }
        while i < s.len() && s[i].is_ascii_digit() {
            i += 1;
        }
    }
    (i == s.len()).then_some(groups)
}

/// Parses `s` after dropping every `drop` byte and turning `to_point` into '.', without a heap
/// allocation (cells longer than the buffer are not numbers anyone writes).
fn parse_mapped(s: &[u8], drop: Option<u8>, to_point: Option<u8>) -> Option<f64> {
    let mut buf = [0u8; 64];
    let mut n = 0;
    for &c in s {
        if Some(c) == drop {
            continue;
        }
        if n == buf.len() {
            return None;
        }
        buf[n] = if Some(c) == to_point { b'.' } else { c };
        n += 1;
    }
    std::str::from_utf8(&buf[..n]).ok()?.parse().ok()
}

fn parse_num(cell: &str, comma_decimal: bool) -> Num {
    let t = unquote(cell);
    if t.is_empty() {
        return Num::Empty;
    }
    let b = t.as_bytes();
    if !comma_decimal {
        if let Ok(v) = t.parse::<f64>() {
            return Num::Value(v);
        }
        if !b.contains(&b',') {
            return Num::Text;
        }
        return match grouping(b, b',', b'.') {
            Some(groups) => match parse_mapped(b, Some(b','), None) {
                Some(v) if groups > 1 || b.contains(&b'.') => Num::Grouped(v),
                Some(v) => Num::CommaGroup(v),
                None => Num::Text,
            },
            None => Num::Text,
        };
    }
    let has_dot = b.contains(&b'.');
    if !has_dot {
        let Some(v) = parse_mapped(b, None, Some(b',')) else {
            return Num::Text;
        };
        if grouping(b, b',', b'.') == Some(1) {
            return Num::CommaGroupLike(v);
        }
        return Num::Value(v);
    }
    match grouping(b, b'.', b',') {
        Some(groups) if groups > 1 || b.contains(&b',') => {
            parse_mapped(b, Some(b'.'), Some(b',')).map_or(Num::Text, Num::Grouped)
        }
        Some(_) => Num::DotGroup,
        // A number with an exponent but no decimal ("1e-3") reads either way.
        None if !b.contains(&b',') => t.parse().map_or(Num::Text, Num::Value),
        None => Num::Text,
    }
}

/// Whether a cell of a decimal-comma file is a whole number (no decimal mark at all).
fn is_whole(cell: &str) -> bool {
    let t = unquote(cell).as_bytes();
    let digits = t.strip_prefix(b"-").unwrap_or(t);
    !digits.is_empty() && digits.iter().all(u8::is_ascii_digit)
}

/// The lines of `text` as byte spans, for LF, CRLF and CR-only endings; and which endings.
fn split_lines(text: &str) -> (Vec<(usize, usize)>, Endings) {
    let b = text.as_bytes();
    let mut spans = Vec::with_capacity(b.len() / 16 + 1);
    let mut endings = Endings::default();
    let mut start = 0;
    let mut i = 0;
    while i < b.len() {
        match b[i] {
            b'\n' => {
                spans.push((start, i));
                endings.lf += 1;
                start = i + 1;
            }
            b'\r' => {
                spans.push((start, i));
                if i + 1 < b.len() && b[i + 1] == b'\n' {
                    endings.crlf += 1;
                    i += 1;
                } else {
                    endings.cr += 1;
                }
                start = i + 1;
            }
            _ => {}
        }
        i += 1;
    }
    if start < b.len() {
        spans.push((start, b.len()));
    }
    (spans, endings)
}

#[derive(Debug, Default)]
struct Endings {
    lf: usize,
    crlf: usize,
    cr: usize,
}

/// A cell that could be misread, as met, for judging once the data block is known.
#[derive(Debug, Clone)]
struct Oddity {
    line: usize,
    column: usize,
    cell: String,
}

/// Keeps at most this many oddities of each sort: enough to judge and name the first in the
/// data, without a pathological file growing a list per cell.
const ODDITY_CAP: usize = 256;

#[derive(Debug, Default)]
struct Oddities {
    grouped: Vec<Oddity>,
    comma_group: Vec<Oddity>,
    dot_group: Vec<Oddity>,
    comma_group_like: Vec<Oddity>,
    /// Per column: the first line with a whole number, in a decimal-comma file.
    whole: Vec<Option<usize>>,
    quoted: bool,
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

struct TextRows<'a> {
    text: &'a str,
    spans: &'a [(usize, usize)],
    delim: Delim,
    comma_decimal: bool,
    odd: Oddities,
    /// Count oddities only on the chosen reading, not while trying candidates.
    record: bool,
}

impl TextRows<'_> {
    fn line_text(&self, i: usize) -> &str {
        let (a, b) = self.spans[i];
        &self.text[a..b]
    }
}

/// Whether a line is a comment: `#`, `%` or `;` first (not a rule of `#`).
fn is_comment(line: &str) -> bool {
    let t = line.trim_start();
    (t.starts_with('#') && !t.bytes().all(|c| c == b'#' || c == b' ')) || t.starts_with("//")
}

impl RowSource for TextRows<'_> {
    fn line(&self, i: usize) -> usize {
        i + 1
    }

    fn scan(&mut self, i: usize, out: &mut Vec<Option<f64>>) -> Result<RowKind> {
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
            if self.record && !self.odd.quoted && v.is_some() && cell.trim_start().starts_with('"') {
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
fn marker(line: &str) -> Option<bool> {
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

    let mut format = format!(
        "{} ({}, decimal {}",
        if delim == Delim::Comma { "csv" } else { "delimited text" },
        delim.name(),
        if comma_decimal { "comma" } else { "point" }
    );
    if src.odd.quoted {
        format.push_str("; quoted numbers");
    }
    if endings.cr > 0 && endings.lf == 0 && endings.crlf == 0 {
        format.push_str("; CR line endings");
        warnings.push("old CR-only line endings read".to_string());
    }
    if let Some(enc) = encoding {
        format.push_str("; ");
        format.push_str(enc);
    }
    format.push(')');
    if comma_decimal {
        warnings.push("decimal comma read".to_string());
    }
    table.shape.splice(0..0, shape);
    table.warnings.splice(0..0, warnings);
    grid::spectra_from_table(file, &format, &table, opts)
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
        for &c in &text.as_bytes()[a..b] {
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
    for (d, dc) in candidates {
        let mut rows = 0;
        let mut odd = 0;
        for &i in &idx {
            let (a, b) = spans[i];
            let line = &text[a..b];
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
mod tests {
    use super::*;

    fn opts() -> ReadOptions {
        ReadOptions::default()
    }

    fn ramp(sep: &str, dc: bool) -> String {
        (0..10)
            .map(|i| {
                let x = format!("{}", 400 + i);
                let y = format!("{:.3}", 0.1 * i as f64);
                let y = if dc { y.replace('.', ",") } else { y };
                format!("{x}{sep}{y}\n")
            })
            .collect()
    }

    #[test]
    fn reads_each_delimiter() {
        for (sep, dc) in [
            (",", false),
            ("\t", false),
            (";", false),
            ("   ", false),
            (";", true),
            ("\t", true),
        ] {
            let s = read("t", &format!("Wavelength (nm){sep}A\n{}", ramp(sep, dc)), &opts()).unwrap();
            assert_eq!(s.x.len(), 10, "sep {sep:?}");
            assert!((s.y[3] - 0.3).abs() < 1e-12, "sep {sep:?} dc {dc}");
            assert_eq!(s.x_unit, "nm");
        }
    }

    #[test]
    fn preamble_and_header_are_skipped() {
        let text = format!(
            "Instrument: bench\nDate: 2026-01-01\n\nEnergy (eV),Abs\n{}",
            ramp(",", false)
        );
        let s = read("t", &text, &opts()).unwrap();
        assert_eq!(s.x_unit, "ev");
        assert_eq!(s.y_unit.as_deref(), Some("Abs"));
    }

    #[test]
    fn bad_cell_names_its_line() {
        let text = "nm,A\n400,0.1\n401,0.2\n402,oops\n403,0.3\n";
        let e = read("f.csv", text, &opts()).unwrap_err().to_string();
        assert_eq!(e, "f.csv line 4: non-numeric cell 'oops'");
    }

    #[test]
    fn numbers_read_each_way() {
        assert_eq!(parse_num("0.5", false), Num::Value(0.5));
        assert_eq!(parse_num("\"0.5\"", false), Num::Value(0.5));
        assert_eq!(parse_num("0,5", true), Num::Value(0.5));
        assert_eq!(parse_num("1,234.5", false), Num::Grouped(1234.5));
        assert_eq!(parse_num("1,234,567", false), Num::Grouped(1_234_567.0));
        assert_eq!(parse_num("1,234", false), Num::CommaGroup(1234.0));
        assert_eq!(parse_num("0,234", false), Num::Text);
        assert_eq!(parse_num("1.234,5", true), Num::Grouped(1234.5));
        assert_eq!(parse_num("1.234", true), Num::DotGroup);
        assert_eq!(parse_num("1,234", true), Num::CommaGroupLike(1.234));
        assert_eq!(parse_num("0,234", true), Num::Value(0.234));
        assert_eq!(parse_num("1e-3", true), Num::Value(0.001));
        assert_eq!(parse_num("12,3456", false), Num::Text);
    }

    #[test]
    fn lines_end_any_way() {
        let (spans, e) = split_lines("a\rb\r\nc\nd");
        assert_eq!(spans.len(), 4);
        assert_eq!((e.cr, e.crlf, e.lf), (1, 1, 1));
    }

    #[test]
    fn markers_are_recognised() {
        assert_eq!(marker(">>>>>Begin Spectral Data<<<<<"), Some(true));
        assert_eq!(marker("[End of Data]"), Some(false));
        assert_eq!(marker("Data points: 601"), None);
        assert_eq!(marker("400,0.5"), None);
    }
}
