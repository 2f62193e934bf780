//! The delimiters a text may use and the cells of one line under one of them, as slices of
//! the line (quotes kept until [`unquote`] takes them off). Promises: no allocation per line.

#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Delim {
    Tab,
    Semicolon,
    Comma,
    Space,
}

impl Delim {
    pub(super) fn byte(self) -> u8 {
        match self {
            Delim::Tab => b'\t',
            Delim::Semicolon => b';',
            Delim::Comma => b',',
            Delim::Space => b' ',
        }
    }
    pub(super) fn name(self) -> &'static str {
        match self {
            Delim::Tab => "tab",
            Delim::Semicolon => "semicolon",
            Delim::Comma => "comma",
            Delim::Space => "whitespace",
        }
    }
}

/// The cells of one line, as slices (quotes kept; see [`unquote`]).
pub(super) struct Cells<'a> {
    rest: &'a [u8],
    src: &'a str,
    pos: usize,
    delim: Delim,
    done: bool,
}

pub(super) fn cells(line: &str, delim: Delim) -> Cells<'_> {
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
pub(super) fn unquote(cell: &str) -> &str {
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
