//! Evaluating a query over the facts of every batch. Loading the facts is one pass over the
//! database; filtering them is pure and fast, so the UI can keep the facts and re-filter on
//! every keystroke.
//!
//! The cost of a free word is bounded by the product of two word lengths only for words of at
//! most [`MAX_WORD_CHARS`] characters; a longer word of a batch's text (a pasted hash, a run of
//! characters in a note) is matched by substring alone, which is linear in its length.

use super::parse::{Clause, Field, MAX_WORD_CHARS, Query};
use crate::error::Result;
use crate::store::{Db, facts as stored};
use crate::vocab::{BatchStatus, quantity};
use fuzzy_matcher::FuzzyMatcher;
use fuzzy_matcher::skim::SkimMatcherV2;
use serde::Serialize;
use std::collections::HashMap;

/// What search knows of a batch.
#[derive(Debug, Clone, Serialize, Default)]
pub struct Facts {
    pub id: i64,
    pub name: String,
    pub material: String,
    pub status: BatchStatus,
    pub operator: Option<String>,
    pub started_at: String,
    pub recipe: Option<String>,
    pub notes: String,
    pub locations: Vec<String>,
    pub stock_ml: f64,
    pub diameter_nm: Option<f64>,
    pub first_exciton_nm: Option<f64>,
    pub pl_peak_nm: Option<f64>,
    pub pl_fwhm_nm: Option<f64>,
    pub size_dispersion_pct: Option<f64>,
    pub qy: Option<f64>,
    pub concentration_molar: Option<f64>,
    #[serde(skip)]
    haystack: String,
    /// The words of the haystack, as indices into a table shared by one load of facts, so a
    /// free word is scored once per distinct word of the lab rather than once per batch.
    #[serde(skip)]
    tokens: Vec<u32>,
    #[serde(skip)]
    table: std::sync::Arc<Vec<String>>,
}

impl Facts {
    /// The product value a numeric search field reads (`size` the diameter, ...), by the field's
    /// name as the quantity table gives it.
    fn value_of_field(&mut self, field: &str) -> Option<&mut Option<f64>> {
        Some(match Field::named(field)? {
            Field::Size => &mut self.diameter_nm,
            Field::Peak => &mut self.first_exciton_nm,
            Field::Pl => &mut self.pl_peak_nm,
            Field::Qy => &mut self.qy,
            Field::Fwhm => &mut self.pl_fwhm_nm,
            Field::Dispersion => &mut self.size_dispersion_pct,
            Field::Conc => &mut self.concentration_molar,
            _ => return None,
        })
    }
}

/// One search result.
#[derive(Debug, Clone, Serialize)]
pub struct Hit {
    #[serde(flatten)]
    pub facts: Facts,
    pub score: i64,
}

impl std::ops::Deref for Hit {
    type Target = Facts;
    fn deref(&self) -> &Facts {
        &self.facts
    }
}

