//! JCAMP-DX, the open exchange format for spectra: the base format of McDonald & Wilks, Appl.
//! Spectrosc. 42, 151 (1988) (labelled data records, AFFN and the compressed ASDF forms SQZ,
//! DIF, DUP and PAC, the abscissa and DIF Y-checks) and its revisions up to 5.01 (compound files
//! with link blocks, `##NTUPLES=`; Lampen et al., IUPAC recommendations of 1999; citation
//! details for the revisions are from memory).
//!
//! What it reads: `##XYDATA=(X++(Y..Y))`, `##XYPOINTS=(XY..XY)`, `##PEAK TABLE=(XY..XY)` and
//! `(XYW..XYW)`, and the pages of an `##NTUPLES=` block whose data table pairs one x variable
//! with one y variable. Every spectrum of a compound file is a candidate: [`read_blocks`] gives
//! them all, [`read`] the one `--block` names, and refuses to guess when there are several.
//!
//! What it promises: the points are the file's, with XFACTOR and YFACTOR applied, abscissae
//! computed from FIRSTX, LASTX and NPOINTS as the standard says (the values written on each line
//! are check values). Tolerances are those the standard's own rounding allows (see
//! [`line_tolerance`]); what is odd but unambiguous is read and warned about; a refusal happens
//! only where a number could be misread, and names the line and the reason.
//!
//! Work is bounded by what the file states, never by what its counts claim: NPOINTS may not
//! exceed [`MAX_POINTS`], all spectra of one file together not [`MAX_FILE_POINTS`], and a repeat
//! count (DUP) or a run of values that would take the table past NPOINTS is refused on its line
//! before anything is allocated for it.

use super::{Check, RawSpectrum, ReadOptions, spectrum_error, validate_xy};
use crate::error::Result;

/// The most points a spectrum may hold. A UV-Vis-NIR scan over the whole plausible range
/// (150-3500 nm) at 0.01 nm is 335,000 points; a million leaves room and bounds the memory a
/// 181-byte file with a large repeat count can ask for.
pub const MAX_POINTS: usize = 1_000_000;

/// The most points all spectra of one file may hold together (64 MB of x and y): a kinetic
/// series of a few thousand scans fits, a file of many small blocks each asking for a million
/// repeated points does not.
pub const MAX_FILE_POINTS: usize = 4_000_000;

/// How many spectra an error that lists them names before it says "and N more".
const MAX_LISTED: usize = 12;

/// One labelled data record: `##LABEL=value`, its continuation lines and where it started.
#[derive(Debug, Clone)]
struct Ldr {
    label: String,
    value: String,
    line: usize,
    /// The continuation lines with their 1-based numbers.
    body: Vec<(usize, String)>,
}

impl Ldr {
    /// The value with its continuation lines, for records whose value may wrap (NTUPLES lists).
    fn full_value(&self) -> String {
        let mut s = self.value.clone();
        for (_, l) in &self.body {
            s.push(' ');
            s.push_str(l);
        }
        s
    }
}

#[derive(Debug, Clone, Default)]
struct Block {
    ldrs: Vec<Ldr>,
    ended: bool,
    /// The line of the block's first record.
    line: usize,
    /// Blocks opened inside this one (a link block's children).
    nested: usize,
}

impl Block {
    fn get(&self, label: &str) -> Option<&Ldr> {
        self.ldrs.iter().find(|l| l.label == label)
    }
    fn text(&self, label: &str) -> Option<String> {
        self.get(label)
            .map(|l| l.value.trim().to_string())
            .filter(|s| !s.is_empty())
    }
    fn is_link(&self) -> bool {
        self.get("BLOCKS").is_some() || self.text("DATATYPE").is_some_and(|t| t.eq_ignore_ascii_case("LINK"))
    }
    fn title(&self) -> String {
        self.text("TITLE").unwrap_or_default()
    }
}

/// Labels compare without case, spaces, dashes, slashes or underscores (the standard's rule).
pub(crate) fn normalise_label(l: &str) -> String {
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

/// The blocks of a file in the order they start. A `##TITLE=` opens a block (inside the one
/// still open, as in a link block), `##END=` closes the innermost.
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
                // Only a link block holds blocks; a new title inside any other block means that
                // block lost its ##END=, and it is kept unended so reading it says so.
                if stack.last().is_some_and(|b| !b.is_link())
                    && let Some(b) = stack.pop()
                {
                    done.push(b);
                }
                if let Some(parent) = stack.last_mut() {
                    parent.nested += 1;
                }
                stack.push(Block {
                    line: n,
                    ..Block::default()
                });
            }
            if label == "END" {
                if let Some(mut b) = stack.pop() {
                    b.ended = true;
                    done.push(b);
                }
                continue;
            }
            if stack.is_empty() {
                stack.push(Block {
                    line: n,
                    ..Block::default()
                });
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
    done.sort_by_key(|b| b.line);
    done
}

/// A number the file states, with the text it was written as (its last digit tells how it was
/// rounded) and its line.
#[derive(Debug, Clone)]
struct Num {
    v: f64,
    text: String,
    line: usize,
}

fn parse_num(file: &str, line: usize, what: &str, s: &str) -> Result<Num> {
    let t = s.trim();
    match t.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(Num {
            v,
            text: t.to_string(),
            line,
        }),
        _ => Err(spectrum_error(
            file,
            Some(line),
            &format!("{what} is not a number: '{t}'"),
        )),
    }
}

fn number(file: &str, b: &Block, label: &str) -> Result<Option<Num>> {
    match b.get(label) {
        None => Ok(None),
        Some(l) => parse_num(file, l.line, &format!("##{label}="), &l.value).map(Some),
    }
}

/// A scale factor: finite and not zero, or every value it scales would be misread.
fn factor(file: &str, n: Option<Num>, label: &str) -> Result<f64> {
    match n {
        None => Ok(1.0),
        Some(n) if n.v != 0.0 => Ok(n.v),
        Some(n) => Err(spectrum_error(
            file,
            Some(n.line),
            &format!("##{label}={} is not a usable factor (it must not be zero)", n.text),
        )),
    }
}

/// The unit of the last digit a number is written to: "400" 1, "400.25" 0.01, "4.0E2" 10.
/// A writer that rounds leaves an error of at most half of it.
fn last_digit_unit(text: &str) -> f64 {
    let t = text.trim().trim_start_matches(['+', '-']);
    let (mantissa, exp) = match t.find(['e', 'E']) {
        Some(i) => (&t[..i], t[i + 1..].parse::<i32>().unwrap_or(0)),
        None => (t, 0),
    };
    let decimals = mantissa.find('.').map_or(0, |i| mantissa.len() - i - 1) as i32;
    10f64.powi(exp - decimals)
}

