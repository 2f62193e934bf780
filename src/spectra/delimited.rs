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
    let b = cell.as_bytes();
    // The common cell has nothing to strip; say so without a Unicode-aware trim.
    match (b.first(), b.last()) {
        (Some(f), Some(l))
            if !f.is_ascii_whitespace() && !l.is_ascii_whitespace() && *f != b'"' && *f < 0x80 && *l < 0x80 =>
        {
            return cell;
        }
        _ => {}
    }
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

/// Powers of ten that f64 holds exactly.
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20,
    1e21, 1e22,
];

/// 2^53: every whole number up to it is exact in f64.
const EXACT_MANTISSA: u64 = 1 << 53;

/// The plain decimals instruments write ("599.9901733", "-0.000496", "420"), read exactly:
/// when the digits, without the mark, make a whole number of at most 2^53 and there are at
/// most 22 after the mark, both that number and the power of ten are exact in f64, so one
/// division is correctly rounded (Clinger's fast path: the same result `str::parse` gives).
/// Anything else (an exponent, more digits) is left to `str::parse` by returning None.
fn fast_decimal(s: &[u8], mark: u8) -> Option<f64> {
    match decimal_prefix(s, mark) {
        Some((v, used)) if used == s.len() => Some(v),
        _ => None,
    }
}

/// The plain decimal `[+-]?digits[MARK digits]` at the start of `s` (at least one digit), as
/// [`fast_decimal`] reads it, and how many bytes it took; None when it is not one or not exact
/// on the fast path. What follows it is the caller's to judge.
#[inline]
fn decimal_prefix(s: &[u8], mark: u8) -> Option<(f64, usize)> {
    decimal_at(s, 0, s.len(), mark)
}

/// [`decimal_prefix`] of `buf[start..end]`, returning where the number ends (an index into
/// `buf`). The bytes of `buf` past `end` are only ever looked at, never read as part of the
/// number, so a caller passes the whole text and a line's end.
#[inline(always)]
fn decimal_at(buf: &[u8], start: usize, end: usize, mark: u8) -> Option<(f64, usize)> {
    let (mantissa, frac, i) = mantissa_at(buf, start, end, mark)?;
    // The sign goes on before the division: rounding to nearest is symmetric, so -(m/p) and
    // (-m)/p are the same double (and "-0" stays -0.0).
    Some((mantissa / POW10[frac], i))
}

/// The signed digits of the plain decimal at `buf[start..end]` as a whole number (exact in
/// f64), how many of them follow the mark, and where the number ends; the value is the first
/// divided by ten to the second. None where [`decimal_prefix`] reads none.
#[inline(always)]
fn mantissa_at(buf: &[u8], start: usize, end: usize, mark: u8) -> Option<(f64, usize, usize)> {
    let (neg, mut i) = match buf[..end].get(start)? {
        b'-' => (true, start + 1),
        b'+' => (false, start + 1),
        _ => (false, start),
    };
    let int_start = i;
    let (next, mut mantissa) = digit_run(buf, i, end, 0);
    i = next;
    let int_digits = i - int_start;
    let mut frac = 0;
    if i < end && buf[i] == mark {
        i += 1;
        let frac_start = i;
        (i, mantissa) = digit_run(buf, i, end, mantissa);
        frac = i - frac_start;
    }
    let digits = int_digits + frac;
    if digits == 0 || digits > 19 || mantissa > EXACT_MANTISSA || frac >= POW10.len() {
        return None;
    }
    let m = mantissa as f64;
    Some((if neg { -m } else { m }, frac, i))
}

/// Ten to the power of each count of digits one word holds.
const POW10_U64: [u64; 9] = [1, 10, 100, 1_000, 10_000, 100_000, 1_000_000, 10_000_000, 100_000_000];

