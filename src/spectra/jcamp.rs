//! JCAMP-DX 5.01, the open IUPAC exchange format for spectra (McDonald & Wilks, Appl.
//! Spectrosc. 42, 151 (1988)). Reads `##XYDATA=(X++(Y..Y))` in AFFN and in the compressed
//! ASDF forms (SQZ, DIF, DUP, PAC) and `##XYPOINTS=(XY..XY)`, honouring XFACTOR, YFACTOR,
//! FIRSTX, LASTX, DELTAX and NPOINTS. Every check the format allows is made and reported:
//! the DIF Y-check (the last ordinate of a DIF line repeated at the start of the next), the
//! abscissa of each line, the point count and LASTX. A failed check is an error naming the line;
//! a truncated file is refused. A file of several blocks reads its first spectrum, or the one
//! the user names by number or title.
//!
//! Work is bounded by what the file states, never by what its counts claim: NPOINTS may not
//! exceed [`MAX_POINTS`], and a repeat count (DUP) or a run of values that would take the
//! table past NPOINTS is refused on its line before anything is allocated for it.

use super::{Check, RawSpectrum, ReadOptions, spectrum_error, validate_xy};
use crate::error::Result;

/// The most points a spectrum may hold. A UV-Vis-NIR scan over the whole plausible range
/// (150-3500 nm) at 0.01 nm is 335,000 points; a million leaves room and bounds the memory a
/// 181-byte file with a large repeat count can ask for.
pub const MAX_POINTS: usize = 1_000_000;

/// One labelled data record: `##LABEL=value`, its continuation lines and where it started.
#[derive(Debug, Clone)]
struct Ldr {
    label: String,
    value: String,
    line: usize,
    /// The continuation lines with their 1-based numbers.
    body: Vec<(usize, String)>,
}

#[derive(Debug, Clone, Default)]
struct Block {
    ldrs: Vec<Ldr>,
    ended: bool,
}

impl Block {
    fn get(&self, label: &str) -> Option<&Ldr> {
        self.ldrs.iter().find(|l| l.label == label)
    }
    fn text(&self, label: &str) -> Option<String> {
        self.get(label).map(|l| l.value.trim().to_string())
    }
    fn has_data(&self) -> bool {
        self.get("XYDATA").is_some() || self.get("XYPOINTS").is_some()
    }
}

/// Labels compare without case, spaces, dashes, slashes or underscores (the standard's rule).
fn normalise_label(l: &str) -> String {
    l.chars()
        .filter(|c| !matches!(c, ' ' | '-' | '/' | '_' | '\t'))
        .flat_map(char::to_uppercase)
        .collect()
}

fn strip_comment(line: &str) -> &str {
    match line.find("$$") {
        Some(i) => &line[..i],
        None => line,
    }
}

fn split_blocks(text: &str) -> Vec<Block> {
    let mut done: Vec<Block> = Vec::new();
    let mut stack: Vec<Block> = Vec::new();
    for (i, raw) in text.lines().enumerate() {
        let n = i + 1;
        let line = strip_comment(raw);
        let t = line.trim_start();
        if let Some(rest) = t.strip_prefix("##") {
            let (label, value) = match rest.find('=') {
                Some(eq) => (normalise_label(&rest[..eq]), rest[eq + 1..].to_string()),
                None => (normalise_label(rest), String::new()),
            };
            if label == "TITLE" {
                stack.push(Block::default());
            }
            if label == "END" {
                if let Some(mut b) = stack.pop() {
                    b.ended = true;
                    done.push(b);
                }
                continue;
            }
            if stack.is_empty() {
                stack.push(Block::default());
            }
            if let Some(b) = stack.last_mut() {
                b.ldrs.push(Ldr {
                    label,
                    value,
                    line: n,
                    body: Vec::new(),
                });
            }
        } else if let Some(b) = stack.last_mut()
            && let Some(l) = b.ldrs.last_mut()
            && !t.trim().is_empty()
        {
            l.body.push((n, line.to_string()));
        }
    }
    // Blocks never closed are kept, unended, so the reader can say the file is truncated.
    done.extend(stack);
    done
}

fn number(file: &str, b: &Block, label: &str) -> Result<Option<f64>> {
    match b.get(label) {
        None => Ok(None),
        Some(l) => l.value.trim().parse::<f64>().map(Some).map_err(|_| {
            spectrum_error(
                file,
                Some(l.line),
                &format!("##{label}= is not a number: '{}'", l.value.trim()),
            )
        }),
    }
}

