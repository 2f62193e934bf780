//! A compound file's spectra: every plain block and NTUPLES page that holds one is a
//! candidate; `--block` picks by number, title, label or page. Promises: with several and no
//! choice, the refusal lists them (up to [`MAX_LISTED`](super::MAX_LISTED)); blocks that
//! looked like spectra but cannot be read are kept with their line and reason.

use crate::error::Result;
use crate::spectra::{ReadOptions, spectrum_error};

use super::MAX_LISTED;
use super::labels::{Block, Ldr};

/// A spectrum the file holds: a plain block, or one page of an NTUPLES block.
#[derive(Debug, Clone)]
pub(super) struct Candidate<'a> {
    /// 1-based, among all blocks of the file.
    pub(super) block_no: usize,
    pub(super) block: &'a Block,
    /// For an NTUPLES page: the index of its `##PAGE=` record in `block.ldrs`.
    pub(super) page: Option<usize>,
    pub(super) label: String,
}

impl Candidate<'_> {
    fn page_value(&self) -> Option<String> {
        self.page.map(|i| self.block.ldrs[i].value.trim().to_string())
    }
}

/// The file parsed into blocks, the spectra it holds and the reasons blocks that looked like
/// spectra cannot be read.
pub(super) struct Parsed {
    pub(super) blocks: Vec<Block>,
}

impl Parsed {
    fn candidates(&self) -> (Vec<Candidate<'_>>, Vec<(usize, String)>) {
        let mut out = Vec::new();
        let mut refused = Vec::new();
        for (i, b) in self.blocks.iter().enumerate() {
            let block_no = i + 1;
            let title = b.title();
            let name = if title.is_empty() {
                format!("block {block_no}")
            } else {
                title
            };
            if ["XYDATA", "XYPOINTS", "PEAKTABLE"].iter().any(|l| b.get(l).is_some()) {
                out.push(Candidate {
                    block_no,
                    block: b,
                    page: None,
                    label: name,
                });
            } else if let Some(nt) = b.ldrs.iter().position(|l| l.label == "NTUPLES") {
                let mut pages = 0;
                for (k, l) in b.ldrs.iter().enumerate().skip(nt) {
                    if l.label == "PAGE" && page_ldrs(b, k).iter().any(|p| p.label == "DATATABLE") {
                        pages += 1;
                        out.push(Candidate {
                            block_no,
                            block: b,
                            page: Some(k),
                            label: format!("{name}, page {}", l.value.trim()),
                        });
                    }
                }
                if pages == 0 {
                    refused.push((
                        b.ldrs[nt].line,
                        format!(
                            "the ##NTUPLES= block '{name}' holds no ##PAGE= with a ##DATA TABLE=, so no spectrum can be read from it"
                        ),
                    ));
                }
            }
        }
        (out, refused)
    }
}

/// The records of one NTUPLES page: from after its `##PAGE=` to the next page or the end.
pub(super) fn page_ldrs(b: &Block, page: usize) -> &[Ldr] {
    let rest = &b.ldrs[page + 1..];
    let end = rest
        .iter()
        .position(|l| l.label == "PAGE" || l.label == "ENDNTUPLES")
        .unwrap_or(rest.len());
    &rest[..end]
}

pub(super) fn listing(cands: &[Candidate]) -> String {
    let mut s: Vec<String> = cands
        .iter()
        .take(MAX_LISTED)
        .enumerate()
        .map(|(i, c)| format!("{} '{}'", i + 1, c.label))
        .collect();
    if cands.len() > MAX_LISTED {
        s.push(format!("and {} more", cands.len() - MAX_LISTED));
    }
    s.join(", ")
}

/// The spectra `opts.block` picks (by 1-based number among the spectra, or by title, label or
/// NTUPLES page), or all of them.
pub(super) fn choose<'a>(file: &str, cands: Vec<Candidate<'a>>, opts: &ReadOptions) -> Result<Vec<Candidate<'a>>> {
    let Some(sel) = opts.block.as_deref().map(str::trim) else {
        return Ok(cands);
    };
    if let Ok(k) = sel.parse::<usize>() {
        return match cands.get(k.wrapping_sub(1)) {
            Some(c) => Ok(vec![c.clone()]),
            None => Err(spectrum_error(
                file,
                None,
                &format!(
                    "block {k} asked for; the file has {} spectra: {}",
                    cands.len(),
                    listing(&cands)
                ),
            )),
        };
    }
    let same = |a: &str| a.trim().eq_ignore_ascii_case(sel);
    let by_label: Vec<&Candidate> = cands.iter().filter(|c| same(&c.label)).collect();
    let by_title: Vec<&Candidate> = cands.iter().filter(|c| same(&c.block.title())).collect();
    let by_page: Vec<&Candidate> = cands
        .iter()
        .filter(|c| {
            c.page_value()
                .is_some_and(|p| same(&p) || same(p.replace(' ', "").as_str()))
        })
        .collect();
    let found = [by_label, by_title, by_page].into_iter().find(|v| !v.is_empty());
    match found {
        Some(v) if v.len() == 1 => Ok(vec![v[0].clone()]),
        Some(v) => {
            let all: Vec<Candidate> = v.into_iter().cloned().collect();
            Err(spectrum_error(
                file,
                None,
                &format!(
                    "--block '{sel}' names {} spectra: {}; choose one by number or by its full name",
                    all.len(),
                    listing(&all)
                ),
            ))
        }
        None => Err(spectrum_error(
            file,
            None,
            &format!("no block titled '{sel}'; the file holds: {}", listing(&cands)),
        )),
    }
}

/// Blocks that looked like spectra but cannot be read: the line and the reason.
type Refusals = Vec<(usize, String)>;

pub(super) fn parse_and_choose<'a>(
    file: &str,
    parsed: &'a Parsed,
    opts: &ReadOptions,
) -> Result<(Vec<Candidate<'a>>, Refusals)> {
    let (cands, refused) = parsed.candidates();
    if cands.is_empty() {
        return Err(match refused.into_iter().next() {
            Some((line, r)) => spectrum_error(file, Some(line), &r),
            None => spectrum_error(
                file,
                None,
                "JCAMP-DX file holds no ##XYDATA=, ##XYPOINTS=, ##PEAK TABLE= or ##NTUPLES= block",
            ),
        });
    }
    Ok((choose(file, cands, opts)?, refused))
}
