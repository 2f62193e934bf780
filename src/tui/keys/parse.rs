//! A key as the user's file writes it (`q`, `ctrl-f`, `pagedown`) and as the help shows it
//! (`Ctrl-F`, `PgDn`), and the file of overrides, read up to its size limit.

use crossterm::event::KeyCode;
use std::collections::BTreeMap;

/// A parsed key: code and whether Ctrl is held.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Key {
    pub code: KeyCode,
    pub ctrl: bool,
}

pub fn parse_key(s: &str) -> Option<Key> {
    let (ctrl, rest) = match s.strip_prefix("ctrl-") {
        Some(r) => (true, r),
        None => (false, s),
    };
    let code = match rest {
        "enter" => KeyCode::Enter,
        "esc" => KeyCode::Esc,
        "up" => KeyCode::Up,
        "down" => KeyCode::Down,
        "tab" => KeyCode::Tab,
        "left" => KeyCode::Left,
        "right" => KeyCode::Right,
        "backtab" => KeyCode::BackTab,
        "home" => KeyCode::Home,
        "end" => KeyCode::End,
        "delete" => KeyCode::Delete,
        "backspace" => KeyCode::Backspace,
        "pageup" => KeyCode::PageUp,
        "pagedown" => KeyCode::PageDown,
        "space" => KeyCode::Char(' '),
        one if one.chars().count() == 1 => KeyCode::Char(one.chars().next()?),
        _ => return None,
    };
    Some(Key { code, ctrl })
}

pub fn describe(k: &Key) -> String {
    let base = match k.code {
        KeyCode::Enter => "Enter".to_string(),
        KeyCode::Esc => "Esc".to_string(),
        KeyCode::Up => "↑".to_string(),
        KeyCode::Down => "↓".to_string(),
        KeyCode::Tab => "Tab".to_string(),
        KeyCode::Left => "←".to_string(),
        KeyCode::Right => "→".to_string(),
        KeyCode::BackTab => "Shift-Tab".to_string(),
        KeyCode::Home => "Home".to_string(),
        KeyCode::End => "End".to_string(),
        KeyCode::Delete => "Del".to_string(),
        KeyCode::Backspace => "Backspace".to_string(),
        KeyCode::PageUp => "PgUp".to_string(),
        KeyCode::PageDown => "PgDn".to_string(),
        KeyCode::Char(' ') => "Space".to_string(),
        KeyCode::Char(c) => c.to_string(),
        _ => "?".to_string(),
    };
    // Terminals send Ctrl-a and Ctrl-A alike; keyboards and manuals print the capital.
    if k.ctrl {
        format!("Ctrl-{}", base.to_uppercase())
    } else {
        base
    }
}

/// The largest key overrides file read; the full table is well under a kilobyte.
pub const MAX_KEYS_FILE_BYTES: u64 = 64 * 1024;

/// Reads an overrides file, refusing one above [`MAX_KEYS_FILE_BYTES`] after reading at most
/// one byte more than that (its stated size is not trusted: a pipe or a device has none).
pub fn read_overrides(p: &std::path::Path) -> Result<BTreeMap<String, String>, String> {
    use std::io::Read;
    let f = std::fs::File::open(p).map_err(|e| format!("keys: cannot read {}: {e}", p.display()))?;
    let mut bytes = Vec::new();
    f.take(MAX_KEYS_FILE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| format!("keys: cannot read {}: {e}", p.display()))?;
    if bytes.len() as u64 > MAX_KEYS_FILE_BYTES {
        return Err(format!(
            "keys: {} is larger than {} KiB; a key overrides file is a small JSON object",
            p.display(),
            MAX_KEYS_FILE_BYTES / 1024
        ));
    }
    let text = String::from_utf8(bytes).map_err(|_| format!("keys: {} is not UTF-8 text", p.display()))?;
    serde_json::from_str(&text).map_err(|e| format!("keys: {} is not a JSON object of action to key: {e}", p.display()))
}
