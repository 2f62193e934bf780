//! Reading and analysing spectra. The readers (`delimited`, `jcamp`) turn a file's bytes into a
//! [`RawSpectrum`] exactly as the file states it: values with the file's factors applied, in the
//! file's own units and order. `analysis` holds pure functions (no I/O, no database) that work
//! on a [`Trace`]: the same data converted to nanometres and sorted ascending. Analysis never
//! changes the raw data; the store keeps the raw spectrum and its file hash.

pub mod analysis;
pub mod band_edge;
pub mod delimited;
pub mod grid;
pub mod jcamp;
pub mod pl;
pub mod quantity;
pub mod savgol;
pub mod sheet;

use crate::error::{Error, Result};
use serde::Serialize;
use sha2::{Digest, Sha256};
use std::borrow::Cow;

/// Fewer points than this cannot carry a peak, a width and a smoothing window.
pub const MIN_POINTS: usize = 8;

/// What the user can say about a file when detection is not enough.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// 1-based column of x (delimited text).
    pub x_col: Option<usize>,
    /// 1-based column of y (delimited text).
    pub y_col: Option<usize>,
    /// Override the x unit the file states (nm, eV, 1/cm, um).
    pub x_unit: Option<String>,
    /// JCAMP-DX: the block to read, by 1-based number or by title.
    pub block: Option<String>,
    /// A table with several y columns: the one to read, by header or by 1-based number among
    /// the y columns (`--column NAME|N`).
    pub column: Option<String>,
    /// A workbook: the sheet to read, by name or 1-based number.
    pub sheet: Option<String>,
}

/// One verification a format allowed, such as a JCAMP-DX Y-check.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Check {
    pub name: String,
    pub passed: bool,
    pub detail: String,
}

/// A spectrum exactly as the file states it.
#[derive(Debug, Clone, Serialize)]
pub struct RawSpectrum {
    pub format: String,
    pub title: Option<String>,
    /// Which spectrum of the file this is: its column header or block title.
    pub label: Option<String>,
    pub x_unit: String,
    pub y_unit: Option<String>,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub checks: Vec<Check>,
    pub warnings: Vec<String>,
}

/// The x units cuvette can convert to nanometres.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum XUnit {
    Nanometre,
    Micrometre,
    ElectronVolt,
    Wavenumber,
}

/// hc in eV·nm (CODATA 2018: h = 6.62607015e-34 J s, c = 299792458 m/s, e = 1.602176634e-19 C).
pub const HC_EV_NM: f64 = 1_239.841_984;

impl XUnit {
    /// Understands how files commonly name their x unit.
    pub fn parse(s: &str) -> Option<XUnit> {
        let t: String = s
            .to_ascii_lowercase()
            .chars()
            .filter(|c| !c.is_whitespace() && *c != '^' && *c != '(' && *c != ')' && *c != '[' && *c != ']')
            .collect();
        match t.as_str() {
            "nm" | "nanometers" | "nanometres" | "nanometer" | "nanometre" | "wavelength" => Some(XUnit::Nanometre),
            "um" | "µm" | "micrometers" | "micrometres" | "microns" => Some(XUnit::Micrometre),
            "ev" | "electronvolts" => Some(XUnit::ElectronVolt),
            "1/cm" | "cm-1" | "cm⁻¹" | "wavenumbers" | "wavenumber" => Some(XUnit::Wavenumber),
            _ => None,
        }
    }

    pub fn to_nm(self, x: f64) -> f64 {
        match self {
            XUnit::Nanometre => x,
            XUnit::Micrometre => x * 1000.0,
            XUnit::ElectronVolt => HC_EV_NM / x,
            XUnit::Wavenumber => 1e7 / x,
        }
    }
}

/// Every spectrum a file holds, detecting the format from the content.
pub fn read_all(file: &str, bytes: &[u8], opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    // A zip (xlsx, ods) or OLE container (an encrypted xlsx) is a workbook, never text.
    if sheet::is_workbook(bytes) {
        return sheet::read(file, bytes, opts);
    }
    let (text, encoding) = decode_text(bytes);
    if looks_jcamp(&text) {
        // An empty text holds no record, so the empty test below may come after this one.
        jcamp::read_blocks(file, &text, opts)
    } else {
        read_delimited(file, &text, encoding, opts)
    }
}

