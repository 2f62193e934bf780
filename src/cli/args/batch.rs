//! The grammar of `batch`: logging, listing, showing, editing and relating batches
//! (`commands/batch.rs` runs it).

use super::words;
use crate::vocab::{BatchRelation, BatchStatus};
use clap::{Args, Subcommand};

#[derive(Debug, Subcommand)]
pub enum BatchCmd {
    /// Start a new batch.
    #[command(after_help = examples!(
        "cuvette batch new --material CdSe --name CS-261030-z \\\n      --recipe \"CdSe hot injection (oleate/TOP-Se)\" --operator \"Juno Achterberg\" --json",
        "cuvette batch new --material CdSe/ZnS --name CSZ-261031-z --parent 19 --relation shell",
    ))]
    New(BatchNewArgs),
    /// List the batches.
    #[command(after_help = examples!("cuvette batch list", "cuvette batch list --material PbS --status done --json"))]
    List(BatchListArgs),
    /// Show a batch: its aliquots with their derived values, growth, product, vials and hazards.
    #[command(after_help = examples!("cuvette batch show 1", "cuvette batch show 1 --json"))]
    Show {
        /// The batch's id.
        id: i64,
        /// Print the batch as JSON (README's contract lists the keys).
        #[arg(long)]
        json: bool,
    },
    /// Change a batch's name, notes, operator, product aliquot, calibration pin or parent.
    #[command(after_help = examples!(
        "cuvette batch edit 24 --append-notes \"injected at 262 C, 2 min late\"",
        "cuvette batch edit 5 --parent 1",
    ))]
    Edit(BatchEditArgs),
    /// Set a batch's status: planned, growing, done, failed or archived.
    #[command(after_help = examples!("cuvette batch set-status 24 done"))]
    SetStatus {
        /// The batch's id.
        id: i64,
        /// planned, growing, done, failed or archived.
        #[arg(value_parser = words::<BatchStatus>(), hide_possible_values = true)]
        status: BatchStatus,
        /// Print the batch as JSON.
        #[arg(long)]
        json: bool,
    },
    /// A new batch with the same material and recipe version as an earlier one.
    #[command(after_help = examples!("cuvette batch repeat 19 --name CS-261101-z"))]
    Repeat {
        /// The batch to repeat.
        id: i64,
        /// The new batch's name (default: the old one's with " (repeat)").
        #[arg(long)]
        name: Option<String>,
        /// Print the new batch as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Void a batch logged by mistake: it stays in the record, marked, and counts for nothing.
    #[command(after_help = examples!("cuvette batch void 4 --why \"logged twice\""))]
    Void {
        /// The batch's id.
        id: i64,
        /// Why it is voided (kept in the audit log).
        #[arg(long)]
        why: String,
        /// Print the batch as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Undo a batch's void.
    #[command(after_help = examples!("cuvette batch reinstate 4 --why \"the void was meant for batch 13\""))]
    Reinstate {
        /// The batch's id.
        id: i64,
        /// Why it is reinstated (kept in the audit log).
        #[arg(long)]
        why: String,
        /// Print the batch as JSON.
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct BatchNewArgs {
    /// The material it makes (CdSe, CdSe/ZnS, PbS, ...).
    #[arg(long)]
    pub material: String,
    /// The batch's name, as written on the flask and the vials.
    #[arg(long)]
    pub name: String,
    /// The recipe followed, by name.
    #[arg(long)]
    pub recipe: Option<String>,
    /// Which version of the recipe (default: the newest).
    #[arg(long)]
    pub recipe_version: Option<i64>,
    /// Who ran it (default: who the write is attributed to, when a person of the lab).
    #[arg(long)]
    pub operator: Option<String>,
    /// When the run started (YYYY-MM-DD or YYYY-MM-DD HH:MM); default now.
    #[arg(long)]
    pub started: Option<String>,
    /// planned, growing, done, failed or archived (default: planned).
    #[arg(long, value_parser = words::<BatchStatus>(), hide_possible_values = true)]
    pub status: Option<BatchStatus>,
    /// The batch this one was made from (a core for a shell, a crude batch for a fraction).
    #[arg(long)]
    pub parent: Option<i64>,
    /// shell, fraction or repeat.
    #[arg(long, value_parser = words::<BatchRelation>(), hide_possible_values = true)]
    pub relation: Option<BatchRelation>,
    /// Free notes.
    #[arg(long)]
    pub notes: Option<String>,
    /// Print the new batch as JSON (with its `id`).
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct BatchListArgs {
    /// Only batches with this status (planned, growing, done, failed, archived).
    #[arg(long, value_parser = words::<BatchStatus>(), hide_possible_values = true)]
    pub status: Option<BatchStatus>,
    /// Only batches of this material.
    #[arg(long)]
    pub material: Option<String>,
    /// Print the batches as a JSON array.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct BatchEditArgs {
    /// The batch's id.
    pub id: i64,
    /// A new name.
    #[arg(long)]
    pub name: Option<String>,
    /// Replace the notes.
    #[arg(long)]
    pub notes: Option<String>,
    /// Add a line to the notes.
    #[arg(long)]
    pub append_notes: Option<String>,
    /// Who ran it.
    #[arg(long)]
    pub operator: Option<String>,
    /// Mark an aliquot as the batch's product.
    #[arg(long)]
    pub product_aliquot: Option<i64>,
    /// Pin the batch to a calibration version.
    #[arg(long)]
    pub pin_calibration: Option<i64>,
    /// Let the batch follow the current calibration again.
    #[arg(long)]
    pub unpin: bool,
    /// The batch this one was made from; a shelled batch's aliquots are derived again with its
    /// product as their core.
    #[arg(long)]
    pub parent: Option<i64>,
    /// Print the batch as JSON.
    #[arg(long)]
    pub json: bool,
}
