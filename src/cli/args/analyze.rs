//! The grammar of `analyze`: a spectrum file or folder analysed outside the lab
//! (`commands/analyze.rs` runs it).

use super::FileChoice;
use clap::{Args, ValueEnum};
use std::path::PathBuf;

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
