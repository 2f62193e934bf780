//! Numbers and words as people read them on the bench. The store keeps values exactly (and
//! `--json` prints them so); the screen rounds them to what a pipette or a spectrometer can
//! tell apart, so float noise such as `1.5500000000000003` never reaches a cell. Number fields
//! accept a decimal comma as well as a point.

/// A volume in mL to 0.01 mL, the resolution of the pipettes a vial is drawn with.
pub fn ml(v: f64) -> String {
    format!("{:.2}", round_to(v, 2))
}

/// A concentration given in mol/L, shown in µM to 3 significant figures.
pub fn micromolar(c_molar: f64) -> String {
    sig3(c_molar * 1e6)
}

/// A value to 3 significant figures, in plain decimal form (no e-notation): 12.3, 0.0123, 1230.
pub fn sig3(x: f64) -> String {
    if !x.is_finite() {
        return "-".into();
    }
    if x == 0.0 {
        return "0".into();
    }
    let e = x.abs().log10().floor() as i32;
    let decimals = (2 - e).max(0) as usize;
    let scale = 10f64.powi(e - 2);
    let r = (x / scale).round() * scale;
    // Rounding can carry into the next power of ten (999.6 → 1000): one decimal fewer then.
    let e2 = if r == 0.0 { e } else { r.abs().log10().floor() as i32 };
    let decimals = if e2 > e { decimals.saturating_sub(1) } else { decimals };
    format!("{r:.decimals$}")
}

/// Minutes of a growth series: to 0.01 min, with no trailing zeros (2, 2.5, 1.55).
pub fn minutes(m: f64) -> String {
    crate::report::minutes(m)
}

/// A number put back into a form field (a dilution, a path, a wavelength): up to 4 decimals,
/// no trailing zeros, so the field shows what was typed once (`2.5`, `0.2`, `400`).
pub fn plain(v: f64) -> String {
    let s = format!("{:.4}", round_to(v, 4));
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.to_string() }
}

/// `v` to a fixed number of decimals, as an axis label or a table cell: a value that rounds
/// to zero is shown as zero, never "-0.0".
pub fn fixed(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    match s.strip_prefix('-') {
        Some(rest) if rest.chars().all(|c| c == '0' || c == '.') => rest.to_string(),
        _ => s,
    }
}

fn round_to(v: f64, decimals: i32) -> f64 {
    let k = 10f64.powi(decimals);
    (v * k).round() / k
}

/// A stored status or code word (`in_use`, `set_status`) as a person would say it.
pub fn words(code: &str) -> String {
    code.replace('_', " ")
}

/// A stored quantity's name without its unit suffix, as words: `concentration_molar` is
/// "concentration", `first_exciton_nm` "first exciton" (the value carries the unit).
pub fn quantity_name(name: &str) -> String {
    let bare = ["_molar", "_nm", "_pct"]
        .iter()
        .find_map(|u| name.strip_suffix(u))
        .unwrap_or(name);
    words(bare)
}

/// A value of a recompute's move, in the unit people read it in: concentrations in µM,
/// lengths in nm, percentages with %, anything else to 3 significant figures.
pub fn quantity(name: &str, v: Option<f64>) -> String {
    let Some(x) = v else { return "-".into() };
    if name.contains("concentration") {
        format!("{} µM", micromolar(x))
    } else if name.ends_with("_nm") {
        format!("{x:.2} nm")
    } else if name.ends_with("_pct") {
        format!("{x:.1} %")
    } else {
        sig3(x)
    }
}

/// A number typed into a form: a decimal point or a decimal comma (`1,5` is 1.5), spaces
/// around it ignored. Empty is None; anything else that is not a finite number is an error
/// naming the field.
pub fn parse_number(label: &str, typed: &str) -> Result<Option<f64>, String> {
    let t = typed.trim();
    if t.is_empty() {
        return Ok(None);
    }
    let commas = t.matches(',').count();
    let text = match commas {
        0 => t.to_string(),
        1 if !t.contains('.') => t.replace(',', "."),
        _ => {
            return Err(format!(
                "{label}: '{t}' has more than one decimal mark; write it as 1.5 or 1,5"
            ));
        }
    };
    match text.parse::<f64>() {
        Ok(x) if x.is_finite() => Ok(Some(x)),
        _ => Err(format!("{label}: '{t}' is not a number")),
    }
}

/// How many threshold crossings a preview names before it counts the rest.
pub const CROSSINGS_SHOWN: usize = 8;

