//! The grammar of `recipe`: recipes and their versions (`commands/recipe.rs` runs it).

use super::JsonFlag;
use clap::Subcommand;

#[derive(Debug, Subcommand)]
pub enum RecipeCmd {
    /// A new recipe, or a new version of one: from a JSON file or from flags.
    #[command(after_help = examples!(
        "cuvette recipe new \"ZnS shell by SILAR\" --material CdSe/ZnS \\\n      --reagent \"zinc stearate=0.4 mmol:precursor\" --reagent \"sulfur=0.4 mmol:precursor\" \\\n      --step \"anneal@240 C/20 min\"",
    ))]
    New {
        /// The recipe's name; an existing name gets a new version.
        name: String,
        /// The material it makes.
        #[arg(long)]
        material: String,
        /// "REAGENT=AMOUNT UNIT[:ROLE]", e.g. "cadmium oxide=0.2 mmol:precursor".
        #[arg(long = "reagent")]
        reagents: Vec<String>,
        /// "ACTION[@TEMP C][/MINUTES min]", e.g. "inject Se-TOP@260 C/5 min".
        #[arg(long = "step")]
        steps: Vec<String>,
        /// Free notes kept with this version.
        #[arg(long)]
        notes: Option<String>,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Show a recipe: its reagents, steps and hazards.
    #[command(after_help = examples!("cuvette recipe show \"CdSe hot injection (oleate/TOP-Se)\" --version 1"))]
    Show {
        /// The recipe's name.
        name: String,
        /// Which version (default: the newest).
        #[arg(long)]
        version: Option<i64>,
        /// Print the recipe as JSON.
        #[arg(long)]
        json: bool,
    },
    /// List the recipes.
    #[command(after_help = examples!("cuvette recipe list"))]
    List(JsonFlag),
    /// Mean and spread of the product values of a recipe version's batches.
    #[command(after_help = examples!("cuvette recipe stats \"CdSe hot injection (oleate/TOP-Se)\" --json"))]
    Stats {
        /// The recipe's name.
        name: String,
        /// Which version (default: the newest).
        #[arg(long)]
        version: Option<i64>,
        /// Print the statistics as JSON.
        #[arg(long)]
        json: bool,
    },
}
