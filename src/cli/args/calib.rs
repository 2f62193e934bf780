//! The grammar of `calib` (the lab's calibration and its history), `recompute` and `explain`
//! (`commands/calib.rs` runs them).

use super::JsonFlag;
use clap::{Args, Subcommand};
use std::path::PathBuf;

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
