//! The grammar of the calculations that need no lab: `read` (what a file holds), `size`, `qy`
//! (single point or gradient) and `shell-plan`; `commands/calc.rs` runs them.

use super::FileChoice;
use clap::{Args, Subcommand};
use std::path::PathBuf;

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
