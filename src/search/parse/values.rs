//! A condition's values: an amount as written with its unit (the factor to the field's stored
//! units, the precision the digits carry, the bare QY and concentration refused with the form
//! that was probably meant), and a date as the span of days it names.

use super::{Amount, Field, Kind, Result, Token, fail};
use chrono::{Datelike, NaiveDate};

/// The factor from a unit word to the field's stored units.
pub(super) fn unit_factor(field: Field, unit: &str, col: usize) -> Result<f64> {
    let u = unit.to_lowercase();
    let factor = match (field, u.as_str()) {
        (Field::Size | Field::Peak | Field::Pl | Field::Fwhm, "nm") => Some(1.0),
        (Field::Qy, "%") => Some(0.01),
        (Field::Dispersion, "%") => Some(1.0),
        (Field::Conc, "m") => Some(1.0),
        (Field::Conc, "mm") => Some(1e-3),
        (Field::Conc, "um" | "µm" | "μm") => Some(1e-6),
        (Field::Conc, "nm") => Some(1e-9),
        (Field::Conc, "pm") => Some(1e-12),
        _ => None,
    };
    factor.ok_or_else(|| {
        fail(
            col,
            format!(
                "`{unit}` is not a unit of {} ({} takes {})",
                field.name(),
                field.name(),
                field.units()
            ),
        )
    })
}

/// Whether a word stands for a unit of some field, so that it may follow its number.
pub(super) fn is_unit_word(t: &Token) -> bool {
    t.kind == Kind::Word
        && matches!(
            t.text.to_lowercase().as_str(),
            "nm" | "%" | "m" | "mm" | "um" | "µm" | "μm" | "pm"
        )
}

/// Reads a number with the unit written onto it (`520nm`, `45%`, `2uM`) from the start of
/// `s`; returns it and, when a dash follows, the text after the dash with its column.
pub(super) fn scan_amount(field: Field, s: &str, col: usize) -> Result<(Amount, Option<(String, usize)>)> {
    let chars: Vec<char> = s.chars().collect();
    let not_a_number = || fail(col, format!("expected a number for {}, got `{s}`", field.name()));
    if chars.first() == Some(&'-') {
        return Err(fail(
            col,
            format!(
                "{} is never negative; a dash joins the two ends of a range, as in `{}`",
                field.name(),
                if field == Field::Size { "size 3-4" } else { "pl 610-630" }
            ),
        ));
    }
    let mut i = chars.iter().take_while(|c| c.is_ascii_digit() || **c == '.').count();
    let mantissa: String = chars[..i].iter().collect();
    if !mantissa.contains(|c: char| c.is_ascii_digit()) {
        return Err(not_a_number());
    }
    if chars.get(i) == Some(&',') {
        return Err(fail(
            col + i,
            format!("`{s}`: write numbers without commas, with a point for decimals (`3.5`, `1100`)"),
        ));
    }
    let mut exponent = 0i32;
    if matches!(chars.get(i), Some('e' | 'E')) {
        let mut j = i + 1;
        if matches!(chars.get(j), Some('+' | '-')) {
            j += 1;
        }
        let digits = chars[j.min(chars.len())..]
            .iter()
            .take_while(|c| c.is_ascii_digit())
            .count();
        if digits > 0 {
            exponent = chars[i + 1..j + digits]
                .iter()
                .collect::<String>()
                .parse()
                .map_err(|_| not_a_number())?;
            i = j + digits;
        }
    }
    let number: f64 = chars[..i]
        .iter()
        .collect::<String>()
        .parse()
        .map_err(|_| not_a_number())?;
    if !number.is_finite() {
        return Err(fail(col, format!("the number `{s}` is too large")));
    }
    let decimals = mantissa.split_once('.').map_or(0, |(_, d)| d.len()) as i32;
    let half = 0.5 * 10f64.powi(exponent.saturating_sub(decimals));
    let dash = chars[i..].iter().position(|&c| c == '-').map(|k| i + k);
    let unit_end = dash.unwrap_or(chars.len());
    let unit_text: String = chars[i..unit_end].iter().collect();
    let unit = if unit_text.is_empty() {
        None
    } else if unit_text.contains(|c: char| c.is_ascii_digit() || c == '.') {
        return Err(not_a_number());
    } else {
        Some(unit_factor(field, &unit_text, col + i)?)
    };
    let amount = Amount {
        number,
        half,
        unit,
        col,
        text: chars[..unit_end].iter().collect(),
    };
    let rest = dash.map(|k| (chars[k + 1..].iter().collect(), col + k + 1));
    Ok((amount, rest))
}

