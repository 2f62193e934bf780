//! The context a batch's values are derived in, read from the store: its material's shell and,
//! for a shell grown on a core batch, that core's product diameter. The derivation and the
//! views (the reaction yield) read it the same way.

use crate::derive::engine::{BatchContext, ParentCore};
use crate::error::Result;
use crate::store::{Db, values};
use crate::vocab::BatchRelation;

/// Reads the batch context of a batch: its material's shell and, when shelled, the parent
/// batch's product diameter.
pub fn batch_context(conn: &Db, batch_id: i64) -> Result<BatchContext> {
    context_of(conn, values::batch_shell(conn, batch_id)?)
}

/// The batch context from its row of [`values::batch_shells`], which a walk over the whole lab
/// reads in one query: only a shelled batch reads more (its parent's product diameter, read
/// now, so a walk that writes sees the parent as it stands when the child is reached).
pub fn context_of(conn: &Db, b: values::BatchShellRow) -> Result<BatchContext> {
    let shell = b.shell.filter(|s| !s.trim().is_empty());
    let mut ctx = BatchContext {
        material: b.material,
        shell,
        parent_core: None,
    };
    if ctx.shell.is_none() {
        return Ok(ctx);
    }
    if let (Some(pid), Some(BatchRelation::Shell) | None) = (b.parent_batch_id, b.parent_relation) {
        let aliquot = values::product_aliquot(conn, pid)?;
        let d = match aliquot {
            Some(aid) => values::current_value(conn, aid, "diameter_nm")?,
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