/// The shape a table's form names: `(X++(Y..Y))` (equally spaced x, y values on lines that
/// start with a check abscissa) or `(XY..XY)` and its kin (groups of values per point).
#[derive(Debug, Clone, PartialEq)]
enum Form {
    Equidistant { x: String, y: String },
    Groups { symbols: Vec<char> },
}

impl Form {
    fn canonical(&self) -> String {
        match self {
            Form::Equidistant { x, y } => format!("({x}++({y}..{y}))"),
            Form::Groups { symbols } => {
                let s: String = symbols.iter().collect();
                format!("({s}..{s})")
            }
        }
    }
}

/// Reads a form such as `(X++(Y..Y))`, `(XYW..XYW)` or, in NTUPLES, `(X++(R..R)), XYDATA`.
/// The second value says whether it was written as the standard spells it; a missing or extra
/// parenthesis leaves the form unambiguous, so it is read and warned about.
fn parse_form(value: &str) -> Option<(Form, bool)> {
    let s: String = value
        .chars()
        .filter(|c| !c.is_whitespace())
        .flat_map(char::to_uppercase)
        .collect();
    let core = match s.rfind(',') {
        Some(i) if i + 1 < s.len() && s[i + 1..].chars().all(|c| c.is_ascii_alphabetic()) => &s[..i],
        _ => &s[..],
    };
    let bare: String = core.chars().filter(|c| *c != '(' && *c != ')').collect();
    let form = if let Some((x, ys)) = bare.split_once("++") {
        let (y1, y2) = ys.split_once("..")?;
        let ok = |v: &str| !v.is_empty() && v.chars().all(|c| c.is_ascii_alphabetic());
        if y1 != y2 || !ok(x) || !ok(y1) {
            return None;
        }
        Form::Equidistant {
            x: x.to_string(),
            y: y1.to_string(),
        }
    } else {
        let (a, b) = bare.split_once("..")?;
        if a != b || !(2..=3).contains(&a.len()) || !a.chars().all(|c| c.is_ascii_alphabetic()) {
            return None;
        }
        Form::Groups {
            symbols: a.chars().collect(),
        }
    };
    let as_written = core == form.canonical();
    Some((form, as_written))
}

/// What a read found worth saying, gathered while decoding.
#[derive(Debug, Default)]
struct Notes {
    checks: Vec<Check>,
    warnings: Vec<String>,
    /// Bits of [`FORM_NAMES`] seen in the data lines.
    forms: u8,
}

impl Notes {
    fn check(&mut self, name: &str, passed: bool, detail: String) {
        self.checks.push(Check {
            name: name.into(),
            passed,
            detail,
        });
    }
    fn warn_once(&mut self, key: &str, text: String) {
        if !self.warnings.iter().any(|w| w.starts_with(key)) {
            self.warnings.push(text);
        }
    }
}

const AFFN: u8 = 1;
const PAC: u8 = 2;
const SQZ: u8 = 4;
const DIF: u8 = 8;
const DUP: u8 = 16;
const FORM_NAMES: [(u8, &str); 5] = [(AFFN, "AFFN"), (PAC, "PAC"), (SQZ, "SQZ"), (DIF, "DIF"), (DUP, "DUP")];

