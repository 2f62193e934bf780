//! Delimited text exports: comma, tab, semicolon or whitespace separated; a decimal point or a
//! decimal comma; any number of preamble lines, then an optional header line, then the data.
//! The delimiter and decimal mark are chosen as the pair under which the most lines read as
//! rows of numbers. After the data starts, every line must be a row of numbers: a stray cell
//! is an error naming its line, never silently skipped.

use super::{RawSpectrum, ReadOptions, XUnit, spectrum_error, validate_xy};
use crate::error::Result;

#[derive(Debug, Clone, Copy, PartialEq)]
enum Delim {
    Tab,
    Semicolon,
    Comma,
    Space,
}

impl Delim {
    fn split(self, line: &str) -> Vec<&str> {
        match self {
            Delim::Tab => line.split('\t').map(str::trim).collect(),
            Delim::Semicolon => line.split(';').map(str::trim).collect(),
            Delim::Comma => line.split(',').map(str::trim).collect(),
            Delim::Space => line.split_whitespace().collect(),
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

fn parse_cell(cell: &str, decimal_comma: bool) -> Option<f64> {
    let c = cell.trim().trim_matches('"');
    if c.is_empty() {
        return None;
    }
    if decimal_comma {
        if c.contains('.') {
            return None;
        }
        c.replace(',', ".").parse().ok()
    } else {
        c.parse().ok()
    }
}

/// A row of numbers under this reading, ignoring trailing empty cells.
fn numeric_row(line: &str, d: Delim, dc: bool) -> Option<Vec<f64>> {
    let mut cells = d.split(line);
    while cells.last().is_some_and(|c| c.is_empty()) {
        cells.pop();
    }
    if cells.len() < 2 {
        return None;
    }
    cells.iter().map(|c| parse_cell(c, dc)).collect()
}

/// Every spectrum the text holds.
pub fn read_all(file: &str, text: &str, opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    read(file, text, opts).map(|s| vec![s])
}

pub fn read(file: &str, text: &str, opts: &ReadOptions) -> Result<RawSpectrum> {
    let lines: Vec<&str> = text.lines().collect();
    let candidates = [
        (Delim::Tab, false),
        (Delim::Tab, true),
        (Delim::Semicolon, false),
        (Delim::Semicolon, true),
        (Delim::Comma, false),
        (Delim::Space, false),
        (Delim::Space, true),
    ];
    // The reading is chosen on a sample of lines (the start and the end of the file); the whole
    // file is then read under it, line by line, with every line checked.
    let sample: Vec<&str> = if lines.len() > 60 {
        lines[..30].iter().chain(&lines[lines.len() - 30..]).copied().collect()
    } else {
        lines.clone()
    };
    let mut best: Option<(Delim, bool, usize)> = None;
    for (d, dc) in candidates {
        let n = sample.iter().filter(|l| numeric_row(l, d, dc).is_some()).count();
        if n > 0 && best.is_none_or(|b| n > b.2) {
            best = Some((d, dc, n));
        }
    }
    let Some((delim, decimal_comma, _)) = best else {
        let data_like = lines.iter().any(|l| {
            let t = l.trim();
            !t.is_empty() && t.split_whitespace().count() == 1 && parse_cell(t, false).is_some()
        });
        let reason = if data_like {
            "only one column of numbers; a spectrum needs x and y columns"
        } else if lines.iter().filter(|l| !l.trim().is_empty()).count() <= 2 {
            "header only: no rows of numbers"
        } else {
            "no rows of numbers found"
        };
        return Err(spectrum_error(file, None, reason));
    };
    let first_data = lines
        .iter()
        .position(|l| numeric_row(l, delim, decimal_comma).is_some())
        .unwrap_or(0);
    // The header is the last non-empty line before the data, if any.
    let header = lines[..first_data]
        .iter()
        .rev()
        .find(|l| !l.trim().is_empty())
        .map(|l| delim.split(l).into_iter().map(String::from).collect::<Vec<_>>());
    let x_col = opts.x_col.unwrap_or(1);
    let y_col = opts.y_col.unwrap_or(2);
    if x_col == 0 || y_col == 0 {
        return Err(spectrum_error(file, None, "columns are numbered from 1"));
    }
    let mut x = Vec::new();
    let mut y = Vec::new();
    let mut line_numbers = Vec::new();
    let mut warnings = Vec::new();
    for (i, line) in lines.iter().enumerate().skip(first_data) {
        if line.trim().is_empty() {
            continue;
        }
        let Some(row) = numeric_row(line, delim, decimal_comma) else {
            let cells = delim.split(line);
            let bad = cells
                .iter()
                .find(|c| parse_cell(c, decimal_comma).is_none())
                .copied()
                .unwrap_or("");
            let reason = if cells.len() < 2 {
                "only one column on this line".to_string()
            } else {
                format!("non-numeric cell '{bad}'")
            };
            return Err(spectrum_error(file, Some(i + 1), &reason));
        };
        if row.len() < x_col.max(y_col) {
            return Err(spectrum_error(
                file,
                Some(i + 1),
                &format!("has {} columns; column {} was asked for", row.len(), x_col.max(y_col)),
            ));
        }
        x.push(row[x_col - 1]);
        y.push(row[y_col - 1]);
        line_numbers.push(i + 1);
    }
    validate_xy(file, &x, &y, Some(&line_numbers))?;
    let header_x = header.as_ref().and_then(|h| h.get(x_col - 1).cloned());
    let header_y = header.as_ref().and_then(|h| h.get(y_col - 1).cloned());
    let y_unit = choose_y_unit(header_y, preamble_y_unit(&lines[..first_data]), &mut warnings);
    let x_unit = match &opts.x_unit {
        Some(u) => u.clone(),
        None => header_x.as_deref().and_then(unit_from_header).unwrap_or_else(|| {
            warnings.push("x unit not stated; taken as nm".to_string());
            "nm".to_string()
        }),
    };
    if decimal_comma {
        warnings.push("decimal comma read".to_string());
    }
    let _ = delim.name();
    Ok(RawSpectrum {
        format: format!("delimited ({})", delim.name()),
        title: None,
        label: None,
        x_unit,
        y_unit,
        x,
        y,
        checks: Vec::new(),
        warnings,
    })
}

/// Preamble keys that state the y quantity ("YUnits: counts", "Y axis = %T"), compared without
/// case, spaces or punctuation.
const Y_UNIT_KEYS: &[&str] = &[
    "yunits",
    "yunit",
    "yaxis",
    "yaxisunit",
    "yaxisunits",
    "yaxistitle",
    "ylabel",
    "ytitle",
    "ordinate",
    "ordinateunit",
    "ordinateunits",
    "ordinatemode",
    "datamode",
    "photometricmode",
    "measurementmode",
];

/// The y quantity a preamble line states, if one does: the first `key: value` (or `=`, tab,
/// comma, semicolon) line whose key is a y-unit key and whose value names a quantity.
fn preamble_y_unit(preamble: &[&str]) -> Option<String> {
    preamble.iter().find_map(|line| {
        let (key, value) = line.split_once([':', '=', '\t', ',', ';'])?;
        let key: String = key
            .chars()
            .filter(|c| c.is_alphanumeric())
            .flat_map(char::to_lowercase)
            .collect();
        let value = value.trim().trim_matches([',', ';', '"']).trim();
        (Y_UNIT_KEYS.contains(&key.as_str()) && super::quantity::names_a_quantity(value)).then(|| value.to_string())
    })
}

/// The y column's header when it names a quantity, else a preamble line's, else the header as
/// it is (a time such as "20 s" is kept as the file gave it). A preamble that disagrees with a
/// header that names a quantity is reported.
fn choose_y_unit(header_y: Option<String>, preamble: Option<String>, warnings: &mut Vec<String>) -> Option<String> {
    let header_names = header_y.as_deref().is_some_and(super::quantity::names_a_quantity);
    match (header_y, preamble) {
        (Some(h), Some(p)) if header_names => {
            if !super::quantity::same_quantity(&h, &p) {
                warnings.push(format!(
                    "the preamble states y as '{p}' but the y column header says '{h}'; the header was used"
                ));
            }
            Some(h)
        }
        (_, Some(p)) => Some(p),
        (h, None) => h,
    }
}

/// "Wavelength (nm)", "Energy [eV]", "Wavenumber / cm-1" and the like.
fn unit_from_header(h: &str) -> Option<String> {
    let lower = h.to_ascii_lowercase();
    let inner = lower
        .split(['(', '[', '/'])
        .nth(1)
        .map(|s| s.trim_end_matches([')', ']']).trim().to_string());
    if let Some(u) = inner
        && XUnit::parse(&u).is_some()
    {
        return Some(u);
    }
    for (key, unit) in [
        ("wavenumber", "1/cm"),
        ("cm-1", "1/cm"),
        ("ev", "eV"),
        ("energy", "eV"),
        ("nm", "nm"),
        ("wavelength", "nm"),
    ] {
        if lower.contains(key) {
            return Some(unit.to_string());
        }
    }
    None
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
}
