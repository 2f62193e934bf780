//! The labelled data records of a JCAMP-DX file: blocks (a `##TITLE=` opens one, `##END=`
//! closes the innermost), labels compared by the standard's rule, the numbers a record states
//! with the text they were written as, the table forms, and the notes a read gathers.
//! Promises: a number that cannot be read is refused with its line and label.

use crate::error::Result;
use crate::spectra::{Check, spectrum_error};

/// One labelled data record: `##LABEL=value`, its continuation lines and where it started.
#[derive(Debug, Clone)]
pub(super) struct Ldr {
    pub(super) label: String,
    pub(super) value: String,
    pub(super) line: usize,
    /// The continuation lines with their 1-based numbers.
    pub(super) body: Vec<(usize, String)>,
}

impl Ldr {
    /// The value with its continuation lines, for records whose value may wrap (NTUPLES lists).
    pub(super) fn full_value(&self) -> String {
        let mut s = self.value.clone();
        for (_, l) in &self.body {
            s.push(' ');
            s.push_str(l);
        }
        s
    }
}

#[derive(Debug, Clone, Default)]
pub(super) struct Block {
    pub(super) ldrs: Vec<Ldr>,
    pub(super) ended: bool,
    /// The line of the block's first record.
    pub(super) line: usize,
    /// Blocks opened inside this one (a link block's children).
    pub(super) nested: usize,
}

impl Block {
    pub(super) fn get(&self, label: &str) -> Option<&Ldr> {
        self.ldrs.iter().find(|l| l.label == label)
    }
    pub(super) fn text(&self, label: &str) -> Option<String> {
        self.get(label)
            .map(|l| l.value.trim().to_string())
            .filter(|s| !s.is_empty())
    }
    fn is_link(&self) -> bool {
        self.get("BLOCKS").is_some() || self.text("DATATYPE").is_some_and(|t| t.eq_ignore_ascii_case("LINK"))
    }
    pub(super) fn title(&self) -> String {
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
pub(super) fn split_blocks(text: &str) -> Vec<Block> {
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
pub(super) struct Num {
    pub(super) v: f64,
    pub(super) text: String,
    pub(super) line: usize,
}

pub(super) fn parse_num(file: &str, line: usize, what: &str, s: &str) -> Result<Num> {
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

pub(super) fn number(file: &str, b: &Block, label: &str) -> Result<Option<Num>> {
    match b.get(label) {
        None => Ok(None),
        Some(l) => parse_num(file, l.line, &format!("##{label}="), &l.value).map(Some),
    }
}

/// A scale factor: finite and not zero, or every value it scales would be misread.
pub(super) fn factor(file: &str, n: Option<Num>, label: &str) -> Result<f64> {
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
pub(super) fn last_digit_unit(text: &str) -> f64 {
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
pub(super) enum Form {
    Equidistant { x: String, y: String },
    Groups { symbols: Vec<char> },
}

impl Form {
    pub(super) fn canonical(&self) -> String {
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
pub(super) fn parse_form(value: &str) -> Option<(Form, bool)> {
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
pub(super) struct Notes {
    pub(super) checks: Vec<Check>,
    pub(super) warnings: Vec<String>,
    /// Bits of [`FORM_NAMES`] seen in the data lines.
    pub(super) forms: u8,
}

impl Notes {
    pub(super) fn check(&mut self, name: &str, passed: bool, detail: String) {
        self.checks.push(Check {
            name: name.into(),
            passed,
            detail,
        });
    }
    pub(super) fn warn_once(&mut self, key: &str, text: String) {
        if !self.warnings.iter().any(|w| w.starts_with(key)) {
            self.warnings.push(text);
        }
    }
}
