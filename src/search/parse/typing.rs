//! The query as it stands while it is being typed: a last word that is only the start of a
//! field name is held back until it is finished. Its tests sit beside it.

use super::{FIELD_NAMES, Query, Result, parse};

/// The words a query's last word may be the start of: the field names and `stock`.
fn unfinished_names(word: &str) -> Vec<&'static str> {
    if word.is_empty() || !word.chars().all(|c| c.is_ascii_alphabetic()) {
        return Vec::new();
    }
    let w = word.to_ascii_lowercase();
    let names: Vec<&'static str> = FIELD_NAMES.iter().map(|(n, _)| *n).chain(["stock"]).collect();
    if names.contains(&w.as_str()) {
        return Vec::new();
    }
    names.into_iter().filter(|n| n.starts_with(&w)).collect()
}

/// A query as it stands while it is being typed. A last word that is only the start of a
/// field name (`siz`, `mat`), with nothing after it, is left out until it is finished, so the
/// results do not flash to "no batch has the word siz" on the way to `size 3 to 4`. Returns the
/// query without that word, the word, and the names it could become (empty when the query is
/// whole). Finishing the query (Enter) takes the word as a free word, as [`parse`] does.
pub fn parse_typing(q: &str) -> Result<(Query, String, Vec<&'static str>)> {
    let whole = || parse(q).map(|p| (p, String::new(), Vec::new()));
    if q.ends_with(char::is_whitespace) || q.matches('"').count() % 2 == 1 {
        return whole();
    }
    let start = q.rfind(char::is_whitespace).map(|i| i + 1).unwrap_or(0);
    let last = &q[start..];
    let names = unfinished_names(last);
    if names.is_empty() {
        return whole();
    }
    match parse(&q[..start]) {
        Ok(head) => Ok((head, last.to_string(), names)),
        Err(_) => whole(),
    }
}

#[cfg(test)]
mod typing_tests {
    #![allow(clippy::unwrap_used)]
    use super::*;

    #[test]
    fn the_start_of_a_field_name_waits_until_it_is_finished() {
        let (q, word, names) = parse_typing("material CdSe siz").unwrap();
        assert_eq!(word, "siz");
        assert_eq!(names, ["size"]);
        assert!(q.words().is_empty(), "siz is not yet a free word");
        let (_, _, names) = parse_typing("s").unwrap();
        assert_eq!(names, ["size", "status", "stock"]);
        // A finished word, a word followed by a space, a non-prefix and a quoted one are whole.
        // A finished field name with no condition yet is what `parse` says: an error naming
        // the condition it expects, which the UI shows while keeping the last results.
        for whole in ["size", "siz ", "CdSe", "\"siz", "pbs", "stock"] {
            match (parse_typing(whole), parse(whole)) {
                (Ok((_, word, names)), Ok(_)) => {
                    assert!(word.is_empty() && names.is_empty(), "{whole}")
                }
                (Err(typing), Err(whole_error)) => {
                    assert_eq!(typing.to_string(), whole_error.to_string())
                }
                (typing, parsed) => panic!("{whole}: {typing:?} but parse says {parsed:?}"),
            }
        }
        assert!(
            parse_typing("size")
                .unwrap_err()
                .to_string()
                .contains("expected a condition")
        );
        // Whatever the head, the whole query is what `parse` says when the head fails.
        assert!(parse_typing("size > si").is_err());
    }
}
