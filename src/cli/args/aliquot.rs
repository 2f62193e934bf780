//! The grammar of `aliquot` and of the imports that log aliquots from files, `import` (a
//! folder) and `import-manifest` (a list of runs); `commands/aliquot.rs` runs them.

use super::FileChoice;
use clap::{Args, Subcommand};
use std::path::PathBuf;

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
