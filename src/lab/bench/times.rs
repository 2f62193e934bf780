//! The minutes after injection that a column header ("20 s", "1.5 min") or a file name
//! (`abs_05min.csv`, `t90s_abs.csv`) states. Promises: for a header or a name read for a time
//! with its unit, a bare number says nothing (it may be a sample, a date or a counter) and
//! gives None; only a folder import's grouping takes the first number in a name as minutes.

use std::path::Path;

/// The minutes after injection a column header states, when it states a time with its unit:
/// "20 s", "40s", "1.5 min", "t = 5 min", "10 minutes", "2 h", "90 sec". A bare number or a
/// header without a time unit says nothing (it may be a sample name), so it gives None.
pub fn minutes_in_header(header: &str) -> Option<f64> {
    let h = header.trim().to_ascii_lowercase();
    let h = h.trim_start_matches("t").trim_start_matches([' ', '=', ':']).trim();
    let split = h
        .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == ','))
        .unwrap_or(h.len());
    let (num, unit) = h.split_at(split);
    let value: f64 = num.replace(',', ".").parse().ok()?;
    let unit = unit.trim().trim_end_matches('.');
    let factor = match unit {
        "s" | "sec" | "secs" | "second" | "seconds" => 1.0 / 60.0,
        "min" | "mins" | "minute" | "minutes" | "m" => 1.0,
        "h" | "hr" | "hrs" | "hour" | "hours" => 60.0,
        _ => return None,
    };
    (value.is_finite() && value >= 0.0).then_some(value * factor)
}

pub(super) fn minutes_in(name: &str) -> Option<f64> {
    // The first run of digits (with a decimal point) in the name.
    let mut cur = String::new();
    for c in name.chars() {
        if c.is_ascii_digit() || (c == '.' && !cur.is_empty()) || (c == 'p' && !cur.is_empty() && !cur.contains('.')) {
            cur.push(if c == 'p' { '.' } else { c });
        } else if !cur.is_empty() {
            break;
        }
    }
    cur.trim_end_matches('.').parse().ok()
}

/// The minutes after injection a file's name states with a unit: `abs_05min.csv`,
/// `pl-2.5min.txt`, `t90s_abs.csv`, `sample_1h.csv`. A bare number says nothing (it may be a
/// date, a sample or a counter), so it gives None.
pub fn minutes_in_name(path: &Path) -> Option<f64> {
    let stem = path.file_stem()?.to_string_lossy().to_ascii_lowercase();
    stem.split(['_', '-', ' ', '+'])
        .filter(|t| t.chars().next().is_some_and(|c| c.is_ascii_digit() || c == 't'))
        .find_map(|t| {
            // "2p5min" is how some software writes 2.5 min in a name.
            let t = t.trim_start_matches('t');
            let t = match t.find('p') {
                Some(i) if t[..i].chars().all(|c| c.is_ascii_digit()) && !t[..i].is_empty() => {
                    format!("{}.{}", &t[..i], &t[i + 1..])
                }
                _ => t.to_string(),
            };
            minutes_in_header(&t)
        })
}
