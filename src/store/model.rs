//! The lab's entities and their reads and writes, one module an entity, all re-exported here so
//! callers name them `model::...`: the register (people, materials, reagents, locations),
//! recipes, batches, aliquots, spectra, vials and their events, vial concentrations, the audit
//! log's reads and the lab's settings, and the corrections. Every write function takes the
//! open transaction and the actor, validates its input before touching a row, and writes an
//! audit row beside the change. Column lists are constants and each entity has one row-mapping
//! function, so a query and its struct cannot drift apart. This file holds the checks they
//! share: numbers, reasons and times as people type them.

mod aliquots;
mod audit_log;
mod batches;
mod concentrations;
mod corrections;
mod recipes;
mod register;
mod spectra;
mod vials;

pub use aliquots::*;
pub use audit_log::*;
pub use batches::*;
pub use concentrations::*;
pub use corrections::*;
pub use recipes::*;
pub use register::*;
pub use spectra::*;
pub use vials::*;

use crate::error::{Error, Result, invalid};

pub use crate::vocab::{
    AmountUnit, BatchRelation, BatchStatus, ConcentrationSource, LocationKind, SpectrumKind, VialEventKind, VialStatus,
    Vocabulary,
};

fn not_found(kind: &'static str, what: impl ToString) -> Error {
    Error::NotFound {
        kind,
        what: what.to_string(),
    }
}

/// Rejects NaN, infinities and (where asked) negatives, naming the field.
pub fn check_number(field: &str, v: f64, allow_zero: bool) -> Result<f64> {
    if !v.is_finite() {
        return invalid(format!("{field} must be a finite number, got {v}"));
    }
    if v < 0.0 || (!allow_zero && v == 0.0) {
        let bound = if allow_zero { "zero or more" } else { "above zero" };
        return invalid(format!("{field} must be {bound}, got {}", shown(v)));
    }
    Ok(v)
}

/// As [`check_number`], and no larger than `max`: a finite but absurd figure (1e308 mL) is a
/// typing slip, not a measurement.
pub fn check_bounded(field: &str, v: f64, allow_zero: bool, max: f64, unit: &str) -> Result<f64> {
    check_number(field, v, allow_zero)?;
    if v > max {
        return invalid(format!(
            "{field} of {} {unit} is beyond any plausible value (at most {max} {unit})",
            shown(v)
        ));
    }
    Ok(v)
}

/// A number as a message shows it: short, in e-notation when very large or small.
fn shown(v: f64) -> String {
    if v != 0.0 && (v.abs() >= 1e6 || v.abs() < 1e-4) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

/// A reason for a correction: required, one line, not blank.
pub fn check_reason(why: &str) -> Result<&str> {
    let w = why.trim();
    if w.is_empty() {
        return invalid("a correction needs a reason (--why)");
    }
    Ok(w)
}

/// Accepts RFC 3339, "YYYY-MM-DD HH:MM" or a bare date; returns the stored form, the instant
/// in UTC. A time typed without an offset is the user's local time (the offset in force on that
/// date, from the system's time zone or `TZ`), so it is stored as the instant it was.
pub fn parse_time(field: &str, s: &str) -> Result<String> {
    use chrono::{Local, NaiveDate, NaiveDateTime, TimeZone, Utc};
    let stored = |t: chrono::DateTime<Utc>| t.format("%Y-%m-%dT%H:%M:%SZ").to_string();
    if let Ok(t) = chrono::DateTime::parse_from_rfc3339(s) {
        return Ok(stored(t.with_timezone(&Utc)));
    }
    let local = |t: NaiveDateTime| -> Result<String> {
        match Local.from_local_datetime(&t) {
            chrono::LocalResult::Single(l) => Ok(stored(l.with_timezone(&Utc))),
            // A clock change: the earlier of the two readings, as a clock on the wall showed first.
            chrono::LocalResult::Ambiguous(a, _) => Ok(stored(a.with_timezone(&Utc))),
            chrono::LocalResult::None => invalid(format!(
                "{field} '{s}' does not exist in local time (the clocks skipped it); give an offset, e.g. {s}+01:00"
            )),
        }
    };
    for f in [
        "%Y-%m-%d %H:%M",
        "%Y-%m-%dT%H:%M",
        "%Y-%m-%d %H:%M:%S",
        "%Y-%m-%dT%H:%M:%S",
    ] {
        if let Ok(t) = NaiveDateTime::parse_from_str(s, f) {
            return local(t);
        }
    }
    if let Ok(d) = NaiveDate::parse_from_str(s, "%Y-%m-%d") {
        return local(d.and_hms_opt(0, 0, 0).unwrap_or_default());
    }
    invalid(format!(
        "{field} '{s}' is not a date (use YYYY-MM-DD or YYYY-MM-DD HH:MM)"
    ))
}
