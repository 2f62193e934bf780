//! The grammar of `vial` and `shelf`: the vials, their draws, moves and concentrations, and the
//! shelf's stock (`commands/vial.rs` runs them).

use clap::{Args, Subcommand};
use std::path::PathBuf;

#[derive(Debug, Subcommand)]
pub enum VialCmd {
    /// Fill a new vial from a batch.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!("cuvette vial new 24 --ml 4 --location \"Fridge F2\" --owner \"Juno Achterberg\"")
    )]
    New {
        /// The batch it holds.
        batch_id: i64,
        /// Volume, mL.
        #[arg(long)]
        ml: f64,
        /// Where it is kept, by the location's name.
        #[arg(long)]
        location: String,
        /// Its label (default: B, the batch's id, and a number: B1-4).
        #[arg(long)]
        label: Option<String>,
        /// The solvent the crystals are dispersed in.
        #[arg(long, default_value = "hexane")]
        solvent: String,
        /// Where in the location (shelf, rack, box).
        #[arg(long)]
        position: Option<String>,
        /// Whose vial it is (default: who the write is attributed to, when a person of the lab).
        #[arg(long)]
        owner: Option<String>,
        /// Concentration of the vial's solution, mol/L (default: from the batch's product).
        #[arg(long)]
        conc: Option<f64>,
        /// Print the vial as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Take solution out of a vial.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!("cuvette vial draw CS-260506-a-V1 --ml 0.5 --why \"TEM grid\"")
    )]
    Draw {
        /// The vial, by id or label.
        vial: String,
        /// Volume drawn, mL.
        #[arg(long)]
        ml: f64,
        /// What it was drawn for (kept in the vial's events).
        #[arg(long)]
        why: Option<String>,
        /// Print the vial after the draw as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Move a vial to another location.
    #[command(after_help = examples!("cuvette vial move CS-260506-a-V1 --to \"Freezer F1\" --position \"rack 2\""))]
    Move {
        /// The vial, by id or label.
        vial: String,
        /// The location it goes to, by name.
        #[arg(long)]
        to: String,
        /// Where in that location.
        #[arg(long)]
        position: Option<String>,
        /// Why it moved (kept in the vial's events).
        #[arg(long)]
        why: Option<String>,
        /// Print the vial as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Dispose of a vial: it stays in the record, marked disposed.
    #[command(after_help = examples!("cuvette vial dispose CS-260506-a-V2 --why \"aggregated, no longer dispersible\""))]
    Dispose {
        /// The vial, by id or label.
        vial: String,
        /// Why it was disposed of (kept in the vial's events).
        #[arg(long)]
        why: String,
        /// Print the vial as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Put a disposed vial back (a disposal logged by mistake).
    #[command(after_help = examples!("cuvette vial reinstate CS-260506-a-V2 --why \"disposed the wrong vial\""))]
    Reinstate {
        /// The vial, by id or label.
        vial: String,
        /// Why it is reinstated (kept in the vial's events).
        #[arg(long)]
        why: String,
        /// Print the vial as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Show a vial with its concentration and events.
    #[command(after_help = examples!("cuvette vial show CS-260506-a-V1", "cuvette vial show 1 --json"))]
    Show {
        /// The vial, by id or label.
        vial: String,
        /// Print the vial as JSON (with `events`).
        #[arg(long)]
        json: bool,
    },
    /// Measure a vial's absorbance: the spectrum is kept with the vial and sets its concentration.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!("cuvette vial measure CS-260506-a-V1 --abs demo-db/samples/washed/abs_washed.csv --dilution 50")
    )]
    Measure {
        /// The vial, by id or label.
        vial: String,
        /// Absorbance spectrum file.
        #[arg(long)]
        abs: PathBuf,
        /// Dilution factor of the measured solution (1 or more).
        #[arg(long, default_value_t = 1.0)]
        dilution: f64,
        /// Path length of the cuvette, cm.
        #[arg(long, default_value_t = 1.0)]
        path_cm: f64,
        /// Print the vial as JSON.
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct ShelfArgs {
    /// Include disposed vials.
    #[arg(long)]
    pub all: bool,
    /// Only vials with less than this many mL left.
    #[arg(long)]
    pub low: Option<f64>,
    /// Print the vials as a JSON array.
    #[arg(long)]
    pub json: bool,
}
