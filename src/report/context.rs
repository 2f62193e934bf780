//! The context a batch's values are derived in, read from the store: its material's shell and,
//! for a shell grown on a core batch, that core's product diameter. The derivation and the
//! views (the reaction yield) read it the same way.

use crate::derive::engine::{BatchContext, ParentCore};
use crate::error::Result;
use crate::store::{Db, model, values};
use crate::vocab::BatchRelation;

/// Reads the batch context of a batch: its material's shell and, when shelled, the parent
/// batch's product diameter.
pub fn batch_context(conn: &Db, batch_id: i64) -> Result<BatchContext> {
    let b = model::get_batch(conn, batch_id)?;
    let shell = model::material_by_name(conn, &b.material)?
        .shell
        .filter(|s| !s.trim().is_empty());
    let mut ctx = BatchContext {
        material: b.material.clone(),
        shell,
        parent_core: None,
    };
    if ctx.shell.is_none() {
        return Ok(ctx);
    }
    if let (Some(pid), Some(BatchRelation::Shell) | None) = (b.parent_batch_id, b.parent_relation) {
        let aliquot = values::product_aliquot(conn, pid)?;
        let d = match aliquot {
            Some(aid) => values::current_values(conn, aid)?
                .into_iter()
                .find(|v| v.quantity == "diameter_nm"),
            None => None,
        };
        ctx.parent_core = Some(ParentCore {
            batch_id: pid,
            aliquot_id: aliquot,
            diameter_nm: d.as_ref().and_then(|v| v.value),
            curve: d.map(|v| v.method),
        });
    }
    Ok(ctx)
}