pub fn read(file: &str, text: &str, opts: &ReadOptions) -> Result<RawSpectrum> {
    let blocks = split_blocks(text);
    let data: Vec<&Block> = blocks.iter().filter(|b| b.has_data()).collect();
    if data.is_empty() {
        return Err(spectrum_error(
            file,
            None,
            "JCAMP-DX file holds no ##XYDATA= or ##XYPOINTS= block",
        ));
    }
    let mut warnings = Vec::new();
    let block = match &opts.block {
        None => data[0],
        Some(sel) => {
            if let Ok(k) = sel.parse::<usize>() {
                *data.get(k.wrapping_sub(1)).ok_or_else(|| {
                    spectrum_error(
                        file,
                        None,
                        &format!("block {k} asked for; the file has {} spectra", data.len()),
                    )
                })?
            } else {
                *data
                    .iter()
                    .find(|b| b.text("TITLE").is_some_and(|t| t.eq_ignore_ascii_case(sel)))
                    .ok_or_else(|| spectrum_error(file, None, &format!("no block titled '{sel}'")))?
            }
        }
    };
    if data.len() > 1 && opts.block.is_none() {
        warnings.push(format!(
            "file holds {} spectra; read the first ('{}'); choose another with --block",
            data.len(),
            block.text("TITLE").unwrap_or_default()
        ));
    }
    if !block.ended {
        return Err(spectrum_error(
            file,
            None,
            "truncated JCAMP-DX file: the block has no ##END=",
        ));
    }
    let xfactor = number(file, block, "XFACTOR")?.unwrap_or(1.0);
    let yfactor = number(file, block, "YFACTOR")?.unwrap_or(1.0);
    let npoints = number(file, block, "NPOINTS")?;
    let mut checks = Vec::new();
    let (x, y) = if let Some(ldr) = block.get("XYDATA") {
        let form = ldr.value.replace(' ', "").to_ascii_uppercase();
        if !form.starts_with("(X++(Y..Y))") {
            return Err(spectrum_error(
                file,
                Some(ldr.line),
                &format!("unsupported XYDATA form '{}'", ldr.value.trim()),
            ));
        }
        let firstx = number(file, block, "FIRSTX")?
            .ok_or_else(|| spectrum_error(file, Some(ldr.line), "XYDATA needs ##FIRSTX="))?;
        let lastx = number(file, block, "LASTX")?
            .ok_or_else(|| spectrum_error(file, Some(ldr.line), "XYDATA needs ##LASTX="))?;
        let n = npoints.ok_or_else(|| spectrum_error(file, Some(ldr.line), "XYDATA needs ##NPOINTS="))?;
        if n < 2.0 || n.fract() != 0.0 {
            return Err(spectrum_error(
                file,
                None,
                &format!("##NPOINTS={n} is not a count of two or more"),
            ));
        }
        if n > MAX_POINTS as f64 {
            return Err(spectrum_error(
                file,
                None,
                &format!("##NPOINTS={n} is more than the {MAX_POINTS} points a spectrum may hold"),
            ));
        }
        let n = n as usize;
        let deltax = (lastx - firstx) / (n - 1) as f64;
        if let Some(dx) = number(file, block, "DELTAX")? {
            let ok = (dx - deltax).abs() <= 1e-6 * deltax.abs().max(1e-12) + 1e-9 * dx.abs().max(1.0);
            checks.push(Check {
                name: "DELTAX".into(),
                passed: ok,
                detail: format!("DELTAX={dx}, (LASTX-FIRSTX)/(NPOINTS-1)={deltax}"),
            });
        }
        let ys = decode_xydata(file, &ldr.body, xfactor, firstx, deltax, n, &mut checks)?;
        if ys.len() != n {
            return Err(spectrum_error(
                file,
                None,
                &format!(
                    "inconsistent: ##NPOINTS={n} but {} points in XYDATA (truncated?)",
                    ys.len()
                ),
            ));
        }
        checks.push(Check {
            name: "NPOINTS".into(),
            passed: true,
            detail: format!("{n} points read, as ##NPOINTS states"),
        });
        checks.push(Check {
            name: "LASTX".into(),
            passed: true,
            detail: format!("last abscissa {lastx} reached after {n} points"),
        });
        let x: Vec<f64> = (0..n).map(|i| firstx + i as f64 * deltax).collect();
        let y: Vec<f64> = ys.iter().map(|v| v * yfactor).collect();
        (x, y)
    } else {
        let ldr = block.get("XYPOINTS").expect("checked by has_data");
        let form = ldr.value.replace(' ', "").to_ascii_uppercase();
        if !form.starts_with("(XY..XY)") {
            return Err(spectrum_error(
                file,
                Some(ldr.line),
                &format!("unsupported XYPOINTS form '{}'", ldr.value.trim()),
            ));
        }
        let mut x = Vec::new();
        let mut y = Vec::new();
        for (ln, line) in &ldr.body {
            let nums: Vec<&str> = line.split([',', ';', ' ', '\t']).filter(|s| !s.is_empty()).collect();
            if !nums.len().is_multiple_of(2) {
                return Err(spectrum_error(
                    file,
                    Some(*ln),
                    "XYPOINTS line holds an x without its y",
                ));
            }
            for pair in nums.chunks(2) {
                let px: f64 = pair[0]
                    .parse()
                    .map_err(|_| spectrum_error(file, Some(*ln), &format!("non-numeric value '{}'", pair[0])))?;
                let py: f64 = if pair[1] == "?" {
                    f64::NAN
                } else {
                    pair[1]
                        .parse()
                        .map_err(|_| spectrum_error(file, Some(*ln), &format!("non-numeric value '{}'", pair[1])))?
                };
                x.push(px * xfactor);
                y.push(py * yfactor);
            }
            if x.len() > MAX_POINTS {
                return Err(spectrum_error(
                    file,
                    Some(*ln),
                    &format!("XYPOINTS holds more than the {MAX_POINTS} points a spectrum may hold"),
                ));
            }
        }
        if let Some(n) = npoints {
            if n as usize != x.len() {
                return Err(spectrum_error(
                    file,
                    None,
                    &format!(
                        "inconsistent: ##NPOINTS={n} but {} points in XYPOINTS (truncated?)",
                        x.len()
                    ),
                ));
            }
            checks.push(Check {
                name: "NPOINTS".into(),
                passed: true,
                detail: format!("{n} points read, as ##NPOINTS states"),
            });
        }
        (x, y)
    };
    validate_xy(file, &x, &y, None)?;
    if let Some(c) = checks.iter().find(|c| !c.passed) {
        return Err(spectrum_error(
            file,
            None,
            &format!("inconsistent JCAMP-DX: {} check failed ({})", c.name, c.detail),
        ));
    }
    Ok(RawSpectrum {
        format: "JCAMP-DX".into(),
        title: block.text("TITLE"),
        label: block.text("TITLE"),
        x_unit: block.text("XUNITS").unwrap_or_else(|| "nm".into()),
        y_unit: block.text("YUNITS"),
        x,
        y,
        checks,
        warnings,
    })
}