/// The lines a recompute preview gives its threshold crossings: each batch whose product value
/// crosses a bound someone searched by, with the value before and after, the first
/// [`CROSSINGS_SHOWN`] by name and the rest counted, so none goes unmentioned.
pub fn crossing_lines(crossings: &[crate::lab::derivation::Crossing]) -> Vec<String> {
    let num = |v: Option<f64>| {
        v.map(|x| format!("{}", round_to(x, 3)))
            .unwrap_or_else(|| "none".into())
    };
    let mut lines: Vec<String> = crossings
        .iter()
        .take(CROSSINGS_SHOWN)
        .map(|c| {
            format!(
                "  batch {} crosses {} {} ({} → {})",
                c.batch_id,
                c.field,
                c.threshold,
                num(c.old),
                num(c.new)
            )
        })
        .collect();
    if crossings.len() > CROSSINGS_SHOWN {
        lines.push(format!(
            "  and {} more (`cuvette recompute --dry-run` lists them all)",
            crossings.len() - CROSSINGS_SHOWN
        ));
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::*;

    fn crossing(batch_id: i64) -> crate::lab::derivation::Crossing {
        crate::lab::derivation::Crossing {
            batch_id,
            field: "size".into(),
            threshold: 3.5,
            old: Some(3.4),
            new: Some(3.6),
        }
    }

    #[test]
    fn every_threshold_crossing_is_named_or_counted() {
        // The preview listed the first three crossings and said nothing of a fourth.
        let four: Vec<_> = (1..=4).map(crossing).collect();
        let lines = crossing_lines(&four);
        assert_eq!(lines.len(), 4, "{lines:?}");
        assert!(lines[3].contains("batch 4 crosses size 3.5 (3.4 → 3.6)"), "{lines:?}");
        let many: Vec<_> = (1..=12).map(crossing).collect();
        let lines = crossing_lines(&many);
        assert_eq!(lines.len(), CROSSINGS_SHOWN + 1, "{lines:?}");
        assert!(lines.last().is_some_and(|l| l.contains("and 4 more")), "{lines:?}");
    }

    #[test]
    fn fixed_decimals_never_show_a_negative_zero() {
        // A plot's lower bound a hair below zero drew its axis label as "-0.0".
        assert_eq!(fixed(-0.004, 1), "0.0");
        assert_eq!(fixed(-0.0, 2), "0.00");
        assert_eq!(fixed(-0.06, 1), "-0.1");
        assert_eq!(fixed(0.1234, 2), "0.12");
        assert_eq!(fixed(531.66, 0), "532");
    }

    #[test]
    fn volumes_round_to_a_hundredth_of_a_millilitre() {
        // 4 - 2.45 in binary floating point, the noise seen on the shelf.
        assert_eq!(ml(1.5500000000000003), "1.55");
        assert_eq!(ml(4.0 - 2.45), "1.55");
        assert_eq!(ml(0.006), "0.01");
        assert_eq!(ml(3.0), "3.00");
    }

    #[test]
    fn concentrations_show_three_significant_figures_in_micromolar() {
        assert_eq!(micromolar(1.2345e-5), "12.3");
        assert_eq!(micromolar(1.2345e-8), "0.0123");
        assert_eq!(micromolar(1.2345e-3), "1230");
        assert_eq!(micromolar(9.996e-6), "10.0");
        assert_eq!(micromolar(9.9996e-4), "1000");
        assert_eq!(micromolar(0.0), "0");
        assert_eq!(sig3(-0.04567), "-0.0457");
    }

    #[test]
    fn minutes_and_words_for_people() {
        assert_eq!(minutes(1.5500000000000003), "1.55");
        assert_eq!(minutes(2.0), "2");
        assert_eq!(minutes(2.5), "2.5");
        assert_eq!(words("in_use"), "in use");
        assert_eq!(quantity("concentration_molar", Some(2.5e-6)), "2.50 µM");
        assert_eq!(quantity("diameter_nm", Some(3.456)), "3.46 nm");
        assert_eq!(quantity_name("concentration_molar"), "concentration");
        assert_eq!(quantity_name("first_exciton_nm"), "first exciton");
        assert_eq!(quantity_name("qy"), "qy");
    }

    #[test]
    fn a_decimal_comma_is_a_decimal_mark() {
        assert_eq!(parse_number("mL", "1,5"), Ok(Some(1.5)));
        assert_eq!(parse_number("mL", " 0,25 "), Ok(Some(0.25)));
        assert_eq!(parse_number("mL", "2.5"), Ok(Some(2.5)));
        assert_eq!(parse_number("mL", ""), Ok(None));
        assert!(
            parse_number("mL", "1,5.0")
                .unwrap_err()
                .contains("more than one decimal mark")
        );
        assert!(parse_number("mL", "1,000,0").unwrap_err().starts_with("mL:"));
        assert!(
            parse_number("dilution", "abc")
                .unwrap_err()
                .contains("dilution: 'abc' is not a number")
        );
        assert!(parse_number("mL", "NaN").is_err() && parse_number("mL", "inf").is_err());
    }
}
