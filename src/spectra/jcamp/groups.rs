//! The `(XY..XY)` tables and their kin (`##XYPOINTS=`, `##PEAK TABLE=`, `(XYW..XYW)`): groups
//! of values per point. Promises: a `?` ordinate leaves its point out with a warning; an
//! abscissa repeated with the same ordinate is read once, with another refused.

use crate::error::Result;
use crate::spectra::spectrum_error;

use super::MAX_POINTS;
use super::compressed::AFFN;
use super::labels::{Ldr, Notes};

/// Decodes a table of groups (`(XY..XY)`, `(XYW..XYW)`, ...): x scaled, y before YFACTOR, the
/// line of each point. Groups may be separated by `;` or spaces, values within a group by `,` or
/// spaces. A `?` ordinate (the standard's missing value) leaves its point out with a warning;
/// an abscissa repeated with the same ordinate is read once, with another ordinate refused.
pub(super) fn decode_groups(
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