/// Reads every batch's facts: product values, stock and locations.
pub fn load_facts(conn: &Db) -> Result<Vec<Facts>> {
    let mut facts: Vec<Facts> = Vec::new();
    let mut index: HashMap<i64, usize> = HashMap::new();
    for b in stored::live_batches(conn)? {
        index.insert(b.id, facts.len());
        facts.push(Facts {
            id: b.id,
            name: b.name,
            material: b.material,
            status: b.status,
            operator: b.operator,
            started_at: b.started_at,
            recipe: b.recipe,
            notes: b.notes,
            ..Default::default()
        });
    }
    for p in stored::product_values(conn)? {
        if let Some(&i) = index.get(&p.batch_id) {
            let f = &mut facts[i];
            let v = p.value;
            // The quantity table names which field reads each value; the others are not searched.
            if let Some(q) = quantity::searched_named(&p.quantity)
                && let Some(slot) = f.value_of_field(q.search_field)
            {
                *slot = v;
            }
        }
    }
    for s in stored::batch_stock(conn)? {
        if let Some(&i) = index.get(&s.batch_id) {
            facts[i].stock_ml = s.stock_ml;
            facts[i].locations = s.locations;
        }
    }
    // A recipe's reagents count as part of its text, so "oleylamine" finds its batches.
    let reagents: HashMap<i64, String> = stored::batch_reagents(conn)?
        .into_iter()
        .map(|r| (r.batch_id, r.reagents))
        .collect();
    for f in &mut facts {
        f.haystack = format!(
            "{} {} {} {} {} {}",
            f.name,
            f.recipe.clone().unwrap_or_default(),
            reagents.get(&f.id).map(String::as_str).unwrap_or(""),
            f.notes,
            f.operator.clone().unwrap_or_default(),
            f.material
        )
        .to_lowercase();
    }
    let mut table: Vec<String> = Vec::new();
    let mut ids: HashMap<String, u32> = HashMap::new();
    let mut per_fact: Vec<Vec<u32>> = Vec::with_capacity(facts.len());
    for f in &facts {
        let mut t: Vec<u32> = f
            .haystack
            .split(|c: char| !is_word_char(c))
            .filter(|w| !w.is_empty())
            .map(|w| {
                *ids.entry(w.to_string()).or_insert_with(|| {
                    table.push(w.to_string());
                    (table.len() - 1) as u32
                })
            })
            .collect();
        t.sort_unstable();
        t.dedup();
        per_fact.push(t);
    }
    let table = std::sync::Arc::new(table);
    for (f, t) in facts.iter_mut().zip(per_fact) {
        f.tokens = t;
        f.table = table.clone();
    }
    Ok(facts)
}

/// The characters of a word of a batch's text; any other splits the text into words.
fn is_word_char(c: char) -> bool {
    c.is_alphanumeric() || c == '-' || c == '/'
}

fn within(v: Option<f64>, lo: Option<f64>, hi: Option<f64>, strict_lo: bool, strict_hi: bool) -> bool {
    let Some(v) = v else { return false };
    // A bound typed in the query carries decimal round-off; compare with a hair of slack.
    let eps = 1e-9 * v.abs().max(1.0);
    let lo_ok = lo.is_none_or(|l| if strict_lo { v > l + eps } else { v >= l - eps });
    let hi_ok = hi.is_none_or(|h| if strict_hi { v < h - eps } else { v <= h + eps });
    lo_ok && hi_ok
}

/// Damerau-Levenshtein distance (optimal string alignment: a swap of two neighbours is one
/// typo, and no substring is edited twice), for typo-tolerant words; counted in characters.
fn edit_distance(a: &str, b: &str) -> usize {
    strsim::osa_distance(a, b)
}

/// How many typos a word of this length may carry.
fn allowed_typos(len: usize) -> usize {
    match len {
        0..=3 => 0,
        4..=7 => 1,
        _ => 2,
    }
}

/// The score of a free word against one word of a batch's text, or None when it does not
/// match: a substring ranks first, then a fuzzy subsequence (fuzzy-matcher), then a word within
/// one or two typos.
fn token_score(matcher: &SkimMatcherV2, token: &str, word: &str) -> Option<i64> {
    if token.contains(word) {
        return Some(1000 + 10 * word.len() as i64 - (token.len() as i64 - word.len() as i64));
    }
    // Fuzzy matching and edit distance cost the product of the lengths: only for words of a
    // bounded length (the parser bounds the query's words; this bounds the lab's).
    if token.len() > 4 * MAX_WORD_CHARS
        || word.len() > 4 * MAX_WORD_CHARS
        || token.chars().count() > MAX_WORD_CHARS
        || word.chars().count() > MAX_WORD_CHARS
    {
        return None;
    }
    if let Some(s) = matcher.fuzzy_match(token, word)
        && s >= (word.len() as i64) * 12
    {
        return Some(s);
    }
    let k = allowed_typos(word.chars().count());
    if k == 0 || token.len().abs_diff(word.len()) > k {
        return None;
    }
    let dist = edit_distance(token, word);
    (dist <= k).then(|| 10 * word.len() as i64 / (dist as i64 + 1))
}

