//! `analyze`: spectrum files analysed with the shipped calibration and no lab, on both cores,
//! one result line per spectrum, printed in file order.

use super::read_options;
use crate::cli::args::*;
use crate::cli::output::{self, json_line, line, molar, num};
use crate::derive::{calibration, engine, sizing};
use crate::spectra::{self, analysis};
use anyhow::{Context, Result, bail};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

fn expand(paths: &[PathBuf]) -> Result<Vec<PathBuf>> {
    let mut out = Vec::new();
    for p in paths {
        if p.is_dir() {
            let mut v: Vec<PathBuf> = std::fs::read_dir(p)
                .with_context(|| format!("cannot read folder {}", p.display()))?
                .filter_map(|e| e.ok())
                .filter(|e| !e.file_name().to_string_lossy().starts_with('.'))
                .filter(|e| {
                    // The folder listing says what an entry is without another look at the
                    // disk; only a link is followed, to see whether it ends at a file.
                    match e.file_type() {
                        Ok(t) if t.is_file() => true,
                        Ok(t) if t.is_symlink() => e.path().is_file(),
                        Ok(_) => false,
                        Err(_) => e.path().is_file(),
                    }
                })
                .map(|e| e.path())
                .collect();
            v.sort();
            out.extend(v);
        } else {
            out.push(p.clone());
        }
    }
    Ok(out)
}

/// One result line of `analyze`: a spectrum's analysis or the refusal of a file. Its JSON lists
/// the keys of the line (and of an absorbance line's band edge) in alphabetical order, as it
/// always has (it was once built as a `serde_json::Value`, whose maps are sorted), so scripts
/// and tests see the same text.
#[derive(Debug, serde::Serialize)]
#[serde(untagged)]
pub enum AnalyzeLine {
    Abs(Box<AbsLine>),
    Pl(Box<PlLine>),
    Refused { error: String, file: String },
}

impl AnalyzeLine {
    fn error(&self) -> Option<&str> {
        match self {
            AnalyzeLine::Refused { error, .. } => Some(error),
            _ => None,
        }
    }
}

/// An absorbance (or PL excitation) result; fields in alphabetical order (see [`AnalyzeLine`]).
/// The sizing fields are there only with `--material`, `label` only for a file with several
/// spectra.
#[derive(Debug, serde::Serialize)]
pub struct AbsLine {
    #[serde(serialize_with = "sorted_band_edge")]
    band_edge: Option<spectra::band_edge::BandEdge>,
    #[serde(skip_serializing_if = "Option::is_none")]
    concentration_molar: Option<Option<f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    curve: Option<Option<String>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    diameter_nm: Option<Option<f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    extinction_m1cm1: Option<Option<f64>>,
    file: String,
    first_exciton_abs: Option<f64>,
    first_exciton_nm: Option<f64>,
    hwhm_mev: Option<f64>,
    hwhm_nm: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    label: Option<Option<String>>,
    shoulder: bool,
    warnings: Vec<String>,
}

/// A PL result; fields in alphabetical order (see [`AnalyzeLine`]); the bands, narrow lines and
/// gaps as [`spectra::pl`] lists them. `label` only for a file with several spectra.
#[derive(Debug, serde::Serialize)]
pub struct PlLine {
    bands: Vec<spectra::pl::PlBand>,
    baseline_model: String,
    file: String,
    grid_gaps: Vec<spectra::pl::GridGap>,
    #[serde(skip_serializing_if = "Option::is_none")]
    label: Option<Option<String>>,
    narrow_lines: Vec<spectra::pl::NarrowLine>,
    pl_fwhm_mev: Option<f64>,
    pl_fwhm_nm: Option<f64>,
    pl_integral: f64,
    pl_integral_band_edge: Option<f64>,
    pl_integral_energy: f64,
    pl_peak_nm: Option<f64>,
    warnings: Vec<String>,
}