/// Reads the run of ASCII digits at `buf[i..end]` onto `mantissa` (wrapping: a run of more
/// than 19 digits is refused by the caller before the value is used, and wrapping arithmetic
/// gives the same bits whether the digits are taken one or eight at a time) and returns where
/// the run ends and the new mantissa. Eight bytes are looked at as one word where the text has
/// eight left; the digits among them are found and combined with word arithmetic.
#[inline(always)]
fn digit_run(buf: &[u8], mut i: usize, end: usize, mut mantissa: u64) -> (usize, u64) {
    while let Some(word) = buf.get(i..i + 8) {
        let mut w = [0u8; 8];
        w.copy_from_slice(word);
        // Each byte less '0': a digit is 0..=9; any other byte has its high bit set here or
        // once 0x76 is added (no digit carries into the next byte; a non-digit may, but only
        // into bytes after the first non-digit, which are not read).
        let d = u64::from_le_bytes(w).wrapping_sub(0x3030_3030_3030_3030);
        let not_digit = (d.wrapping_add(0x7676_7676_7676_7676) | d) & 0x8080_8080_8080_8080;
        let n = ((not_digit.trailing_zeros() / 8) as usize).min(end.saturating_sub(i));
        if n == 0 {
            return (i, mantissa);
        }
        // The n digits to the top of the word (first digit lowest), then pairs, fours and
        // eights combined: each step's sums fit their lanes.
        let mut x = (d << (64 - 8 * n as u32)) & 0x0f0f_0f0f_0f0f_0f0f;
        x = (x.wrapping_mul(10).wrapping_add(x >> 8)) & 0x00ff_00ff_00ff_00ff;
        x = (x.wrapping_mul(100).wrapping_add(x >> 16)) & 0x0000_ffff_0000_ffff;
        x = (x.wrapping_mul(10_000).wrapping_add(x >> 32)) & 0xffff_ffff;
        mantissa = mantissa.wrapping_mul(POW10_U64[n]).wrapping_add(x);
        i += n;
        if n < 8 {
            return (i, mantissa);
        }
    }
    while i < end {
        let d = buf[i].wrapping_sub(b'0');
        if d > 9 {
            break;
        }
        mantissa = mantissa.wrapping_mul(10).wrapping_add(u64::from(d));
        i += 1;
    }
    (i, mantissa)
}

/// The line `buf[a..n]` when it is a row of plain decimals (decimal point) and nothing else,
/// parsed in one pass: the cells are
/// separated by the one delimiter byte (or, for whitespace, by runs of blanks and tabs, with
/// blanks allowed around the row), and every cell is a number [`decimal_prefix`] reads. Its
/// numbers are appended to `out` and their count returned. Such a row reads exactly as the
/// general cell-by-cell path reads it (no comment, no quote, no empty cell, each value what
/// `str::parse` gives); on anything else nothing is appended and the general path reads the
/// row.
#[inline]
fn plain_row(buf: &[u8], a: usize, n: usize, delim: Delim, out: &mut Vec<Option<f64>>) -> Option<usize> {
    let start = out.len();
    let ok = plain_cells(buf, a, n, delim, usize::MAX, |_, m, frac| {
        out.push(Some(m / POW10[frac]))
    })
    .is_some();
    if ok {
        Some(out.len() - start)
    } else {
        out.truncate(start);
        None
    }
}

