//! Handover: a person's vials and open batches go to another person in one transaction, and the
//! pack a new student works from is written (see `report::handover`). The pack is written to a
//! temporary folder first and moved into place only after the transaction commits, so a
//! failure anywhere leaves the database and the folder untouched.
//!
//! "Open" batches are those planned or growing: the new person carries them on. Finished
//! batches keep their operator, because who ran a synthesis is a fact of the record.

use crate::error::{Error, Result, invalid};
use crate::report::handover::write_pack;
use crate::store::Store;
use crate::store::handover::hand_over;
use serde::Serialize;
use std::path::Path;

#[derive(Debug, Clone, Serialize)]
pub struct HandoverReport {
    pub from: String,
    pub to: String,
    pub vials: usize,
    pub batches: usize,
    pub out: String,
    pub files: Vec<String>,
}

/// `fail_after_vials` makes the handover fail after that many vials (for tests of atomicity).
pub fn handover(
    store: &mut Store,
    from: &str,
    to: &str,
    out: &Path,
    fail_after_vials: Option<usize>,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<HandoverReport> {
    if out.exists() && std::fs::read_dir(out).map(|mut d| d.next().is_some()).unwrap_or(true) {
        return invalid(format!(
            "{} already exists and is not empty; choose a new folder",
            out.display()
        ));
    }
    let tmp = out.with_file_name(format!(
        ".{}.partial",
        out.file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| "handover".into())
    ));
    let _ = std::fs::remove_dir_all(&tmp);
    let result = store.write(|tx, who| {
        let done = hand_over(tx, who, from, to, fail_after_vials)?;
        std::fs::create_dir_all(&tmp).map_err(|e| Error::Invalid(format!("cannot create {}: {e}", tmp.display())))?;
        let files = write_pack(tx, &tmp, from, to, &done.vial_ids, &done.pack_batch_ids, progress)?;
        Ok((done.vial_ids.len(), done.batch_ids.len(), files))
    });
    match result {
        Ok((vials, batches, files)) => {
            if out.exists() {
                let _ = std::fs::remove_dir(out);
            }
            std::fs::rename(&tmp, out).map_err(|e| {
                Error::Invalid(format!(
                    "handover committed, but the pack could not be moved from {} to {}: {e}",
                    tmp.display(),
                    out.display()
                ))
            })?;
            Ok(HandoverReport {
                from: from.into(),
                to: to.into(),
                vials,
                batches,
                out: out.display().to_string(),
                files: files.iter().map(|f| out.join(f).display().to_string()).collect(),
            })
        }
        Err(e) => {
            let _ = std::fs::remove_dir_all(&tmp);
            Err(e)
        }
    }
}
