//! The record half of a handover: a person's vials that are not disposed, and their open
//! batches (planned or growing), go to another person inside the caller's transaction, each
//! with its audit entry (and a vial event for a vial). Finished batches keep their operator:
//! who ran a synthesis is a fact of the record. The pack a handover writes is `report`'s.

use super::{Db, audit, model, now};
use crate::error::{Result, invalid};
use rusqlite::params;

/// What a handover changed, for the pack.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct HandedOver {
    /// The vials that changed owner, by id.
    pub vial_ids: Vec<i64>,
    /// The open batches that changed operator, by id.
    pub batch_ids: Vec<i64>,
    /// Every batch the pack covers: the open ones and those of the handed vials, by id.
    pub pack_batch_ids: Vec<i64>,
}

/// Reassigns `from`'s vials and open batches to `to` in `tx`, audited as `who`.
/// `fail_after_vials` makes it fail after that many vials (for tests of atomicity: the caller's
/// transaction must then leave every vial as it was).
pub fn hand_over(tx: &Db, who: &str, from: &str, to: &str, fail_after_vials: Option<usize>) -> Result<HandedOver> {
    let from_id = model::person_id(tx, from)?;
    let to_id = model::person_id(tx, to)?;
    if from_id == to_id {
        return invalid("hand over to someone else: --from and --to are the same person");
    }
    let vial_ids: Vec<i64> = {
        let mut st = tx.prepare("SELECT id FROM vial WHERE owner_id = ?1 AND status <> 'disposed' ORDER BY id")?;
        st.query_map([from_id], |r| r.get(0))?
            .collect::<rusqlite::Result<_>>()?
    };
    for (i, id) in vial_ids.iter().enumerate() {
        if fail_after_vials == Some(i) {
            return invalid(format!("handover stopped after {i} vials (test failure)"));
        }
        tx.execute("UPDATE vial SET owner_id = ?1 WHERE id = ?2", params![to_id, id])?;
        tx.execute(
            "INSERT INTO vial_event (vial_id, kind, who, why, at) VALUES (?1, 'handover', ?2, ?3, ?4)",
            params![id, who, format!("from {from} to {to}"), now()],
        )?;
        audit(
            tx,
            who,
            "vial",
            Some(*id),
            "handover",
            Some(&serde_json::json!({"owner": from})),
            Some(&serde_json::json!({"owner": to})),
        )?;
    }
    let batch_ids: Vec<i64> = {
        let mut st =
            tx.prepare("SELECT id FROM batch WHERE operator_id = ?1 AND status IN ('planned','growing') ORDER BY id")?;
        st.query_map([from_id], |r| r.get(0))?
            .collect::<rusqlite::Result<_>>()?
    };
    for id in &batch_ids {
        tx.execute("UPDATE batch SET operator_id = ?1 WHERE id = ?2", params![to_id, id])?;
        audit(
            tx,
            who,
            "batch",
            Some(*id),
            "handover",
            Some(&serde_json::json!({"operator": from})),
            Some(&serde_json::json!({"operator": to})),
        )?;
    }
    let mut pack_batch_ids: Vec<i64> = batch_ids.clone();
    for id in &vial_ids {
        let b: i64 = tx.query_row("SELECT batch_id FROM vial WHERE id = ?1", [id], |r| r.get(0))?;
        if !pack_batch_ids.contains(&b) {
            pack_batch_ids.push(b);
        }
    }
    pack_batch_ids.sort();
    Ok(HandedOver {
        vial_ids,
        batch_ids,
        pack_batch_ids,
    })
}
