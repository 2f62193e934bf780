//! The command-line grammar. Names here are the contract scripts rely on (see README).

use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

#[derive(Debug, Parser)]
#[command(
    name = "cuvette",
    version,
    about = "A lab record for colloidal nanocrystal synthesis: batches, aliquot spectra, derived sizes and yields, and the shelf of vials."
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
    Init,
    /// Build the invented demo lab into the database file, then open the UI in a terminal.
    Demo(DemoArgs),
    /// People of the lab.
    #[command(subcommand)]
    Person(PersonCmd),
    /// Materials and the sizing curves that apply to them.
    #[command(subcommand)]
    Material(MaterialCmd),
    /// Reagents and their GHS hazard statements.
    #[command(subcommand)]
    Reagent(ReagentCmd),
    /// Versioned recipes.
    #[command(subcommand)]
    Recipe(RecipeCmd),
    /// Synthesis batches.
    #[command(subcommand)]
    Batch(BatchCmd),
    /// Aliquots of a batch and their spectra.
    #[command(subcommand)]
    Aliquot(AliquotCmd),
    /// Storage locations.
    #[command(subcommand)]
    Location(LocationCmd),
    /// Vials: new, draw, move, dispose, show.
    #[command(subcommand)]
    Vial(VialCmd),
    /// The shelf: every vial grouped by location.
    Shelf(ShelfArgs),
    /// The audit log, newest first.
    Log(LogArgs),
    /// Analyse spectrum files (or folders of them) without touching the database.
    Analyze(AnalyzeArgs),
    /// Show what cuvette reads from one spectrum file.
    Read(ReadArgs),
    /// Diameter from a first-exciton wavelength.
    Size(SizeArgs),
    /// Relative photoluminescence quantum yield against a reference.
    Qy(QyArgs),
    /// Shell growth: precursor per monolayer and the expected diameter.
    ShellPlan(ShellPlanArgs),
    /// Calibrations: list, show, history and changes (each change is a new version).
    #[command(subcommand)]
    Calib(CalibCmd),
    /// Recompute derived values whose inputs or calibration changed.
    Recompute(RecomputeArgs),
    /// Show how each derived value of an aliquot came about.
    Explain(ExplainArgs),
    /// Search batches with the query language (see README).
    Find(FindArgs),
    /// Hand a person's vials and open batches to another, and write a handover pack.
    Handover(HandoverArgs),
    /// Draw a batch's growth series as SVG.
    Plot(PlotArgs),
    /// Export every batch, aliquot and current derived value.
    Export(ExportArgs),
    /// Check the database: SQLite integrity, foreign keys, cuvette's own invariants, spectrum
    /// data hashes, the audit log, and a sample of derived values recomputed.
    Check(CheckArgs),
    /// Move a spectrum to another aliquot (a file logged against the wrong one).
    #[command(subcommand)]
    Spectrum(SpectrumCmd),
    /// Who cuvette attributes your writes to; `--set NAME` remembers a name for this account.
    Whoami(WhoamiArgs),
    /// Copy the database through SQLite's online backup.
    Backup(BackupArgs),
    /// Replace the database with a backup (the replaced file is kept).
    Restore(RestoreArgs),
    /// Import a folder of spectrum exports into a batch as aliquots, all or nothing.
    Import(ImportArgs),
    /// Import many batches' folders from a CSV manifest; each batch all or nothing.
    ImportManifest(ManifestArgs),
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
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Subcommand)]
pub enum SpectrumCmd {
    /// Move a spectrum to another aliquot; both aliquots are recomputed.
    Move {
        spectrum: i64,
        /// The aliquot it belongs to.
        #[arg(long = "to")]
        to_aliquot: i64,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Correct the cuvette a spectrum was measured in (its own path length and dilution, as a
    /// PL cuvette's); the aliquot's values are recomputed.
    Cuvette {
        spectrum: i64,
        /// Path length of the cuvette, cm.
        #[arg(long)]
        path_cm: Option<f64>,
        /// The factor by which the sample in this cuvette was diluted (1 or more).
        #[arg(long)]
        dilution: Option<f64>,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args)]
pub struct WhoamiArgs {
    /// Remember NAME as who you are (for this OS account).
    #[arg(long)]
    pub set: Option<String>,
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
    Add {
        name: String,
        #[arg(long)]
        email: Option<String>,
    },
    List(JsonFlag),
}

#[derive(Debug, Subcommand)]
pub enum MaterialCmd {
    Add {
        name: String,
        /// The core whose sizing curve applies (CdSe for CdSe/ZnS).
        #[arg(long)]
        core: String,
        #[arg(long)]
        shell: Option<String>,
    },
    List(JsonFlag),
}

#[derive(Debug, Subcommand)]
pub enum ReagentCmd {
    Add {
        name: String,
        #[arg(long)]
        formula: Option<String>,
        #[arg(long)]
        cas: Option<String>,
        /// GHS hazard statements, e.g. --hazard H350 --hazard H410.
        #[arg(long = "hazard")]
        hazards: Vec<String>,
        #[arg(long)]
        pyrophoric: bool,
    },
    List(JsonFlag),
}

#[derive(Debug, Subcommand)]
pub enum RecipeCmd {
    /// A new recipe, or a new version of one: from a JSON file or from flags.
    New {
        name: String,
        #[arg(long)]
        material: String,
        /// "REAGENT=AMOUNT UNIT[:ROLE]", e.g. "cadmium oxide=0.2 mmol:precursor".
        #[arg(long = "reagent")]
        reagents: Vec<String>,
        /// "ACTION[@TEMP C][/MINUTES min]", e.g. "inject Se-TOP@260 C/5 min".
        #[arg(long = "step")]
        steps: Vec<String>,
        #[arg(long)]
        notes: Option<String>,
        #[arg(long)]
        json: bool,
    },
    Show {
        name: String,
        #[arg(long)]
        version: Option<i64>,
        #[arg(long)]
        json: bool,
    },
    List(JsonFlag),
    /// Mean and spread of the product values of a recipe version's batches.
    Stats {
        name: String,
        #[arg(long)]
        version: Option<i64>,
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Subcommand)]
pub enum BatchCmd {
    New(BatchNewArgs),
    List(BatchListArgs),
    Show {
        id: i64,
        #[arg(long)]
        json: bool,
    },
    Edit(BatchEditArgs),
    SetStatus {
        id: i64,
        status: String,
        #[arg(long)]
        json: bool,
    },
    /// A new batch with the same material and recipe version as an earlier one.
    Repeat {
        id: i64,
        #[arg(long)]
        name: Option<String>,
        #[arg(long)]
        json: bool,
    },
    /// Void a batch logged by mistake: it stays in the record, marked, and counts for nothing.
    Void {
        id: i64,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Undo a batch's void.
    Reinstate {
        id: i64,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct BatchNewArgs {
    #[arg(long)]
    pub material: String,
    #[arg(long)]
    pub name: String,
    #[arg(long)]
    pub recipe: Option<String>,
    #[arg(long)]
    pub recipe_version: Option<i64>,
    #[arg(long)]
    pub operator: Option<String>,
    /// When the run started (YYYY-MM-DD or YYYY-MM-DD HH:MM); default now.
    #[arg(long)]
    pub started: Option<String>,
    #[arg(long)]
    pub status: Option<String>,
    /// The batch this one was made from (a core for a shell, a crude batch for a fraction).
    #[arg(long)]
    pub parent: Option<i64>,
    /// shell, fraction or repeat.
    #[arg(long)]
    pub relation: Option<String>,
    #[arg(long)]
    pub notes: Option<String>,
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct BatchListArgs {
    #[arg(long)]
    pub status: Option<String>,
    #[arg(long)]
    pub material: Option<String>,
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct BatchEditArgs {
    pub id: i64,
    #[arg(long)]
    pub name: Option<String>,
    /// Replace the notes.
    #[arg(long)]
    pub notes: Option<String>,
    /// Add a line to the notes.
    #[arg(long)]
    pub append_notes: Option<String>,
    #[arg(long)]
    pub operator: Option<String>,
    /// Mark an aliquot as the batch's product.
    #[arg(long)]
    pub product_aliquot: Option<i64>,
    /// Pin the batch to a calibration version.
    #[arg(long)]
    pub pin_calibration: Option<i64>,
    #[arg(long)]
    pub unpin: bool,
    #[arg(long)]
    pub parent: Option<i64>,
    #[arg(long)]
    pub json: bool,
}

// Parsed once per run: the size of a variant does not matter here.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Subcommand)]
pub enum AliquotCmd {
    Add(AliquotAddArgs),
    Show {
        id: i64,
        #[arg(long)]
        json: bool,
    },
    /// Void an aliquot: it stays in the record, marked, and is left out of the growth series,
    /// product values, search, plots and the pack.
    Void {
        id: i64,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Undo an aliquot's void.
    Reinstate {
        id: i64,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Correct an aliquot's logged facts; what depends on them is recomputed.
    #[command(allow_negative_numbers = true)]
    Edit {
        id: i64,
        #[arg(long)]
        minutes: Option<f64>,
        #[arg(long)]
        stage: Option<String>,
        #[arg(long)]
        dilution: Option<f64>,
        #[arg(long)]
        path_cm: Option<f64>,
        #[arg(long)]
        solvent: Option<String>,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args, Clone)]
#[command(allow_negative_numbers = true)]
pub struct AliquotAddArgs {
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
    #[arg(long, default_value_t = 1.0)]
    pub dilution: f64,
    #[arg(long, default_value_t = 1.0)]
    pub path_cm: f64,
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
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Subcommand)]
pub enum LocationCmd {
    Add {
        name: String,
        /// freezer, fridge, glovebox, shelf or cabinet.
        #[arg(long)]
        kind: String,
        #[arg(long)]
        position: Option<String>,
    },
    List(JsonFlag),
}

#[derive(Debug, Subcommand)]
pub enum VialCmd {
    #[command(allow_negative_numbers = true)]
    New {
        batch_id: i64,
        #[arg(long)]
        ml: f64,
        #[arg(long)]
        location: String,
        #[arg(long)]
        label: Option<String>,
        #[arg(long, default_value = "hexane")]
        solvent: String,
        #[arg(long)]
        position: Option<String>,
        #[arg(long)]
        owner: Option<String>,
        /// Concentration of the vial's solution, mol/L (default: from the batch's product).
        #[arg(long)]
        conc: Option<f64>,
        #[arg(long)]
        json: bool,
    },
    #[command(allow_negative_numbers = true)]
    Draw {
        vial: String,
        #[arg(long)]
        ml: f64,
        #[arg(long)]
        why: Option<String>,
        #[arg(long)]
        json: bool,
    },
    Move {
        vial: String,
        #[arg(long)]
        to: String,
        #[arg(long)]
        position: Option<String>,
        #[arg(long)]
        why: Option<String>,
        #[arg(long)]
        json: bool,
    },
    Dispose {
        vial: String,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Put a disposed vial back (a disposal logged by mistake).
    Reinstate {
        vial: String,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    Show {
        vial: String,
        #[arg(long)]
        json: bool,
    },
    /// Measure a vial's absorbance: the spectrum is kept with the vial and sets its concentration.
    #[command(allow_negative_numbers = true)]
    Measure {
        vial: String,
        #[arg(long)]
        abs: PathBuf,
        #[arg(long, default_value_t = 1.0)]
        dilution: f64,
        #[arg(long, default_value_t = 1.0)]
        path_cm: f64,
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
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct LogArgs {
    #[arg(long)]
    pub entity: Option<String>,
    #[arg(long, default_value_t = 50)]
    pub limit: i64,
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum Kind {
    Abs,
    Pl,
    Ple,
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct AnalyzeArgs {
    /// Files or folders of exports.
    #[arg(required = true)]
    pub paths: Vec<PathBuf>,
    #[arg(long, value_enum)]
    pub kind: Kind,
    /// Also size and count the crystals of this material.
    #[arg(long)]
    pub material: Option<String>,
    #[arg(long)]
    pub curve: Option<String>,
    #[arg(long, default_value_t = 1.0)]
    pub path_cm: f64,
    #[arg(long, default_value_t = 1.0)]
    pub dilution: f64,
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
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ReadArgs {
    pub file: PathBuf,
    /// JCAMP-DX block to read: number (from 1) or title.
    #[arg(long)]
    pub block: Option<String>,
    #[command(flatten)]
    pub choice: FileChoice,
    /// Print every spectrum the file holds (`--json`: an array), not one.
    #[arg(long)]
    pub all: bool,
    #[arg(long)]
    pub x_col: Option<usize>,
    #[arg(long)]
    pub y_col: Option<usize>,
    #[arg(long)]
    pub x_unit: Option<String>,
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct SizeArgs {
    #[arg(long)]
    pub material: String,
    #[arg(long)]
    pub peak_nm: f64,
    #[arg(long)]
    pub curve: Option<String>,
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
    #[arg(long)]
    pub sample_integral: Option<f64>,
    #[arg(long)]
    pub sample_abs: Option<f64>,
    #[arg(long)]
    pub ref_integral: Option<f64>,
    #[arg(long)]
    pub ref_abs: Option<f64>,
    /// Sample PL file (spectra form).
    #[arg(long)]
    pub sample_pl: Option<PathBuf>,
    /// Sample absorbance file (spectra form).
    #[arg(long)]
    pub sample_abs_file: Option<PathBuf>,
    #[arg(long)]
    pub ref_pl: Option<PathBuf>,
    #[arg(long)]
    pub ref_abs_file: Option<PathBuf>,
    /// Excitation wavelength for the spectra form, nm.
    #[arg(long)]
    pub excitation_nm: Option<f64>,
    #[arg(long, conflicts_with = "ref_dye")]
    pub ref_qy: Option<f64>,
    #[arg(long)]
    pub ref_dye: Option<String>,
    #[arg(long, required = true)]
    pub solvent: Option<String>,
    #[arg(long, required = true)]
    pub ref_solvent: Option<String>,
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Subcommand)]
pub enum QyMethod {
    /// The gradient method (Williams, Winfield & Miller 1983) over a dilution series logged as
    /// aliquots: PL integral against absorbance at excitation in the PL cuvette, against the
    /// calibration's QY reference. At least four dilutions are wanted.
    Gradient {
        /// The aliquots of the series, one per dilution.
        #[arg(required = true, num_args = 1.., value_name = "ALIQUOT")]
        aliquots: Vec<i64>,
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct ShellPlanArgs {
    #[arg(long)]
    pub shell: String,
    #[arg(long)]
    pub core_nm: f64,
    /// Micromoles of core crystals.
    #[arg(long)]
    pub crystals_umol: f64,
    #[arg(long, default_value_t = 1)]
    pub layers: usize,
    #[arg(long)]
    pub ml_nm: Option<f64>,
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Subcommand)]
pub enum CalibCmd {
    List(JsonFlag),
    Show {
        version: Option<i64>,
        #[arg(long)]
        json: bool,
    },
    History(JsonFlag),
    /// Choose the sizing curve for a material.
    SetCurve {
        material: String,
        curve: String,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Choose the extinction model for a material.
    SetExtinction {
        material: String,
        model: String,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Set the QY reference measurement.
    #[command(allow_negative_numbers = true)]
    SetReference {
        #[arg(long)]
        dye: String,
        /// The dye's quantum yield (default: the table value).
        #[arg(long)]
        qy: Option<f64>,
        #[arg(long)]
        solvent: Option<String>,
        #[arg(long)]
        excitation_nm: f64,
        #[arg(long)]
        integral: f64,
        #[arg(long)]
        abs: f64,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Override a solvent's refractive index.
    #[command(allow_negative_numbers = true)]
    SetIndex {
        solvent: String,
        n: f64,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Analysis settings.
    SetAnalysis {
        #[arg(long)]
        smoothing_nm: Option<f64>,
        #[arg(long)]
        smoothing_order: Option<usize>,
        #[arg(long)]
        saturation_abs: Option<f64>,
        /// Flag size dispersions (σ/D) above this many per cent as implausible (default 20).
        #[arg(long)]
        plausible_dispersion_pct: Option<f64>,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Load a PL detector correction curve (two columns: nm, factor).
    SetDetector {
        file: PathBuf,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// A lab's own sizing curve, D = c0 + c1 λ + c2 λ² + ... (λ in nm); use it as lab:NAME.
    #[command(allow_negative_numbers = true)]
    SetLabCurve {
        name: String,
        #[arg(long)]
        material: String,
        /// Comma-separated c0,c1,c2,...
        #[arg(long, allow_hyphen_values = true)]
        coeffs: String,
        /// Diameter range it holds over, LOW..HIGH nm.
        #[arg(long)]
        range: String,
        #[arg(long)]
        source: String,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// A lab's own extinction power law ε = prefactor · D^exponent; use it as lab:NAME.
    #[command(allow_negative_numbers = true)]
    SetLabExtinction {
        name: String,
        #[arg(long)]
        material: String,
        #[arg(long)]
        prefactor: f64,
        #[arg(long)]
        exponent: f64,
        #[arg(long)]
        source: String,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// The homogeneous (single-crystal) HWHM of a material's first exciton, taken out of the
    /// measured width in quadrature before it becomes a size dispersion; off by default.
    #[command(allow_negative_numbers = true)]
    SetHomogeneousHwhm {
        material: String,
        /// The homogeneous HWHM in meV (above 0, at most 200).
        #[arg(value_name = "MEV", required_unless_present = "off", conflicts_with = "off")]
        mev: Option<f64>,
        /// Take no homogeneous width out (the default).
        #[arg(long)]
        off: bool,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
    /// Bulk parameters for the effective-mass model.
    #[command(allow_negative_numbers = true)]
    SetBulk {
        material: String,
        #[arg(long)]
        eg_ev: f64,
        #[arg(long)]
        me: f64,
        #[arg(long)]
        mh: f64,
        #[arg(long)]
        eps_r: f64,
        #[arg(long)]
        source: String,
        #[arg(long)]
        why: String,
        #[arg(long)]
        json: bool,
    },
}

#[derive(Debug, Args)]
pub struct RecomputeArgs {
    #[arg(long)]
    pub dry_run: bool,
    #[arg(long)]
    pub all: bool,
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ExplainArgs {
    pub aliquot: i64,
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
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct HandoverArgs {
    #[arg(long)]
    pub from: String,
    #[arg(long)]
    pub to: String,
    #[arg(long)]
    pub out: Option<PathBuf>,
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct PlotArgs {
    pub batch: i64,
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Overwrite an existing --out file, or write through a symbolic link.
    #[arg(long)]
    pub force: bool,
}

#[derive(Debug, Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum ExportFormat {
    Csv,
    Json,
}

#[derive(Debug, Args)]
pub struct ExportArgs {
    #[arg(long, value_enum)]
    pub format: ExportFormat,
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Overwrite existing export files, or write through symbolic links.
    #[arg(long)]
    pub force: bool,
}

#[derive(Debug, Args)]
pub struct BackupArgs {
    #[arg(long)]
    pub out: PathBuf,
}

#[derive(Debug, Args)]
pub struct RestoreArgs {
    pub file: PathBuf,
    /// Take a backup whose records are sound but whose derived values are out of date, and
    /// recompute every value after restoring it.
    #[arg(long)]
    pub recompute: bool,
}

#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct ImportArgs {
    pub batch_id: i64,
    /// A folder of exports; files are matched by name: *abs* and *pl* with a number of minutes.
    pub folder: PathBuf,
    #[arg(long, default_value_t = 1.0)]
    pub dilution: f64,
    #[arg(long, default_value_t = 1.0)]
    pub path_cm: f64,
    #[arg(long, default_value = "hexane")]
    pub solvent: String,
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
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ManifestArgs {
    /// CSV with a header: batch_id, folder, and optionally dilution, path_cm, solvent,
    /// excitation_nm, pl_path_cm, pl_dilution. Folders are relative to the manifest.
    pub manifest: PathBuf,
    #[arg(long)]
    pub json: bool,
}
