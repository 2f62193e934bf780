//! The lab's calibration as the layers above read and change it: the store's versions typed as
//! [`Calibration`], and a change refused, with nothing written, unless it gives a reason, is
//! valid and says something the newest version does not.

use crate::derive::calibration::Calibration;
use crate::error::{Result, invalid};
use crate::store::Db;
use crate::store::calibrations::{self, CalibrationRecord};

/// One stored calibration version with its body read.
pub type CalibrationVersion = CalibrationRecord<Calibration>;

/// The newest version.
pub fn latest(db: &Db) -> Result<CalibrationVersion> {
    calibrations::latest(db)
}

/// One version by its number.
pub fn get(db: &Db, version: i64) -> Result<CalibrationVersion> {
    calibrations::get(db, version)
}

/// Every version, oldest first.
pub fn history(db: &Db) -> Result<Vec<CalibrationVersion>> {
    calibrations::history(db)
}

/// Validates `body` and writes it as the next version. Returns the new version number.
pub fn save(tx: &Db, who: &str, why: &str, body: &Calibration) -> Result<i64> {
    if why.trim().is_empty() {
        return invalid("a calibration change needs a reason (--why)");
    }
    body.validate()?;
    let prev = latest(tx)?;
    if &prev.body == body {
        return invalid(format!("nothing to change: version {} already says this", prev.version));
    }
    calibrations::insert_next(tx, who, why, &prev, body)
}

/// A calibration change as a person makes it: `edit` changes the newest version's body (it may
/// read the lab, to name a material's core), which is saved as the next version with `why`,
/// and the values it moves are marked stale, in one transaction. Returns the new version and
/// how many values are now stale.
pub fn change(
    store: &mut crate::store::Store,
    why: &str,
    edit: &dyn Fn(&Db, &mut Calibration) -> Result<()>,
) -> Result<(i64, usize)> {
    store.write(|tx, who| crate::lab::derivation::change_calibration(tx, who, why, edit))
}
