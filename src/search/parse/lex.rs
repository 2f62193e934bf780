//! Text into tokens: words, "quoted phrases" and the comparison signs, each with its 1-based
//! column in characters, cut only on whole characters; and the refusal of the earlier
//! language's forms (`field:value`, `LOW..HIGH`), each shown with the form that replaces it.

use super::{Cmp, Error, Field, Kind, Result, Token, fail};

/// The comparison sign at `i`, with its length in characters.
fn sign_at(chars: &[char], i: usize) -> Option<(Cmp, usize)> {
    let next_is_eq = chars.get(i + 1) == Some(&'=');
    match chars.get(i)? {
        '>' if next_is_eq => Some((Cmp::Ge, 2)),
        '<' if next_is_eq => Some((Cmp::Le, 2)),
        '>' => Some((Cmp::Gt, 1)),
        '<' => Some((Cmp::Lt, 1)),
        '=' => Some((Cmp::Eq, 1)),
        '≥' => Some((Cmp::Ge, 1)),
        '≤' => Some((Cmp::Le, 1)),
        _ => None,
    }
}

/// Cuts a query into words, phrases and signs. A word that holds a ':' runs on to the next
/// space, so the whole of an old `field:value` form can be shown back in its error.
pub(super) fn lex(q: &str) -> Result<Vec<Token>> {
    let chars: Vec<char> = q.chars().collect();
    let mut out = Vec::new();
    let mut i = 0;
    while i < chars.len() {
        let col = i + 1;
        if chars[i].is_whitespace() {
            i += 1;
        } else if chars[i] == '"' {
            let close = chars[i + 1..]
                .iter()
                .position(|&c| c == '"')
                .ok_or_else(|| fail(col, "a quote is opened but never closed"))?;
            out.push(Token {
                col,
                text: chars[i + 1..i + 1 + close].iter().collect(),
                kind: Kind::Phrase,
            });
            i += close + 2;
        } else if let Some((cmp, n)) = sign_at(&chars, i) {
            out.push(Token {
                col,
                text: chars[i..i + n].iter().collect(),
                kind: Kind::Sign(cmp),
            });
            i += n;
        } else {
            let start = i;
            let mut colon = false;
            while i < chars.len()
                && !chars[i].is_whitespace()
                && chars[i] != '"'
                && (colon || sign_at(&chars, i).is_none())
            {
                colon |= chars[i] == ':';
                i += 1;
            }
            out.push(Token {
                col,
                text: chars[start..i].iter().collect(),
                kind: Kind::Word,
            });
        }
    }
    Ok(out)
}

/// The new form of an old `LOW..HIGH` range of a field, when `value` is one.
pub(super) fn new_range(f: &str, value: &str) -> Option<String> {
    Some(match value.split_once("..")? {
        ("", "") => format!("{f} LOW to HIGH"),
        (a, "") => format!("{f} >= {a}"),
        ("", b) => format!("{f} <= {b}"),
        (a, b) => format!("{f} {a} to {b}"),
    })
}

pub(super) fn old_form(t: &Token, new: &str) -> Error {
    fail(t.col, format!("`{}` is the old form; write `{new}`", t.text))
}

/// Refuses the forms of the earlier language, showing the form that replaces each; `next` is
/// the token after, which holds the value of an old `by:"two words"`.
pub(super) fn refuse_old_form(t: &Token, next: Option<&Token>) -> Result<()> {
    if let Some((name, value)) = t.text.split_once(':')
        && let Some(field) = Field::named(name)
    {
        let f = field.name();
        let new = match new_range(f, value) {
            Some(new) => new,
            None if value.is_empty() => match next.filter(|n| n.kind == Kind::Phrase) {
                Some(n) => format!("{f} \"{}\"", n.text),
                None => field.example().to_string(),
            },
            None => {
                let chars: Vec<char> = value.chars().collect();
                match sign_at(&chars, 0) {
                    Some((_, n)) => format!(
                        "{f} {} {}",
                        chars[..n].iter().collect::<String>(),
                        chars[n..].iter().collect::<String>()
                    ),
                    None => format!("{f} {value}"),
                }
            }
        };
        return Err(old_form(t, &new));
    }
    if t.text.contains("..")
        && t.text.starts_with(|c: char| c.is_ascii_digit() || c == '.')
        && t.text.contains(|c: char| c.is_ascii_digit())
    {
        return Err(fail(
            t.col,
            format!(
                "`{}` is the old range form; a range follows its field and takes `to`, as in `size 3.5 to 4`",
                t.text
            ),
        ));
    }
    Ok(())
}