fn text_matches(f: &Facts, field: Field, value: &str) -> bool {
    let v = value.to_lowercase();
    match field {
        Field::Material => f.material.to_lowercase() == v,
        Field::Status => f.status == v.as_str(),
        Field::By => f.operator.as_ref().is_some_and(|o| {
            let o = o.to_lowercase();
            o == v || o.split_whitespace().any(|w| w == v)
        }),
        Field::At => f.locations.iter().any(|l| l.to_lowercase().contains(&v)),
        Field::Recipe => f.recipe.as_ref().is_some_and(|r| r.to_lowercase().contains(&v)),
        _ => false,
    }
}

/// Applies a query to facts: filters narrow, the fuzzy score of the free words ranks, newest
/// first among equals.
pub fn filter(facts: &[Facts], q: &Query) -> Vec<Hit> {
    let matcher = SkimMatcherV2::default();
    let words = q.words();
    // Each free word scored once against every distinct word of the lab.
    let table = facts.first().map(|f| f.table.clone()).unwrap_or_default();
    let word_scores: Vec<Vec<Option<i64>>> = words
        .iter()
        .map(|w| table.iter().map(|t| token_score(&matcher, t, w)).collect())
        .collect();
    let mut hits: Vec<Hit> = Vec::new();
    'outer: for f in facts {
        for c in &q.clauses {
            let ok = match c {
                Clause::Word(_) => true,
                Clause::Stock => f.stock_ml > 1e-9,
                Clause::Text { field, value } => text_matches(f, *field, value),
                Clause::Date {
                    lo,
                    hi,
                    strict_lo,
                    strict_hi,
                } => {
                    let d = f.started_at.get(..10).unwrap_or("");
                    lo.as_ref()
                        .is_none_or(|l| if *strict_lo { d > l.as_str() } else { d >= l.as_str() })
                        && hi
                            .as_ref()
                            .is_none_or(|h| if *strict_hi { d < h.as_str() } else { d <= h.as_str() })
                }
                Clause::Numeric {
                    field,
                    lo,
                    hi,
                    strict_lo,
                    strict_hi,
                    ..
                } => {
                    let v = match field {
                        Field::Size => f.diameter_nm,
                        Field::Peak => f.first_exciton_nm,
                        Field::Pl => f.pl_peak_nm,
                        Field::Qy => f.qy,
                        Field::Fwhm => f.pl_fwhm_nm,
                        Field::Dispersion => f.size_dispersion_pct,
                        Field::Conc => f.concentration_molar,
                        Field::Id => Some(f.id as f64),
                        _ => None,
                    };
                    within(v, *lo, *hi, *strict_lo, *strict_hi)
                }
            };
            if !ok {
                continue 'outer;
            }
        }
        let mut score = 0;
        for (w, scores) in words.iter().zip(&word_scores) {
            // A phrase, or a word holding a character that splits the text into words (`12:30`,
            // `3.5`, `CdSe:Mn`), can match no single word: it is matched against the whole text.
            let best = if w.contains(|c: char| !is_word_char(c)) {
                f.haystack.contains(w).then_some(1000 + 10 * w.len() as i64)
            } else {
                f.tokens
                    .iter()
                    .filter_map(|&t| scores.get(t as usize).copied().flatten())
                    .max()
            };
            match best {
                Some(s) => score += s,
                None => continue 'outer,
            }
        }
        hits.push(Hit {
            facts: f.clone(),
            score,
        });
    }
    hits.sort_by(|a, b| {
        b.score
            .cmp(&a.score)
            .then(b.facts.started_at.cmp(&a.facts.started_at))
            .then(b.facts.id.cmp(&a.facts.id))
    });
    hits
}

/// Loads and filters in one call.
pub fn run(conn: &Db, q: &Query) -> Result<Vec<Hit>> {
    Ok(filter(&load_facts(conn)?, q))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn typo_distance() {
        assert_eq!(edit_distance("oleylamine", "oleylamine"), 0);
        assert_eq!(edit_distance("olyelamine", "oleylamine"), 1);
        assert_eq!(edit_distance("cdse", "cdes"), 1);
        // Optimal string alignment, not the unrestricted distance (which gives 2 here).
        assert_eq!(edit_distance("ca", "abc"), 3);
        // Characters, not bytes.
        assert_eq!(edit_distance("µm", "um"), 1);
    }
}