/// A value in stored units, refusing the bare numbers that cannot be what was meant. `said`
/// is what comes before the number (`qy >`), for the hint; `None` for an end of a range.
pub(super) fn resolve(field: Field, a: &Amount, said: Option<&str>) -> Result<f64> {
    use crate::search::describe::number;
    let v = a.number * a.unit.unwrap_or(1.0);
    let n = &a.text;
    match field {
        Field::Qy if a.unit.is_none() && v > 1.0 => Err(fail(
            a.col,
            match said {
                Some(s) => format!(
                    "QY is a fraction: write `{s} {}` or `{s} {n}%` (`{s} {n}` would be {} %)",
                    number(v / 100.0),
                    number(v * 100.0)
                ),
                None => format!(
                    "QY is a fraction: write {} or {n}% for {n} per cent (a bare {n} would be {} %)",
                    number(v / 100.0),
                    number(v * 100.0)
                ),
            },
        )),
        Field::Conc if a.unit.is_none() && v >= 1.0 => Err(fail(
            a.col,
            match said {
                Some(s) => format!(
                    "conc without a unit is mol/L, so `{s} {n}` would be {n} M; write the unit: `{s} {n} uM` (or nM, mM)"
                ),
                None => {
                    format!("conc without a unit is mol/L, so {n} would be {n} M; write the unit, as in `conc 1-2 uM`")
                }
            },
        )),
        Field::Id if v.fract() != 0.0 => Err(fail(a.col, format!("id is a whole batch number, got `{n}`"))),
        _ => Ok(v),
    }
}

/// A day span of a date written as YYYY, YYYY-MM or YYYY-MM-DD: its first and last day.
pub(super) fn day_span(t: &Token) -> Result<(NaiveDate, NaiveDate)> {
    let bad = || {
        fail(
            t.col,
            format!("expected a date YYYY-MM-DD (or YYYY-MM, YYYY), got `{}`", t.text),
        )
    };
    if t.kind != Kind::Word {
        return Err(bad());
    }
    let parts: Vec<&str> = t.text.split('-').collect();
    let number = |p: &str, most: usize| {
        (!p.is_empty() && p.len() <= most && p.bytes().all(|b| b.is_ascii_digit()))
            .then(|| p.parse::<u32>().ok())
            .flatten()
    };
    if parts.len() > 3 && day_span_of(&parts[..3], number).is_some() {
        return Err(fail(
            t.col,
            "dates have dashes of their own: write a range of dates with `to`, as in `date 2026-06-01 to 2026-06-30`",
        ));
    }
    day_span_of(&parts, number).ok_or_else(bad)
}

fn day_span_of(parts: &[&str], number: impl Fn(&str, usize) -> Option<u32>) -> Option<(NaiveDate, NaiveDate)> {
    let year = parts.first().filter(|y| y.len() == 4).and_then(|y| number(y, 4))? as i32;
    match parts[1..] {
        [] => Some((
            NaiveDate::from_ymd_opt(year, 1, 1)?,
            NaiveDate::from_ymd_opt(year, 12, 31)?,
        )),
        [m] => {
            let first = NaiveDate::from_ymd_opt(year, number(m, 2)?, 1)?;
            let next = if first.month() == 12 {
                NaiveDate::from_ymd_opt(year + 1, 1, 1)?
            } else {
                NaiveDate::from_ymd_opt(year, first.month() + 1, 1)?
            };
            Some((first, next.pred_opt()?))
        }
        [m, d] => {
            let day = NaiveDate::from_ymd_opt(year, number(m, 2)?, number(d, 2)?)?;
            Some((day, day))
        }
        _ => None,
    }
}

pub(super) fn day(d: NaiveDate) -> Option<String> {
    Some(d.format("%Y-%m-%d").to_string())
}