/// The one-pass reading of the line `buf[a..n]` behind [`plain_row`]: hands each number to
/// `take` with its 0-based cell, as [`mantissa_at`] gives it (the number is the mantissa over
/// `POW10[frac]`), and returns how many there were; None for a line that is not a plain row,
/// or that holds more than `most` numbers (what was handed on is then of no use). Numbers are
/// read with the text past the line's end in view (see [`decimal_at`]), so a number at the end
/// of a line is read a word at a time like any other.
#[inline(always)]
fn plain_cells(
    buf: &[u8],
    a: usize,
    n: usize,
    delim: Delim,
    most: usize,
    mut take: impl FnMut(usize, f64, usize),
) -> Option<usize> {
    let space = delim == Delim::Space;
    let d = delim.byte();
    let blank = |c: u8| c == b' ' || c == b'\t';
    let mut i = a;
    if space {
        while i < n && blank(buf[i]) {
            i += 1;
        }
    }
    let mut count = 0;
    loop {
        if count == most {
            return None;
        }
        let (m, frac, next) = mantissa_at(buf, i, n, b'.')?;
        take(count, m, frac);
        count += 1;
        i = next;
        if i == n {
            return Some(count);
        }
        if space {
            if !blank(buf[i]) {
                return None;
            }
            while i < n && blank(buf[i]) {
                i += 1;
            }
            if i == n {
                return Some(count);
            }
        } else {
            if buf[i] != d {
                return None;
            }
            i += 1;
            // An empty cell at the end is the general path's to drop.
            if i == n {
                return None;
            }
        }
    }
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
        if let Some(v) = fast_decimal(b, b'.') {
            return Num::Value(v);
        }
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
        if let Some(v) = fast_decimal(b, b',')
            && grouping(b, b',', b'.').is_none()
        {
            return Num::Value(v);
        }
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
    let mut spans = Vec::with_capacity(b.len() / 24 + 1);
    let mut endings = Endings::default();
    // The common case, LF or CRLF endings: split at each LF, dropping the CR of a CRLF. A CR
    // anywhere else (a CR-only file, lone CRs among LFs) falls through to the byte-by-byte
    // split below.
    let (lfs, total_cr, start) = lf_split(b, &mut spans, &mut endings);
    if lfs > 0 {
        if start < b.len() {
            let end = if b[b.len() - 1] == b'\r' { b.len() - 1 } else { b.len() };
            endings.crlf += usize::from(end < b.len());
            spans.push((start, end));
        }
        if total_cr == endings.crlf {
            return (spans, endings);
        }
    }
    spans.clear();
    endings = Endings::default();
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

/// The high bit of every byte of `x` that is zero, and no other bit (exact, unlike the
/// shorter test for "some byte is zero": no borrow runs from one byte into the next).
#[inline]
fn zero_bytes(x: u64) -> u64 {
    const LOW7: u64 = 0x7f7f_7f7f_7f7f_7f7f;
    !(((x & LOW7).wrapping_add(LOW7)) | x | LOW7)
}

/// Pushes the span of every line that ends in an LF (without the CR of a CRLF, which
/// `endings` counts; the other LFs too), and returns how many LFs there were, how many CRs
/// the text holds anywhere, and where the text after the last LF starts. The search reads 8
/// bytes at a time as one word and marks its LF and CR bytes with word arithmetic, visiting
/// only the marked bytes; the last few bytes are looked at one by one.
fn lf_split(b: &[u8], spans: &mut Vec<(usize, usize)>, endings: &mut Endings) -> (usize, usize, usize) {
    const LF: u64 = 0x0a0a_0a0a_0a0a_0a0a;
    const CR: u64 = 0x0d0d_0d0d_0d0d_0d0d;
    let mut start = 0;
    let mut lfs = 0;
    let mut any_cr = 0;
    let mut line_end = |end: usize, spans: &mut Vec<(usize, usize)>, endings: &mut Endings| {
        if end > start && b[end - 1] == b'\r' {
            spans.push((start, end - 1));
            endings.crlf += 1;
        } else {
            spans.push((start, end));
            endings.lf += 1;
        }
        start = end + 1;
    };
    let words = b.chunks_exact(8);
    let tail = words.remainder();
    for (k, word) in words.enumerate() {
        let mut w = [0u8; 8];
        w.copy_from_slice(word);
        let x = u64::from_le_bytes(w);
        any_cr |= zero_bytes(x ^ CR);
        let mut lf = zero_bytes(x ^ LF);
        while lf != 0 {
            lfs += 1;
            line_end(k * 8 + (lf.trailing_zeros() / 8) as usize, spans, endings);
            lf &= lf - 1;
        }
    }
    let base = b.len() - tail.len();
    for (j, &c) in tail.iter().enumerate() {
        if c == b'\n' {
            lfs += 1;
            line_end(base + j, spans, endings);
        }
    }
    // CRs are counted only in a text that has one (most have none).
    let crs = if any_cr != 0 || tail.contains(&b'\r') {
        b.iter().filter(|&&c| c == b'\r').count()
    } else {
        0
    };
    (lfs, crs, start)
}

#[derive(Debug, Default)]
struct Endings {
    lf: usize,
    crlf: usize,
    cr: usize,
}

/// A column of plain decimals read with the division by the power of ten put off: while every
/// value has the same number of digits after the mark, `values` holds the mantissas and one
/// pass at the end divides them all (a loop the compiler runs two or four values at a time;
/// none at all for whole numbers). A value with another count settles the column: what it
/// holds is divided then, and later values are divided as they come. IEEE division is
/// correctly rounded however it is done, so each value is the double [`decimal_at`] gives.
struct DeferredColumn {
    values: Vec<f64>,
    /// The digits after the mark of every value so far, or [`SETTLED`].
    frac: usize,
}

/// A [`DeferredColumn`] whose values are already divided.
const SETTLED: usize = usize::MAX;

impl DeferredColumn {
    #[inline(always)]
    fn push(&mut self, mantissa: f64, frac: usize) {
        if frac == self.frac {
            self.values.push(mantissa);
        } else {
            self.settle();
            self.values.push(mantissa / POW10[frac]);
        }
    }

    fn settle(&mut self) {
        if self.frac != SETTLED {
            let p = POW10[self.frac];
            if self.frac > 0 {
                for v in &mut self.values {
                    *v /= p;
                }
            }
            self.frac = SETTLED;
        }
    }

    fn finish(mut self) -> Vec<f64> {
        self.settle();
        self.values
    }
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
    /// Read plain rows on the one-pass path (off only to test it against the general one).
    plain: bool,
}

/// Whether a line is a comment: `#`, `%` or `;` first (not a rule of `#`).
fn is_comment(line: &str) -> bool {
    let t = line.trim_start();
    (t.starts_with('#') && !t.bytes().all(|c| c == b'#' || c == b' ')) || t.starts_with("//")
}

impl TextRows<'_> {
    fn line_text(&self, i: usize) -> &str {
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
fn marker(line: &str) -> Option<bool> {
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
mod tests {
    use super::*;

    /// What the one-pass reading and the general walk make of one text, each as one string
    /// (the spectra with the bits of every value, or the error): equal strings are the same
    /// reading to the last bit.
    fn fast_and_general(text: &str) -> (String, String) {
        let show = |r: Result<Vec<RawSpectrum>>| match r {
            Ok(v) => format!(
                "{:?}",
                v.iter()
                    .map(|s| (s, s.x.iter().chain(&s.y).map(|v| v.to_bits()).collect::<Vec<_>>()))
                    .collect::<Vec<_>>()
            ),
            Err(e) => e.to_string(),
        };
        (
            show(read_text("f.csv", text, None, &opts(), true)),
            show(read_text("f.csv", text, None, &opts(), false)),
        )
    }

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
    fn the_fast_path_gives_what_str_parse_gives() {
        // Deterministic pseudo-random decimals of every length the fast path takes and beyond.
        let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
        for _ in 0..200_000 {
            state = state
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            let digits = (state >> 60) as usize + 1;
            let point = (state >> 40) as usize % (digits + 1);
            let mut s = String::new();
            if state & 1 == 1 {
                s.push('-');
            }
            let mut r = state;
            for i in 0..digits {
                if i == point {
                    s.push('.');
                }
                r = r.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
                s.push(char::from(b'0' + (r >> 59) as u8 % 10));
            }
            let want: f64 = s.parse().unwrap();
            if let Some(got) = fast_decimal(s.as_bytes(), b'.') {
                assert_eq!(got.to_bits(), want.to_bits(), "{s}");
            }
        }
        assert_eq!(fast_decimal(b"599.9901733", b'.'), Some(599.9901733));
        assert_eq!(fast_decimal(b"1e3", b'.'), None);
        assert_eq!(fast_decimal(b"-", b'.'), None);
        assert_eq!(fast_decimal(b"1.2.3", b'.'), None);
    }

    #[test]
    fn lines_end_any_way() {
        let (spans, e) = split_lines("a\rb\r\nc\nd");
        assert_eq!(spans.len(), 4);
        assert_eq!((e.cr, e.crlf, e.lf), (1, 1, 1));
        let (spans, e) = split_lines("a\r\nb\r\n\r\nc\r");
        assert_eq!(spans, vec![(0, 1), (3, 4), (6, 6), (8, 9)]);
        assert_eq!((e.cr, e.crlf, e.lf), (0, 4, 0));
        let (spans, e) = split_lines("a\rb\r");
        assert_eq!(spans, vec![(0, 1), (2, 3)]);
        assert_eq!(e.cr, 2);
    }

    #[test]
    fn markers_are_recognised() {
        assert_eq!(marker(">>>>>Begin Spectral Data<<<<<"), Some(true));
        assert_eq!(marker("[End of Data]"), Some(false));
        assert_eq!(marker("Data points: 601"), None);
        assert_eq!(marker("400,0.5"), None);
    }

    // ---- the one-pass paths against the general ones (issue 13, point 5) ----

    use proptest::prelude::*;

    /// Bit-for-bit what `str::parse` gives, which is correctly rounded: the known truth every
    /// fast read is checked against.
    fn std_bits(s: &str) -> Option<u64> {
        s.parse::<f64>().ok().map(f64::to_bits)
    }

    #[test]
    fn the_fast_path_edge_cases_read_as_str_parse() {
        for s in [
            "0",
            "-0",
            "+0",
            "0.0",
            "-0.0",
            ".5",
            "5.",
            "-.5",
            "+5.",
            "420",
            "599.9901733",
            "-0.000496",
            // 2^53 is exact; one more is not a fast-path mantissa.
            "9007199254740992",
            "900719925474099.2",
            "0.0000000000000000000001",
            "1.7976931348623157",
            "123456789012345678",
            "0.1",
            "0.2",
            "0.3",
            "2.5",
            "1e3",
        ] {
            if let Some(v) = fast_decimal(s.as_bytes(), b'.') {
                assert_eq!(Some(v.to_bits()), std_bits(s), "{s}");
            }
        }
        assert_eq!(fast_decimal(b"9007199254740992", b'.'), Some(9_007_199_254_740_992.0));
        // Beyond the exact range: left to str::parse.
        for s in [
            "9007199254740993",
            "90071992547409.93",
            "1234567890123456789",
            "99999999999999999999",
            "18446744073709551617",
            "0.00000000000000000000001",
            "1e3",
            ".",
            "-",
            "+",
            "",
            "--1",
            "1..2",
            "1.2.3",
            "0x10",
            " 1",
            "1 ",
        ] {
            assert_eq!(fast_decimal(s.as_bytes(), b'.'), None, "{s}");
        }
        assert_eq!(decimal_prefix(b"1.25,3", b'.'), Some((1.25, 4)));
        assert_eq!(decimal_prefix(b"7e3", b'.'), Some((7.0, 1)));
        assert_eq!(decimal_prefix(b"0,5", b','), Some((0.5, 3)));
    }

    /// The general cell-by-cell scan and the one-pass scan of one line, as (kind, value bits).
    fn scan_both(line: &str, delim: Delim) -> (String, String) {
        let spans = [(0, line.len())];
        let run = |plain: bool| {
            let mut src = TextRows {
                text: line,
                spans: &spans,
                delim,
                comma_decimal: false,
                odd: Oddities::default(),
                record: true,
                plain,
            };
            let mut out = vec![Some(-1.0)];
            let kind = src.scan(0, &mut out).map_err(|e| e.to_string());
            let bits: Vec<Option<u64>> = out.iter().map(|v| v.map(f64::to_bits)).collect();
            format!("{kind:?} {bits:?}")
        };
        (run(true), run(false))
    }

    fn cell_strategy() -> impl Strategy<Value = String> {
        prop_oneof![
            4 => "[+-]?[0-9]{1,6}\\.[0-9]{1,8}",
            2 => "[+-]?[0-9]{0,20}(\\.[0-9]{0,24})?",
            1 => "[0-9]{1,3}(e[+-]?[0-9]{1,3})?",
            1 => "[ \"]{0,2}[0-9]{1,4}\\.[0-9]{1,4}[ \"]{0,2}",
            1 => "[0-9a-zA-Z#,;. +\\-]{0,6}",
            1 => Just(String::new()),
        ]
    }

    /// A line above or below the data, of the kinds exports hold.
    fn preamble_line() -> impl Strategy<Value = String> {
        prop_oneof![
            Just("Wavelength (nm),Absorbance".to_string()),
            Just("Wavelength (nm)\tIntensity (a.u.)".to_string()),
            Just("nm;A;B".to_string()),
            Just("# nm, A".to_string()),
            Just("# a comment".to_string()),
            Just("Sample: QD 7".to_string()),
            Just("Integration time = 100 ms".to_string()),
            Just("X units: eV".to_string()),
            Just(String::new()),
            Just("400 nm,A".to_string()),
            Just("400,abc".to_string()),
            Just("\"nm\",\"A\"".to_string()),
            Just("##########".to_string()),
            Just(">>> Begin spectral data <<<".to_string()),
            Just("End of data".to_string()),
            Just("Extended information".to_string()),
            Just("900,0.1".to_string()),
            Just("7".to_string()),
            "[a-z#:=, ]{0,12}",
        ]
    }

    /// A preamble line that states units or names columns, or says nothing ("," stands for
    /// the file's delimiter).
    fn unit_line() -> impl Strategy<Value = String> {
        prop_oneof![
            Just("Wavelength (nm),Absorbance".to_string()),
            Just("Energy (eV),Counts".to_string()),
            Just("Absorbance".to_string()),
            Just("x,y,z".to_string()),
            Just("# nm, A".to_string()),
            Just("# Energy (eV), counts".to_string()),
            Just("# nm: A".to_string()),
            Just("# X units = eV".to_string()),
            Just("X units: eV".to_string()),
            Just("Abscissa = um".to_string()),
            Just("Y units: counts".to_string()),
            Just("YUnits,%T".to_string()),
            Just("Sample: QD 7".to_string()),
            Just("400 nm,A".to_string()),
            Just(String::new()),
            Just("   ".to_string()),
            Just("##########".to_string()),
        ]
    }

    /// A row of the data: mostly plain numbers, two or three of them (`X` for the x the test
    /// fills in), sometimes anything a cell may hold.
    fn data_row() -> impl Strategy<Value = Vec<String>> {
        prop_oneof![
            16 => "0\\.[0-9]{1,6}".prop_map(|y| vec!["X".to_string(), y]),
            2 => ("-?0\\.[0-9]{1,6}", "[0-9]\\.[0-9]{1,3}").prop_map(|(y, z)| vec!["X".to_string(), y, z]),
            1 => proptest::collection::vec(cell_strategy(), 1..4),
        ]
    }

    fn delim_strategy() -> impl Strategy<Value = Delim> {
        prop_oneof![
            Just(Delim::Comma),
            Just(Delim::Tab),
            Just(Delim::Semicolon),
            Just(Delim::Space)
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(3000))]

        /// Every plain decimal the fast path takes reads bit for bit as `str::parse` reads it.
        #[test]
        fn fast_decimals_equal_str_parse(s in "[+-]?[0-9]{0,22}(\\.[0-9]{0,25})?") {
            if let Some(v) = fast_decimal(s.as_bytes(), b'.') {
                prop_assert_eq!(Some(v.to_bits()), std_bits(&s), "{}", s);
            }
            if let Some((v, used)) = decimal_prefix(s.as_bytes(), b'.') {
                prop_assert_eq!(Some(v.to_bits()), std_bits(&s[..used]), "{}", s);
            }
        }

        /// Any text: what the fast path takes, it takes exactly; a prefix ends where a plain
        /// decimal ends.
        #[test]
        fn decimal_prefixes_of_any_text_equal_str_parse(s in "[0-9.+\\-eE,]{0,30}") {
            if let Some((v, used)) = decimal_prefix(s.as_bytes(), b'.') {
                prop_assert_eq!(Some(v.to_bits()), std_bits(&s[..used]), "{}", s);
                prop_assert!(!s.as_bytes().get(used).is_some_and(u8::is_ascii_digit), "{}", s);
            }
            let comma = s.replace(',', "").replace('.', ",");
            if let Some(v) = fast_decimal(comma.as_bytes(), b',') {
                prop_assert_eq!(Some(v.to_bits()), std_bits(&comma.replace(',', ".")), "{}", comma);
            }
        }

        /// A number read in the middle of a text, with the text after its end in view (digits
        /// too, which are never part of it), reads as the same number cut out on its own.
        #[test]
        fn numbers_read_in_place_equal_numbers_cut_out(
            before in "[0-9.,]{0,9}",
            s in "[+-]?[0-9]{0,12}(\\.[0-9]{0,12})?[,;\t \r\n]?",
            after in "[0-9.\r\n]{0,12}",
        ) {
            let text = format!("{before}{s}{after}");
            let (a, b) = (before.len(), before.len() + s.len());
            let cut = decimal_prefix(s.as_bytes(), b'.').map(|(v, used)| (v.to_bits(), a + used));
            let in_place = decimal_at(text.as_bytes(), a, b, b'.').map(|(v, end)| (v.to_bits(), end));
            prop_assert_eq!(in_place, cut, "{:?} in {:?}", s, text);
        }

        /// Random doubles written the ways exports write them read back as `str::parse` reads
        /// the written text.
        #[test]
        fn written_doubles_read_as_str_parse(v in -1e6f64..1e6, decimals in 0usize..17) {
            let s = format!("{v:.decimals$}");
            if let Some(got) = fast_decimal(s.as_bytes(), b'.') {
                prop_assert_eq!(Some(got.to_bits()), std_bits(&s), "{}", s);
            }
        }

        /// A line reads the same on the one-pass path as on the general one, whatever it holds.
        #[test]
        fn plain_rows_scan_as_the_general_path(
            cells in proptest::collection::vec(cell_strategy(), 1..6),
            delim in delim_strategy(),
            other in prop_oneof![Just(","), Just("\t"), Just(";"), Just(" "), Just("  "), Just(", "), Just(" \t")],
            lead in "[ \t]{0,2}",
            trail in "[ \t,;]{0,2}",
        ) {
            // The file's own delimiter, or another one (a row the one-pass path must refuse).
            let own = match delim {
                Delim::Tab => "\t",
                Delim::Semicolon => ";",
                Delim::Comma => ",",
                Delim::Space => " ",
            };
            for sep in [own, other] {
                for line in [cells.join(sep), format!("{lead}{}{trail}", cells.join(sep))] {
                    let (fast, general) = scan_both(&line, delim);
                    prop_assert_eq!(fast, general, "{:?} {:?}", line, delim);
                }
            }
        }

        /// Whole files: the reader gives the same spectra (or the same refusal) with and
        /// without the one-pass rows and the one-pass walk, for files of every shape: a
        /// preamble of headers, key/value lines, comments, rules, markers and blank lines;
        /// rows mostly plain, some not; lines after the data.
        #[test]
        fn files_read_as_on_the_general_path(
            preamble in proptest::collection::vec(preamble_line(), 0..5),
            rows in proptest::collection::vec(data_row(), 0..40),
            after in proptest::collection::vec(preamble_line(), 0..3),
            delim in prop_oneof![Just(","), Just("\t"), Just(";"), Just(" ")],
            eol in prop_oneof![Just("\n"), Just("\r\n"), Just("\r")],
            last_eol in any::<bool>(),
        ) {
            let mut lines = preamble.clone();
            // "X" stands for an x that rises row by row, so that most files read.
            lines.extend(rows.iter().enumerate().map(|(i, r)| {
                let mut r = r.clone();
                if r[0] == "X" {
                    r[0] = format!("{}.5", 400 + 2 * i);
                }
                r.join(delim)
            }));
            lines.extend(after.iter().cloned());
            let mut text = lines.join(eol);
            if last_eol {
                text.push_str(eol);
            }
            let (fast, general) = fast_and_general(&text);
            prop_assert_eq!(fast, general, "{:?}", text);
        }
        /// Tables of the one-pass walk's shape (a preamble without rows of numbers, then
        /// plain rows to the end), whose preamble says units and names columns in every way it
        /// can: the same spectra as the general walk gives.
        #[test]
        fn plain_tables_read_as_on_the_general_path(
            preamble in proptest::collection::vec(unit_line(), 0..5),
            n in 0usize..30,
            width in 2usize..4,
            delim in prop_oneof![Just(","), Just("\t"), Just(";"), Just(" ")],
            eol in prop_oneof![Just("\n"), Just("\r\n")],
        ) {
            let mut lines: Vec<String> = preamble.iter().map(|l| l.replace(',', delim)).collect();
            for i in 0..n {
                let cells: Vec<String> = (0..width).map(|c| match c {
                    0 => format!("{}.5", 400 + 2 * i),
                    _ => format!("0.{:04}", (i * 37 + c * 11) % 10_000),
                }).collect();
                lines.push(cells.join(delim));
            }
            let text = lines.join(eol);
            let show = |r: Result<Vec<RawSpectrum>>| match r {
                Ok(v) => format!("{v:?}"),
                Err(e) => e.to_string(),
            };
            let fast = show(read_text("f.csv", &text, None, &opts(), true));
            let general = show(read_text("f.csv", &text, None, &opts(), false));
            prop_assert_eq!(fast, general, "{:?}", text);
        }

        /// Line spans and endings are what the byte-by-byte split gives; the text also holds
        /// bytes one away from LF and CR and the UTF-8 bytes 0x8a and 0x8d (in 'Ê', 'č',
        /// 'Ċ'), which a word test that ignored the high bit would take for line ends.
        #[test]
        fn lines_split_as_byte_by_byte(text in "[a\r\n,\u{b}\u{e}\u{1}Êč\u{10a}]{0,120}") {
            let (spans, e) = split_lines(&text);
            let (want, w) = split_lines_reference(&text);
            prop_assert_eq!(spans, want);
            prop_assert_eq!((e.lf, e.crlf, e.cr), (w.lf, w.crlf, w.cr));
        }
    }

    /// A first line for the one-pass two-column reading: headers it takes, and near misses it
    /// must leave to the general reader (float words, markers, comments, a leading blank or
    /// number, a CR inside, quotes, key/value lines).
    fn two_column_header() -> impl Strategy<Value = String> {
        prop_oneof![
            4 => Just("Wavelength (nm),Absorbance".to_string()),
            1 => Just("Wavelength (nm)\tAbsorbance".to_string()),
            1 => Just("Energy (eV);Counts".to_string()),
            1 => Just("nm  %T".to_string()),
            1 => Just("Absorbance".to_string()),
            1 => Just("nan,A".to_string()),
            1 => Just("Inf nm,A".to_string()),
            1 => Just("infinity\u{a0},x".to_string()),
            1 => Just("NaN".to_string()),
            1 => Just("Begin spectral data".to_string()),
            1 => Just("End of data".to_string()),
            1 => Just("# nm, A".to_string()),
            1 => Just(" nm,A".to_string()),
            1 => Just("1 nm,A".to_string()),
            1 => Just("nm\r,A".to_string()),
            1 => Just("\"nm\",\"A\"".to_string()),
            1 => Just("X units: eV".to_string()),
            1 => Just("x,1,5".to_string()),
            1 => "[a-zA-Z][a-zA-Z0-9 ,;\t().%:=#\"-]{0,14}",
        ]
    }

    /// A cell of a two-column row: mostly plain decimals, sometimes what the one-pass reading
    /// refuses (an exponent, too many digits, a quote, a blank, a word, nothing).
    fn two_column_cell() -> impl Strategy<Value = String> {
        prop_oneof![
            12 => "[+-]?[0-9]{1,4}(\\.[0-9]{0,7})?",
            1 => "\\.[0-9]{1,3}",
            1 => "[0-9]{1,2}e-?[0-9]",
            1 => "[0-9]{20,21}",
            1 => "\"[0-9]\\.[0-9]\"",
            1 => " [0-9]",
            1 => "[a-z]{1,3}",
            1 => Just(String::new()),
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(3000))]

        /// The one-pass two-column reading gives what the general reader gives (the same
        /// spectra bit for bit, or the same refusal) on files of its shape and on near misses:
        /// odd first lines, odd cells, a row with another delimiter or another width, blanks
        /// around a delimiter, CR, CRLF and mixed endings, blank lines and notes at the end.
        #[test]
        fn two_column_files_read_as_on_the_general_path(
            header in proptest::option::of(two_column_header()),
            rows in proptest::collection::vec(
                ("[+-]?[0-9]{1,4}(\\.[0-9]{0,7})?", "[+-]?[0-9]{1,4}(\\.[0-9]{0,7})?"),
                1..30,
            ),
            flaw in proptest::option::of((0usize..30, two_column_cell(), 0u8..7)),
            delim in prop_oneof![Just(","), Just("\t"), Just(";"), Just(" ")],
            eol in prop_oneof![4 => Just("\n"), 2 => Just("\r\n"), 1 => Just("\r")],
            ending in prop_oneof![4 => Just(""), 4 => Just("\n"), 2 => Just("\r\n"), 1 => Just("\n\n"), 1 => Just("\nnotes: none\n")],
            rising in prop_oneof![4 => Just(true), 1 => Just(false)],
        ) {
            let mut text = header.map(|h| format!("{h}{eol}")).unwrap_or_default();
            let lines: Vec<String> = rows
                .iter()
                .enumerate()
                .map(|(i, (x, y))| {
                    // Mostly a rising x, so that most files read to the end.
                    let x = if rising { format!("{}", 400 + 3 * i) } else { x.clone() };
                    let Some((_, cell, how)) = flaw.as_ref().filter(|f| f.0 == i) else {
                        return format!("{x}{delim}{y}");
                    };
                    match how {
                        0 => format!("{x}{delim} {y}"),
                        1 => format!("{x},{y};1"),
                        2 => format!("{x}{delim}{y}{delim}"),
                        3 => format!("{x}{delim}{y}\r"),
                        4 => x.to_string(),
                        5 => format!("{cell}{delim}{y}"),
                        _ => format!("{x}{delim}{cell}"),
                    }
                })
                .collect();
            text.push_str(&lines.join(eol));
            text.push_str(ending);
            let (fast, general) = fast_and_general(&text);
            prop_assert_eq!(fast, general, "{:?}", text);
        }
    }

    /// The one-pass two-column reading is the one taken for the shape `analyze` is timed on,
    /// for its blank-, tab- and semicolon-separated and CRLF relatives and for a file without
    /// a header; and it is not taken where the general reader must look further.
    #[test]
    fn two_column_shapes_take_the_one_pass_reading() {
        let rows = |sep: &str, eol: &str| -> String {
            (0..20)
                .map(|i| format!("{},{:.6}{eol}", 300 + i, 0.5 + 0.01 * i as f64).replace(',', sep))
                .collect()
        };
        for (text, delim) in [
            (format!("Wavelength (nm),Absorbance\n{}", rows(",", "\n")), Delim::Comma),
            (format!("Wavelength (nm)\tA\r\n{}", rows("\t", "\r\n")), Delim::Tab),
            (format!("nm;A\n{}", rows(";", "\n")), Delim::Semicolon),
            (format!("nm A\n{}", rows(" ", "\n").trim_end()), Delim::Space),
            (rows(",", "\n"), Delim::Comma),
        ] {
            let (got, table) = two_columns(&text).unwrap_or_else(|| panic!("not taken: {text:?}"));
            assert_eq!(got, delim, "{text:?}");
            assert_eq!(table.lines.len(), 20, "{text:?}");
            assert_eq!(
                format!("{:?}", read_text("f.csv", &text, None, &opts(), true).unwrap()),
                format!("{:?}", read_text("f.csv", &text, None, &opts(), false).unwrap()),
            );
        }
        for text in [
            "nan,A\n400,0.1\n401,0.2\n",
            "Begin spectral data\n400,0.1\n401,0.2\n",
            "# nm, A\n400,0.1\n401,0.2\n",
            "nm,A\n400,0.1\n401,0.2\n\n",
            "nm,A\n400,0.1\r401,0.2\n",
            "nm,A\n400,0.1\n401,1e-3\n",
            "nm,A\n400,0.1,7\n401,0.2,8\n",
        ] {
            assert!(two_columns(text).is_none(), "{text:?}");
        }
    }

    /// The split as it was written before the chunked search: the reference it must equal.
    fn split_lines_reference(text: &str) -> (Vec<(usize, usize)>, Endings) {
        let b = text.as_bytes();
        let mut spans = Vec::new();
        let mut endings = Endings::default();
        let total_cr = b.iter().filter(|&&c| c == b'\r').count();
        if text.contains('\n') {
            let mut start = 0;
            while let Some(off) = text[start..].find('\n') {
                let end = start + off;
                if end > start && b[end - 1] == b'\r' {
                    spans.push((start, end - 1));
                    endings.crlf += 1;
                } else {
                    spans.push((start, end));
                    endings.lf += 1;
                }
                start = end + 1;
            }
            if start < b.len() {
                let end = if b[b.len() - 1] == b'\r' { b.len() - 1 } else { b.len() };
                endings.crlf += usize::from(end < b.len());
                spans.push((start, end));
            }
            if total_cr == endings.crlf {
                return (spans, endings);
            }
            spans.clear();
            endings = Endings::default();
        }
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
}
