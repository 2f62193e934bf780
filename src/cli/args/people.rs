//! The grammar of the register: `person`, `material`, `reagent` and `location`, the names and
//! places the lab's records refer to (`commands/people.rs` runs them).

use super::{JsonFlag, words};
use crate::vocab::LocationKind;
use clap::Subcommand;

#[derive(Debug, Subcommand)]
pub enum PersonCmd {
    /// Add a person to the lab.
    #[command(after_help = examples!(
        "cuvette person add \"Juno Achterberg\" --email juno@harrow-lane.example",
        "cuvette person add \"Odile Brandt\" --json",
    ))]
    Add {
        /// The person's full name, as batches, vials and the audit log will show it.
        name: String,
        /// An e-mail address kept with the name.
        #[arg(long)]
        email: Option<String>,
        /// Print the new entry as JSON (as `list --json` gives it, with its id).
        #[arg(long)]
        json: bool,
    },
    /// List the people of the lab.
    #[command(after_help = examples!("cuvette person list", "cuvette person list --json"))]
    List(JsonFlag),
}

#[derive(Debug, Subcommand)]
pub enum MaterialCmd {
    /// Add a material (a core, or a core/shell).
    #[command(after_help = examples!("cuvette material add CdSe/CdS --core CdSe --shell CdS"))]
    Add {
        /// The material's name as batches give it (CdSe/ZnS).
        name: String,
        /// The core whose sizing curve applies (CdSe for CdSe/ZnS).
        #[arg(long)]
        core: String,
        /// The shell material of a core/shell crystal (ZnS for CdSe/ZnS).
        #[arg(long)]
        shell: Option<String>,
        /// Print the new entry as JSON (as `list --json` gives it, with its id).
        #[arg(long)]
        json: bool,
    },
    /// List the materials and their sizing curves.
    #[command(after_help = examples!("cuvette material list", "cuvette material list --json"))]
    List(JsonFlag),
}

#[derive(Debug, Subcommand)]
pub enum ReagentCmd {
    /// Add a reagent with its formula and hazard statements.
    #[command(after_help = examples!(
        "cuvette reagent add \"cadmium myristate\" --formula \"Cd(C14H27O2)2\" --hazard H350 --hazard H410",
    ))]
    Add {
        /// The reagent's name as recipes give it.
        name: String,
        /// Its chemical formula (used for molar masses and yields).
        #[arg(long)]
        formula: Option<String>,
        /// Its CAS registry number.
        #[arg(long)]
        cas: Option<String>,
        /// GHS hazard statements, e.g. --hazard H350 --hazard H410.
        #[arg(long = "hazard")]
        hazards: Vec<String>,
        /// It ignites in air.
        #[arg(long)]
        pyrophoric: bool,
        /// Print the new entry as JSON (as `list --json` gives it, with its id).
        #[arg(long)]
        json: bool,
    },
    /// List the reagents and their hazard statements.
    #[command(after_help = examples!("cuvette reagent list", "cuvette reagent list --json"))]
    List(JsonFlag),
}

#[derive(Debug, Subcommand)]
pub enum LocationCmd {
    /// Add a storage location.
    #[command(after_help = examples!("cuvette location add \"Fridge F3\" --kind fridge --position \"room 3.16, top shelf\""))]
    Add {
        /// The location's name, as vials will show it.
        name: String,
        /// freezer, fridge, glovebox, shelf or cabinet.
        #[arg(long, value_parser = words::<LocationKind>(), hide_possible_values = true)]
        kind: LocationKind,
        /// Where it is (room, shelf, rack).
        #[arg(long)]
        position: Option<String>,
        /// Print the new entry as JSON (as `list --json` gives it, with its id).
        #[arg(long)]
        json: bool,
    },
    /// List the storage locations.
    #[command(after_help = examples!("cuvette location list", "cuvette location list --json"))]
    List(JsonFlag),
}
