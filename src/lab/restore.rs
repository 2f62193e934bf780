//! Restoring a lab from a backup, as a person asks for it: the backup must pass the whole
//! check, its derived values recomputed and compared included, unless the person takes it to
//! recompute them afterwards (then they are recomputed, audited, right after). Into an open lab
//! (replaced in place under its write lock, the old content kept beside it) or to a new file.

use super::derivation::{RecomputeReport, recompute_now, verify_values};
use crate::error::Result;
use crate::store::backup::{self, RestoreReport};
use crate::store::{Db, Store, check::Problem};
use std::path::Path;

/// What a restore did: the store's report and, when asked, the recompute after it.
#[derive(Debug)]
pub struct Restored {
    pub report: RestoreReport,
    pub recomputed: Option<RecomputeReport>,
}

/// Where a backup is restored to: the lab open for writing, or a path with no lab yet (the
/// restore writes it, attributed to `who`).
pub enum Target<'a> {
    Open(&'a mut Store),
    New { path: &'a Path, who: &'a str },
}

/// Restores `file` into `target`. With `recompute_after` the backup's derived values are not
/// held to the current calibration's (they will be recomputed); otherwise a backup whose
/// values disagree with what they recompute to is refused, and nothing is changed.
pub fn restore(target: Target, file: &Path, recompute_after: bool) -> Result<Restored> {
    let extra = |c: &Db| -> Result<Vec<Problem>> {
        if recompute_after {
            return Ok(Vec::new());
        }
        Ok(verify_values(c, true)?.1)
    };
    let (report, path, who) = match target {
        Target::Open(store) => {
            let who = store.actor.clone();
            let r = backup::restore(store, file, &extra)?;
            (r, store.path.clone(), who)
        }
        Target::New { path, who } => (
            backup::restore_new(file, path, who, &extra)?,
            Some(path.to_path_buf()),
            who.to_string(),
        ),
    };
    let recomputed = match (recompute_after, path) {
        (true, Some(path)) => {
            let mut store = super::open_existing(&path, &who)?;
            Some(recompute_now(&mut store, true, |_, _| {})?)
        }
        _ => None,
    };
    Ok(Restored { report, recomputed })
}
