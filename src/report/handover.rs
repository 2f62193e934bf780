//! The handover pack: a self-contained HTML report that needs no network (vials by location, a
//! section per batch with recipe, growth table, inline SVG plots, derived values with their
//! calibration versions, storage and the hazards of its reagents; printable vial labels) and
//! the inventory as CSV. The handover itself (the write) is `lab::handover`, which writes this
//! pack inside its transaction.

use super::{plot, shelf_entry};
use crate::error::{Error, Result};
use crate::safe_text::{csv_number, csv_text};
use crate::store::{Db, model, now};
use maud::{DOCTYPE, PreEscaped, html};
use serde::Serialize;
use std::path::Path;

/// Every piece of stored text goes into the page through here: markup characters as entities,
/// and the controls HTML and XML must not carry shown visibly, so the pack is well-formed
/// whatever a name holds.
fn esc(s: &str) -> String {
    crate::safe_text::markup(s)
}

/// A value as the pack shows it: a number that is not finite is shown as missing, as the JSON
/// view the pack was first written from has it (serde_json prints it as null).
fn finite(v: Option<f64>) -> Option<f64> {
    v.filter(|x| x.is_finite())
}

fn n(v: Option<f64>, d: usize) -> String {
    v.map(|x| format!("{x:.d$}")).unwrap_or_else(|| "–".into())
}

/// The pack's own style sheet: a constant of ours, the one stylesheet the page carries.
const PACK_CSS: &str = "body{font-family:sans-serif;margin:2em;max-width:1250px} table{border-collapse:collapse;margin:0.5em 0}\
 td,th{border:1px solid #999;padding:3px 7px;font-size:0.9em} th{background:#eee} .caution{background:#fff4d6;border:1px solid #c90;padding:0.6em}\
 .labels{display:grid;grid-template-columns:repeat(3,1fr);gap:6px} .label{border:1px dashed #333;padding:6px;font-size:0.8em}\
 @media print{.noprint{display:none} section{page-break-inside:avoid}}";

/// Stored text as the page shows it. The template escapes every string it is given; text
/// from the record goes in through this instead, which also makes the controls HTML and XML
/// must not carry visible ([`crate::safe_text::markup`]), so the pack is well-formed whatever
/// a name holds.
struct Shown<'a>(&'a str);

impl maud::Render for Shown<'_> {
    fn render_to(&self, buffer: &mut String) {
        buffer.push_str(&esc(self.0));
    }
}

/// A vial's concentration as the pack prints it: µM with the note of where it came from and
/// its calibration version (written out in the table, short on a label), or a dash.
fn concentration_text(v: &model::VialRow, on_label: bool) -> String {
    let Some(c) = v.concentration_molar else {
        return "–".into();
    };
    let version = match (v.calibration_version, on_label) {
        (Some(k), true) => format!(" v{k}"),
        (Some(k), false) => format!(" (cal. v{k})"),
        (None, _) => String::new(),
    };
    let decimals = if on_label { 1 } else { 2 };
    format!("{:.decimals$} µM {}{version}", c * 1e6, super::concentration_note(v))
}