/// An ASDF token: an absolute value (AFFN, PAC or SQZ), a difference (DIF) or a repeat (DUP).
#[derive(Debug, Clone, Copy, PartialEq)]
enum Tok {
    Abs(f64),
    Dif(f64),
    Dup(usize),
}

fn sqz(c: char) -> Option<(i32, bool)> {
    // (leading digit, negative)
    match c {
        '@' => Some((0, false)),
        'A'..='I' => Some((c as i32 - 'A' as i32 + 1, false)),
        'a'..='i' => Some((c as i32 - 'a' as i32 + 1, true)),
        _ => None,
    }
}
fn dif(c: char) -> Option<(i32, bool)> {
    match c {
        '%' => Some((0, false)),
        'J'..='R' => Some((c as i32 - 'J' as i32 + 1, false)),
        'j'..='r' => Some((c as i32 - 'j' as i32 + 1, true)),
        _ => None,
    }
}
fn dup(c: char) -> Option<usize> {
    match c {
        'S'..='Z' => Some(c as usize - 'S' as usize + 1),
        's' => Some(9),
        _ => None,
    }
}

/// Whether a line uses compressed characters (then 'E' is SQZ +5, not an exponent).
fn is_compressed(line: &str) -> bool {
    line.chars()
        .any(|c| (sqz(c).is_some() || dif(c).is_some() || dup(c).is_some()) && c != 'E' && c != 'e')
}

