//! The grammar of the commands that keep or hand over the record: `check`, `demo`, `handover`
//! and `restore` (`commands/records.rs` runs them).

use clap::Args;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Recompute every derived value, not a sample, and compare.
    #[arg(long)]
    pub deep: bool,
    /// Print the findings as JSON (`ok`, `problems`, ...).
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Build an invented lab of N batches for load tests instead of the 25-batch demo.
    #[arg(long)]
    pub scale: Option<usize>,
    /// Do not open the UI afterwards.
    #[arg(long)]
    pub no_ui: bool,
    /// Rebuild even a demo lab that holds work logged after the demo was built.
    #[arg(long)]
    pub force: bool,
}

#[derive(Debug, Args)]
pub struct HandoverArgs {
    /// The person leaving.
    #[arg(long)]
    pub from: String,
    /// The person taking over.
    #[arg(long)]
    pub to: String,
    /// The folder the pack is written to (default: handover-FROM-to-TO).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Print what was handed over as JSON.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct RestoreArgs {
    /// The backup file to restore from.
    pub file: PathBuf,
    /// Take a backup whose records are sound but whose derived values are out of date, and
    /// recompute every value after restoring it.
    #[arg(long)]
    pub recompute: bool,
}
