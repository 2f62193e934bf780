//! Printing helpers: JSON for scripts, aligned text for people. A closed pipe ends quietly.
//! Everything printed goes through [`line`] or [`warn`], which make the control characters and
//! escape sequences a stored name may hold visible and harmless (see `safe_text`); JSON keeps
//! its data and escapes the code points serde_json would write raw.

use crate::safe_text;
use anyhow::Result;
use serde::Serialize;
use std::io::Write;

pub fn json<T: Serialize + ?Sized>(v: &T) -> Result<()> {
    let s = safe_text::json_text(serde_json::to_string_pretty(v)?);
    line(&s)
}

pub fn json_line<T: Serialize + ?Sized>(v: &T) -> Result<()> {
    let s = safe_text::json_text(serde_json::to_string(v)?);
    line(&s)
}

/// Text on stdout; its own line breaks and tabs stay, every other control is shown.
pub fn line(s: &str) -> Result<()> {
    let mut out = std::io::stdout().lock();
    match writeln!(out, "{}", safe_text::for_terminal_lines(s)) {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => std::process::exit(0),
        r => Ok(r?),
    }
}

/// One line on stderr, prefixed `cuvette: `, with every control (line breaks too) shown.
pub fn warn(s: &str) {
    eprintln!("cuvette: {}", safe_text::for_terminal(s));
}

/// A number with a fixed count of decimals (small ones in scientific form), or "-".
pub fn num(v: Option<f64>, decimals: usize) -> String {
    match v {
        Some(x) if x != 0.0 && x.abs() < 0.01 => format!("{x:.3e}"),
        Some(x) => format!("{x:.decimals$}"),
        None => "-".into(),
    }
}

/// Concentrations in a readable unit.
pub fn molar(v: Option<f64>) -> String {
    match v {
        Some(c) if c >= 1e-3 => format!("{:.2} mM", c * 1e3),
        Some(c) => format!("{:.2} µM", c * 1e6),
        None => "-".into(),
    }
}

/// Progress on stderr, only when stderr is a terminal and JSON is not asked for.
pub struct Progress {
    on: bool,
    label: &'static str,
}

impl Progress {
    pub fn new(label: &'static str, json: bool) -> Progress {
        use std::io::IsTerminal;
        Progress {
            on: !json && std::io::stderr().is_terminal(),
            label,
        }
    }
    pub fn tick(&self, done: usize, total: usize) {
        if self.on {
            eprint!("\r{}: {done}/{total}", self.label);
            if done >= total {
                eprintln!();
            }
        }
    }
}
