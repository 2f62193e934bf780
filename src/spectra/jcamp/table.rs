//! From a candidate to a spectrum: its table found and checked (a plain block's XYDATA,
//! XYPOINTS or PEAK TABLE, or an NTUPLES page pairing one x variable with one y variable),
//! then decoded with its factors applied, its checks and warnings.

use crate::error::Result;
use crate::spectra::{Check, RawSpectrum, spectrum_error, validate_xy};

use super::blocks::{Candidate, Parsed, page_ldrs};
use super::compressed::{Equidistant, decode_equidistant, form_names};
use super::groups::decode_groups;
use super::labels::{Block, Form, Ldr, Notes, Num, factor, last_digit_unit, number, parse_form, parse_num};

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
    pub(super) fn text(&self, label: &str, var: usize) -> Option<String> {
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
pub(super) fn decode(
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
