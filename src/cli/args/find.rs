//! The grammar of `find` (the query language) and `log` (the audit trail); `commands/find.rs`
//! runs them.

use clap::Args;

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