/// A text that is not JCAMP-DX: refused when empty, else read as delimited text.
fn read_delimited(file: &str, text: &str, encoding: Option<&str>, opts: &ReadOptions) -> Result<Vec<RawSpectrum>> {
    if text.trim().is_empty() {
        return Err(spectrum_error(file, None, "the file is empty"));
    }
    delimited::read_all_decoded(file, text, encoding, opts)
}

/// One spectrum. A file with several spectra and no `opts.column` is refused with a message
/// that lists them; it is never silently read as its first.
pub fn read_bytes(file: &str, bytes: &[u8], opts: &ReadOptions) -> Result<RawSpectrum> {
    let mut all = if sheet::is_workbook(bytes) {
        sheet::read(file, bytes, opts)?
    } else {
        // The text is decoded and sniffed once, as `read_all` would: JCAMP-DX chooses among
        // its blocks itself (`--block`), with its own listing.
        let (text, encoding) = decode_text(bytes);
        if looks_jcamp(&text) {
            return jcamp::read(file, &text, opts);
        }
        read_delimited(file, &text, encoding, opts)?
    };
    if all.len() > 1 {
        return Err(grid::several_spectra_error(file, &all));
    }
    all.pop().ok_or_else(|| spectrum_error(file, None, "no spectrum found"))
}

/// JCAMP-DX opens with labelled data records: a `##TITLE=` or `##JCAMP-DX=` line near the top.
/// A Markdown heading (`## Results`) is not one.
fn looks_jcamp(text: &str) -> bool {
    // The first 50 lines end at the 50th LF (as `lines` splits them); most files have no '#'
    // in them, so no record, which one look at those bytes says.
    let head_end = text
        .bytes()
        .enumerate()
        .filter(|(_, c)| *c == b'\n')
        .nth(49)
        .map_or(text.len(), |(i, _)| i);
    if !text.as_bytes()[..head_end].contains(&b'#') {
        return false;
    }
    text.lines().take(50).any(|l| {
        let Some(rest) = l.trim_start().strip_prefix("##") else {
            return false;
        };
        let Some((label, _)) = rest.split_once('=') else {
            return false;
        };
        let label = jcamp::normalise_label(label);
        label == "TITLE" || label == "JCAMPDX"
    })
}

/// Reads a file from disk: the spectrum and the SHA-256 of its bytes.
pub fn read_file(path: &std::path::Path, opts: &ReadOptions) -> Result<(RawSpectrum, String)> {
    let name = path.display().to_string();
    let bytes = file_bytes(path)?;
    let spec = read_bytes(&name, &bytes, opts)?;
    Ok((spec, sha256_hex(&bytes)))
}

/// No spectrum export comes near this; a larger file is refused before it is read, so no file
/// makes cuvette hold unbounded memory.
pub const MAX_FILE_BYTES: u64 = 256 * 1024 * 1024;

/// A spectrum file's bytes, read in one allocation, refused above [`MAX_FILE_BYTES`].
pub fn file_bytes(path: &std::path::Path) -> Result<Vec<u8>> {
    let mut bytes = Vec::new();
    file_bytes_into(path, &mut bytes)?;
    Ok(bytes)
}

