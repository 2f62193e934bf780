//! The command-line grammar. Names here are the contract scripts rely on (see README).
//! Every command carries at least one example in its help, written with the invented demo
//! lab's names (`demo-db/lab.json`: batch 1 is CS-260506-a, its first vial CS-260506-a-V1),
//! and every argument its own line of help; `tests/cli_conventions.rs` walks the tree and
//! holds each one to that. Completions and the man page are generated from this grammar.

use crate::vocab::{BatchRelation, BatchStatus, LocationKind, Vocabulary};
use clap::builder::{PossibleValue, TypedValueParser};
use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// The value parser of one vocabulary's words (`crate::vocab`): help, completions and the man
/// page list the words, and an unknown word is a usage error (exit 2) whose one line names the
/// argument, the word and the valid ones, with nothing written.
#[derive(Debug, Clone, Copy)]
pub struct Words<T>(std::marker::PhantomData<T>);

/// [`Words`] for the vocabulary `T`, as `value_parser = words::<BatchStatus>()` asks for it.
pub fn words<T>() -> Words<T> {
    Words(std::marker::PhantomData)
}

impl<T: Vocabulary + Clone + Send + Sync> TypedValueParser for Words<T> {
    type Value = T;

    fn parse_ref(
        &self,
        _cmd: &clap::Command,
        arg: Option<&clap::Arg>,
        value: &std::ffi::OsStr,
    ) -> Result<T, clap::Error> {
        let text = value.to_string_lossy();
        text.parse::<T>().map_err(|e| {
            let arg = arg.map(|a| format!(" for '{a}'")).unwrap_or_default();
            // Raw, so clap adds no usage block: the refusal stays one line.
            clap::Error::raw(
                clap::error::ErrorKind::InvalidValue,
                format!("invalid value{arg}: {e}\n"),
            )
        })
    }

    fn possible_values(&self) -> Option<Box<dyn Iterator<Item = PossibleValue> + '_>> {
        Some(Box::new(T::WORDS.iter().map(PossibleValue::new)))
    }
}

/// `examples!("cuvette a", "cuvette b")`: the help's closing block of example invocations.
macro_rules! examples {
    ($($line:expr),+ $(,)?) => {
        concat!("Examples:\n", $("  ", $line, "\n"),+)
    };
}

const ROOT_EXAMPLES: &str = examples!(
    "cuvette --db demo.db demo              # build the invented demo lab and open it",
    "cuvette --db demo.db batch list",
    "cuvette --db demo.db find 'CdSe size 3 to 3.5 stock' --json",
    "cuvette completions bash > ~/.local/share/bash-completion/completions/cuvette",
);

/// `cuvette --help`: the examples, then the exit codes from their one table.
fn root_long_help() -> String {
    format!("{ROOT_EXAMPLES}\n{}", super::exit::help_text())
}

#[derive(Debug, Parser)]
#[command(
    name = "cuvette",
    version,
    about = "A lab record for colloidal nanocrystal synthesis: batches, aliquot spectra, derived sizes and yields, and the shelf of vials.",
    after_help = ROOT_EXAMPLES,
    after_long_help = root_long_help()
)]
pub struct Cli {
    /// The lab database (default: $CUVETTE_DB, else lab.db in the platform's data directory).
    /// An empty value counts as not given.
    #[arg(long, global = true, value_parser = clap::builder::ValueParser::os_string())]
    pub db: Option<std::ffi::OsString>,
    /// Who the writes are attributed to (default: $CUVETTE_USER, else the name set with
    /// `cuvette whoami --set`, else the login name).
    #[arg(long = "as", global = true, value_name = "PERSON")]
    pub actor: Option<String>,
    /// Let a write create the lab file when it does not exist yet (reads never create one).
    #[arg(long, global = true)]
    pub create: bool,
    #[command(subcommand)]
    pub cmd: Option<Cmd>,
}

