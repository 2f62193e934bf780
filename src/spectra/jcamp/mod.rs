//! JCAMP-DX, the open exchange format for spectra: the base format of McDonald & Wilks, Appl.
//! Spectrosc. 42, 151 (1988) (labelled data records, AFFN and the compressed ASDF forms SQZ,
//! DIF, DUP and PAC, the abscissa and DIF Y-checks) and its revisions up to 5.01 (compound files
//! with link blocks, `##NTUPLES=`; Lampen et al., IUPAC recommendations of 1999; citation
//! details for the revisions are from memory).
//!
//! What it reads: `##XYDATA=(X++(Y..Y))`, `##XYPOINTS=(XY..XY)`, `##PEAK TABLE=(XY..XY)` and
//! `(XYW..XYW)`, and the pages of an `##NTUPLES=` block whose data table pairs one x variable
//! with one y variable. Every spectrum of a compound file is a candidate: [`read_blocks`] gives
//! them all, [`read`] the one `--block` names, and refuses to guess when there are several.
//!
//! What it promises: the points are the file's, with XFACTOR and YFACTOR applied, abscissae
//! computed from FIRSTX, LASTX and NPOINTS as the standard says (the values written on each line
//! are check values). Tolerances are those the standard's own rounding allows (see
//! [`line_tolerance`]); what is odd but unambiguous is read and warned about; a refusal happens
//! only where a number could be misread, and names the line and the reason.
//!
//! Work is bounded by what the file states, never by what its counts claim: NPOINTS may not
//! exceed [`MAX_POINTS`], all spectra of one file together not [`MAX_FILE_POINTS`], and a repeat
//! count (DUP) or a run of values that would take the table past NPOINTS is refused on its line
//! before anything is allocated for it.
//!
//! Here: the limits and the three entry points. `labels` splits a file into blocks of labelled
//! records and reads the numbers and forms they state; `compressed` decodes the equally spaced
//! `(X++(Y..Y))` table with its ASDF forms and checks; `groups` the `(XY..XY)` tables (XYPOINTS,
//! PEAK TABLE); `blocks` lists a compound file's spectra and picks the one asked for; `table`
//! prepares a candidate's table (a plain block or an NTUPLES page) and decodes it.

mod blocks;
mod compressed;
mod groups;
mod labels;
mod table;

use super::{RawSpectrum, ReadOptions, spectrum_error};
use crate::error::Result;

use blocks::Parsed;
use blocks::listing;
use blocks::parse_and_choose;
pub(crate) use labels::normalise_label;
use labels::split_blocks;
use table::decode;

/// The most points a spectrum may hold. A UV-Vis-NIR scan over the whole plausible range
/// (150-3500 nm) at 0.01 nm is 335,000 points; a million leaves room and bounds the memory a
/// 181-byte file with a large repeat count can ask for.
pub const MAX_POINTS: usize = 1_000_000;

/// The most points all spectra of one file may hold together (64 MB of x and y): a kinetic
/// series of a few thousand scans fits, a file of many small blocks each asking for a million
/// repeated points does not.
pub const MAX_FILE_POINTS: usize = 4_000_000;

/// How many spectra an error that lists them names before it says "and N more".
const MAX_LISTED: usize = 12;

/// One spectrum: the one `opts.block` names, or the only one. A file of several spectra read
/// without a choice is refused with the list of them; it is never silently read as its first.
pub fn read(file: &str, text: &str, opts: &ReadOptions) -> Result<RawSpectrum> {
    let parsed = Parsed {
        blocks: split_blocks(text),
    };
    let (chosen, refused) = parse_and_choose(file, &parsed, opts)?;
    match chosen.as_slice() {
        [one] => decode(file, &parsed, one, chosen.len(), &refused, MAX_FILE_POINTS),
        many => Err(spectrum_error(
            file,
            None,
            &format!(
                "the file holds {} spectra: {}; choose one with --block N|TITLE",
                many.len(),
                listing(many)
            ),
        )),
    }
}

/// Every spectrum the file holds (or the one `opts.block` names), each with its label: the
/// block's title, or for an NTUPLES page the title and the page.
pub fn read_blocks_labelled(file: &str, text: &str, opts: &ReadOptions) -> Result<Vec<(String, RawSpectrum)>> {
    let parsed = Parsed {
        blocks: split_blocks(text),
    };
    let (chosen, refused) = parse_and_choose(file, &parsed, opts)?;
    let mut out = Vec::with_capacity(chosen.len());
    let mut budget = MAX_FILE_POINTS;
    for c in &chosen {
        let s = decode(file, &parsed, c, chosen.len(), &refused, budget)?;
        budget = budget.saturating_sub(s.x.len());
        out.push((c.label.clone(), s));
    }
    Ok(out)
}

/// Every spectrum the file holds (or the one `opts.block` names), in file order.
pub fn read_blocks(file: &str, text: &str, opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    Ok(read_blocks_labelled(file, text, opts)?
        .into_iter()
        .map(|(_, s)| s)
        .collect())
}

#[cfg(test)]
mod tests;
