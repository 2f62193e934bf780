//! A cell as a number: a decimal point or a decimal comma, thousands separators (with the
//! check that they group by three), and the fast paths that read plain decimals without
//! `str::parse`. Promises: every fast read is bit-for-bit what `str::parse` gives (Clinger's
//! fast path; anything it cannot do exactly is left to `str::parse`).

use super::cells::{Delim, unquote};

/// What one cell reads as.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Num {
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
pub(super) fn fast_decimal(s: &[u8], mark: u8) -> Option<f64> {
    match decimal_prefix(s, mark) {
        Some((v, used)) if used == s.len() => Some(v),
        _ => None,
    }
}

/// The plain decimal `[+-]?digits[MARK digits]` at the start of `s` (at least one digit), as
/// [`fast_decimal`] reads it, and how many bytes it took; None when it is not one or not exact
/// on the fast path. What follows it is the caller's to judge.
#[inline]
pub(super) fn decimal_prefix(s: &[u8], mark: u8) -> Option<(f64, usize)> {
    decimal_at(s, 0, s.len(), mark)
}

/// [`decimal_prefix`] of `buf[start..end]`, returning where the number ends (an index into
/// `buf`). The bytes of `buf` past `end` are only ever looked at, never read as part of the
/// number, so a caller passes the whole text and a line's end.
#[inline(always)]
pub(super) fn decimal_at(buf: &[u8], start: usize, end: usize, mark: u8) -> Option<(f64, usize)> {
    let (mantissa, frac, i) = mantissa_at(buf, start, end, mark)?;
    // The sign goes on before the division: rounding to nearest is symmetric, so -(m/p) and
    // (-m)/p are the same double (and "-0" stays -0.0).
    Some((mantissa / POW10[frac], i))
}

/// The signed digits of the plain decimal at `buf[start..end]` as a whole number (exact in
/// f64), how many of them follow the mark, and where the number ends; the value is the first
/// divided by ten to the second. None where [`decimal_prefix`] reads none.
#[inline(always)]
pub(super) fn mantissa_at(buf: &[u8], start: usize, end: usize, mark: u8) -> Option<(f64, usize, usize)> {
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
pub(super) fn plain_row(buf: &[u8], a: usize, n: usize, delim: Delim, out: &mut Vec<Option<f64>>) -> Option<usize> {
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
pub(super) fn plain_cells(
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

pub(super) fn parse_num(cell: &str, comma_decimal: bool) -> Num {
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
pub(super) fn is_whole(cell: &str) -> bool {
    let t = unquote(cell).as_bytes();
    let digits = t.strip_prefix(b"-").unwrap_or(t);
    !digits.is_empty() && digits.iter().all(u8::is_ascii_digit)
}

/// A column of plain decimals read with the division by the power of ten put off: while every
/// value has the same number of digits after the mark, `values` holds the mantissas and one
/// pass at the end divides them all (a loop the compiler runs two or four values at a time;
/// none at all for whole numbers). A value with another count settles the column: what it
/// holds is divided then, and later values are divided as they come. IEEE division is
/// correctly rounded however it is done, so each value is the double [`decimal_at`] gives.
pub(super) struct DeferredColumn {
    pub(super) values: Vec<f64>,
    /// The digits after the mark of every value so far, or [`SETTLED`].
    pub(super) frac: usize,
}

/// A [`DeferredColumn`] whose values are already divided.
pub(super) const SETTLED: usize = usize::MAX;

impl DeferredColumn {
    #[inline(always)]
    pub(super) fn push(&mut self, mantissa: f64, frac: usize) {
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

    pub(super) fn finish(mut self) -> Vec<f64> {
        self.settle();
        self.values
    }
}