fn form_names(bits: u8) -> String {
    FORM_NAMES
        .iter()
        .filter(|(b, _)| bits & b != 0)
        .map(|(_, n)| *n)
        .collect::<Vec<_>>()
        .join(" ")
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

/// One data line as tokens, the text of its first token (the abscissa, whose last digit tells
/// how it was rounded) and the [`FORM_NAMES`] bits of the forms it uses; the forms may be
/// mixed on one line.
fn tokenize(file: &str, ln: usize, line: &str) -> Result<(Vec<Tok>, String, u8)> {
    #[derive(Clone, Copy, PartialEq)]
    enum Kind {
        Abs,
        Dif,
        Dup,
    }
    let compressed = is_compressed(line);
    let mut toks = Vec::new();
    let mut first_text = String::new();
    let mut forms = 0u8;
    let mut cur: Option<(Kind, String)> = None;
    let bad = |s: &str| spectrum_error(file, Some(ln), &format!("bad value '{s}' in XYDATA"));
    let flush = |cur: &mut Option<(Kind, String)>, toks: &mut Vec<Tok>, first: &mut String| -> Result<()> {
        if let Some((k, s)) = cur.take() {
            if toks.is_empty() {
                first.clone_from(&s);
            }
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
                None => {
                    forms |= AFFN;
                    cur = Some((Kind::Abs, c.to_string()));
                }
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
            // A sign straight after a value is PAC's delimiter; after a space it is AFFN's sign.
            let glued = i > 0 && !matches!(chars[i - 1], ' ' | ',' | '\t' | ';');
            forms |= if glued { PAC } else { AFFN };
            flush(&mut cur, &mut toks, &mut first_text)?;
            cur = Some((Kind::Abs, if c == '-' { "-".into() } else { String::new() }));
        } else if c == ' ' || c == ',' || c == '\t' || c == ';' {
            flush(&mut cur, &mut toks, &mut first_text)?;
        } else if c == '?' {
            return Err(spectrum_error(file, Some(ln), "missing value '?' in XYDATA"));
        } else if let Some((d, neg)) = sqz(c) {
            forms |= SQZ;
            flush(&mut cur, &mut toks, &mut first_text)?;
            cur = Some((Kind::Abs, format!("{}{d}", if neg { "-" } else { "" })));
        } else if let Some((d, neg)) = dif(c) {
            forms |= DIF;
            flush(&mut cur, &mut toks, &mut first_text)?;
            cur = Some((Kind::Dif, format!("{}{d}", if neg { "-" } else { "" })));
        } else if let Some(d) = dup(c) {
            forms |= DUP;
            flush(&mut cur, &mut toks, &mut first_text)?;
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
    flush(&mut cur, &mut toks, &mut first_text)?;
    Ok((toks, first_text, forms))
}

/// The window within which a line's written abscissa must lie around the abscissa of the point
/// it names.
///
/// Half a step: the largest window in which the written value still names exactly one point
/// (the nearest), so a lost or doubled ordinate, which shifts the line by a whole step, always
/// fails, while any rounding of the check value to the step's own precision passes. The
/// standard treats these values as checks that writers round (McDonald & Wilks 1988: the
/// abscissae are computed from FIRSTX, LASTX and NPOINTS, the line's X only checks them; from
/// memory). When the value is written more coarsely than the step (its last digit, times
/// XFACTOR, is more than a step), its own rounding of half that digit is allowed on top and the
/// check can no longer tell neighbours apart; the second value says so.
fn line_tolerance(step: f64, written_unit: f64) -> (f64, bool) {
    let half_step = 0.5 * step.abs();
    let fine = written_unit <= step.abs() * (1.0 + 1e-9);
    let tol = if fine {
        half_step
    } else {
        half_step + 0.5 * written_unit
    };
    (tol * (1.0 + 1e-9), fine)
}

/// What an equally spaced table needs, wherever it came from (a plain block or an NTUPLES page).
struct Equidistant<'a> {
    what: &'static str,
    ldr: &'a Ldr,
    xfactor: f64,
    firstx: Num,
    lastx: Option<Num>,
    deltax: Option<Num>,
    npoints: Num,
}

/// Checks a stated point count before anything is allocated for it.
fn point_count(file: &str, n: &Num, budget: usize) -> Result<usize> {
    if n.v < 2.0 || n.v.fract() != 0.0 {
        return Err(spectrum_error(
            file,
            Some(n.line),
            &format!("##NPOINTS={} is not a count of two or more", n.text),
        ));
    }
    if n.v > MAX_POINTS as f64 {
        return Err(spectrum_error(
            file,
            Some(n.line),
            &format!(
                "##NPOINTS={} is more than the {MAX_POINTS} points a spectrum may hold",
                n.v
            ),
        ));
    }
    let count = n.v as usize;
    if count > budget {
        return Err(spectrum_error(
            file,
            Some(n.line),
            &format!("##NPOINTS={count} takes the file's spectra past the {MAX_FILE_POINTS} points one file may hold"),
        ));
    }
    Ok(count)
}

/// Decodes an `(X++(Y..Y))` table: the x values (computed), the ordinates before YFACTOR and
/// the line of each point. `budget` is what is left of [`MAX_FILE_POINTS`].
fn decode_equidistant(
    file: &str,
    t: &Equidistant,
    budget: usize,
    notes: &mut Notes,
) -> Result<(Vec<f64>, Vec<f64>, Vec<usize>)> {
    let n = point_count(file, &t.npoints, budget)?;
    let firstx = t.firstx.v;
    let step = match (&t.lastx, &t.deltax) {
        (Some(lastx), dx) => {
            let derived = (lastx.v - firstx) / (n - 1) as f64;
            if let Some(dx) = dx {
                // DELTAX is written rounded; it agrees when it is the derived step rounded to
                // the digits it is written with.
                let tol = 0.5 * last_digit_unit(&dx.text) * (1.0 + 1e-9) + 1e-12 * derived.abs();
                let agrees = (dx.v - derived).abs() <= tol;
                notes.check(
                    "DELTAX",
                    agrees,
                    format!(
                        "##DELTAX={} {} (LASTX-FIRSTX)/(NPOINTS-1) = {derived} to the digits it is written with",
                        dx.text,
                        if agrees { "is" } else { "is not" }
                    ),
                );
                if !agrees {
                    notes.warnings.push(format!(
                        "line {}: ##DELTAX={} disagrees with (LASTX-FIRSTX)/(NPOINTS-1) = {derived}; the step from FIRSTX, LASTX and NPOINTS is used, and each line's abscissa is checked against it",
                        dx.line, dx.text
                    ));
                }
            }
            derived
        }
        (None, Some(dx)) => {
            notes.warnings.push(format!(
                "no ##LASTX=; the step is ##DELTAX={} as written (line {}), which may be rounded",
                dx.text, dx.line
            ));
            dx.v
        }
        (None, None) => {
            return Err(spectrum_error(
                file,
                Some(t.ldr.line),
                &format!("{} needs ##LASTX= (or ##DELTAX=) to place its points", t.what),
            ));
        }
    };
    if step == 0.0 || !step.is_finite() {
        return Err(spectrum_error(
            file,
            Some(t.ldr.line),
            &format!("{}: FIRSTX and LASTX give no step between points", t.what),
        ));
    }
    let at = |i: usize| firstx + i as f64 * step;
    // A line after a DIF line repeats the previous line's last ordinate (the Y-check), so one
    // value more than NPOINTS may be held for a moment.
    let room = n + 1;
    let too_many = |ln: usize, what: &str| {
        spectrum_error(
            file,
            Some(ln),
            &format!("{what} takes XYDATA past the ##NPOINTS={n} points the file states"),
        )
    };
    let mut ys: Vec<f64> = Vec::new();
    let mut lines: Vec<usize> = Vec::new();
    let mut prev_ended_dif = false;
    let mut ychecks = 0usize;
    let mut xchecks = 0usize;
    let mut repeats = 0usize;
    let mut finest = f64::INFINITY;
    for (ln, line) in &t.ldr.body {
        let (toks, xtext, forms) = tokenize(file, *ln, line)?;
        if toks.is_empty() {
            continue;
        }
        notes.forms |= forms;
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
        for tok in &toks[1..] {
            if ys.len() + line_ys.len() >= room && !matches!(tok, Tok::Dup(_)) {
                return Err(too_many(*ln, "a value"));
            }
            match *tok {
                Tok::Abs(v) => {
                    line_ys.push(v);
                    last = Some(*tok);
                    ended_dif = false;
                }
                Tok::Dif(d) => {
                    let base = line_ys
                        .last()
                        .copied()
                        .or(ys.last().copied())
                        .ok_or_else(|| spectrum_error(file, Some(*ln), "a DIF value with no value before it"))?;
                    line_ys.push(base + d);
                    last = Some(*tok);
                    ended_dif = true;
                }
                Tok::Dup(count) => {
                    let Some(prev) = last else {
                        return Err(spectrum_error(file, Some(*ln), "a DUP count with nothing to repeat"));
                    };
                    if count == 0 {
                        return Err(spectrum_error(file, Some(*ln), "a DUP count of zero"));
                    }
                    if count - 1 > room.saturating_sub(ys.len() + line_ys.len()) {
                        return Err(too_many(*ln, &format!("the repeat count {count}")));
                    }
                    for _ in 1..count {
                        match prev {
                            Tok::Abs(v) => line_ys.push(v),
                            Tok::Dif(d) => {
                                let base = line_ys.last().copied().or(ys.last().copied()).unwrap_or(0.0);
                                line_ys.push(base + d);
                            }
                            Tok::Dup(_) => {}
                        }
                    }
                }
            }
        }
        if line_ys.is_empty() {
            continue;
        }
        // The abscissa check: the line's X (in XFACTOR units) is the x of its first ordinate.
        // After a line that ended in DIF form, that first ordinate is the Y-check value, which
        // repeats the previous line's last point.
        let got = xv * t.xfactor;
        // A writer drops trailing zeros ("500" for 500.00), so the precision it writes the
        // abscissae to is the finest any line shows so far.
        finest = finest.min(last_digit_unit(&xtext));
        let (tol, fine) = line_tolerance(step, finest * t.xfactor.abs());
        let next = ys.len();
        let names = |i: usize| (got - at(i)).abs() <= tol + 1e-9 * got.abs();
        let names_prev = next > 0 && names(next - 1);
        let names_next = names(next);
        let fail = |index: usize| {
            spectrum_error(
                file,
                Some(*ln),
                &format!(
                    "abscissa check failed: line gives x = {got}, point {} is at {} (the check allows {tol:.6}, half a step)",
                    index + 1,
                    at(index)
                ),
            )
        };
        let repeat = if prev_ended_dif {
            if names_prev {
                true
            } else if fine && names_next {
                notes.warn_once(
                    "no Y-check",
                    format!(
                        "no Y-check: line {ln} follows a line that ended in DIF form but starts at the next point, not by repeating the last one"
                    ),
                );
                false
            } else {
                return Err(fail(next.saturating_sub(1)));
            }
        } else if names_next {
            false
        } else if fine && names_prev {
            true
        } else {
            return Err(fail(next));
        };
        if repeat {
            let expect = ys.last().copied().unwrap_or(f64::NAN);
            let first = line_ys[0];
            if (first - expect).abs() > 1e-9 * expect.abs().max(1.0) {
                let reason = if prev_ended_dif {
                    format!("DIF Y-check failed: line starts with {first}, previous line ended with {expect}")
                } else {
                    format!(
                        "line starts at x = {got}, the abscissa of point {next} already read, with another ordinate ({first}, not {expect}): two values for one abscissa"
                    )
                };
                return Err(spectrum_error(file, Some(*ln), &reason));
            }
            if prev_ended_dif {
                ychecks += 1;
            } else {
                repeats += 1;
                notes.warn_once(
                    "repeated points",
                    format!(
                        "repeated points: line {ln} (and any like it) starts by repeating the last point of the line before, as a Y-check does, though that line did not end in DIF form; each repeat is read once"
                    ),
                );
            }
            line_ys.remove(0);
        }
        xchecks += 1;
        lines.extend(std::iter::repeat_n(*ln, line_ys.len()));
        ys.extend(line_ys);
        prev_ended_dif = ended_dif;
    }
    if ys.len() != n {
        return Err(spectrum_error(
            file,
            None,
            &format!(
                "inconsistent: ##NPOINTS={n} but {} points in {} (truncated?)",
                ys.len(),
                t.what
            ),
        ));
    }
    if xchecks > 0 && !line_tolerance(step, finest * t.xfactor.abs()).1 {
        notes.warnings.push(format!(
            "the line abscissae are written more coarsely than the step ({step}), so they cannot tell neighbouring points apart; only the point count checks the table"
        ));
    }
    if ychecks > 0 {
        notes.check("DIF Y-check", true, format!("{ychecks} line-end ordinates verified"));
    }
    notes.check(
        "abscissa",
        true,
        format!(
            "{xchecks} line abscissae match FIRSTX + i*step within half a step{}",
            if repeats > 0 {
                format!(" ({repeats} repeated points read once)")
            } else {
                String::new()
            }
        ),
    );
    notes.check("NPOINTS", true, format!("{n} points read, as ##NPOINTS states"));
    if let Some(lastx) = &t.lastx {
        notes.check(
            "LASTX",
            true,
            format!("last abscissa {} reached after {n} points", lastx.v),
        );
    }
    let x: Vec<f64> = (0..n).map(at).collect();
    Ok((x, ys, lines))
}

/// Decodes a table of groups (`(XY..XY)`, `(XYW..XYW)`, ...): x scaled, y before YFACTOR, the
/// line of each point. Groups may be separated by `;` or spaces, values within a group by `,` or
/// spaces. A `?` ordinate (the standard's missing value) leaves its point out with a warning;
/// an abscissa repeated with the same ordinate is read once, with another ordinate refused.
fn decode_groups(
    file: &str,
    what: &str,
    ldr: &Ldr,
    arity: usize,
    xfactor: f64,
    budget: usize,
    notes: &mut Notes,
) -> Result<(Vec<f64>, Vec<f64>, Vec<usize>)> {
    let limit = MAX_POINTS.min(budget);
    let mut x: Vec<f64> = Vec::new();
    let mut y: Vec<f64> = Vec::new();
    let mut lines: Vec<usize> = Vec::new();
    let mut missing = 0usize;
    let mut repeated = 0usize;
    notes.forms |= AFFN;
    for (ln, line) in &ldr.body {
        let groups: Vec<&str> = if line.contains(';') {
            line.split(';').collect()
        } else {
            vec![line]
        };
        for g in groups {
            let vals: Vec<&str> = g.split([',', ' ', '\t']).filter(|s| !s.is_empty()).collect();
            if vals.is_empty() {
                continue;
            }
            if !vals.len().is_multiple_of(arity) {
                let reason = if arity == 2 {
                    format!("{what} line holds an x without its y")
                } else {
                    format!(
                        "{what} line holds a group of {} values where the form has {arity}",
                        vals.len()
                    )
                };
                return Err(spectrum_error(file, Some(*ln), &reason));
            }
            for group in vals.chunks(arity) {
                let value = |s: &str| -> Result<Option<f64>> {
                    if s == "?" {
                        return Ok(None);
                    }
                    match s.parse::<f64>() {
                        Ok(v) if v.is_finite() => Ok(Some(v)),
                        _ => Err(spectrum_error(
                            file,
                            Some(*ln),
                            &format!("non-numeric value '{s}' in {what}"),
                        )),
                    }
                };
                let Some(px) = value(group[0])? else {
                    return Err(spectrum_error(
                        file,
                        Some(*ln),
                        &format!("a missing abscissa '?' in {what}"),
                    ));
                };
                let py = value(group[1])?;
                for extra in &group[2..] {
                    value(extra)?;
                }
                let (px, Some(py)) = (px * xfactor, py) else {
                    missing += 1;
                    notes.warn_once(
                        "missing ordinates",
                        format!(
                            "missing ordinates: line {ln} gives '?' for the y at x = {}; such points are left out",
                            px * xfactor
                        ),
                    );
                    continue;
                };
                if x.last() == Some(&px) {
                    let prev = y.last().copied().unwrap_or(f64::NAN);
                    if (prev - py).abs() > 1e-9 * prev.abs().max(1.0) {
                        return Err(spectrum_error(
                            file,
                            Some(*ln),
                            &format!("two ordinates for x = {px} ({prev} and {py}) in {what}"),
                        ));
                    }
                    repeated += 1;
                    notes.warn_once(
                        "repeated points",
                        format!("repeated points: line {ln} gives x = {px} again with the same y; read once"),
                    );
                    continue;
                }
                if x.len() >= limit {
                    return Err(spectrum_error(
                        file,
                        Some(*ln),
                        &format!(
                            "{what} holds more than the {} points {}",
                            limit,
                            if limit == MAX_POINTS {
                                "a spectrum may hold"
                            } else {
                                "left of what one file may hold"
                            }
                        ),
                    ));
                }
                x.push(px);
                y.push(py);
                lines.push(*ln);
            }
        }
    }
    if missing + repeated > 0 {
        notes.check(
            "points",
            true,
            format!(
                "{} points read; {missing} without an ordinate and {repeated} repeats left out",
                x.len()
            ),
        );
    }
    Ok((x, y, lines))
}

/// A spectrum the file holds: a plain block, or one page of an NTUPLES block.
#[derive(Debug, Clone)]
struct Candidate<'a> {
    /// 1-based, among all blocks of the file.
    block_no: usize,
    block: &'a Block,
    /// For an NTUPLES page: the index of its `##PAGE=` record in `block.ldrs`.
    page: Option<usize>,
    label: String,
}

impl Candidate<'_> {
    fn page_value(&self) -> Option<String> {
        self.page.map(|i| self.block.ldrs[i].value.trim().to_string())
    }
}

