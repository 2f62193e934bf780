//! From a walked table to spectra: which x column each y column takes, the points of each (a y
//! without an x refused, a short or gapped y column read where it has values, with a
//! warning), the column `--column` picks, and the refusal that lists the spectra when a file
//! holds several and none was chosen.

use crate::error::Result;
use crate::spectra::{RawSpectrum, ReadOptions, spectrum_error, validate_xy};

use super::units::{choose_y_unit, is_x_header, metadata_x_unit, metadata_y_unit, unit_from_header};
use super::{Columns, Table};

/// One y column and the x column it goes with (0-based).
#[derive(Debug, Clone)]
struct Pairing {
    x: usize,
    y: usize,
}

/// The one path from a walked table to spectra.
pub(crate) fn spectra_from_table(file: &str, format: &str, t: Table, opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    let Table {
        header: t_header,
        mut columns,
        lines: t_lines,
        metadata: t_metadata,
        shape: t_shape,
        warnings: t_warnings,
    } = t;
    let width = columns.len();
    let has_values = |c: usize| columns.has_values(c);
    let header = |c: usize| -> Option<&str> {
        t_header
            .as_ref()
            .and_then(|h| h.get(c))
            .map(|s| s.trim().trim_matches('"').trim())
            .filter(|s| !s.is_empty())
    };
    if opts.x_col == Some(0) || opts.y_col == Some(0) {
        return Err(spectrum_error(file, None, "columns are numbered from 1"));
    }
    let mut pairs_layout = false;
    let pairings: Vec<Pairing> = if let Some(y) = opts.y_col {
        let x = opts.x_col.unwrap_or(1);
        let need = x.max(y);
        if need > width {
            return Err(spectrum_error(
                file,
                t_lines.first().copied(),
                &format!("has {width} columns; column {need} was asked for"),
            ));
        }
        vec![Pairing { x: x - 1, y: y - 1 }]
    } else if let Some(x) = opts.x_col {
        if x > width {
            return Err(spectrum_error(
                file,
                t_lines.first().copied(),
                &format!("has {width} columns; column {x} was asked for"),
            ));
        }
        (0..width)
            .filter(|&c| c != x - 1 && has_values(c))
            .map(|c| Pairing { x: x - 1, y: c })
            .collect()
    } else {
        let x_cols: Vec<usize> = (0..width).filter(|&c| header(c).is_some_and(is_x_header)).collect();
        if x_cols.len() >= 2 {
            pairs_layout = true;
            let mut v = Vec::new();
            for c in 0..width {
                if x_cols.contains(&c) || !has_values(c) {
                    continue;
                }
                let x = x_cols
                    .iter()
                    .rev()
                    .find(|&&x| x < c)
                    .or(x_cols.first())
                    .copied()
                    .unwrap_or(0);
                v.push(Pairing { x, y: c });
            }
            v
        } else {
            let x = x_cols.first().copied().unwrap_or(0);
            (0..width)
                .filter(|&c| c != x && has_values(c))
                .map(|c| Pairing { x, y: c })
                .collect()
        }
    };
    if pairings.is_empty() {
        return Err(spectrum_error(
            file,
            None,
            "only one column of numbers; a spectrum needs x and y columns",
        ));
    }
    let name_of = |c: usize| header(c).map_or_else(|| format!("column {}", c + 1), |h| format!("'{h}'"));

    let chosen: Vec<&Pairing> = match &opts.column {
        None => pairings.iter().collect(),
        Some(want) => vec![pick_column(file, want, &pairings, &|c| header(c).map(str::to_string))?],
    };

    let meta_y = metadata_y_unit(&t_metadata);
    let meta_x = metadata_x_unit(&t_metadata);
    let n_samples = pairings.len();
    let mut shape: Vec<String> = Vec::new();
    if pairs_layout {
        shape.push(format!("x,y column pairs for {n_samples} samples"));
    } else if n_samples > 1 {
        shape.push(format!("{n_samples} sample columns"));
    }
    shape.extend(t_shape);
    let format = with_shape(format, &shape);

    let mut out = Vec::with_capacity(chosen.len());
    // A lone spectrum takes its columns instead of copying them.
    let take = chosen.len() == 1;
    for p in chosen {
        let mut warnings = t_warnings.clone();
        let (xs, ys, lines) = points(file, &mut columns, &t_lines, p, take, &name_of, &mut warnings)?;
        validate_xy(file, &xs, &ys, Some(&lines)).map_err(|e| match e {
            crate::error::Error::Spectrum { file, line, reason } if n_samples > 1 => crate::error::Error::Spectrum {
                file,
                line,
                reason: format!("column {}: {reason}", name_of(p.y)),
            },
            other => other,
        })?;
        let y_unit = choose_y_unit(header(p.y), meta_y.as_deref(), &mut warnings);
        let x_unit = match &opts.x_unit {
            Some(u) => u.clone(),
            None => match header(p.x).and_then(unit_from_header).or_else(|| meta_x.clone()) {
                Some(u) => u,
                None => {
                    warnings.push("x unit not stated; taken as nm".to_string());
                    "nm".to_string()
                }
            },
        };
        out.push(RawSpectrum {
            format: format.clone(),
            title: None,
            label: header(p.y).map(str::to_string),
            x_unit,
            y_unit,
            x: xs,
            y: ys,
            checks: Vec::new(),
            warnings,
        });
    }
    Ok(out)
}

