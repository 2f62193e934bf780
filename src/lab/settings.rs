//! What the lab keeps besides its entities: audited facts of a batch's record kept as settings
//! (the injection time), and the UI's own remembered choices (folders), which are not audited
//! because they are no part of the lab's record.

use crate::error::Result;
use crate::store::{Store, model};

/// Records when a batch's injection happened (the zero of its aliquots' minutes); audited.
pub fn set_injection_time(store: &mut Store, batch: i64, at: &chrono::DateTime<chrono::FixedOffset>) -> Result<()> {
    let key = format!("injected_at.batch.{batch}");
    store.write(|tx, who| model::meta_set(tx, who, &key, &at.to_rfc3339()))
}

/// Remembers UI choices, all or none: each `(key, value)`.
pub fn remember(store: &mut Store, choices: &[(&str, &str)]) -> Result<()> {
    store.write(|tx, _| {
        for (k, v) in choices {
            model::ui_setting_set(tx, k, v)?;
        }
        Ok(())
    })
}