/// The file parsed into blocks, the spectra it holds and the reasons blocks that looked like
/// spectra cannot be read.
struct Parsed {
    blocks: Vec<Block>,
}

impl Parsed {
    fn candidates(&self) -> (Vec<Candidate<'_>>, Vec<(usize, String)>) {
        let mut out = Vec::new();
        let mut refused = Vec::new();
        for (i, b) in self.blocks.iter().enumerate() {
            let block_no = i + 1;
            let title = b.title();
            let name = if title.is_empty() {
                format!("block {block_no}")
            } else {
                title
            };
            if ["XYDATA", "XYPOINTS", "PEAKTABLE"].iter().any(|l| b.get(l).is_some()) {
                out.push(Candidate {
                    block_no,
                    block: b,
                    page: None,
                    label: name,
                });
            } else if let Some(nt) = b.ldrs.iter().position(|l| l.label == "NTUPLES") {
                let mut pages = 0;
                for (k, l) in b.ldrs.iter().enumerate().skip(nt) {
                    if l.label == "PAGE" && page_ldrs(b, k).iter().any(|p| p.label == "DATATABLE") {
                        pages += 1;
                        out.push(Candidate {
                            block_no,
                            block: b,
                            page: Some(k),
                            label: format!("{name}, page {}", l.value.trim()),
                        });
                    }
                }
                if pages == 0 {
                    refused.push((
                        b.ldrs[nt].line,
                        format!(
                            "the ##NTUPLES= block '{name}' holds no ##PAGE= with a ##DATA TABLE=, so no spectrum can be read from it"
                        ),
                    ));
                }
            }
        }
        (out, refused)
    }
}