/// As [`file_bytes`], into `bytes` (whatever it held is replaced), so that a run over many files
/// can read them all into one buffer. The buffer is sized from the stated length plus one
/// byte, so a file is read in one `read` and its end seen by the next; a file that turns out
/// longer (it grew, or states no length) is read on, up to the same limit.
pub fn file_bytes_into(path: &std::path::Path, bytes: &mut Vec<u8>) -> Result<()> {
    use std::io::Read;
    let name = path.display().to_string();
    if crate::open_labs::is_open_lab(path) {
        return Err(Error::Invalid(crate::open_labs::refusal(path)));
    }
    let mut f = std::fs::File::open(path).map_err(|e| spectrum_error(&name, None, &format!("cannot read: {e}")))?;
    let len = f.metadata().map(|m| m.len()).unwrap_or(0);
    if len > MAX_FILE_BYTES {
        return Err(spectrum_error(
            &name,
            None,
            &format!("{len} bytes is larger than any spectrum export (at most {MAX_FILE_BYTES})"),
        ));
    }
    // A file that grows (or a device that never ends) stops at the same limit.
    let limit = (MAX_FILE_BYTES + 1) as usize;
    bytes.clear();
    bytes.resize((len as usize + 1).min(limit), 0);
    let mut filled = 0;
    loop {
        if filled == bytes.len() {
            if filled >= limit {
                break;
            }
            bytes.resize((filled * 2).max(8192).min(limit), 0);
        }
        match f.read(&mut bytes[filled..]) {
            Ok(0) => break,
            Ok(n) => filled += n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => {
                bytes.clear();
                return Err(spectrum_error(&name, None, &format!("cannot read: {e}")));
            }
        }
    }
    bytes.truncate(filled);
    if bytes.len() as u64 > MAX_FILE_BYTES {
        bytes.clear();
        return Err(spectrum_error(&name, None, "larger than any spectrum export"));
    }
    Ok(())
}

pub fn sha256_hex(bytes: &[u8]) -> String {
    const HEX: &[u8; 16] = b"0123456789abcdef";
    let d = Sha256::digest(bytes);
    // Two hex digits a byte, written straight into the string (a `format!` per byte cost
    // more than a tenth of the hash itself).
    let mut s = String::with_capacity(2 * d.len());
    for b in d {
        s.push(char::from(HEX[usize::from(b >> 4)]));
        s.push(char::from(HEX[usize::from(b & 0xf)]));
    }
    s
}

/// The text of a file: UTF-8 where it is (borrowed, not copied), UTF-16 where a byte-order mark
/// says so, else Latin-1 (many instrument exports are); without a BOM. The second value names
/// an encoding other than UTF-8, for `format`.
pub fn decode_text(bytes: &[u8]) -> (Cow<'_, str>, Option<&'static str>) {
    if let Some(rest) = bytes.strip_prefix(&[0xFF, 0xFE]) {
        return (Cow::Owned(utf16(rest, u16::from_le_bytes)), Some("UTF-16 LE"));
    }
    if let Some(rest) = bytes.strip_prefix(&[0xFE, 0xFF]) {
        return (Cow::Owned(utf16(rest, u16::from_be_bytes)), Some("UTF-16 BE"));
    }
    let bytes = bytes.strip_prefix(&[0xEF, 0xBB, 0xBF]).unwrap_or(bytes);
    match std::str::from_utf8(bytes) {
        Ok(s) => (Cow::Borrowed(s), None),
        Err(_) => (Cow::Owned(bytes.iter().map(|&b| b as char).collect()), Some("Latin-1")),
    }
}

/// UTF-16 code units to text; an unpaired surrogate or an odd last byte becomes U+FFFD, which
/// no number contains, so it cannot pass as data.
fn utf16(bytes: &[u8], unit: fn([u8; 2]) -> u16) -> String {
    let units = bytes.chunks(2).map(|c| match c {
        [a, b] => unit([*a, *b]),
        _ => 0xFFFD,
    });
    char::decode_utf16(units)
        .map(|r| r.unwrap_or(char::REPLACEMENT_CHARACTER))
        .collect()
}

pub(crate) fn spectrum_error(file: &str, line: Option<usize>, reason: &str) -> Error {
    Error::Spectrum {
        file: file.to_string(),
        line,
        reason: reason.to_string(),
    }
}