/// "csv (comma, decimal point)" + ["3 sample columns"] → "csv (comma, decimal point; 3 sample columns)".
pub(crate) fn with_shape(format: &str, shape: &[String]) -> String {
    if shape.is_empty() {
        return format.to_string();
    }
    let extra = shape.join("; ");
    match format.strip_suffix(')') {
        Some(head) => format!("{head}; {extra})"),
        None => format!("{format} ({extra})"),
    }
}

/// x, y and the line of each point.
type Points<'l> = (Vec<f64>, Vec<f64>, std::borrow::Cow<'l, [usize]>);

/// The (x, y) points of one pairing, in file order, with the line of each. A row with a y but
/// no x is refused (the y would be put at the wrong wavelength); a y column that ends early,
/// starts late or has a gap is read where it has values, with a warning. `take` lets the
/// points take their columns out of a dense table (the last use of them) instead of copying.
fn points<'l>(
    file: &str,
    columns: &mut Columns,
    t_lines: &'l [usize],
    p: &Pairing,
    take: bool,
    name_of: &dyn Fn(usize) -> String,
    warnings: &mut Vec<String>,
) -> Result<Points<'l>> {
    let cols = match columns {
        // Every row has both values: the points are the columns as they are, on every line of
        // the block (no gap, no uneven length, so nothing to say).
        Columns::Dense(cols) => {
            let ys = if take && p.x != p.y {
                std::mem::take(&mut cols[p.y])
            } else {
                cols[p.y].clone()
            };
            let xs = if take {
                std::mem::take(&mut cols[p.x])
            } else {
                cols[p.x].clone()
            };
            return Ok((xs, ys, std::borrow::Cow::Borrowed(t_lines)));
        }
        Columns::Sparse(cols) => cols,
    };
    let xc = &cols[p.x];
    let yc = &cols[p.y];
    let n = xc.len();
    let mut xs = Vec::with_capacity(n);
    let mut ys = Vec::with_capacity(n);
    let mut lines = Vec::with_capacity(n);
    let first_y = yc.iter().position(Option::is_some).unwrap_or(0);
    let last_y = yc.iter().rposition(Option::is_some).unwrap_or(0);
    let mut gaps = 0;
    let mut first_gap = None;
    for i in 0..n {
        match (xc[i], yc[i]) {
            (Some(x), Some(y)) => {
                xs.push(x);
                ys.push(y);
                lines.push(t_lines[i]);
            }
            (None, Some(_)) => {
                return Err(spectrum_error(
                    file,
                    Some(t_lines[i]),
                    &format!(
                        "column {} has a value but its x column {} has none",
                        name_of(p.y),
                        name_of(p.x)
                    ),
                ));
            }
            (Some(_), None) if i > first_y && i < last_y => {
                gaps += 1;
                first_gap.get_or_insert(t_lines[i]);
            }
            _ => {}
        }
    }
    let x_rows = xc.iter().filter(|v| v.is_some()).count();
    if gaps > 0 {
        warnings.push(format!(
            "column {} has {gaps} empty cell{} inside its data (first on line {}); those points are left out",
            name_of(p.y),
            if gaps == 1 { "" } else { "s" },
            first_gap.unwrap_or(0)
        ));
    }
    if xs.len() + gaps < x_rows {
        warnings.push(format!(
            "column {} has {} values, its x column {} has {x_rows} (uneven column lengths)",
            name_of(p.y),
            xs.len(),
            name_of(p.x)
        ));
    }
    Ok((xs, ys, std::borrow::Cow::Owned(lines)))
}

/// The pairing `want` names: a y column header (without case or surrounding spaces), or a
/// 1-based number among the y columns.
fn pick_column<'a>(
    file: &str,
    want: &str,
    pairings: &'a [Pairing],
    header: &dyn Fn(usize) -> Option<String>,
) -> Result<&'a Pairing> {
    let w = want.trim();
    let by_name = pairings
        .iter()
        .find(|p| header(p.y).is_some_and(|h| h.trim().eq_ignore_ascii_case(w)));
    if let Some(p) = by_name {
        return Ok(p);
    }
    if let Ok(n) = w.parse::<usize>()
        && n >= 1
        && let Some(p) = pairings.get(n - 1)
    {
        return Ok(p);
    }
    Err(spectrum_error(
        file,
        None,
        &format!("no y column '{w}'; {}", list_columns(pairings, header)),
    ))
}

/// "the y columns are 1 '20 s', 2 '40 s'".
fn list_columns(pairings: &[Pairing], header: &dyn Fn(usize) -> Option<String>) -> String {
    let names: Vec<String> = pairings
        .iter()
        .enumerate()
        .map(|(i, p)| match header(p.y) {
            Some(h) => format!("{} '{h}'", i + 1),
            None => format!("{} (file column {})", i + 1, p.y + 1),
        })
        .collect();
    format!("the y columns are {}", names.join(", "))
}

/// The refusal for a file with several spectra and no choice made.
pub(crate) fn several_spectra_error(file: &str, spectra: &[RawSpectrum]) -> crate::error::Error {
    let names: Vec<String> = spectra
        .iter()
        .enumerate()
        .map(|(i, s)| match &s.label {
            Some(l) => format!("{} '{l}'", i + 1),
            None => format!("{}", i + 1),
        })
        .collect();
    spectrum_error(
        file,
        None,
        &format!(
            "{} y columns, so several spectra: {}; choose one with --column NAME|N (or read them all as a series)",
            spectra.len(),
            names.join(", ")
        ),
    )
}