/// The records of one NTUPLES page: from after its `##PAGE=` to the next page or the end.
fn page_ldrs(b: &Block, page: usize) -> &[Ldr] {
    let rest = &b.ldrs[page + 1..];
    let end = rest
        .iter()
        .position(|l| l.label == "PAGE" || l.label == "ENDNTUPLES")
        .unwrap_or(rest.len());
    &rest[..end]
}

fn listing(cands: &[Candidate]) -> String {
    let mut s: Vec<String> = cands
        .iter()
        .take(MAX_LISTED)
        .enumerate()
        .map(|(i, c)| format!("{} '{}'", i + 1, c.label))
        .collect();
    if cands.len() > MAX_LISTED {
        s.push(format!("and {} more", cands.len() - MAX_LISTED));
    }
    s.join(", ")
}

/// The spectra `opts.block` picks (by 1-based number among the spectra, or by title, label or
/// NTUPLES page), or all of them.
fn choose<'a>(file: &str, cands: Vec<Candidate<'a>>, opts: &ReadOptions) -> Result<Vec<Candidate<'a>>> {
    let Some(sel) = opts.block.as_deref().map(str::trim) else {
        return Ok(cands);
    };
    if let Ok(k) = sel.parse::<usize>() {
        return match cands.get(k.wrapping_sub(1)) {
            Some(c) => Ok(vec![c.clone()]),
            None => Err(spectrum_error(
                file,
                None,
                &format!(
                    "block {k} asked for; the file has {} spectra: {}",
                    cands.len(),
                    listing(&cands)
                ),
            )),
        };
    }
    let same = |a: &str| a.trim().eq_ignore_ascii_case(sel);
    let by_label: Vec<&Candidate> = cands.iter().filter(|c| same(&c.label)).collect();
    let by_title: Vec<&Candidate> = cands.iter().filter(|c| same(&c.block.title())).collect();
    let by_page: Vec<&Candidate> = cands
        .iter()
        .filter(|c| {
            c.page_value()
                .is_some_and(|p| same(&p) || same(p.replace(' ', "").as_str()))
        })
        .collect();
    let found = [by_label, by_title, by_page].into_iter().find(|v| !v.is_empty());
    match found {
        Some(v) if v.len() == 1 => Ok(vec![v[0].clone()]),
        Some(v) => {
            let all: Vec<Candidate> = v.into_iter().cloned().collect();
            Err(spectrum_error(
                file,
                None,
                &format!(
                    "--block '{sel}' names {} spectra: {}; choose one by number or by its full name",
                    all.len(),
                    listing(&all)
                ),
            ))
        }
        None => Err(spectrum_error(
            file,
            None,
            &format!("no block titled '{sel}'; the file holds: {}", listing(&cands)),
        )),
    }
}

/// Blocks that looked like spectra but cannot be read: the line and the reason.
type Refusals = Vec<(usize, String)>;

fn parse_and_choose<'a>(file: &str, parsed: &'a Parsed, opts: &ReadOptions) -> Result<(Vec<Candidate<'a>>, Refusals)> {
    let (cands, refused) = parsed.candidates();
    if cands.is_empty() {
        return Err(match refused.into_iter().next() {
            Some((line, r)) => spectrum_error(file, Some(line), &r),
            None => spectrum_error(
                file,
                None,
                "JCAMP-DX file holds no ##XYDATA=, ##XYPOINTS=, ##PEAK TABLE= or ##NTUPLES= block",
            ),
        });
    }
    Ok((choose(file, cands, opts)?, refused))
}

