//! User text made harmless for each place cuvette shows or writes it. A name, note or label is
//! whatever someone typed or a file held, so it may carry terminal escape sequences (set the
//! title, write the clipboard with OSC 52, clear the screen), bidi overrides that make text read
//! differently from what it is, a leading `=` that a spreadsheet runs as a formula, or markup.
//!
//! Promises: [`for_terminal`] and [`for_terminal_lines`] return text with no C0 or C1 control,
//! DEL or bidi/line-separator control left (only `\n` and `\t` survive, and only in the `_lines`
//! form), each shown in a visible form instead; [`json_text`] leaves JSON valid and its data
//! unchanged while escaping those code points; [`csv_text`] prefixes a quote to any cell a
//! spreadsheet would evaluate; [`markup`] gives text that is well-formed XML 1.0 and HTML in
//! element content and in quoted attributes. The terminal, JSON, CSV and XML-character forms
//! borrow text that is already harmless instead of copying it.

use std::borrow::Cow;
use std::fmt::Write as _;

/// Code points that a terminal, a text renderer or a viewer may act on instead of showing.
/// C0 controls, DEL and C1 controls (U+0080-U+009F: some terminals take them as 8-bit escapes,
/// U+009B is CSI), the bidi embeddings, overrides and isolates (U+202A-U+202E, U+2066-U+2069)
/// and marks (U+200E, U+200F, U+061C), and the line and paragraph separators (U+2028, U+2029)
/// that some viewers break lines at.
pub fn is_hazard(c: char) -> bool {
    matches!(c,
        '\u{0}'..='\u{1f}'
        | '\u{7f}'..='\u{9f}'
        | '\u{202a}'..='\u{202e}'
        | '\u{2066}'..='\u{2069}'
        | '\u{200e}' | '\u{200f}' | '\u{61c}'
        | '\u{2028}' | '\u{2029}')
}

/// The visible stand-in of a hazard in running text: C0 controls and DEL as their Unicode
/// control pictures (ESC reads as ␛), everything else as `<U+XXXX>`.
fn push_visible(out: &mut String, c: char) {
    match c {
        '\u{0}'..='\u{1f}' => out.push(char::from_u32(0x2400 + c as u32).unwrap_or('\u{fffd}')),
        '\u{7f}' => out.push('\u{2421}'),
        _ => {
            let _ = write!(out, "<U+{:04X}>", c as u32);
        }
    }
}

/// One character cell's worth of stand-in: the control picture, or U+FFFD for the rest.
fn cell_picture(c: char) -> char {
    match c {
        '\u{0}'..='\u{1f}' => char::from_u32(0x2400 + c as u32).unwrap_or('\u{fffd}'),
        '\u{7f}' => '\u{2421}',
        _ => '\u{fffd}',
    }
}

/// Whether `s` is printable ASCII (and, where `keep` keeps them, newlines and tabs): text
/// with no hazard in it, said from its bytes without decoding a character.
fn plain_ascii(s: &str, keep: &impl Fn(char) -> bool) -> bool {
    s.bytes()
        .all(|b| (0x20..0x7f).contains(&b) || ((b == b'\n' || b == b'\t') && keep(char::from(b))))
}

fn replace_with(s: &str, keep: impl Fn(char) -> bool) -> Cow<'_, str> {
    if plain_ascii(s, &keep) || !s.chars().any(|c| is_hazard(c) && !keep(c)) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if is_hazard(c) && !keep(c) {
            push_visible(&mut out, c);
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// Text for one line of a terminal: every hazard, newline and tab included, made visible.
pub fn for_terminal(s: &str) -> Cow<'_, str> {
    replace_with(s, |_| false)
}

/// Text for a terminal where line breaks are part of the output (a multi-line report): as
/// [`for_terminal`], but `\n` and `\t` stay. A carriage return does not: it could overwrite
/// what a line said.
pub fn for_terminal_lines(s: &str) -> Cow<'_, str> {
    replace_with(s, |c| c == '\n' || c == '\t')
}

/// A ratatui cell's symbol with no hazard left, or None when it has none. A control that ended
/// up in a cell (ratatui appends zero-width graphemes to the cell before) is dropped so the
/// layout keeps its columns; a cell left empty shows the picture of what was there.
pub fn cell_symbol(symbol: &str) -> Option<String> {
    let first = symbol.chars().find(|c| is_hazard(*c))?;
    let kept: String = symbol.chars().filter(|c| !is_hazard(*c)).collect();
    Some(if kept.is_empty() {
        cell_picture(first).to_string()
    } else {
        kept
    })
}

/// JSON text as serde_json writes it, with the hazards it leaves raw (DEL, C1 controls, bidi
/// controls, line separators) written as `\uXXXX` escapes. Those code points can only occur
/// inside JSON strings, where the escape means the same character: the data is unchanged.
/// The whitespace between tokens is left alone.
pub fn json_text(json: String) -> String {
    // serde_json escapes every C0 control inside strings, so a raw newline, tab or carriage
    // return is whitespace between tokens (pretty printing) and must stay as it is.
    let escape = |c: char| is_hazard(c) && !matches!(c, '\n' | '\t' | '\r');
    // The hazards left are DEL and code points beyond ASCII: text without such a byte (most
    // JSON) has none, which one look at its bytes says.
    if !json.bytes().any(|b| b >= 0x7f) || !json.chars().any(escape) {
        return json;
    }
    let mut out = String::with_capacity(json.len() + 16);
    for c in json.chars() {
        if escape(c) {
            // Every hazard is in the Basic Multilingual Plane, so one \u escape holds it.
            let _ = write!(out, "\\u{:04x}", c as u32);
        } else {
            out.push(c);
        }
    }
    out
}

