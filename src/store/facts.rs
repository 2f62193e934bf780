//! What search knows of the batches, read in a few passes over the lab: each live batch's
//! record, its product aliquot's current values, its stock and locations, and its recipe's
//! reagent names; and the numeric bounds people search by, remembered for recompute previews.
//! Plain rows: ranking, matching and the shape of a search result belong to `search`.

use super::Db;
use crate::error::Result;
use rusqlite::params;

/// A batch as search reads it (voided batches are left out: they count for nothing).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct BatchFactRow {
    pub id: i64,
    pub name: String,
    pub material: String,
    pub status: crate::vocab::BatchStatus,
    pub operator: Option<String>,
    pub started_at: String,
    pub recipe: Option<String>,
    pub notes: String,
}

/// The live batches, by id.
pub fn live_batches(db: &Db) -> Result<Vec<BatchFactRow>> {
    let mut st = db.prepare(
        "SELECT b.id, b.name, m.name, b.status, p.name, b.started_at, r.name, b.notes
         FROM batch b JOIN material m ON m.id = b.material_id
         LEFT JOIN person p ON p.id = b.operator_id
         LEFT JOIN recipe_version rv ON rv.id = b.recipe_version_id LEFT JOIN recipe r ON r.id = rv.recipe_id
         WHERE b.voided_at IS NULL
         ORDER BY b.id",
    )?;
    let rows = st.query_map([], |r| {
        Ok(BatchFactRow {
            id: r.get(0)?,
            name: r.get(1)?,
            material: r.get(2)?,
            status: r.get(3)?,
            operator: r.get(4)?,
            started_at: r.get(5)?,
            recipe: r.get(6)?,
            notes: r.get(7)?,
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// One current (not superseded) value of a batch's product aliquot.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ProductValueRow {
    pub batch_id: i64,
    pub quantity: String,
    pub value: Option<f64>,
}

/// The current values of every batch's product aliquot (the `batch_product` view's rule: the
/// marked product, else the last of the growth series, void aliquots left out), for the
/// quantities search filters on.
pub fn product_values(db: &Db) -> Result<Vec<ProductValueRow>> {
    let mut st = db.prepare(
        "SELECT p.batch_id, d.quantity, d.value FROM batch_product p
         JOIN derived_value d ON d.aliquot_id = p.aliquot_id AND d.superseded_at IS NULL
         WHERE d.quantity IN ('diameter_nm','first_exciton_nm','pl_peak_nm','pl_fwhm_nm','size_dispersion_pct','qy','concentration_molar')",
    )?;
    let rows = st.query_map([], |r| {
        Ok(ProductValueRow {
            batch_id: r.get(0)?,
            quantity: r.get(1)?,
            value: r.get(2)?,
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// A batch's stock on the shelf: the volume left in its vials that are not disposed, and the
/// locations they stand in.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct BatchStockRow {
    pub batch_id: i64,
    pub stock_ml: f64,
    pub locations: Vec<String>,
}

/// The stock of every batch with a vial that is not disposed.
pub fn batch_stock(db: &Db) -> Result<Vec<BatchStockRow>> {
    let mut st = db.prepare(
        "SELECT v.batch_id, SUM(v.volume_ml), GROUP_CONCAT(DISTINCT l.name) FROM vial v JOIN location l ON l.id = v.location_id
         WHERE v.status <> 'disposed' GROUP BY v.batch_id",
    )?;
    let rows = st.query_map([], |r| {
        let locations: Option<String> = r.get(2)?;
        Ok(BatchStockRow {
            batch_id: r.get(0)?,
            stock_ml: r.get::<_, Option<f64>>(1)?.unwrap_or(0.0),
            locations: locations
                .map(|l| l.split(',').map(String::from).collect())
                .unwrap_or_default(),
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// The names of a batch's recipe reagents, space-separated, so a reagent's name finds the
/// batches made with it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct BatchReagentsRow {
    pub batch_id: i64,
    pub reagents: String,
}

/// The reagent names of every batch that has a recipe with reagents.
pub fn batch_reagents(db: &Db) -> Result<Vec<BatchReagentsRow>> {
    let mut st = db.prepare(
        "SELECT b.id, GROUP_CONCAT(g.name, ' ') FROM batch b JOIN recipe_reagent rr ON rr.recipe_version_id = b.recipe_version_id
         JOIN reagent g ON g.id = rr.reagent_id GROUP BY b.id",
    )?;
    let rows = st.query_map([], |r| {
        Ok(BatchReagentsRow {
            batch_id: r.get(0)?,
            reagents: r.get::<_, Option<String>>(1)?.unwrap_or_default(),
        })
    })?;
    Ok(rows.collect::<rusqlite::Result<_>>()?)
}

/// Remembers one numeric bound of a search (a field and its value), counting repeats, in the
/// caller's transaction.
pub fn record_search_bound(tx: &Db, field: &str, value: f64) -> Result<()> {
    tx.execute(
        "INSERT INTO search_threshold (field, value, last_used) VALUES (?1, ?2, ?3)
         ON CONFLICT(field, value) DO UPDATE SET uses = uses + 1, last_used = excluded.last_used",
        params![field, value, super::now()],
    )?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_repeated_bound_is_counted_not_duplicated() -> Result<()> {
        let mut store = crate::store::Store::in_memory("tester")?;
        store.write(|tx, _| {
            record_search_bound(tx, "size", 3.5)?;
            record_search_bound(tx, "size", 3.5)?;
            record_search_bound(tx, "qy", 0.5)
        })?;
        let rows: Vec<(String, f64, i64)> = {
            let mut st = store
                .conn
                .prepare("SELECT field, value, uses FROM search_threshold ORDER BY field")?;
            st.query_map([], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?
                .collect::<rusqlite::Result<_>>()?
        };
        assert_eq!(rows, vec![("qy".into(), 0.5, 1), ("size".into(), 3.5, 2)]);
        Ok(())
    }

    #[test]
    fn an_empty_lab_has_no_facts() -> Result<()> {
        let store = crate::store::Store::in_memory("tester")?;
        assert!(live_batches(&store.conn)?.is_empty());
        assert!(product_values(&store.conn)?.is_empty());
        assert!(batch_stock(&store.conn)?.is_empty());
        assert!(batch_reagents(&store.conn)?.is_empty());
        Ok(())
    }
}