/// Checks shared by every reader: finite values, enough points, strictly monotonic x.
pub(crate) fn validate_xy(file: &str, x: &[f64], y: &[f64], lines: Option<&[usize]>) -> Result<()> {
    let line_of = |i: usize| lines.and_then(|l| l.get(i).copied());
    // One look at every value first (a loop without an early exit, which the compiler runs
    // several values at a time); the first bad point is looked for only when there is one.
    let n = x.len().min(y.len());
    if !x[..n].iter().chain(&y[..n]).fold(true, |ok, v| ok & v.is_finite()) {
        for (i, (a, b)) in x.iter().zip(y).enumerate() {
            if !a.is_finite() || !b.is_finite() {
                return Err(spectrum_error(file, line_of(i), "NaN or infinite value"));
            }
        }
    }
    if x.len() < MIN_POINTS {
        return Err(spectrum_error(
            file,
            None,
            &format!("too few points ({}; at least {MIN_POINTS} needed)", x.len()),
        ));
    }
    let ascending = x[1] > x[0];
    for i in 1..x.len() {
        if x[i] == x[i - 1] {
            return Err(spectrum_error(file, line_of(i), &format!("duplicate x value {}", x[i])));
        }
        if (x[i] > x[i - 1]) != ascending {
            return Err(spectrum_error(
                file,
                line_of(i),
                &format!("x is not monotonic ({} after {})", x[i], x[i - 1]),
            ));
        }
    }
    Ok(())
}

/// A spectrum ready for analysis: nm ascending, y as absorbance (or counts for PL).
#[derive(Debug, Clone)]
pub struct Trace {
    pub nm: Vec<f64>,
    pub y: Vec<f64>,
}

/// The wavelength span in which UV-Vis-NIR analysis makes sense.
pub const PLAUSIBLE_NM: (f64, f64) = (150.0, 3500.0);

impl RawSpectrum {
    /// Converts to nm, ascending; a stated transmittance or reflectance becomes absorbance (as
    /// `quantity::to_absorbance` defines it). Refuses x ranges that are
    /// not UV-Vis-NIR (values in metres, an infrared file) with a message naming the range.
    pub fn to_trace(&self, file: &str, unit_override: Option<&str>) -> Result<Trace> {
        let unit_name = unit_override.unwrap_or(&self.x_unit);
        let unit = XUnit::parse(unit_name).ok_or_else(|| {
            spectrum_error(
                file,
                None,
                &format!("x unit '{unit_name}' cannot be converted to nm (use --x-unit nm|eV|1/cm|um)"),
            )
        })?;
        let n = self.x.len().min(self.y.len());
        let mut nm: Vec<f64> = match unit {
            // nm to nm is the identity: the values as they are.
            XUnit::Nanometre => self.x[..n].to_vec(),
            _ => self.x[..n].iter().map(|&x| unit.to_nm(x)).collect(),
        };
        if !nm.iter().fold(true, |ok, v| ok & (v.is_finite() && *v > 0.0)) {
            return Err(spectrum_error(file, None, "x values convert to no positive wavelength"));
        }
        // The points in a stable sort by wavelength. Files are in order one way or the other,
        // so the sort is mostly not needed: strictly ascending stays as it is, strictly
        // descending (no ties) is exactly reversed; anything else is sorted. The y conversion
        // is point by point (and what it reads of the values, whether any exceeds 1.5, does not
        // depend on their order), so it is done before the reordering, on the stated values.
        let strictly = |o: std::cmp::Ordering| nm.windows(2).all(|w| w[0].total_cmp(&w[1]) == o);
        let stated_y = &self.y[..n];
        let y_unit = self.y_unit.as_deref();
        let y = if strictly(std::cmp::Ordering::Less) {
            quantity::y_as_analysed(y_unit, stated_y)
        } else if strictly(std::cmp::Ordering::Greater) {
            nm.reverse();
            let mut y = quantity::y_as_analysed(y_unit, stated_y);
            y.reverse();
            y
        } else {
            let mut pts: Vec<(f64, f64)> = nm.iter().copied().zip(stated_y.iter().copied()).collect();
            pts.sort_by(|a, b| a.0.total_cmp(&b.0));
            nm = pts.iter().map(|p| p.0).collect();
            let sorted_y: Vec<f64> = pts.iter().map(|p| p.1).collect();
            quantity::y_as_analysed(y_unit, &sorted_y)
        };
        let lo = nm[0];
        let hi = nm[nm.len() - 1];
        if lo < PLAUSIBLE_NM.0 || hi > PLAUSIBLE_NM.1 || (hi - lo) < 5.0 {
            return Err(spectrum_error(
                file,
                None,
                &format!(
                    "x range {lo:.4}..{hi:.4} nm is not plausible for UV-Vis-NIR ({:.0}-{:.0} nm); are the values in other units?",
                    PLAUSIBLE_NM.0, PLAUSIBLE_NM.1
                ),
            ));
        }
        Ok(Trace { nm, y })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// The sniff as it was before the look at the bytes: the reference it must equal.
    fn looks_jcamp_reference(text: &str) -> bool {
        text.lines().take(50).any(|l| {
            let Some(rest) = l.trim_start().strip_prefix("##") else {
                return false;
            };
            let Some((label, _)) = rest.split_once('=') else {
                return false;
            };
            let squashed: String = label
                .chars()
                .filter(|c| !matches!(c, ' ' | '-' | '/' | '_'))
                .flat_map(char::to_uppercase)
                .collect();
            squashed == "TITLE" || squashed == "JCAMPDX"
        })
    }

    /// The conversion as it was before the sort was skipped for points in order: the
    /// reference (nm and y, bit for bit).
    fn trace_reference(raw: &RawSpectrum) -> (Vec<u64>, Vec<u64>) {
        let unit = XUnit::parse(&raw.x_unit).unwrap_or(XUnit::Nanometre);
        let mut pts: Vec<(f64, f64)> = raw.x.iter().zip(&raw.y).map(|(&x, &y)| (unit.to_nm(x), y)).collect();
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        let stated: Vec<f64> = pts.iter().map(|p| p.1).collect();
        let y = quantity::y_as_analysed(raw.y_unit.as_deref(), &stated);
        (
            pts.iter().map(|p| p.0.to_bits()).collect(),
            y.iter().map(|v| v.to_bits()).collect(),
        )
    }

    fn raw(x: Vec<f64>, y: Vec<f64>, x_unit: &str, y_unit: Option<&str>) -> RawSpectrum {
        RawSpectrum {
            format: "test".into(),
            title: None,
            label: None,
            x_unit: x_unit.into(),
            y_unit: y_unit.map(str::to_string),
            x,
            y,
            checks: Vec::new(),
            warnings: Vec::new(),
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2000))]