/// A CSV text cell that no spreadsheet will run as a formula: a cell starting with `=`, `+`,
/// `-`, `@`, a tab or a carriage return gets a leading single quote (OWASP's CSV-injection
/// guidance). Use it on text; numbers go through [`csv_number`].
pub fn csv_text(s: &str) -> Cow<'_, str> {
    match s.chars().next() {
        Some('=' | '+' | '-' | '@' | '\t' | '\r') => Cow::Owned(format!("'{s}")),
        _ => Cow::Borrowed(s),
    }
}

/// A number cuvette formats stays a number (a negative absorbance must read as -0.01); a
/// non-finite one is text, treated as such.
pub fn csv_number(x: f64) -> String {
    let s = x.to_string();
    if x.is_finite() { s } else { csv_text(&s).into_owned() }
}

/// Text for XML (SVG) and HTML element content or a quoted attribute: markup characters as
/// entities, and every hazard (which includes the C0 controls XML 1.0 forbids even as
/// character references) in its visible form. U+FFFE and U+FFFF, also forbidden, become
/// U+FFFD.
pub fn markup(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 16);
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            '\u{fffe}' | '\u{ffff}' => out.push('\u{fffd}'),
            c if is_hazard(c) => {
                let mut v = String::new();
                push_visible(&mut v, c);
                out.push_str(&v.replace('<', "&lt;").replace('>', "&gt;"));
            }
            c => out.push(c),
        }
    }
    out
}

/// Text handed to a library that escapes markup itself (plotters' SVG text): only the code
/// points XML 1.0 forbids, and the other hazards, made visible.
pub fn xml_chars(s: &str) -> Cow<'_, str> {
    if !s.chars().any(|c| is_hazard(c) || c == '\u{fffe}' || c == '\u{ffff}') {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        match c {
            '\u{fffe}' | '\u{ffff}' => out.push('\u{fffd}'),
            c if is_hazard(c) => push_visible(&mut out, c),
            c => out.push(c),
        }
    }
    Cow::Owned(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_become_visible_and_plain_text_is_untouched() {
        assert_eq!(for_terminal("\u{1b}]0;x\u{7}"), "\u{241b}]0;x\u{2407}");
        assert_eq!(for_terminal("a\u{9b}2J"), "a<U+009B>2J");
        assert_eq!(for_terminal("\u{202e}cod"), "<U+202E>cod");
        assert_eq!(for_terminal_lines("a\nb\tc\r"), "a\nb\tc\u{240d}");
        assert!(matches!(for_terminal("CdSe 560 nm µ"), Cow::Borrowed(_)));
    }

    /// The look at the bytes that lets plain ASCII through untouched agrees with the look at
    /// every character, on text of printable ASCII, each control, DEL and code points beyond.
    #[test]
    fn plain_text_is_let_through_as_by_the_character_test() {
        use proptest::prelude::*;
        let mut runner = proptest::test_runner::TestRunner::default();
        let text = "[ -~\u{0}-\u{1f}\u{7f}-\u{a0}\u{202e}\u{2028}é]{0,12}";
        let checked = runner.run(&text, |s| {
            let by_char = |keep: fn(char) -> bool| s.chars().any(|c| is_hazard(c) && !keep(c));
            prop_assert_eq!(matches!(for_terminal(&s), Cow::Borrowed(_)), !by_char(|_| false));
            prop_assert_eq!(
                matches!(for_terminal_lines(&s), Cow::Borrowed(_)),
                !by_char(|c| c == '\n' || c == '\t')
            );
            let json = serde_json::to_string(&s).unwrap_or_default();
            let escaped = json_text(json.clone());
            prop_assert_eq!(
                escaped == json,
                !json.chars().any(|c| is_hazard(c) && !matches!(c, '\n' | '\t' | '\r'))
            );
            Ok(())
        });
        assert!(checked.is_ok(), "{checked:?}");
    }

    #[test]
    fn json_stays_valid_and_means_the_same() {
        let v = serde_json::json!({"name": "a\u{9b}b\u{202e}c\u{7f}\u{1b}"});
        let text = json_text(serde_json::to_string(&v).unwrap_or_default());
        assert!(!text.chars().any(is_hazard), "{text}");
        let back: serde_json::Value = serde_json::from_str(&text).unwrap_or_default();
        assert_eq!(back, v);
        let pretty = json_text(serde_json::to_string_pretty(&v).unwrap_or_default());
        assert!(pretty.contains('\n') && !pretty.contains('\u{9b}'), "{pretty}");
        let back: serde_json::Value = serde_json::from_str(&pretty).unwrap_or_default();
        assert_eq!(back, v);
    }

    #[test]
    fn formula_cells_get_a_quote_and_numbers_stay_numbers() {
        for s in ["=1+1", "+1", "-1", "@SUM(A1)", "\tx", "\rx"] {
            assert!(csv_text(s).starts_with('\''), "{s}");
        }
        assert_eq!(csv_text("CdSe"), "CdSe");
        assert_eq!(csv_number(-0.01), "-0.01");
        assert_eq!(csv_number(f64::NEG_INFINITY), "'-inf");
    }

    #[test]
    fn markup_leaves_no_tag_or_forbidden_character() {
        let m = markup("<b>&\"'\u{1}\u{ffff}");
        assert_eq!(m, "&lt;b&gt;&amp;&quot;&#39;\u{2401}\u{fffd}");
        assert_eq!(markup("\u{202e}"), "&lt;U+202E&gt;");
        assert_eq!(cell_symbol("a\u{1b}").as_deref(), Some("a"));
        assert_eq!(cell_symbol("\u{1b}").as_deref(), Some("\u{241b}"));
        assert_eq!(cell_symbol("a"), None);
    }
}