/// The band-edge model with its keys in alphabetical order. Every field is named (no `..`), so
/// a field added to [`spectra::band_edge::BandEdge`] stops the build here until it is listed;
/// a test compares this with the struct's own serialisation, sorted.
fn sorted_band_edge<S: serde::Serializer>(
    be: &Option<spectra::band_edge::BandEdge>,
    s: S,
) -> std::result::Result<S::Ok, S::Error> {
    use serde::ser::SerializeStruct;
    let Some(be) = be else {
        return s.serialize_none();
    };
    let spectra::band_edge::BandEdge {
        method,
        quality,
        centre_ev,
        centre_sd_ev,
        hwhm_ev,
        hwhm_sd_ev,
        height,
        composite_abs,
        residual_rms,
        residual_over_noise,
        fit_from_nm,
        fit_to_nm,
        transitions,
        shoulder,
        warnings,
    } = be;
    struct Transitions<'a>(&'a [spectra::band_edge::Transition]);
    impl serde::Serialize for Transitions<'_> {
        fn serialize<S: serde::Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
            use serde::ser::SerializeSeq;
            let mut seq = s.serialize_seq(Some(self.0.len()))?;
            for t in self.0 {
                let spectra::band_edge::Transition {
                    centre_nm,
                    centre_ev,
                    hwhm_ev,
                    height,
                } = t;
                seq.serialize_element(&SortedTransition {
                    centre_ev: *centre_ev,
                    centre_nm: *centre_nm,
                    height: *height,
                    hwhm_ev: *hwhm_ev,
                })?;
            }
            seq.end()
        }
    }
    #[derive(serde::Serialize)]
    struct SortedTransition {
        centre_ev: f64,
        centre_nm: f64,
        height: f64,
        hwhm_ev: f64,
    }
    let mut st = s.serialize_struct("BandEdge", 15)?;
    st.serialize_field("centre_ev", centre_ev)?;
    st.serialize_field("centre_sd_ev", centre_sd_ev)?;
    st.serialize_field("composite_abs", composite_abs)?;
    st.serialize_field("fit_from_nm", fit_from_nm)?;
    st.serialize_field("fit_to_nm", fit_to_nm)?;
    st.serialize_field("height", height)?;
    st.serialize_field("hwhm_ev", hwhm_ev)?;
    st.serialize_field("hwhm_sd_ev", hwhm_sd_ev)?;
    st.serialize_field("method", method)?;
    st.serialize_field("quality", quality)?;
    st.serialize_field("residual_over_noise", residual_over_noise)?;
    st.serialize_field("residual_rms", residual_rms)?;
    st.serialize_field("shoulder", shoulder)?;
    st.serialize_field("transitions", &Transitions(transitions))?;
    st.serialize_field("warnings", warnings)?;
    st.end()
}

/// Analyses one file for `analyze`: a line for each spectrum it holds (one, or each sample
/// column or block, with its `label`), or one line with the error.
pub fn analyze_file(path: &Path, a: &AnalyzeArgs, cal: &calibration::Calibration) -> Vec<AnalyzeLine> {
    use std::cell::RefCell;
    // One buffer per worker thread for the file's bytes: a run over many files reads each into
    // the same memory instead of allocating per file.
    thread_local! {
        static BYTES: RefCell<Vec<u8>> = const { RefCell::new(Vec::new()) };
    }
    let file = path.display().to_string();
    let opts = read_options(a.x_col, a.y_col, &a.x_unit, &a.block, &a.choice);
    let read = BYTES.with_borrow_mut(|bytes| {
        let all = spectra::file_bytes_into(path, bytes).and_then(|()| spectra::read_all(&file, bytes, &opts));
        // A rare large file does not keep its memory for the rest of the run.
        if bytes.capacity() > 4 << 20 {
            *bytes = Vec::new();
        }
        all
    });
    let all = match read {
        Ok(all) => all,
        Err(e) => {
            return vec![AnalyzeLine::Refused {
                error: e.to_string(),
                file,
            }];
        }
    };
    let several = all.len() > 1;
    all.into_iter()
        .map(|raw| {
            let mut line = analyze_one(&file, &raw, a, cal);
            if several {
                match &mut line {
                    AnalyzeLine::Abs(l) => l.label = Some(raw.label),
                    AnalyzeLine::Pl(l) => l.label = Some(raw.label),
                    AnalyzeLine::Refused { .. } => {}
                }
            }
            line
        })
        .collect()
}

