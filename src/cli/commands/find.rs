//! Looking things up in the lab: `find` over batch facts with the query language, and `log`,
//! the audit trail.

use super::open_read;
use crate::cli::args::*;
use crate::cli::output::{json, line, num};
use crate::store::model;
use anyhow::{Result, bail};
use std::process::ExitCode;

pub(super) fn find(cli: &Cli, a: &FindArgs) -> Result<ExitCode> {
    let q = a.query.join(" ");
    let mut store = open_read(cli)?;
    let parsed = crate::search::parse(&q)?;
    let hits = store.read(|tx| crate::search::run(tx, &parsed))?;
    // Remember the numeric bounds people search by, for recompute previews; queued beside the
    // lab, since a search takes no write lock (the next write files them).
    if let Some(p) = &store.path {
        crate::store::search_bounds::queue(p, &crate::search::bounds_of(&parsed));
    }
    if a.json {
        json(&hits)?;
    } else {
        for h in &hits {
            line(&format!(
                "{:>5}  {:<28} {:<9} D {:>5} nm  peak {:>6}  PL {:>6}  QY {:>5}  stock {:>6.2} mL  {}",
                h.id,
                h.name,
                h.material,
                num(h.diameter_nm, 2),
                num(h.first_exciton_nm, 1),
                num(h.pl_peak_nm, 1),
                num(h.qy, 2),
                h.stock_ml,
                h.status
            ))?;
        }
        if hits.is_empty() {
            line("no batches match")?;
        }
    }
    Ok(ExitCode::SUCCESS)
}

pub(super) fn log(cli: &Cli, a: &LogArgs) -> Result<()> {
    if a.limit < 1 {
        bail!("--limit must be 1 or more, got {}", a.limit);
    }
    let mut store = open_read(cli)?;
    let rows = store.read(|tx| model::audit_log(tx, a.entity.as_deref(), a.limit))?;
    if a.json {
        return json(&rows);
    }
    for r in rows {
        // One row, one line, whatever an old row's fields hold.
        let flat = |t: &str| t.replace(['\n', '\r'], " ");
        line(&format!(
            "{:>6} {} {:<10} {:<12} {:>6} {}",
            r.id,
            r.at,
            flat(&r.who),
            flat(&r.entity),
            r.entity_id.map(|i| i.to_string()).unwrap_or_default(),
            r.action
        ))?;
    }
    Ok(())
}