#[derive(Debug, Subcommand)]
pub enum Cmd {
    /// Create an empty lab database.
    #[command(after_help = examples!("cuvette --db harrow-lane.db init"))]
    Init,
    /// Build the invented demo lab into the database file, then open the UI in a terminal.
    #[command(after_help = examples!(
        "cuvette --db demo.db demo",
        "cuvette --db load-test.db demo --scale 2000 --no-ui",
    ))]
    Demo(DemoArgs),
    /// People of the lab.
    #[command(subcommand, after_help = examples!("cuvette person list"))]
    Person(PersonCmd),
    /// Materials and the sizing curves that apply to them.
    #[command(subcommand, after_help = examples!("cuvette material list --json"))]
    Material(MaterialCmd),
    /// Reagents and their GHS hazard statements.
    #[command(subcommand, after_help = examples!("cuvette reagent list"))]
    Reagent(ReagentCmd),
    /// Versioned recipes.
    #[command(subcommand, after_help = examples!("cuvette recipe show \"CdSe hot injection (oleate/TOP-Se)\""))]
    Recipe(RecipeCmd),
    /// Synthesis batches.
    #[command(subcommand, after_help = examples!("cuvette batch list", "cuvette batch show 1"))]
    Batch(BatchCmd),
    /// Aliquots of a batch and their spectra.
    #[command(subcommand, after_help = examples!("cuvette aliquot show 3"))]
    Aliquot(AliquotCmd),
    /// Storage locations.
    #[command(subcommand, after_help = examples!("cuvette location list"))]
    Location(LocationCmd),
    /// Vials: new, draw, move, dispose, show.
    #[command(subcommand, after_help = examples!("cuvette vial show CS-260506-a-V1"))]
    Vial(VialCmd),
    /// The shelf: every vial grouped by location.
    #[command(after_help = examples!("cuvette shelf", "cuvette shelf --low 1.5 --json"))]
    Shelf(ShelfArgs),
    /// The audit log, newest first.
    #[command(after_help = examples!("cuvette log --entity vial --limit 20"))]
    Log(LogArgs),
    /// Analyse spectrum files (or folders of them) without touching the database.
    #[command(after_help = examples!(
        "cuvette analyze demo-db/samples/growth --kind abs --material CdSe",
        "cuvette analyze demo-db/samples/growth/pl_20min.csv --kind pl --json",
    ))]
    Analyze(AnalyzeArgs),
    /// Show what cuvette reads from one spectrum file.
    #[command(after_help = examples!(
        "cuvette read demo-db/samples/formats/plain.csv",
        "cuvette read demo-db/samples/formats/side_by_side.csv --column 2 --json",
    ))]
    Read(ReadArgs),
    /// Diameter from a first-exciton wavelength.
    #[command(after_help = examples!("cuvette size --material CdSe --peak-nm 560", "cuvette size --material PbS --peak-nm 1200 --json"))]
    Size(SizeArgs),
    /// Relative photoluminescence quantum yield against a reference.
    #[command(after_help = examples!(
        "cuvette qy --sample-integral 41000 --sample-abs 0.04 --ref-integral 52000 --ref-abs 0.05 \\\n      --ref-dye \"rhodamine 6G\" --solvent hexane --ref-solvent ethanol",
        "cuvette qy gradient 101 102 103 104 --json",
    ))]
    Qy(QyArgs),
    /// Shell growth: precursor per monolayer and the expected diameter.
    #[command(after_help = examples!("cuvette shell-plan --shell ZnS --core-nm 3.1 --crystals-umol 0.05 --layers 3"))]
    ShellPlan(ShellPlanArgs),
    /// Calibrations: list, show, history and changes (each change is a new version).
    #[command(subcommand, after_help = examples!("cuvette calib show", "cuvette calib history"))]
    Calib(CalibCmd),
    /// Recompute derived values whose inputs or calibration changed.
    #[command(after_help = examples!("cuvette recompute --dry-run", "cuvette recompute --json"))]
    Recompute(RecomputeArgs),
    /// Show how each derived value of an aliquot came about.
    #[command(after_help = examples!("cuvette explain 3", "cuvette explain 3 --json"))]
    Explain(ExplainArgs),
    /// Search batches with the query language (see README).
    #[command(after_help = examples!(
        "cuvette find 'CdSe size 3 to 3.5 qy >= 40% stock'",
        "cuvette find 'by \"Wren Halloway\" date 2026-05 status done' --json",
    ))]
    Find(FindArgs),
    /// Hand a person's vials and open batches to another, and write a handover pack.
    #[command(after_help = examples!("cuvette handover --from \"Wren Halloway\" --to \"Juno Achterberg\" --out handover/"))]
    Handover(HandoverArgs),
    /// Draw a batch's growth series as SVG.
    #[command(after_help = examples!("cuvette plot 1 --out CS-260506-a.svg"))]
    Plot(PlotArgs),
    /// Export every batch, aliquot and current derived value.
    #[command(after_help = examples!("cuvette export --format csv --out harrow-lane-export/"))]
    Export(ExportArgs),
    /// Check the database: SQLite integrity, foreign keys, cuvette's own invariants, spectrum
    /// data hashes, the audit log, and a sample of derived values recomputed.
    #[command(after_help = examples!("cuvette check", "cuvette check --deep --json"))]
    Check(CheckArgs),
    /// Move a spectrum to another aliquot (a file logged against the wrong one).
    #[command(subcommand, after_help = examples!("cuvette spectrum move 12 --to 13 --why \"logged against the 5 min aliquot\""))]
    Spectrum(SpectrumCmd),
    /// Who cuvette attributes your writes to; `--set NAME` remembers a name for this account.
    #[command(after_help = examples!("cuvette whoami", "cuvette whoami --set \"Juno Achterberg\""))]
    Whoami(WhoamiArgs),
    /// Copy the database through SQLite's online backup.
    #[command(after_help = examples!("cuvette backup --out harrow-lane-2026-10-21.db"))]
    Backup(BackupArgs),
    /// Replace the database with a backup (the replaced file is kept).
    #[command(after_help = examples!("cuvette restore harrow-lane-2026-10-21.db"))]
    Restore(RestoreArgs),
    /// Import a folder of spectrum exports into a batch as aliquots, all or nothing.
    #[command(after_help = examples!(
        "cuvette import 24 demo-db/samples/growth/ --dilution 20 --pl-dilution 100 --excitation-nm 480",
    ))]
    Import(ImportArgs),
    /// Import many batches' folders from a CSV manifest; each batch all or nothing.
    #[command(after_help = examples!("cuvette import-manifest harrow-lane-runs.csv --json"))]
    ImportManifest(ManifestArgs),
    /// A shell completion script on stdout, generated from this command line.
    #[command(after_help = examples!(
        "cuvette completions bash > ~/.local/share/bash-completion/completions/cuvette",
        "cuvette completions zsh > ~/.zfunc/_cuvette",
        "cuvette completions fish > ~/.config/fish/completions/cuvette.fish",
    ))]
    Completions(CompletionsArgs),
    /// The man page (roff) on stdout, or one page per command into a folder.
    #[command(after_help = examples!(
        "cuvette man | man -l -",
        "cuvette man --dir ~/.local/share/man/man1",
    ))]
    Man(ManArgs),
}