/// One spectrum: the one `opts.block` names, or the only one. A file of several spectra read
/// without a choice is refused with the list of them; it is never silently read as its first.
pub fn read(file: &str, text: &str, opts: &ReadOptions) -> Result<RawSpectrum> {
    let parsed = Parsed {
        blocks: split_blocks(text),
    };
    let (chosen, refused) = parse_and_choose(file, &parsed, opts)?;
    match chosen.as_slice() {
        [one] => decode(file, &parsed, one, chosen.len(), &refused, MAX_FILE_POINTS),
        many => Err(spectrum_error(
            file,
            None,
            &format!(
                "the file holds {} spectra: {}; choose one with --block N|TITLE",
                many.len(),
                listing(many)
            ),
        )),
    }
}

/// Every spectrum the file holds (or the one `opts.block` names), each with its label: the
/// block's title, or for an NTUPLES page the title and the page.
pub fn read_blocks_labelled(file: &str, text: &str, opts: &ReadOptions) -> Result<Vec<(String, RawSpectrum)>> {
    let parsed = Parsed {
        blocks: split_blocks(text),
    };
    let (chosen, refused) = parse_and_choose(file, &parsed, opts)?;
    let mut out = Vec::with_capacity(chosen.len());
    let mut budget = MAX_FILE_POINTS;
    for c in &chosen {
        let s = decode(file, &parsed, c, chosen.len(), &refused, budget)?;
        budget = budget.saturating_sub(s.x.len());
        out.push((c.label.clone(), s));
    }
    Ok(out)
}

/// Every spectrum the file holds (or the one `opts.block` names), in file order.
pub fn read_blocks(file: &str, text: &str, opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    Ok(read_blocks_labelled(file, text, opts)?
        .into_iter()
        .map(|(_, s)| s)
        .collect())
}

/// The table a candidate holds, ready to decode.
enum Table<'a> {
    Equidistant(Equidistant<'a>),
    Groups {
        what: &'static str,
        ldr: &'a Ldr,
        arity: usize,
        xfactor: f64,
    },
}

struct Prepared<'a> {
    table: Table<'a>,
    yfactor: f64,
    firsty: Option<Num>,
    x_unit: Option<String>,
    y_unit: Option<String>,
    shape: String,
}

/// Reads a form record, refusing one that names no table shape and warning about one written
/// with a parenthesis missing.
fn form_of(file: &str, ldr: &Ldr, what: &str, notes: &mut Notes) -> Result<Form> {
    let (form, as_written) = parse_form(&ldr.value).ok_or_else(|| {
        spectrum_error(
            file,
            Some(ldr.line),
            &format!("unsupported {what} form '{}'", ldr.value.trim()),
        )
    })?;
    if !as_written {
        notes.warnings.push(format!(
            "line {}: ##{what}= form written '{}', read as {} (a parenthesis is missing or extra)",
            ldr.line,
            ldr.value.trim(),
            form.canonical()
        ));
    }
    Ok(form)
}

fn prepare_plain<'a>(file: &str, b: &'a Block, notes: &mut Notes) -> Result<Prepared<'a>> {
    let xfactor = factor(file, number(file, b, "XFACTOR")?, "XFACTOR")?;
    let yfactor = factor(file, number(file, b, "YFACTOR")?, "YFACTOR")?;
    let x_unit = b.text("XUNITS");
    let y_unit = b.text("YUNITS");
    let firsty = number(file, b, "FIRSTY")?;
    let present: Vec<&str> = ["XYDATA", "XYPOINTS", "PEAKTABLE"]
        .into_iter()
        .filter(|l| b.get(l).is_some())
        .collect();
    if present.len() > 1 {
        notes.warnings.push(format!(
            "the block holds {}; {} is read",
            present.join(" and "),
            present[0]
        ));
    }
    if let Some(ldr) = b.get("XYDATA") {
        let form = form_of(file, ldr, "XYDATA", notes)?;
        if form
            != (Form::Equidistant {
                x: "X".into(),
                y: "Y".into(),
            })
        {
            return Err(spectrum_error(
                file,
                Some(ldr.line),
                &format!("unsupported XYDATA form '{}'", ldr.value.trim()),
            ));
        }
        let need = |label: &str| -> Result<Num> {
            number(file, b, label)?
                .ok_or_else(|| spectrum_error(file, Some(ldr.line), &format!("XYDATA needs ##{label}=")))
        };
        let table = Equidistant {
            what: "XYDATA",
            ldr,
            xfactor,
            firstx: need("FIRSTX")?,
            lastx: number(file, b, "LASTX")?,
            deltax: number(file, b, "DELTAX")?,
            npoints: need("NPOINTS")?,
        };
        return Ok(Prepared {
            table: Table::Equidistant(table),
            yfactor,
            firsty,
            x_unit,
            y_unit,
            shape: "XYDATA (X++(Y..Y))".into(),
        });
    }
    let (label, what) = if b.get("XYPOINTS").is_some() {
        ("XYPOINTS", "XYPOINTS")
    } else {
        ("PEAKTABLE", "PEAK TABLE")
    };
    let ldr = b
        .get(label)
        .ok_or_else(|| spectrum_error(file, None, "the block holds no data table"))?;
    let form = form_of(file, ldr, what, notes)?;
    let arity = match &form {
        Form::Groups { symbols } if symbols[..2] == ['X', 'Y'] && (label == "PEAKTABLE" || symbols.len() == 2) => {
            symbols.len()
        }
        _ => {
            return Err(spectrum_error(
                file,
                Some(ldr.line),
                &format!("unsupported {what} form '{}'", ldr.value.trim()),
            ));
        }
    };
    if arity == 3 {
        notes.warnings.push(format!(
            "the peak table's third value ({}) is not kept; x and y are",
            if form.canonical().contains('W') {
                "peak width W"
            } else {
                "multiplicity M"
            }
        ));
    }
    if label == "PEAKTABLE" {
        notes
            .warnings
            .push("a peak table: peak positions and heights, not a continuous spectrum".into());
    }
    Ok(Prepared {
        table: Table::Groups {
            what,
            ldr,
            arity,
            xfactor,
        },
        yfactor,
        firsty,
        x_unit,
        y_unit,
        shape: format!("{what} {}", form.canonical()),
    })
}

/// The per-variable lists of an NTUPLES block (`##SYMBOL=`, `##FIRST=`, ...), each value in
/// variable order.
struct Variables<'a> {
    block: &'a Block,
    symbols: Vec<String>,
}