fn tokenize(file: &str, ln: usize, line: &str) -> Result<Vec<Tok>> {
    #[derive(Clone, Copy, PartialEq)]
    enum Kind {
        Abs,
        Dif,
        Dup,
    }
    let compressed = is_compressed(line);
    let mut toks = Vec::new();
    let mut cur: Option<(Kind, String)> = None;
    let bad = |s: &str| spectrum_error(file, Some(ln), &format!("bad value '{s}' in XYDATA"));
    let flush = |cur: &mut Option<(Kind, String)>, toks: &mut Vec<Tok>| -> Result<()> {
        if let Some((k, s)) = cur.take() {
            match k {
                Kind::Dup => toks.push(Tok::Dup(s.parse().map_err(|_| bad(&s))?)),
                Kind::Abs => toks.push(Tok::Abs(s.parse().map_err(|_| bad(&s))?)),
                Kind::Dif => toks.push(Tok::Dif(s.parse().map_err(|_| bad(&s))?)),
            }
        }
        Ok(())
    };
    let chars: Vec<char> = line.chars().collect();
    let mut i = 0;
    while i < chars.len() {
        let c = chars[i];
        if c.is_ascii_digit() || c == '.' {
            match &mut cur {
                Some((_, s)) => s.push(c),
                None => cur = Some((Kind::Abs, c.to_string())),
            }
        } else if !compressed
            && (c == 'E' || c == 'e')
            && matches!(&cur, Some((Kind::Abs, _)))
            && chars
                .get(i + 1)
                .is_some_and(|n| n.is_ascii_digit() || *n == '+' || *n == '-')
        {
            if let Some((_, s)) = &mut cur {
                s.push('e');
                if let Some(&n) = chars.get(i + 1)
                    && (n == '+' || n == '-')
                {
                    s.push(n);
                    i += 1;
                }
            }
        } else if c == '+' || c == '-' {
            flush(&mut cur, &mut toks)?;
            cur = Some((Kind::Abs, if c == '-' { "-".into() } else { String::new() }));
        } else if c == ' ' || c == ',' || c == '\t' || c == ';' {
            flush(&mut cur, &mut toks)?;
        } else if c == '?' {
            return Err(spectrum_error(file, Some(ln), "missing value '?' in XYDATA"));
        } else if let Some((d, neg)) = sqz(c) {
            flush(&mut cur, &mut toks)?;
            cur = Some((Kind::Abs, format!("{}{d}", if neg { "-" } else { "" })));
        } else if let Some((d, neg)) = dif(c) {
            flush(&mut cur, &mut toks)?;
            cur = Some((Kind::Dif, format!("{}{d}", if neg { "-" } else { "" })));
        } else if let Some(d) = dup(c) {
            flush(&mut cur, &mut toks)?;
            cur = Some((Kind::Dup, d.to_string()));
        } else {
            return Err(spectrum_error(
                file,
                Some(ln),
                &format!("unexpected character '{c}' in XYDATA"),
            ));
        }
        i += 1;
    }
    flush(&mut cur, &mut toks)?;
    Ok(toks)
}

