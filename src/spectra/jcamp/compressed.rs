//! The equally spaced `(X++(Y..Y))` table: ASDF tokens (AFFN, PAC, SQZ, DIF, DUP), the
//! abscissa and DIF Y-checks with the tolerance the standard's rounding allows, and a stated
//! point count checked before anything is allocated for it. Promises: a repeat or run that
//! would take the table past NPOINTS is refused on its line, before anything is allocated.

use crate::error::Result;
use crate::spectra::spectrum_error;

use super::labels::{Ldr, Notes, Num, last_digit_unit};
use super::{MAX_FILE_POINTS, MAX_POINTS};

pub(super) const AFFN: u8 = 1;
pub(super) const PAC: u8 = 2;
pub(super) const SQZ: u8 = 4;
pub(super) const DIF: u8 = 8;
const DUP: u8 = 16;
const FORM_NAMES: [(u8, &str); 5] = [(AFFN, "AFFN"), (PAC, "PAC"), (SQZ, "SQZ"), (DIF, "DIF"), (DUP, "DUP")];

pub(super) fn form_names(bits: u8) -> String {
    FORM_NAMES
        .iter()
        .filter(|(b, _)| bits & b != 0)
        .map(|(_, n)| *n)
        .collect::<Vec<_>>()
        .join(" ")
}

/// An ASDF token: an absolute value (AFFN, PAC or SQZ), a difference (DIF) or a repeat (DUP).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Tok {
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
pub(super) fn tokenize(file: &str, ln: usize, line: &str) -> Result<(Vec<Tok>, String, u8)> {
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
pub(super) fn line_tolerance(step: f64, written_unit: f64) -> (f64, bool) {
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
pub(super) struct Equidistant<'a> {
    pub(super) what: &'static str,
    pub(super) ldr: &'a Ldr,
    pub(super) xfactor: f64,
    pub(super) firstx: Num,
    pub(super) lastx: Option<Num>,
    pub(super) deltax: Option<Num>,
    pub(super) npoints: Num,
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
pub(super) fn decode_equidistant(
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