/// Writes the pack for a handover into `dir`: `index.html` and `inventory.csv`; returns the
/// file names. It reads through `tx`, the handover's own transaction, so the pack shows the
/// record as the handover leaves it.
pub fn write_pack(
    tx: &Db,
    dir: &Path,
    from: &str,
    to: &str,
    vial_ids: &[i64],
    batch_ids: &[i64],
    progress: &mut dyn FnMut(usize, usize),
) -> Result<Vec<String>> {
    let vials: Vec<model::VialRow> = vial_ids
        .iter()
        .map(|id| model::get_vial(tx, *id))
        .collect::<Result<_>>()?;
    // Vials grouped by location in the order the store gives them (by location).
    let mut by_location: Vec<(&str, Vec<&model::VialRow>)> = Vec::new();
    for v in &vials {
        match by_location.last_mut() {
            Some((loc, group)) if *loc == v.location => group.push(v),
            _ => by_location.push((&v.location, vec![v])),
        }
    }
    let mut sections = Vec::with_capacity(batch_ids.len());
    let mut labels = Vec::new();
    for (done, b) in batch_ids.iter().enumerate() {
        progress(done, batch_ids.len());
        let sheet = super::batch_sheet(tx, *b)?;
        let svg = plot::plot_batch_svg(tx, sheet.batch.id)?;
        sections.push(batch_section(&sheet, &svg, vial_ids, to, &mut labels));
    }
    progress(batch_ids.len(), batch_ids.len());
    let page = html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                title { "Handover from " (Shown(from)) " to " (Shown(to)) }
                // Trusted: our own constant style sheet.
                style { (PreEscaped(PACK_CSS)) }
            }
            body {
                h1 { "Handover from " (Shown(from)) " to " (Shown(to)) }
                p { "Written " (now()) " by cuvette." }
                p class="caution" { (Shown(crate::hazards::SDS_NOTICE)) }
                h2 id="vials" { "Vials by location" }
                @for (loc, group) in &by_location {
                    h3 { (Shown(loc)) }
                    table {
                        tr {
                            th { "vial" } th { "label" } th { "batch" } th { "material" } th { "mL left" }
                            th { "conc." } th { "nmol left" } th { "solvent" } th { "position" }
                        }
                        @for v in group {
                            tr class="vial" data-vial-id=(v.id) {
                                td { (v.id) }
                                td { (Shown(&v.label)) }
                                td { a href={ "#batch-" (v.batch_id) } { (v.batch_id) } }
                                td { (Shown(&v.material)) }
                                td { (format!("{:.3}", v.volume_ml)) }
                                td { (concentration_text(v, false)) }
                                td { (n(shelf_entry(v).nanomoles_left, 2)) }
                                td { (Shown(&v.solvent)) }
                                td { (Shown(v.position.as_deref().unwrap_or_default())) }
                            }
                        }
                    }
                }
                @if vials.is_empty() {
                    p { "No vials." }
                }
                @for section in &sections {
                    (section)
                }
                h2 id="labels" { "Vial labels" }
                div class="labels" {
                    @for label in &labels {
                        (label)
                    }
                }
            }
        }
    };
    let html = page.into_string();
    std::fs::write(dir.join("index.html"), &html)?;
    let mut w = csv::Writer::from_path(dir.join("inventory.csv")).map_err(|e| Error::Invalid(format!("csv: {e}")))?;
    for v in &vials {
        w.serialize(InventoryCsv::of(v, to))
            .map_err(|e| Error::Invalid(format!("csv: {e}")))?;
    }
    w.flush()?;
    Ok(vec!["index.html".into(), "inventory.csv".into()])
}

/// A line of the pack's `inventory.csv`: the vial as it is after the handover (owned by the
/// new person). Text cells carry the spreadsheet-formula guard; the volume has four decimals.
#[derive(Serialize)]
struct InventoryCsv {
    vial_id: i64,
    label: String,
    batch_id: i64,
    material: String,
    location: String,
    position: String,
    volume_ml: String,
    solvent: String,
    concentration_molar: String,
    owner: String,
    status: String,
}

impl InventoryCsv {
    fn of(v: &model::VialRow, owner: &str) -> Self {
        InventoryCsv {
            vial_id: v.id,
            label: csv_text(&v.label).into_owned(),
            batch_id: v.batch_id,
            material: csv_text(&v.material).into_owned(),
            location: csv_text(&v.location).into_owned(),
            position: csv_text(v.position.as_deref().unwrap_or_default()).into_owned(),
            volume_ml: format!("{:.4}", v.volume_ml),
            solvent: csv_text(&v.solvent).into_owned(),
            concentration_molar: v.concentration_molar.map(csv_number).unwrap_or_default(),
            owner: csv_text(owner).into_owned(),
            status: csv_text(v.status.as_str()).into_owned(),
        }
    }
}