/// Decodes the lines of an `(X++(Y..Y))` table into ordinates (before YFACTOR). `npoints` is
/// the count the file states: a line that would take the table past it is refused before its
/// values are stored, so a repeat count cannot make the reader allocate more than the file
/// says it holds.
fn decode_xydata(
    file: &str,
    body: &[(usize, String)],
    xfactor: f64,
    firstx: f64,
    deltax: f64,
    npoints: usize,
    checks: &mut Vec<Check>,
) -> Result<Vec<f64>> {
    // A line after a DIF line repeats the previous line's last ordinate (the Y-check), so one
    // value more than NPOINTS may be held for a moment.
    let room = npoints + 1;
    let too_many = |ln: usize, what: &str| {
        spectrum_error(
            file,
            Some(ln),
            &format!("{what} takes XYDATA past the ##NPOINTS={npoints} points the file states"),
        )
    };
    let mut ys: Vec<f64> = Vec::new();
    let mut prev_ended_dif = false;
    let mut ychecks = 0usize;
    let mut xchecks = 0usize;
    for (ln, line) in body {
        let toks = tokenize(file, *ln, line)?;
        if toks.is_empty() {
            continue;
        }
        let Tok::Abs(xv) = toks[0] else {
            return Err(spectrum_error(
                file,
                Some(*ln),
                "an XYDATA line must start with its abscissa",
            ));
        };
        let mut line_ys: Vec<f64> = Vec::new();
        let mut last: Option<Tok> = None;
        let mut ended_dif = false;
        for t in &toks[1..] {
            if ys.len() + line_ys.len() >= room && !matches!(t, Tok::Dup(_)) {
                return Err(too_many(*ln, "a value"));
            }
            match *t {
                Tok::Abs(v) => {
                    line_ys.push(v);
                    last = Some(*t);
                    ended_dif = false;
                }
                Tok::Dif(d) => {
                    let base = line_ys
                        .last()
                        .copied()
                        .or(ys.last().copied())
                        .ok_or_else(|| spectrum_error(file, Some(*ln), "a DIF value with no value before it"))?;
                    line_ys.push(base + d);
                    last = Some(*t);
                    ended_dif = true;
                }
                Tok::Dup(n) => {
                    let Some(prev) = last else {
                        return Err(spectrum_error(file, Some(*ln), "a DUP count with nothing to repeat"));
                    };
                    if n == 0 {
                        return Err(spectrum_error(file, Some(*ln), "a DUP count of zero"));
                    }
                    if n - 1 > room.saturating_sub(ys.len() + line_ys.len()) {
                        return Err(too_many(*ln, &format!("the repeat count {n}")));
                    }
                    for _ in 1..n {
                        match prev {
                            Tok::Abs(v) => line_ys.push(v),
                            Tok::Dif(d) => {
                                let base = line_ys.last().copied().unwrap_or(0.0);
                                line_ys.push(base + d);
                            }
                            Tok::Dup(_) => {}
                        }
                    }
                }
            }
        }
        // The abscissa check: the line's X (in XFACTOR units) is the x of its first ordinate.
        // After a line that ended in DIF form, that first ordinate is the Y-check value, which
        // repeats the previous line's last point.
        let check_line = prev_ended_dif && !line_ys.is_empty();
        if !line_ys.is_empty() {
            let index = if check_line {
                ys.len().saturating_sub(1)
            } else {
                ys.len()
            };
            let expect = firstx + index as f64 * deltax;
            let got = xv * xfactor;
            if (got - expect).abs() > 0.5 * deltax.abs() + 1e-9 * expect.abs() {
                return Err(spectrum_error(
                    file,
                    Some(*ln),
                    &format!(
                        "abscissa check failed: line gives x = {got}, point {} is at {expect}",
                        index + 1
                    ),
                ));
            }
            xchecks += 1;
        }
        // The DIF Y-check itself.
        if check_line {
            let expect = ys.last().copied().unwrap_or(f64::NAN);
            let got = line_ys[0];
            if (got - expect).abs() > 1e-9 * expect.abs().max(1.0) {
                return Err(spectrum_error(
                    file,
                    Some(*ln),
                    &format!("DIF Y-check failed: line starts with {got}, previous line ended with {expect}"),
                ));
            }
            ychecks += 1;
            line_ys.remove(0);
        }
        ys.extend(line_ys);
        prev_ended_dif = ended_dif;
    }
    if ychecks > 0 {
        checks.push(Check {
            name: "DIF Y-check".into(),
            passed: true,
            detail: format!("{ychecks} line-end ordinates verified"),
        });
    }
    checks.push(Check {
        name: "abscissa".into(),
        passed: true,
        detail: format!("{xchecks} line abscissas match FIRSTX + i*DELTAX"),
    });
    Ok(ys)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tokenizes_the_asdf_forms() {
        // The standard's own illustration of one ordinate row written four ways
        // (McDonald & Wilks 1988, section on ASDF): values 1000 1020 1040 1040 1040.
        let affn = tokenize("t", 1, "100 1000 1020 1040 1040 1040").unwrap();
        assert_eq!(affn.len(), 6);
        let pac = tokenize("t", 1, "100+1000+1020+1040+1040+1040").unwrap();
        assert_eq!(pac, affn);
        let sqz = tokenize("t", 1, "100A000A020A040A040A040").unwrap();
        assert_eq!(sqz, affn);
        let difdup = tokenize("t", 1, "100A000K0K0%U").unwrap();
        assert_eq!(
            difdup,
            vec![
                Tok::Abs(100.0),
                Tok::Abs(1000.0),
                Tok::Dif(20.0),
                Tok::Dif(20.0),
                Tok::Dif(0.0),
                Tok::Dup(3)
            ]
        );
    }

    #[test]
    fn affn_exponents_read() {
        let t = tokenize("t", 1, "400 1.5E-3 2.0e+1").unwrap();
        assert_eq!(t, vec![Tok::Abs(400.0), Tok::Abs(0.0015), Tok::Abs(20.0)]);
    }
}