        #[test]
        fn the_jcamp_sniff_equals_the_line_by_line_one(
            lines in proptest::collection::vec(
                prop_oneof![
                    Just("##TITLE= a".to_string()),
                    Just("  ## jcamp-dx = 5.01".to_string()),
                    Just("## Results".to_string()),
                    Just("# note".to_string()),
                    Just("400,0.5".to_string()),
                    "[#A-Za-z=,. \\r-]{0,10}",
                ],
                0..70,
            ),
        ) {
            let text = lines.join("\n");
            prop_assert_eq!(looks_jcamp(&text), looks_jcamp_reference(&text), "{:?}", text);
        }

        /// Ascending, descending, shuffled and tied x in nm or eV, with absorbance or %T.
        #[test]
        fn traces_equal_the_sorted_conversion(
            start in 300.0f64..600.0,
            step in prop_oneof![Just(0.5f64), Just(-0.5f64), Just(1.0f64), Just(0.0f64)],
            jitter in proptest::collection::vec(0.0f64..40.0, 10..40),
            shuffle in any::<bool>(),
            ev in any::<bool>(),
            percent_t in any::<bool>(),
        ) {
            let mut x: Vec<f64> = jitter
                .iter()
                .enumerate()
                .map(|(i, j)| if shuffle { start + j } else { start + step * i as f64 })
                .collect();
            if ev {
                x = x.iter().map(|nm| HC_EV_NM / nm).collect();
            }
            let y: Vec<f64> = jitter.iter().map(|j| 1.0 + j).collect();
            let r = raw(x, y, if ev { "eV" } else { "nm" }, percent_t.then_some("%T"));
            match r.to_trace("f", None) {
                Ok(t) => {
                    let (nm, y) = trace_reference(&r);
                    prop_assert_eq!(t.nm.iter().map(|v| v.to_bits()).collect::<Vec<_>>(), nm);
                    prop_assert_eq!(t.y.iter().map(|v| v.to_bits()).collect::<Vec<_>>(), y);
                }
                // Only a span too narrow for UV-Vis (equal x) is refused here.
                Err(e) => prop_assert!(e.to_string().contains("not plausible"), "{}", e),
            }
        }
    }
}