/// One batch's section of the pack; the labels of the handed-over vials it stores are added
/// to `labels`.
fn batch_section(
    sheet: &super::BatchSheet,
    svg: &str,
    vial_ids: &[i64],
    to: &str,
    labels: &mut Vec<maud::Markup>,
) -> maud::Markup {
    let batch = &sheet.batch;
    let product_nm = finite(sheet.product.as_ref().and_then(|p| p.diameter_nm));
    let hazards: Vec<String> = match &sheet.recipe_detail {
        Some(r) => r.reagents.iter().flat_map(|g| g.ghs_hazards.clone()).collect(),
        None => vec![],
    };
    let pictograms = crate::hazards::pictograms(hazards.iter().map(String::as_str));
    let pictogram_text = if pictograms.is_empty() {
        "no GHS pictogram".to_string()
    } else {
        pictograms.join(", ")
    };
    for v in sheet.vials.iter().filter(|v| vial_ids.contains(&v.id)) {
        labels.push(html! {
            div class="label" data-vial-id=(v.id) {
                b { (Shown(&v.label)) }
                br;
                "batch " (batch.id) " · " (Shown(&batch.material))
                br;
                "D " (n(product_nm, 1)) " nm · " (concentration_text(v, true))
                br;
                (Shown(v.created_at.get(..10).unwrap_or(""))) " · " (Shown(to))
                br;
                (Shown(&pictogram_text))
            }
        });
    }
    let g = &sheet.growth;
    html! {
        section class="batch" id={ "batch-" (batch.id) } data-batch-id=(batch.id) {
            h2 { "Batch " (batch.id) ": " (Shown(&batch.name)) }
            p {
                (Shown(&batch.material)) ", " (Shown(batch.status.as_str())) ", started " (Shown(&batch.started_at))
                " by " (Shown(batch.operator.as_deref().unwrap_or("")))
                @if let Some(p) = batch.parent_batch_id {
                    ", made from batch " (p) " (" (Shown(batch.parent_relation.map(|r| r.as_str()).unwrap_or_default())) ")"
                }
            }
            @if batch.voided {
                p class="caution" {
                    b { "VOID" } ": " (Shown(batch.void_why.as_deref().unwrap_or("")))
                    " (kept in the record; its values count for nothing)"
                }
            }
            @if !batch.notes.is_empty() {
                p { "Notes: " (Shown(&batch.notes)) }
            }
            @if let Some(view) = &sheet.recipe_detail {
                h3 { "Recipe " (Shown(&view.name)) " v" (view.version) }
                table {
                    tr { th { "reagent" } th { "amount" } th { "role" } th { "GHS hazards" } }
                    @for r in &view.reagents {
                        tr {
                            td { (Shown(&r.reagent)) }
                            td { (r.amount) " " (Shown(&r.unit)) }
                            td { (Shown(r.role.as_deref().unwrap_or_default())) }
                            td {
                                (Shown(&r
                                    .ghs_hazards
                                    .iter()
                                    .map(|h| format!("{h} {}", crate::hazards::statement(h).unwrap_or("")))
                                    .collect::<Vec<_>>()
                                    .join("; ")))
                            }
                        }
                    }
                }
                ol {
                    @for s in &view.steps {
                        li {
                            (Shown(&s.action))
                            @if let Some(t) = s.temperature_c { " at " (t) " °C" }
                            @if let Some(m) = s.duration_min { " for " (m) " min" }
                        }
                    }
                }
            }
            div class="caution" {
                b { "Cautions" }
                ul { @for c in &sheet.cautions { li { (Shown(c)) } } }
            }
            h3 { "Growth series" }
            table {
                tr {
                    th { "aliquot" } th { "min / stage" } th { "first exciton (nm)" } th { "D (nm)" }
                    th { "σ/D (%)" } th { "conc. (µM)" } th { "PL (nm)" } th { "FWHM (nm)" } th { "QY" }
                    th { "curve" } th { "calibration" }
                }
                // Void aliquots stay in the lab's record but not in what a new student works from.
                @for a in sheet.aliquots.iter().filter(|a| !a.voided) {
                    tr {
                        td { (a.id) }
                        td {
                            @match finite(a.minutes) {
                                Some(m) => (m),
                                None => (Shown(a.stage.as_deref().unwrap_or(""))),
                            }
                        }
                        td { (n(finite(a.first_exciton_nm), 1)) }
                        td { (n(finite(a.diameter_nm), 2)) }
                        td { (n(finite(a.size_dispersion_pct), 1)) }
                        td { (n(finite(a.concentration_molar).map(|c| c * 1e6), 2)) }
                        td { (n(finite(a.pl_peak_nm), 1)) }
                        td { (n(finite(a.pl_fwhm_nm), 1)) }
                        td { (n(finite(a.qy), 2)) }
                        td { (Shown(a.curve.as_deref().unwrap_or("–"))) }
                        // As the JSON view printed it, so the pack reads as it always has.
                        td {
                            "v" (a.calibration_version.map(|v| v.to_string()).unwrap_or_else(|| "null".into()))
                            @if a.stale { " (stale)" }
                        }
                    }
                }
            }
            p { "Growth: " (Shown(&g.regime)) "; rate " (n(finite(g.growth_rate_nm_per_min), 3)) " nm/min." }
            // Trusted: the SVG is cuvette's own plot, whose every text went through
            // safe_text::markup when it was drawn. The one raw insertion in the pack.
            div class="plot" { (PreEscaped(svg)) }
            h3 { "Storage" }
            ul {
                @for v in &sheet.vials {
                    li {
                        "vial " (v.id) " " (Shown(&v.label)) ": " (format!("{:.3}", v.volume_ml)) " mL at "
                        (Shown(&v.location)) " (" (Shown(v.status.as_str())) ", owner "
                        (Shown(v.owner.as_deref().unwrap_or_default())) ")"
                    }
                }
            }
        }
    }
}
