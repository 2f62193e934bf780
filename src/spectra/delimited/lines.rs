//! A text's lines as byte spans, for LF, CRLF and CR-only endings, with a count of each kind.
//! Promises: no copy of the text; the spans are exactly the reference split's (a test holds
//! them to it).

/// The lines of `text` as byte spans, for LF, CRLF and CR-only endings; and which endings.
pub(super) fn split_lines(text: &str) -> (Vec<(usize, usize)>, Endings) {
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
pub(super) struct Endings {
    pub(super) lf: usize,
    pub(super) crlf: usize,
    pub(super) cr: usize,
}