#[derive(Debug, Args)]
pub struct CompletionsArgs {
    /// The shell to complete for.
    #[arg(value_enum, value_name = "SHELL")]
    pub shell: clap_complete::Shell,
}

#[derive(Debug, Args)]
pub struct ManArgs {
    /// Write cuvette.1 and a page per subcommand (cuvette-batch-list.1, ...) into this folder,
    /// made when missing, instead of the one page on stdout.
    #[arg(long, value_name = "DIR")]
    pub dir: Option<PathBuf>,
}

/// Which spectrum of a file holding several: the same two options wherever a file is read.
#[derive(Debug, Args, Clone, Default)]
pub struct FileChoice {
    /// A file with several sample columns: the one to read, by its header or its number among
    /// the sample columns (from 1).
    #[arg(long, value_name = "NAME|N")]
    pub column: Option<String>,
    /// A workbook (.xlsx, .ods): the sheet to read, by its name or number (from 1).
    #[arg(long, value_name = "NAME|N")]
    pub sheet: Option<String>,
}

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Recompute every derived value, not a sample, and compare.
    #[arg(long)]
    pub deep: bool,
    /// Print the findings as JSON (`ok`, `problems`, ...).
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Subcommand)]
pub enum SpectrumCmd {
    /// Move a spectrum to another aliquot; both aliquots are recomputed.
    #[command(after_help = examples!("cuvette spectrum move 12 --to 13 --why \"logged against the 5 min aliquot\""))]
    Move {
        /// The spectrum's id (as `aliquot show` lists it).
        spectrum: i64,
        /// The aliquot it belongs to.
        #[arg(long = "to")]
        to_aliquot: i64,
        /// Why it moves (kept in the audit log).
        #[arg(long)]
        why: String,
        /// Print the result as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Correct the cuvette a spectrum was measured in (its own path length and dilution, as a
    /// PL cuvette's); the aliquot's values are recomputed.
    #[command(after_help = examples!("cuvette spectrum cuvette 12 --path-cm 0.2 --why \"the PL was read in the 2 mm cell\""))]
    Cuvette {
        /// The spectrum's id (as `aliquot show` lists it).
        spectrum: i64,
        /// Path length of the cuvette, cm.
        #[arg(long)]
        path_cm: Option<f64>,
        /// The factor by which the sample in this cuvette was diluted (1 or more).
        #[arg(long)]
        dilution: Option<f64>,
        /// Why it is corrected (kept in the audit log).
        #[arg(long)]
        why: String,
        /// Print the result as JSON.
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args)]
pub struct WhoamiArgs {
    /// Remember NAME as who you are (for this OS account).
    #[arg(long)]
    pub set: Option<String>,
    /// Print the name and where it came from as JSON.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct JsonFlag {
    /// Print JSON.
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

// Parsed once per run: the size of a variant does not matter here.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Subcommand)]
pub enum AliquotCmd {
    /// Log an aliquot from its spectrum files; its values are derived at once.
    #[command(after_help = examples!(
        "cuvette aliquot add 24 --abs demo-db/samples/growth/abs_05min.csv --minutes 5 --dilution 20",
        "cuvette aliquot add 24 --stage washed --abs demo-db/samples/washed/abs_washed.csv \\\n      --pl demo-db/samples/washed/pl_washed.csv --excitation-nm 480 --dilution 20 --pl-dilution 100",
    ))]
    Add(AliquotAddArgs),
    /// Show an aliquot with its derived values and warnings.
    #[command(after_help = examples!("cuvette aliquot show 3", "cuvette aliquot show 3 --json"))]
    Show {
        /// The aliquot's id.
        id: i64,
        /// Print the aliquot as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Void an aliquot: it stays in the record, marked, and is left out of the growth series,
    /// product values, search, plots and the pack.
    #[command(after_help = examples!("cuvette aliquot void 3 --why \"cuvette was scratched\""))]
    Void {
        /// The aliquot's id.
        id: i64,
        /// Why it is voided (kept in the audit log).
        #[arg(long)]
        why: String,
        /// Print the aliquot as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Undo an aliquot's void.
    #[command(after_help = examples!("cuvette aliquot reinstate 3 --why \"the scratch was on the reference cell\""))]
    Reinstate {
        /// The aliquot's id.
        id: i64,
        /// Why it is reinstated (kept in the audit log).
        #[arg(long)]
        why: String,
        /// Print the aliquot as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Correct an aliquot's logged facts; what depends on them is recomputed.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!("cuvette aliquot edit 3 --minutes 2.5 --why \"timer started late\"")
    )]
    Edit {
        /// The aliquot's id.
        id: i64,
        /// Minutes after injection.
        #[arg(long)]
        minutes: Option<f64>,
        /// A stage label instead of minutes: crude, washed, ...
        #[arg(long)]
        stage: Option<String>,
        /// Dilution factor of the absorbance solution.
        #[arg(long)]
        dilution: Option<f64>,
        /// Path length of the absorbance cuvette, cm.
        #[arg(long)]
        path_cm: Option<f64>,
        /// The solvent the aliquot was measured in.
        #[arg(long)]
        solvent: Option<String>,
        /// Why it is corrected (kept in the audit log).
        #[arg(long)]
        why: String,
        /// Print the aliquot's new values as JSON.
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args, Clone)]
#[command(allow_negative_numbers = true)]
pub struct AliquotAddArgs {
    /// The batch the aliquot was taken from.
    pub batch_id: i64,
    /// Absorbance spectrum file.
    #[arg(long)]
    pub abs: Option<PathBuf>,
    /// Photoluminescence spectrum file.
    #[arg(long)]
    pub pl: Option<PathBuf>,
    /// PL excitation spectrum file.
    #[arg(long)]
    pub ple: Option<PathBuf>,
    /// Excitation wavelength of the PL spectrum, nm.
    #[arg(long)]
    pub excitation_nm: Option<f64>,
    /// Path length of the cuvette the PL was measured in, cm, when it is not the absorbance
    /// cuvette's (default: not recorded; 1 cm is taken, with a warning when --path-cm differs).
    #[arg(long, value_name = "CM")]
    pub pl_path_cm: Option<f64>,
    /// Dilution factor of the solution the PL was measured in (default: --dilution's).
    #[arg(long, value_name = "FACTOR")]
    pub pl_dilution: Option<f64>,
    /// Minutes after injection.
    #[arg(long)]
    pub minutes: Option<f64>,
    /// A stage label instead of minutes: crude, washed, ...
    #[arg(long)]
    pub stage: Option<String>,
    /// Dilution factor of the absorbance solution (1 or more).
    #[arg(long, default_value_t = 1.0)]
    pub dilution: f64,
    /// Path length of the absorbance cuvette, cm.
    #[arg(long, default_value_t = 1.0)]
    pub path_cm: f64,
    /// The solvent the aliquot was measured in.
    #[arg(long, default_value = "hexane")]
    pub solvent: String,
    /// x unit of the files when they do not say (nm, eV, 1/cm).
    #[arg(long)]
    pub x_unit: Option<String>,
    /// Column of x in delimited files (from 1).
    #[arg(long)]
    pub x_col: Option<usize>,
    /// Column of y in delimited files (from 1).
    #[arg(long)]
    pub y_col: Option<usize>,
    /// JCAMP-DX block to read: number (from 1) or title.
    #[arg(long)]
    pub block: Option<String>,
    #[command(flatten)]
    pub choice: FileChoice,
    /// A file of several spectra (sample columns, blocks) logged as a growth series: one aliquot
    /// each, timed by its column header when the header states a time ("20 s", "5 min"), else
    /// labelled with it. Give one of --abs, --pl, --ple.
    #[arg(long)]
    pub series: bool,
    /// Log a file whose SHA-256 is already in the batch (refused otherwise).
    #[arg(long)]
    pub again: bool,
    /// Keep a file as the kind given even when its header or values say otherwise.
    #[arg(long)]
    pub kind_as_is: bool,
    /// Print the new aliquot as JSON (with its `id`).
    #[arg(long)]
    pub json: bool,
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

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct LogArgs {
    /// Only entries about this kind of thing (batch, aliquot, vial, calibration, ...).
    #[arg(long)]
    pub entity: Option<String>,
    /// At most this many entries.
    #[arg(long, default_value_t = 50)]
    pub limit: i64,
    /// Print the entries as JSON.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum Kind {
    /// Absorbance.
    Abs,
    /// Photoluminescence.
    Pl,
    /// Photoluminescence excitation.
    Ple,
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct AnalyzeArgs {
    /// Files or folders of exports.
    #[arg(required = true)]
    pub paths: Vec<PathBuf>,
    /// What the files hold.
    #[arg(long, value_enum)]
    pub kind: Kind,
    /// Also size and count the crystals of this material.
    #[arg(long)]
    pub material: Option<String>,
    /// The sizing curve to size with (default: the material's shipped one), e.g. jasieniak2009.
    #[arg(long)]
    pub curve: Option<String>,
    /// Path length of the cuvette, cm.
    #[arg(long, default_value_t = 1.0)]
    pub path_cm: f64,
    /// Dilution factor of the measured solutions (1 or more).
    #[arg(long, default_value_t = 1.0)]
    pub dilution: f64,
    /// x unit of the files when they do not say (nm, eV, 1/cm).
    #[arg(long)]
    pub x_unit: Option<String>,
    /// Column of x in delimited files (from 1).
    #[arg(long)]
    pub x_col: Option<usize>,
    /// Column of y in delimited files (from 1).
    #[arg(long)]
    pub y_col: Option<usize>,
    #[command(flatten)]
    pub choice: FileChoice,
    /// JCAMP-DX block to read: number (from 1) or title.
    #[arg(long)]
    pub block: Option<String>,
    /// One JSON object per line per file.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ReadArgs {
    /// The spectrum file.
    pub file: PathBuf,
    /// JCAMP-DX block to read: number (from 1) or title.
    #[arg(long)]
    pub block: Option<String>,
    #[command(flatten)]
    pub choice: FileChoice,
    /// Print every spectrum the file holds (`--json`: an array), not one.
    #[arg(long)]
    pub all: bool,
    /// Column of x in delimited files (from 1).
    #[arg(long)]
    pub x_col: Option<usize>,
    /// Column of y in delimited files (from 1).
    #[arg(long)]
    pub y_col: Option<usize>,
    /// x unit of the file when it does not say (nm, eV, 1/cm).
    #[arg(long)]
    pub x_unit: Option<String>,
    /// Print what was read as JSON, with the points.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct SizeArgs {
    /// The core material (CdSe, CdTe, CdS, PbS, PbSe, InP).
    #[arg(long)]
    pub material: String,
    /// The first-exciton wavelength, nm.
    #[arg(long)]
    pub peak_nm: f64,
    /// The sizing curve (default: the material's shipped one): yu2003, jasieniak2009,
    /// moreels2009, moreels2007, almeida2023, brus or lab:NAME.
    #[arg(long)]
    pub curve: Option<String>,
    /// Print the diameter, its curve, range and source as JSON.
    #[arg(long)]
    pub json: bool,
}

/// `qy` alone is the single-point method on numbers or files; `qy gradient` works on aliquots
/// of the lab.
#[derive(Debug, Args)]
#[command(
    allow_negative_numbers = true,
    args_conflicts_with_subcommands = true,
    subcommand_negates_reqs = true
)]
pub struct QyArgs {
    #[command(subcommand)]
    pub method: Option<QyMethod>,
    /// Integrated PL of the sample (numbers form).
    #[arg(long)]
    pub sample_integral: Option<f64>,
    /// Absorbance of the sample at the excitation wavelength (numbers form).
    #[arg(long)]
    pub sample_abs: Option<f64>,
    /// Integrated PL of the reference (numbers form).
    #[arg(long)]
    pub ref_integral: Option<f64>,
    /// Absorbance of the reference at the excitation wavelength (numbers form).
    #[arg(long)]
    pub ref_abs: Option<f64>,
    /// Sample PL file (spectra form).
    #[arg(long)]
    pub sample_pl: Option<PathBuf>,
    /// Sample absorbance file (spectra form).
    #[arg(long)]
    pub sample_abs_file: Option<PathBuf>,
    /// Reference PL file (spectra form).
    #[arg(long)]
    pub ref_pl: Option<PathBuf>,
    /// Reference absorbance file (spectra form).
    #[arg(long)]
    pub ref_abs_file: Option<PathBuf>,
    /// Excitation wavelength for the spectra form, nm.
    #[arg(long)]
    pub excitation_nm: Option<f64>,
    /// The reference's own quantum yield, a fraction.
    #[arg(long, conflicts_with = "ref_dye")]
    pub ref_qy: Option<f64>,
    /// The reference dye, whose quantum yield comes from the shipped table ("rhodamine 6G").
    #[arg(long)]
    pub ref_dye: Option<String>,
    /// The sample's solvent (for its refractive index).
    #[arg(long, required = true)]
    pub solvent: Option<String>,
    /// The reference's solvent (for its refractive index).
    #[arg(long, required = true)]
    pub ref_solvent: Option<String>,
    /// Print the yield, method and warnings as JSON.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Subcommand)]
pub enum QyMethod {
    /// The gradient method (Williams, Winfield & Miller 1983) over a dilution series logged as
    /// aliquots: PL integral against absorbance at excitation in the PL cuvette, against the
    /// calibration's QY reference. At least four dilutions are wanted.
    #[command(after_help = examples!("cuvette qy gradient 101 102 103 104 --json"))]
    Gradient {
        /// The aliquots of the series, one per dilution.
        #[arg(required = true, num_args = 1.., value_name = "ALIQUOT")]
        aliquots: Vec<i64>,
        /// Print the yield, the fit and its points as JSON.
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct ShellPlanArgs {
    /// The shell material (ZnS, CdS, ZnSe).
    #[arg(long)]
    pub shell: String,
    /// Diameter of the cores, nm.
    #[arg(long)]
    pub core_nm: f64,
    /// Micromoles of core crystals.
    #[arg(long)]
    pub crystals_umol: f64,
    /// How many monolayers to grow.
    #[arg(long, default_value_t = 1)]
    pub layers: usize,
    /// Thickness of one monolayer, nm (default: the shell's value from memory).
    #[arg(long)]
    pub ml_nm: Option<f64>,
    /// Print the plan as JSON.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Subcommand)]
pub enum CalibCmd {
    /// List the calibration versions.
    #[command(after_help = examples!("cuvette calib list", "cuvette calib list --json"))]
    List(JsonFlag),
    /// Show a calibration version: curves, extinction models, QY reference, analysis settings.
    #[command(after_help = examples!("cuvette calib show", "cuvette calib show 2 --json"))]
    Show {
        /// Which version (default: the current one).
        version: Option<i64>,
        /// Print the calibration as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Every change to the calibration, with who made it and why.
    #[command(after_help = examples!("cuvette calib history"))]
    History(JsonFlag),
    /// Choose the sizing curve for a material.
    #[command(after_help = examples!("cuvette calib set-curve CdSe jasieniak2009 --why \"the group follows the 2009 curve\""))]
    SetCurve {
        /// The core material.
        material: String,
        /// The curve's id: yu2003, jasieniak2009, moreels2009, moreels2007, almeida2023, brus
        /// or lab:NAME.
        curve: String,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Choose the extinction model for a material.
    #[command(after_help = examples!("cuvette calib set-extinction CdSe leatherdale2002 --why \"compare with the 350 nm method\""))]
    SetExtinction {
        /// The core material.
        material: String,
        /// The model's id (yu2003, jasieniak2009, leatherdale2002, ... or lab:NAME).
        model: String,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Set the QY reference measurement.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!(
            "cuvette calib set-reference --dye \"rhodamine 6G\" --solvent ethanol --qy 0.95 \\\n      --excitation-nm 480 --integral 52000 --abs 0.05 --why \"reference run on the bench fluorimeter\"",
        )
    )]
    SetReference {
        /// The reference dye.
        #[arg(long)]
        dye: String,
        /// The dye's quantum yield (default: the table value).
        #[arg(long)]
        qy: Option<f64>,
        /// The dye's solvent.
        #[arg(long)]
        solvent: Option<String>,
        /// Excitation wavelength of the reference measurement, nm.
        #[arg(long)]
        excitation_nm: f64,
        /// The reference's integrated PL.
        #[arg(long)]
        integral: f64,
        /// The reference's absorbance at the excitation wavelength.
        #[arg(long)]
        abs: f64,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Override a solvent's refractive index.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!("cuvette calib set-index toluene 1.497 --why \"the value at our fluorimeter's band\"")
    )]
    SetIndex {
        /// The solvent.
        solvent: String,
        /// Its refractive index.
        n: f64,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Analysis settings.
    #[command(after_help = examples!("cuvette calib set-analysis --plausible-dispersion-pct 15 --why \"our SILAR shells run narrow\""))]
    SetAnalysis {
        /// Width of the smoothing window, nm.
        #[arg(long)]
        smoothing_nm: Option<f64>,
        /// Polynomial order of the smoothing.
        #[arg(long)]
        smoothing_order: Option<usize>,
        /// Absorbance above which a reading is taken as saturated.
        #[arg(long)]
        saturation_abs: Option<f64>,
        /// Flag size dispersions (σ/D) above this many per cent as implausible (default 20).
        #[arg(long)]
        plausible_dispersion_pct: Option<f64>,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Load a PL detector correction curve (two columns: nm, factor).
    #[command(after_help = examples!("cuvette calib set-detector fluorimeter-2-correction.csv --why \"curve from the service visit\""))]
    SetDetector {
        /// The correction file: nm and factor columns.
        file: PathBuf,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// A lab's own sizing curve, D = c0 + c1 λ + c2 λ² + ... (λ in nm); use it as lab:NAME.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!(
            "cuvette calib set-lab-curve harrow-tem --material CdSe --coeffs -8.0,0.02 --range 2..4 \\\n      --source \"TEM of batches 1-12, notebook 3\" --why \"our own sizing\"",
        )
    )]
    SetLabCurve {
        /// The curve's name (used as lab:NAME).
        name: String,
        /// The core material it sizes.
        #[arg(long)]
        material: String,
        /// Comma-separated c0,c1,c2,...
        #[arg(long, allow_hyphen_values = true)]
        coeffs: String,
        /// Diameter range it holds over, LOW..HIGH nm.
        #[arg(long)]
        range: String,
        /// Where the curve comes from.
        #[arg(long)]
        source: String,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// A lab's own extinction power law ε = prefactor · D^exponent; use it as lab:NAME.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!(
            "cuvette calib set-lab-extinction harrow-eps --material CdSe --prefactor 6000 --exponent 2.6 \\\n      --source \"titration of batch 19, notebook 4\" --why \"our own extinction\"",
        )
    )]
    SetLabExtinction {
        /// The law's name (used as lab:NAME).
        name: String,
        /// The core material it applies to.
        #[arg(long)]
        material: String,
        /// ε at 1 nm, M⁻¹cm⁻¹.
        #[arg(long)]
        prefactor: f64,
        /// The power of the diameter (nm).
        #[arg(long)]
        exponent: f64,
        /// Where the law comes from.
        #[arg(long)]
        source: String,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// The homogeneous (single-crystal) HWHM of a material's first exciton, taken out of the
    /// measured width in quadrature before it becomes a size dispersion; off by default.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!(
            "cuvette calib set-homogeneous-hwhm CdSe 20 --why \"single-dot linewidth from the group's notes\"",
            "cuvette calib set-homogeneous-hwhm CdSe --off --why \"back to the raw width\"",
        )
    )]
    SetHomogeneousHwhm {
        /// The core material.
        material: String,
        /// The homogeneous HWHM in meV (above 0, at most 200).
        #[arg(value_name = "MEV", required_unless_present = "off", conflicts_with = "off")]
        mev: Option<f64>,
        /// Take no homogeneous width out (the default).
        #[arg(long)]
        off: bool,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Bulk parameters for the effective-mass model.
    #[command(
        allow_negative_numbers = true,
        after_help = examples!(
            "cuvette calib set-bulk CdTe --eg-ev 1.5 --me 0.1 --mh 0.4 --eps-r 10.2 \\\n      --source \"handbook values, from memory\" --why \"size CdTe with brus\"",
        )
    )]
    SetBulk {
        /// The material.
        material: String,
        /// Bulk band gap, eV.
        #[arg(long)]
        eg_ev: f64,
        /// Electron effective mass, in electron masses.
        #[arg(long)]
        me: f64,
        /// Hole effective mass, in electron masses.
        #[arg(long)]
        mh: f64,
        /// Relative permittivity.
        #[arg(long)]
        eps_r: f64,
        /// Where the values come from.
        #[arg(long)]
        source: String,
        /// Why it changes (kept with the new version).
        #[arg(long)]
        why: String,
        /// Print the new version as JSON.
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args)]
pub struct RecomputeArgs {
    /// Show what would change and write nothing.
    #[arg(long)]
    pub dry_run: bool,
    /// Analyse every spectrum again, not only the stale values.
    #[arg(long)]
    pub all: bool,
    /// Print the counts and largest moves as JSON.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ExplainArgs {
    /// The aliquot's id.
    pub aliquot: i64,
    /// Print the chain as JSON.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct FindArgs {
    /// The query: free words, and fields each followed by its condition, e.g.
    /// 'CdSe size 3.5 to 4 qy >= 50% stock'.
    ///
    /// Fields: size, peak, pl, fwhm (nm), qy (a fraction, or with %), dispersion (%),
    /// conc (mol/L, or with M, mM, uM/µM, nM, pM), id, date (YYYY-MM-DD, YYYY-MM or YYYY),
    /// material, by, status, at, recipe. A number field takes a value (equal at the precision
    /// written), a range (`size 3.5-4`, `size 3.5 to 4`) or a comparison (`size > 3.2`,
    /// `qy>=45%`); a text field takes a word or a "quoted phrase" (`by "Wren Halloway"`);
    /// dates take `to` for a range (`date 2026-06-01 to 2026-06-30`). `stock`: has volume
    /// left. Quote a field word to search for it as text. Give the whole query in single
    /// quotes so that its own double quotes reach cuvette: 'by "Wren Halloway" stock'. The
    /// README has the whole language.
    #[arg(num_args = 0..)]
    pub query: Vec<String>,
    /// Print the batches found as a JSON array, best first.
    #[arg(long)]
    pub json: bool,
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
pub struct PlotArgs {
    /// The batch's id.
    pub batch: i64,
    /// The SVG file to write (default: stdout).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Overwrite an existing --out file, or write through a symbolic link.
    #[arg(long)]
    pub force: bool,
}

#[derive(Debug, Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum ExportFormat {
    /// One CSV file per table.
    Csv,
    /// One JSON file.
    Json,
}

