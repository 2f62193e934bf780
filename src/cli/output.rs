//! Printing helpers: JSON for scripts, aligned text for people. A closed pipe ends quietly:
//! a write to stdout whose reader went away returns [`StdoutClosed`], which travels up like
//! any error (so whatever the command was doing unwinds as after any failure, and no
//! transaction is left mid-way by an exit) and becomes exit 0 without a word at the top.
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

/// A view printed with its keys in alphabetical order at every depth. `batch show --json`,
/// `explain --json` and the small results of the commands that built their JSON by hand have
/// always printed their keys so (they went through a `serde_json` map, which sorts them), and
/// scripts may compare that text; their structs keep the fields in the order people read them.
pub fn json_sorted<T: Serialize + ?Sized>(v: &T) -> Result<()> {
    json(&serde_json::to_value(v)?)
}

/// A number (or a missing one) written as JSON writes it: `10.0`, `2`, `null`. The text lines
/// that have always shown a view's numbers so keep doing it.
pub fn as_json<T: Serialize + ?Sized>(v: &T) -> String {
    serde_json::to_string(v).unwrap_or_default()
}

/// A number that can be shown: NaN and the infinities, which JSON has no word for, count as
/// missing, as they do in `--json`.
pub fn finite(v: Option<f64>) -> Option<f64> {
    v.filter(|x| x.is_finite())
}

pub fn json_line<T: Serialize + ?Sized>(v: &T) -> Result<()> {
    let s = safe_text::json_text(serde_json::to_string(v)?);
    line(&s)
}

/// The reader of stdout went away before the command had printed everything (`cuvette log
/// --json | head`). Not a failure of the command: the top turns it into a quiet exit 0.
#[derive(Debug, thiserror::Error)]
#[error("stdout was closed by its reader")]
pub struct StdoutClosed;

/// The result of a write to stdout: a closed pipe becomes [`StdoutClosed`], any other failure
/// (a full disk behind a redirection) stays the I/O error it is.
pub fn stdout_written(written: std::io::Result<()>) -> Result<()> {
    match written {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Err(StdoutClosed.into()),
        r => Ok(r?),
    }
}

/// Text on stdout; its own line breaks and tabs stay, every other control is shown.
pub fn line(s: &str) -> Result<()> {
    let text = safe_text::for_terminal_lines(s);
    stdout_written(above_bar(|| writeln!(std::io::stdout().lock(), "{text}")))
}

/// Bytes on stdout as they are (a generated completion script or man page).
pub fn raw(bytes: &[u8]) -> Result<()> {
    let mut out = std::io::stdout().lock();
    stdout_written(out.write_all(bytes).and_then(|()| out.flush()))
}

/// One line on stderr, prefixed `cuvette: `, with every control (line breaks too) shown. A
/// stderr that cannot be written to (a closed pipe) loses the line rather than ending the run:
/// `eprintln!` would panic there.
pub fn warn(s: &str) {
    let text = safe_text::for_terminal(s);
    above_bar(|| {
        let _ = writeln!(std::io::stderr().lock(), "cuvette: {text}");
    });
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

/// The bar of the run in progress, if one is drawn: [`line`] and [`warn`] print above it so a
/// message is never hidden behind or torn by it.
static ACTIVE_BAR: std::sync::Mutex<Option<indicatif::ProgressBar>> = std::sync::Mutex::new(None);

/// Runs `print` with the active bar (if any) lifted off the terminal, then redraws the bar.
fn above_bar<R>(print: impl FnOnce() -> R) -> R {
    let bar = ACTIVE_BAR.lock().ok().and_then(|g| g.clone());
    match bar {
        Some(b) => b.suspend(print),
        None => print(),
    }
}

/// Whether a run draws a bar: only for people at a terminal. A script reading `--json`, or
/// output sent to a file or a pipe (on either stream), gets no bar and no carriage returns.
pub fn progress_wanted(json: bool, stdout_is_terminal: bool, stderr_is_terminal: bool) -> bool {
    !json && stdout_is_terminal && stderr_is_terminal
}

/// A progress bar on stderr for long runs (recompute, import, handover, demo), drawn through
/// indicatif only when [`progress_wanted`] says so. The bar is made at the first tick, when the
/// total is known, and cleared when the run is done or dropped (an error ends it too).
pub struct Progress {
    on: bool,
    label: &'static str,
    bar: std::sync::OnceLock<indicatif::ProgressBar>,
}

impl Progress {
    pub fn new(label: &'static str, json: bool) -> Progress {
        use std::io::IsTerminal;
        Progress {
            on: progress_wanted(json, std::io::stdout().is_terminal(), std::io::stderr().is_terminal()),
            label,
            bar: std::sync::OnceLock::new(),
        }
    }

    pub fn tick(&self, done: usize, total: usize) {
        if !self.on {
            return;
        }
        let bar = self.bar.get_or_init(|| {
            let bar = indicatif::ProgressBar::new(total as u64);
            let style = indicatif::ProgressStyle::with_template("{prefix}: [{bar:30}] {pos}/{len} ({eta} left)")
                .map(|s| s.progress_chars("=> "))
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar());
            bar.set_style(style);
            bar.set_prefix(self.label);
            if let Ok(mut active) = ACTIVE_BAR.lock() {
                *active = Some(bar.clone());
            }
            bar
        });
        // A run whose total grows (a folder re-listed) keeps an honest length.
        if bar.length() != Some(total as u64) {
            bar.set_length(total as u64);
        }
        bar.set_position(done as u64);
        if done >= total {
            self.finish();
        }
    }

    fn finish(&self) {
        if let Some(bar) = self.bar.get() {
            if !bar.is_finished() {
                bar.finish_and_clear();
            }
            if let Ok(mut active) = ACTIVE_BAR.lock() {
                *active = None;
            }
        }
    }
}

impl Drop for Progress {
    fn drop(&mut self) {
        self.finish();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_bar_only_for_a_person_at_a_terminal() {
        assert!(progress_wanted(false, true, true));
        assert!(!progress_wanted(true, true, true), "--json never draws a bar");
        assert!(!progress_wanted(false, false, true), "stdout sent to a file or pipe");
        assert!(!progress_wanted(false, true, false), "stderr sent to a file or pipe");
    }

    #[test]
    fn no_bar_is_made_when_not_wanted() {
        let p = Progress::new("test", true);
        p.tick(1, 10);
        p.tick(10, 10);
        assert!(p.bar.get().is_none());
        assert!(ACTIVE_BAR.lock().map(|g| g.is_none()).unwrap_or(false));
    }
}