impl<'a> Variables<'a> {
    fn list(&self, label: &str) -> Option<(Vec<String>, usize)> {
        self.block.get(label).map(|l| {
            (
                l.full_value().split(',').map(|s| s.trim().to_string()).collect(),
                l.line,
            )
        })
    }
    fn text(&self, label: &str, var: usize) -> Option<String> {
        self.list(label)
            .and_then(|(v, _)| v.get(var).cloned())
            .filter(|s| !s.is_empty())
    }
    fn number(&self, file: &str, label: &str, var: usize) -> Result<Option<Num>> {
        match self.list(label) {
            Some((v, line)) => match v.get(var).filter(|s| !s.is_empty()) {
                Some(s) => parse_num(file, line, &format!("##{label}= for {}", self.symbols[var]), s).map(Some),
                None => Ok(None),
            },
            None => Ok(None),
        }
    }
    fn index(&self, file: &str, sym: &str, table: &Ldr) -> Result<usize> {
        self.symbols
            .iter()
            .position(|s| s.eq_ignore_ascii_case(sym))
            .ok_or_else(|| {
                spectrum_error(
                    file,
                    Some(table.line),
                    &format!(
                        "NTUPLES: the data table names variable '{sym}', which ##SYMBOL= ({}) does not list",
                        self.symbols.join(", ")
                    ),
                )
            })
    }
}

fn prepare_page<'a>(file: &str, b: &'a Block, page: usize, notes: &mut Notes) -> Result<Prepared<'a>> {
    let nt_line = b.get("NTUPLES").map_or(b.line, |l| l.line);
    let symbols: Vec<String> = b
        .get("SYMBOL")
        .map(|l| l.full_value().split(',').map(|s| s.trim().to_string()).collect())
        .ok_or_else(|| {
            spectrum_error(
                file,
                Some(nt_line),
                "NTUPLES without ##SYMBOL=: its variables cannot be told apart",
            )
        })?;
    let vars = Variables { block: b, symbols };
    let recs = page_ldrs(b, page);
    let table = recs
        .iter()
        .find(|l| l.label == "DATATABLE")
        .ok_or_else(|| spectrum_error(file, Some(b.ldrs[page].line), "NTUPLES page without ##DATA TABLE="))?;
    let form = form_of(file, table, "DATA TABLE", notes)?;
    let (xs, ys, arity) = match &form {
        Form::Equidistant { x, y } => (x.clone(), y.clone(), 0),
        Form::Groups { symbols } => (symbols[0].to_string(), symbols[1].to_string(), symbols.len()),
    };
    let xi = vars.index(file, &xs, table)?;
    let yi = vars.index(file, &ys, table)?;
    if vars
        .text("VARTYPE", xi)
        .is_some_and(|t| t.eq_ignore_ascii_case("DEPENDENT"))
    {
        return Err(spectrum_error(
            file,
            Some(table.line),
            &format!(
                "NTUPLES: the data table's abscissa '{xs}' is a DEPENDENT variable; it holds no spectrum against an x"
            ),
        ));
    }
    let xfactor = factor(file, vars.number(file, "FACTOR", xi)?, "FACTOR")?;
    let yfactor = factor(file, vars.number(file, "FACTOR", yi)?, "FACTOR")?;
    let x_unit = vars.text("UNITS", xi);
    let y_unit = vars.text("UNITS", yi);
    let yname = vars.text("VARNAME", yi).unwrap_or_else(|| ys.clone());
    let page_text = format!("page {}", b.ldrs[page].value.trim());
    let firsty = vars.number(file, "FIRST", yi)?;
    let prepared_table = if arity == 0 {
        let page_npoints = recs.iter().find(|l| l.label == "NPOINTS");
        let npoints = match page_npoints {
            Some(l) => parse_num(file, l.line, "##NPOINTS=", &l.value)?,
            None => vars.number(file, "VARDIM", xi)?.ok_or_else(|| {
                spectrum_error(
                    file,
                    Some(table.line),
                    &format!("NTUPLES: neither the page's ##NPOINTS= nor ##VAR_DIM= gives the count of '{xs}'"),
                )
            })?,
        };
        let firstx = vars.number(file, "FIRST", xi)?.ok_or_else(|| {
            spectrum_error(
                file,
                Some(table.line),
                &format!("NTUPLES: ##FIRST= gives no first value for '{xs}'"),
            )
        })?;
        let lastx = vars.number(file, "LAST", xi)?;
        Table::Equidistant(Equidistant {
            what: "DATA TABLE",
            ldr: table,
            xfactor,
            firstx,
            lastx,
            deltax: None,
            npoints,
        })
    } else {
        Table::Groups {
            what: "DATA TABLE",
            ldr: table,
            arity,
            xfactor,
        }
    };
    Ok(Prepared {
        table: prepared_table,
        yfactor,
        // FIRST for a dependent variable is its first value on the first page only.
        firsty: if b.ldrs.iter().position(|l| l.label == "PAGE") == Some(page) {
            firsty
        } else {
            None
        },
        x_unit,
        y_unit,
        shape: format!("NTUPLES {page_text}, {yname} against {xs}, {}", form.canonical()),
    })
}

