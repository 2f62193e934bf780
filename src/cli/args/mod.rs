//! The command-line grammar. Names here are the contract scripts rely on (see README).
//! Every command carries at least one example in its help, written with the invented demo
//! lab's names (`demo-db/lab.json`: batch 1 is CS-260506-a, its first vial CS-260506-a-V1),
//! and every argument its own line of help; `tests/cli_conventions.rs` walks the tree and
//! holds each one to that. Completions and the man page are generated from this grammar.
//!
//! One module per command family, named as in `commands/`, each re-exported here so that
//! `args::X` names every type of the grammar. This file keeps the root (`Cli`, `Cmd`), the
//! vocabulary value parser (`words`), the `examples!` macro the families use (defined before
//! them), the flags they share (`FileChoice`, `JsonFlag`) and the commands `commands/mod.rs`
//! runs itself (`whoami`, `spectrum`, `plot`, `export`, `backup`, `completions`, `man`).

use crate::vocab::Vocabulary;
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

mod aliquot;
mod analyze;
mod batch;
mod calc;
mod calib;
mod find;
mod people;
mod recipe;
mod records;
mod vial;

pub use aliquot::*;
pub use analyze::*;
pub use batch::*;
pub use calc::*;
pub use calib::*;
pub use find::*;
pub use people::*;
pub use recipe::*;
pub use records::*;
pub use vial::*;

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
pub struct JsonFlag {
    /// Print JSON.
    #[arg(long)]
    pub json: bool,
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