fn analyze_one(file: &str, raw: &spectra::RawSpectrum, a: &AnalyzeArgs, cal: &calibration::Calibration) -> AnalyzeLine {
    let result = (|| -> crate::Result<AnalyzeLine> {
        let t = raw.to_trace(file, None)?;
        match a.kind {
            Kind::Abs | Kind::Ple => {
                // The same two stages an aliquot of the lab goes through.
                let core = a.material.as_deref().map(|m| m.split('/').next().unwrap_or(m));
                let (r, values) = engine::derive_from_trace(&t, core.unwrap_or(""), a.dilution, a.path_cm, cal)?;
                let mut line = AbsLine {
                    file: file.to_string(),
                    first_exciton_nm: r.first_exciton_nm,
                    first_exciton_abs: r.first_exciton_abs,
                    hwhm_nm: r.hwhm_nm,
                    hwhm_mev: r.hwhm_ev.map(|h| h * 1000.0),
                    shoulder: r.shoulder,
                    band_edge: r.band_edge,
                    warnings: r.warnings,
                    concentration_molar: None,
                    curve: None,
                    diameter_nm: None,
                    extinction_m1cm1: None,
                    label: None,
                };
                if a.material.is_some() {
                    let get = |q: &str| engine::find_value(&values, q);
                    for q in ["diameter_nm", "extinction_m1cm1", "concentration_molar"] {
                        line.warnings
                            .extend(get(q).map(|d| d.warnings.clone()).unwrap_or_default());
                    }
                    let diameter = get("diameter_nm").filter(|d| d.value.is_some());
                    line.diameter_nm = Some(diameter.and_then(|d| d.value));
                    line.curve = Some(diameter.map(|d| d.method.clone()));
                    line.extinction_m1cm1 = Some(get("extinction_m1cm1").and_then(|d| d.value));
                    line.concentration_molar = Some(get("concentration_molar").and_then(|d| d.value));
                }
                Ok(AnalyzeLine::Abs(Box::new(line)))
            }
            Kind::Pl => {
                let r = analysis::analyze_pl(&t, &cal.analysis)?;
                Ok(AnalyzeLine::Pl(Box::new(PlLine {
                    file: file.to_string(),
                    pl_peak_nm: r.pl_peak_nm,
                    pl_fwhm_nm: r.pl_fwhm_nm,
                    pl_fwhm_mev: r.pl_fwhm_mev,
                    pl_integral: r.pl_integral,
                    pl_integral_energy: r.pl_integral_energy,
                    pl_integral_band_edge: r.pl_integral_band_edge,
                    baseline_model: r.baseline_model,
                    bands: r.bands,
                    narrow_lines: r.narrow_lines,
                    grid_gaps: r.grid_gaps,
                    warnings: r.warnings,
                    label: None,
                })))
            }
        }
    })();
    match result {
        Ok(line) => line,
        Err(e) => AnalyzeLine::Refused {
            error: e.to_string(),
            file: file.to_string(),
        },
    }
}