/// Reads one candidate into a spectrum with its checks, warnings and the shape it was read as.
fn decode(
    file: &str,
    parsed: &Parsed,
    c: &Candidate,
    chosen: usize,
    refused: &[(usize, String)],
    budget: usize,
) -> Result<RawSpectrum> {
    let b = c.block;
    if !b.ended {
        return Err(spectrum_error(
            file,
            None,
            &format!(
                "truncated JCAMP-DX file: the block '{}' (line {}) has no ##END=",
                b.title(),
                b.line
            ),
        ));
    }
    let mut notes = Notes::default();
    let p = match c.page {
        None => prepare_plain(file, b, &mut notes)?,
        Some(k) => prepare_page(file, b, k, &mut notes)?,
    };
    let (x, raw_y, lines) = match &p.table {
        Table::Equidistant(t) => decode_equidistant(file, t, budget, &mut notes)?,
        Table::Groups {
            what,
            ldr,
            arity,
            xfactor,
        } => {
            let (x, y, lines) = decode_groups(file, what, ldr, *arity, *xfactor, budget, &mut notes)?;
            if let Some(n) = number(file, b, "NPOINTS")?.filter(|_| c.page.is_none()) {
                if n.v != x.len() as f64 {
                    return Err(spectrum_error(
                        file,
                        Some(n.line),
                        &format!(
                            "inconsistent: ##NPOINTS={} but {} points in {what} (truncated?)",
                            n.text,
                            x.len()
                        ),
                    ));
                }
                notes.check("NPOINTS", true, format!("{} points read, as ##NPOINTS states", x.len()));
            }
            (x, y, lines)
        }
    };
    let y: Vec<f64> = raw_y.iter().map(|v| v * p.yfactor).collect();
    validate_xy(file, &x, &y, Some(&lines))?;
    if let (Some(fy), Some(&y0), Some(&r0)) = (&p.firsty, y.first(), raw_y.first()) {
        // FIRSTY is the first ordinate in real units; the table holds it as an integer times
        // YFACTOR, so either may be rounded: half of FIRSTY's last digit or half of YFACTOR.
        let tol = (0.5 * last_digit_unit(&fy.text)).max(0.5 * p.yfactor.abs()) * (1.0 + 1e-9)
            + 1e-9 * fy.v.abs().max(y0.abs());
        if (fy.v - y0).abs() > tol {
            return Err(spectrum_error(
                file,
                Some(fy.line),
                &format!(
                    "FIRSTY check failed: ##FIRSTY={} but the first ordinate reads {y0} ({r0} times YFACTOR {}); the ordinate scale is in doubt",
                    fy.text, p.yfactor
                ),
            ));
        }
        notes.check(
            "FIRSTY",
            true,
            format!("first ordinate {y0} is ##FIRSTY={} within rounding", fy.text),
        );
    }
    let mut warnings = Vec::new();
    let x_unit = p.x_unit.unwrap_or_else(|| {
        warnings.push("the file states no x unit (##XUNITS=); read as nm".to_string());
        "nm".into()
    });
    warnings.extend(notes.warnings);
    warnings.extend(refused.iter().map(|(line, r)| format!("not read: line {line}: {r}")));
    // A link block that says how many blocks it links: a different count means one is missing.
    for link in &parsed.blocks {
        if let Some(n) = link.get("BLOCKS") {
            let stated = n.value.trim();
            if stated.parse::<usize>().ok() != Some(link.nested) {
                warnings.push(format!(
                    "line {}: ##BLOCKS={stated} but the link block '{}' holds {} blocks",
                    n.line,
                    link.title(),
                    link.nested
                ));
            }
        }
    }
    let data_type = b
        .text("DATATYPE")
        .or_else(|| b.text("NTUPLES"))
        .filter(|t| !t.eq_ignore_ascii_case("LINK"));
    let mut checks = Vec::new();
    if let Some(dt) = &data_type {
        checks.push(Check {
            name: "DATA TYPE".into(),
            passed: true,
            detail: format!("{dt} (as ##DATA TYPE= states)"),
        });
    }
    checks.extend(notes.checks);
    let mut format = String::from("JCAMP-DX");
    if let Some(v) = b
        .text("JCAMPDX")
        .or_else(|| parsed.blocks.iter().find_map(|o| o.text("JCAMPDX")))
    {
        format.push(' ');
        format.push_str(v.split_whitespace().next().unwrap_or_default());
    }
    format.push_str(": ");
    format.push_str(&p.shape);
    let forms = form_names(notes.forms);
    if !forms.is_empty() && matches!(p.table, Table::Equidistant(_)) {
        format.push_str(", ");
        format.push_str(&forms);
    }
    if let Some(dt) = &data_type {
        format.push_str("; ");
        format.push_str(dt);
    }
    if parsed.blocks.len() > 1 {
        format.push_str(&format!(
            "; block {} of {} ('{}'), {chosen} spectrum{} chosen",
            c.block_no,
            parsed.blocks.len(),
            c.label,
            if chosen == 1 { "" } else { "s" }
        ));
    }
    Ok(RawSpectrum {
        format,
        title: b.text("TITLE"),
        label: Some(c.label.clone()),
        x_unit,
        y_unit: p.y_unit,
        x,
        y,
        checks,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn toks(line: &str) -> Vec<Tok> {
        tokenize("t", 1, line).unwrap().0
    }

    #[test]
    fn tokenizes_the_asdf_forms() {
        // The standard's own illustration of one ordinate row written four ways
        // (McDonald & Wilks 1988, section on ASDF): values 1000 1020 1040 1040 1040.
        let affn = toks("100 1000 1020 1040 1040 1040");
        assert_eq!(affn.len(), 6);
        assert_eq!(toks("100+1000+1020+1040+1040+1040"), affn);
        assert_eq!(toks("100A000A020A040A040A040"), affn);
        assert_eq!(
            toks("100A000K0K0%U"),
            vec![
                Tok::Abs(100.0),
                Tok::Abs(1000.0),
                Tok::Dif(20.0),
                Tok::Dif(20.0),
                Tok::Dif(0.0),
                Tok::Dup(3)
            ]
        );
        let (_, first, forms) = tokenize("t", 1, "100.5A000K0 1040+1040").unwrap();
        assert_eq!(first, "100.5");
        assert_eq!(form_names(forms), "AFFN PAC SQZ DIF");
    }

    #[test]
    fn affn_exponents_read() {
        assert_eq!(
            toks("400 1.5E-3 2.0e+1"),
            vec![Tok::Abs(400.0), Tok::Abs(0.0015), Tok::Abs(20.0)]
        );
    }

    #[test]
    fn the_last_digit_of_a_written_number() {
        assert_eq!(last_digit_unit("400"), 1.0);
        assert!((last_digit_unit("400.25") - 0.01).abs() < 1e-15);
        assert!((last_digit_unit("-3.3E-1") - 0.01).abs() < 1e-15);
        assert_eq!(last_digit_unit("4.0E2"), 10.0);
    }

    #[test]
    fn forms_with_a_parenthesis_missing_read_as_the_standard_spells_them() {
        let xy = Form::Equidistant {
            x: "X".into(),
            y: "Y".into(),
        };
        assert_eq!(parse_form("(X++(Y..Y))"), Some((xy.clone(), true)));
        assert_eq!(parse_form(" (X++(Y..Y)"), Some((xy.clone(), false)));
        assert_eq!(parse_form("X++(Y..Y))"), Some((xy, false)));
        assert_eq!(
            parse_form("(X++(R..R)), XYDATA"),
            Some((
                Form::Equidistant {
                    x: "X".into(),
                    y: "R".into()
                },
                true
            ))
        );
        assert_eq!(
            parse_form("(XYW..XYW)"),
            Some((
                Form::Groups {
                    symbols: vec!['X', 'Y', 'W']
                },
                true
            ))
        );
        assert_eq!(parse_form("(X++(Y..Z))"), None);
        assert_eq!(parse_form("(XYZQ..XYZQ)"), None);
    }

    #[test]
    fn the_line_check_allows_half_a_step() {
        // Written as finely as the step: half a step, so a whole-step shift fails.
        let (tol, fine) = line_tolerance(0.5, 0.1);
        assert!(fine && (tol - 0.25).abs() < 1e-9);
        // Written to whole units with a 0.5 step: rounding of half a unit comes on top.
        let (tol, fine) = line_tolerance(0.5, 1.0);
        assert!(!fine && (tol - 0.75).abs() < 1e-9);
    }
}
