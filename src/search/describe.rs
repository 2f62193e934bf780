//! A parsed query told back in words, for the search box to show what it understood as
//! people type: `size 3.5 to 4 nm · QY ≥ 50 % · in stock`. Pure: it reads the query only.
//! Values are shown in the units people think in (QY in %, concentration in the molar prefix
//! that suits it), not the stored ones.

use super::parse::{Clause, Cmp, Field, Query};

/// The meaning of a query, its clauses in the order written, joined by " · ".
pub fn describe(q: &Query) -> String {
    if q.clauses.is_empty() {
        return "every batch".to_string();
    }
    q.clauses.iter().map(clause).collect::<Vec<_>>().join(" · ")
}

/// A number rounded to six significant figures and written without trailing zeros, so that
/// decimal round-off (`0.45 * 100`) does not show.
pub(crate) fn number(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let places = 5 - v.abs().log10().floor() as i32;
    // Dividing a whole number by an exact power of ten gives the double nearest the decimal,
    // which prints as that decimal.
    let r = if places >= 0 {
        let p = 10f64.powi(places.min(300));
        (v * p).round() / p
    } else {
        let p = 10f64.powi(-places);
        (v / p).round() * p
    };
    format!("{r}")
}

/// How a field is called for people, and the unit (factor from stored units, and its symbol)
/// its values are shown in.
fn label(field: Field, magnitude: f64) -> (&'static str, f64, &'static str) {
    match field {
        Field::Size => ("size", 1.0, " nm"),
        Field::Peak => ("first exciton", 1.0, " nm"),
        Field::Pl => ("PL peak", 1.0, " nm"),
        Field::Fwhm => ("PL FWHM", 1.0, " nm"),
        Field::Qy => ("QY", 100.0, " %"),
        Field::Dispersion => ("σ/D", 1.0, " %"),
        Field::Conc => match magnitude {
            m if m >= 1.0 => ("conc", 1.0, " M"),
            m if m >= 1e-3 => ("conc", 1e3, " mM"),
            m if m >= 1e-6 => ("conc", 1e6, " µM"),
            m if m >= 1e-9 => ("conc", 1e9, " nM"),
            _ => ("conc", 1e12, " pM"),
        },
        Field::Id => ("batch", 1.0, ""),
        Field::Material => ("material", 1.0, ""),
        Field::By => ("by", 1.0, ""),
        Field::Status => ("status", 1.0, ""),
        Field::At => ("at", 1.0, ""),
        Field::Date => ("started", 1.0, ""),
        Field::Recipe => ("recipe", 1.0, ""),
    }
}

fn clause(c: &Clause) -> String {
    match c {
        Clause::Word(w) => format!("“{w}”"),
        Clause::Stock => "in stock".to_string(),
        Clause::Text { field, value } => format!("{} {value}", label(*field, 0.0).0),
        Clause::Numeric {
            field,
            cmp,
            lo,
            hi,
            strict_lo,
            strict_hi,
        } => {
            let magnitude = lo.unwrap_or(0.0).abs().max(hi.unwrap_or(0.0).abs());
            let (name, factor, unit) = label(*field, magnitude);
            let n = |v: f64| number(v * factor);
            match (cmp, lo, hi) {
                (Cmp::Eq, Some(l), Some(h)) if l == h => format!("{name} {}{unit}", n(*l)),
                (Cmp::Eq, Some(l), Some(h)) => {
                    format!("{name} {}{unit} (±{})", n((l + h) / 2.0), n((h - l) / 2.0))
                }
                (_, Some(l), Some(h)) => format!("{name} {} to {}{unit}", n(*l), n(*h)),
                (_, Some(l), None) => format!("{name} {} {}{unit}", if *strict_lo { ">" } else { "≥" }, n(*l)),
                (_, None, Some(h)) => format!("{name} {} {}{unit}", if *strict_hi { "<" } else { "≤" }, n(*h)),
                (_, None, None) => format!("{name} any"),
            }
        }
        Clause::Date {
            lo,
            hi,
            strict_lo,
            strict_hi,
        } => match (lo, hi) {
            (Some(l), Some(h)) if l == h => format!("started {l}"),
            (Some(l), Some(h)) => format!("started {l} to {h}"),
            (Some(l), None) => format!("started {} {l}", if *strict_lo { "after" } else { "on or after" }),
            (None, Some(h)) => format!("started {} {h}", if *strict_hi { "before" } else { "on or before" }),
            (None, None) => "started any day".to_string(),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::search::parse;

    #[test]
    fn a_query_is_told_back_in_words_and_units() {
        let cases: &[(&str, &str)] = &[
            (
                "size 3.5 to 4 qy >= 50% stock",
                "size 3.5 to 4 nm · QY ≥ 50 % · in stock",
            ),
            ("", "every batch"),
            ("size > 3.2", "size > 3.2 nm"),
            ("size 3.5", "size 3.5 nm (±0.05)"),
            ("qy < 0.3", "QY < 30 %"),
            ("qy 45%", "QY 45 % (±0.5)"),
            ("qy 40-60%", "QY 40 to 60 %"),
            ("peak 520 nm", "first exciton 520 nm (±0.5)"),
            ("pl <= 620", "PL peak ≤ 620 nm"),
            ("fwhm < 30", "PL FWHM < 30 nm"),
            ("dispersion < 8 %", "σ/D < 8 %"),
            ("conc > 2 uM", "conc > 2 µM"),
            ("conc > 2e-6", "conc > 2 µM"),
            ("conc < 500 nM", "conc < 500 nM"),
            ("conc 1 to 2 mM", "conc 1 to 2 mM"),
            ("id 12", "batch 12"),
            ("id 10-20", "batch 10 to 20"),
            ("material CdSe by \"Wren Halloway\"", "material CdSe · by Wren Halloway"),
            (
                "status done at freezer recipe \"ZnS shell\"",
                "status done · at freezer · recipe ZnS shell",
            ),
            ("date 2026-06-01", "started 2026-06-01"),
            ("date 2026-06", "started 2026-06-01 to 2026-06-30"),
            ("date > 2026-06-01", "started after 2026-06-01"),
            ("date >= 2026-06-01", "started on or after 2026-06-01"),
            ("date < 2026-06-01", "started before 2026-06-01"),
            ("date <= 2026-06-01", "started on or before 2026-06-01"),
            ("CdSe \"ZnS shell\"", "“cdse” · “zns shell”"),
        ];
        for (q, want) in cases {
            let parsed = parse(q).unwrap_or_else(|e| panic!("{q}: {e}"));
            assert_eq!(describe(&parsed), *want, "{q}");
        }
    }

    #[test]
    fn numbers_lose_their_round_off() {
        assert_eq!(number(0.45 * 100.0), "45");
        assert_eq!(number(0.1 + 0.2), "0.3");
        assert_eq!(number(2e-6 * 1e6), "2");
        assert_eq!(number(1234567.0), "1234570");
        assert_eq!(number(0.000123456789), "0.000123457");
        assert_eq!(number(0.0), "0");
        assert!(
            number(f64::MAX).starts_with("179769"),
            "the largest double still prints"
        );
    }
}