pub(super) fn analyze(a: &AnalyzeArgs) -> Result<ExitCode> {
    if let Some(m) = &a.material {
        let core = m.split('/').next().unwrap_or(m);
        if sizing::curves_for(core).is_empty() {
            bail!("unknown material '{m}' for sizing (known cores: CdSe, CdTe, CdS, PbS, PbSe, InP)");
        }
    }
    if !(a.path_cm > 0.0) || !(a.dilution >= 1.0) {
        bail!("--path-cm must be above zero and --dilution at least 1");
    }
    let files = expand(&a.paths)?;
    // Stateless: the shipped calibration, with the curve asked for.
    let mut cal = calibration::Calibration::default();
    if let (Some(m), Some(c)) = (&a.material, &a.curve) {
        cal.set_curve(m.split('/').next().unwrap_or(m), c);
    }
    let workers = std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(2)
        .clamp(1, 8);
    // A person at a terminal gets each line through the printing helpers (which keep a
    // progress bar intact). Output to a file or a pipe is rendered by the workers, so the one
    // thread that prints only writes the text, in file order, through one buffer rather than
    // one write per line.
    let to_terminal = {
        use std::io::IsTerminal;
        std::io::stdout().is_terminal()
    };
    // For output to a file or a pipe the workers keep only the rendered text and the error,
    // so each result is dropped by the worker that made it, not kept to the end.
    enum Done {
        Terminal(AnalyzeLine),
        Rendered {
            error: Option<String>,
            text: Result<String>,
        },
    }
    let results: Vec<Done> = crate::report::parallel_map(&files, workers, |p| {
        analyze_file(p, a, &cal)
            .into_iter()
            .map(|v| {
                if to_terminal {
                    return Done::Terminal(v);
                }
                Done::Rendered {
                    error: v.error().map(str::to_string),
                    text: analyze_text(&v, a),
                }
            })
            .collect::<Vec<_>>()
    })
    .into_iter()
    .flatten()
    .collect();
    let mut failed = false;
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::with_capacity(1 << 16, stdout.lock());
    let mut outcome = Ok(());
    for done in results {
        let error = match &done {
            Done::Terminal(v) => v.error().map(str::to_string),
            Done::Rendered { error, .. } => error.clone(),
        };
        if let Some(e) = error {
            failed = true;
            // What came before is on stdout before the warning, as when each line was
            // written at once (the two streams often share one terminal or file).
            output::stdout_written(out.flush())?;
            output::warn(&format!("refused {e}"));
        }
        let printed = match done {
            Done::Terminal(v) => {
                if a.json {
                    json_line(&v)
                } else {
                    analyze_lines(&v, a).and_then(|lines| lines.iter().try_for_each(|l| line(l)))
                }
            }
            Done::Rendered { text, .. } => text.and_then(|t| output::stdout_written(out.write_all(t.as_bytes()))),
        };
        if let Err(e) = printed {
            outcome = Err(e);
            break;
        }
    }
    output::stdout_written(out.flush())?;
    outcome?;
    Ok(if failed { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

/// The text `analyze` writes to a file or a pipe for one result, as [`output::line`] would
/// write each of its lines. A JSON line is serialised straight into its text: serde_json
/// escapes every C0 control in strings and [`crate::safe_text::json_text`] the other code
/// points a terminal acts on, so the terminal pass `output::line` makes would change nothing
/// in it and is not made.
fn analyze_text(v: &AnalyzeLine, a: &AnalyzeArgs) -> Result<String> {
    if a.json {
        let mut bytes = Vec::with_capacity(1024);
        serde_json::to_writer(&mut bytes, v)?;
        bytes.push(b'\n');
        // serde_json writes UTF-8.
        let text = String::from_utf8(bytes)?;
        return Ok(crate::safe_text::json_text(text));
    }
    let mut text = String::new();
    for l in analyze_lines(v, a)? {
        text.push_str(&crate::safe_text::for_terminal_lines(&l));
        text.push('\n');
    }
    Ok(text)
}

/// The lines `analyze` prints on stdout for one result, before they are made safe for a
/// terminal: the JSON text, or the summary and its warnings (nothing for a refused file, which
/// is named on stderr).
fn analyze_lines(v: &AnalyzeLine, a: &AnalyzeArgs) -> Result<Vec<String>> {
    if a.json {
        return Ok(vec![crate::safe_text::json_text(serde_json::to_string(v)?)]);
    }
    // As the JSON has it: a number that is not finite is written null, and printed "-".
    let n = |x: Option<f64>, d: usize| num(x.filter(|x| x.is_finite()), d);
    let named = |file: &str, label: &Option<Option<String>>| match label {
        Some(Some(l)) => format!("{file} [{l}]"),
        _ => file.to_string(),
    };
    let (summary, warnings) = match v {
        AnalyzeLine::Refused { .. } => return Ok(Vec::new()),
        AnalyzeLine::Pl(p) => (
            format!(
                "{}  PL {} nm  FWHM {} nm  integral {}",
                named(&p.file, &p.label),
                n(p.pl_peak_nm, 1),
                n(p.pl_fwhm_nm, 1),
                n(Some(p.pl_integral), 1)
            ),
            &p.warnings,
        ),
        AnalyzeLine::Abs(l) => (
            format!(
                "{}  first exciton {} nm{}  A {}  HWHM {} nm{}",
                named(&l.file, &l.label),
                n(l.first_exciton_nm, 1),
                if l.shoulder { " (shoulder)" } else { "" },
                n(l.first_exciton_abs, 3),
                n(l.hwhm_nm, 1),
                match l.diameter_nm {
                    Some(d) => format!(
                        "  D {} nm  c {}",
                        n(d, 2),
                        molar(l.concentration_molar.flatten().filter(|x| x.is_finite()))
                    ),
                    None => String::new(),
                }
            ),
            &l.warnings,
        ),
    };
    let mut lines = vec![summary];
    lines.extend(warnings.iter().map(|w| format!("  warning: {w}")));
    Ok(lines)
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    /// A line's JSON text is what the same values give as a `serde_json::Value` (whose maps
    /// are sorted), at every depth: the text `analyze --json` has always written.
    #[test]
    fn analyze_lines_serialise_with_sorted_keys() {
        let cal = calibration::Calibration::default();
        for peak in [480.0, 550.0, 610.0] {
            let (nm, y) =
                crate::lab::demo::absorbance("CdSe", peak, 0.045, 0.3, 0.001, &mut crate::lab::demo::Rng::new(3));
            let t = spectra::Trace { nm, y };
            let (r, _) = engine::derive_from_trace(&t, "CdSe", 1.0, 1.0, &cal).expect("analyses");
            let be = r.band_edge.clone().expect("a band edge");
            let line = AnalyzeLine::Abs(Box::new(AbsLine {
                file: "f.csv".into(),
                first_exciton_nm: r.first_exciton_nm,
                first_exciton_abs: r.first_exciton_abs,
                hwhm_nm: r.hwhm_nm,
                hwhm_mev: r.hwhm_ev.map(|h| h * 1000.0),
                shoulder: r.shoulder,
                band_edge: r.band_edge.clone(),
                warnings: vec!["a \u{1b} warning".into()],
                concentration_molar: Some(Some(1e-6)),
                curve: Some(None),
                diameter_nm: Some(Some(3.2)),
                extinction_m1cm1: None,
                label: Some(Some("20 s".into())),
            }));
            let want = json!({
                "file": "f.csv",
                "first_exciton_nm": r.first_exciton_nm,
                "first_exciton_abs": r.first_exciton_abs,
                "hwhm_nm": r.hwhm_nm,
                "hwhm_mev": r.hwhm_ev.map(|h| h * 1000.0),
                "shoulder": r.shoulder,
                "band_edge": be,
                "warnings": ["a \u{1b} warning"],
                "concentration_molar": 1e-6,
                "curve": null,
                "diameter_nm": 3.2,
                "label": "20 s",
            });
            let text = serde_json::to_string(&line).expect("serialises");
            assert_eq!(text, want.to_string());
            assert!(text.starts_with("{\"band_edge\":{\"centre_ev\":"), "{text}");
            let none = AbsLine {
                band_edge: None,
                ..match line {
                    AnalyzeLine::Abs(l) => *l,
                    _ => unreachable!(),
                }
            };
            assert!(
                serde_json::to_string(&none)
                    .expect("serialises")
                    .starts_with("{\"band_edge\":null,")
            );
        }
        let refused = AnalyzeLine::Refused {
            error: "f.csv line 3: bad".into(),
            file: "f.csv".into(),
        };
        assert_eq!(
            serde_json::to_string(&refused).expect("serialises"),
            json!({"file": "f.csv", "error": "f.csv line 3: bad"}).to_string()
        );
    }
}