#[derive(Debug, Args)]
pub struct ExportArgs {
    /// The file format.
    #[arg(long, value_enum)]
    pub format: ExportFormat,
    /// The folder the files are written to (default: export).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Overwrite existing export files, or write through symbolic links.
    #[arg(long)]
    pub force: bool,
}

#[derive(Debug, Args)]
pub struct BackupArgs {
    /// The backup file to write.
    #[arg(long)]
    pub out: PathBuf,
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

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct ImportArgs {
    /// The batch the aliquots belong to.
    pub batch_id: i64,
    /// A folder of exports; files are matched by name: *abs* and *pl* with a number of minutes.
    pub folder: PathBuf,
    /// Dilution factor of the absorbance solutions (1 or more).
    #[arg(long, default_value_t = 1.0)]
    pub dilution: f64,
    /// Path length of the absorbance cuvette, cm.
    #[arg(long, default_value_t = 1.0)]
    pub path_cm: f64,
    /// The solvent the aliquots were measured in.
    #[arg(long, default_value = "hexane")]
    pub solvent: String,
    /// Excitation wavelength of the PL files, nm.
    #[arg(long)]
    pub excitation_nm: Option<f64>,
    /// Path length of the cuvette the PL files were measured in, cm (default: not recorded).
    #[arg(long, value_name = "CM")]
    pub pl_path_cm: Option<f64>,
    /// Dilution factor of the solutions the PL files were measured in (default: --dilution's).
    #[arg(long, value_name = "FACTOR")]
    pub pl_dilution: Option<f64>,
    /// Take every file as a series: each sample column (or block) of a file becomes an aliquot,
    /// timed by its column header ("20 s", "5 min") or, for a file of one spectrum, by its name.
    #[arg(long)]
    pub series: bool,
    /// Import files whose SHA-256 is already in the batch (skipped and reported otherwise).
    #[arg(long)]
    pub again: bool,
    /// Keep each file as the kind its name gives even when its header or values say otherwise.
    #[arg(long)]
    pub kind_as_is: bool,
    /// Print the new aliquots and the skipped files as JSON.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ManifestArgs {
    /// CSV with a header: batch_id, folder, and optionally dilution, path_cm, solvent,
    /// excitation_nm, pl_path_cm, pl_dilution. Folders are relative to the manifest.
    pub manifest: PathBuf,
    /// Print each batch's result as JSON.
    #[arg(long)]
    pub json: bool,
}
