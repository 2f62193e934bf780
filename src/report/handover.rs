//! Handover: a person's vials and open batches go to another person in one transaction, and a
//! self-contained pack is written (an HTML report that needs no network: vials by location, a
//! section per batch with recipe, growth table, inline SVG plots, derived values with their
//! calibration versions, storage and the hazards of its reagents; printable vial labels; the
//! inventory as CSV). The pack is written to a temporary folder first and moved into place only
//! after the transaction commits, so a failure anywhere leaves the database and DIR untouched.
//!
//! "Open" batches are those planned or growing: the new person carries them on. Finished
//! batches keep their operator, because who ran a synthesis is a fact of the record.

use super::{plot, shelf_entry};
use crate::error::{Error, Result, invalid};
use crate::safe_text::{csv_number, csv_text};
use crate::store::handover::hand_over;
use crate::store::{Db, Store, model, now};
use serde::Serialize;
use std::fmt::Write as _;
use std::path::Path;

#[derive(Debug, Clone, Serialize)]
pub struct HandoverReport {
    pub from: String,
    pub to: String,
    pub vials: usize,
    pub batches: usize,
    pub out: String,
    pub files: Vec<String>,
}

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

/// `fail_after_vials` makes the handover fail after that many vials (for tests of atomicity).
pub fn handover(
    store: &mut Store,
    from: &str,
    to: &str,
    out: &Path,
    fail_after_vials: Option<usize>,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<HandoverReport> {
    if out.exists() && std::fs::read_dir(out).map(|mut d| d.next().is_some()).unwrap_or(true) {
        return invalid(format!(
            "{} already exists and is not empty; choose a new folder",
            out.display()
        ));
    }
    let tmp = out.with_file_name(format!(
        ".{}.partial",
        out.file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| "handover".into())
    ));
    let _ = std::fs::remove_dir_all(&tmp);
    let result = store.write(|tx, who| {
        let done = hand_over(tx, who, from, to, fail_after_vials)?;
        std::fs::create_dir_all(&tmp).map_err(|e| Error::Invalid(format!("cannot create {}: {e}", tmp.display())))?;
        let files = write_pack(tx, &tmp, from, to, &done.vial_ids, &done.pack_batch_ids, progress)?;
        Ok((done.vial_ids.len(), done.batch_ids.len(), files))
    });
    match result {
        Ok((vials, batches, files)) => {
            if out.exists() {
                let _ = std::fs::remove_dir(out);
            }
            std::fs::rename(&tmp, out).map_err(|e| {
                Error::Invalid(format!(
                    "handover committed, but the pack could not be moved from {} to {}: {e}",
                    tmp.display(),
                    out.display()
                ))
            })?;
            Ok(HandoverReport {
                from: from.into(),
                to: to.into(),
                vials,
                batches,
                out: out.display().to_string(),
                files: files.iter().map(|f| out.join(f).display().to_string()).collect(),
            })
        }
        Err(e) => {
            let _ = std::fs::remove_dir_all(&tmp);
            Err(e)
        }
    }
}

fn write_pack(
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
    let mut html = String::new();
    let _ = write!(
        html,
        "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"><title>Handover from {f} to {t}</title><style>\
         body{{font-family:sans-serif;margin:2em;max-width:1250px}} table{{border-collapse:collapse;margin:0.5em 0}}\
         td,th{{border:1px solid #999;padding:3px 7px;font-size:0.9em}} th{{background:#eee}} .caution{{background:#fff4d6;border:1px solid #c90;padding:0.6em}}\
         .labels{{display:grid;grid-template-columns:repeat(3,1fr);gap:6px}} .label{{border:1px dashed #333;padding:6px;font-size:0.8em}}\
         @media print{{.noprint{{display:none}} section{{page-break-inside:avoid}}}}</style></head><body>\
         <h1>Handover from {f} to {t}</h1><p>Written {now} by cuvette.</p>\
         <p class=\"caution\">{sds}</p>",
        f = esc(from),
        t = esc(to),
        now = now(),
        sds = esc(crate::hazards::SDS_NOTICE)
    );
    html.push_str("<h2 id=\"vials\">Vials by location</h2>");
    let mut loc = String::new();
    for v in &vials {
        if v.location != loc {
            if !loc.is_empty() {
                html.push_str("</table>");
            }
            loc = v.location.clone();
            let _ = write!(
                html,
                "<h3>{}</h3><table><tr><th>vial</th><th>label</th><th>batch</th><th>material</th><th>mL left</th><th>conc.</th><th>nmol left</th><th>solvent</th><th>position</th></tr>",
                esc(&loc)
            );
        }
        let e = shelf_entry(v);
        let _ = write!(
            html,
            "<tr class=\"vial\" data-vial-id=\"{}\"><td>{}</td><td>{}</td><td><a href=\"#batch-{}\">{}</a></td><td>{}</td><td>{:.3}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
            v.id,
            v.id,
            esc(&v.label),
            v.batch_id,
            v.batch_id,
            esc(&v.material),
            v.volume_ml,
            v.concentration_molar
                .map(|c| format!(
                    "{:.2} µM {}{}",
                    c * 1e6,
                    super::concentration_note(v),
                    v.calibration_version
                        .map(|c| format!(" (cal. v{c})"))
                        .unwrap_or_default()
                ))
                .unwrap_or("–".into()),
            n(e.nanomoles_left, 2),
            esc(&v.solvent),
            esc(&v.position.clone().unwrap_or_default())
        );
    }
    if !loc.is_empty() {
        html.push_str("</table>");
    }
    if vials.is_empty() {
        html.push_str("<p>No vials.</p>");
    }
    let mut labels = String::from("<h2 id=\"labels\">Vial labels</h2><div class=\"labels\">");
    for (done, b) in batch_ids.iter().enumerate() {
        progress(done, batch_ids.len());
        let sheet = super::batch_sheet(tx, *b)?;
        let batch = &sheet.batch;
        let _ = write!(
            html,
            "<section class=\"batch\" id=\"batch-{id}\" data-batch-id=\"{id}\"><h2>Batch {id}: {name}</h2><p>{mat}, {status}, started {start} by {op}{parent}</p>",
            id = batch.id,
            name = esc(&batch.name),
            mat = esc(&batch.material),
            status = esc(&batch.status),
            start = esc(&batch.started_at),
            op = esc(batch.operator.as_deref().unwrap_or("")),
            parent = batch
                .parent_batch_id
                .map(|p| format!(
                    ", made from batch {p} ({})",
                    esc(batch.parent_relation.as_deref().unwrap_or_default())
                ))
                .unwrap_or_default()
        );
        if batch.voided {
            let _ = write!(
                html,
                "<p class=\"caution\"><b>VOID</b>: {} (kept in the record; its values count for nothing)</p>",
                esc(batch.void_why.as_deref().unwrap_or(""))
            );
        }
        if !batch.notes.is_empty() {
            let _ = write!(html, "<p>Notes: {}</p>", esc(&batch.notes));
        }
        if let Some(view) = &sheet.recipe_detail {
            let _ = write!(
                html,
                "<h3>Recipe {} v{}</h3><table><tr><th>reagent</th><th>amount</th><th>role</th><th>GHS hazards</th></tr>",
                esc(&view.name),
                view.version
            );
            for g in &view.reagents {
                let _ = write!(
                    html,
                    "<tr><td>{}</td><td>{} {}</td><td>{}</td><td>{}</td></tr>",
                    esc(&g.reagent),
                    g.amount,
                    esc(&g.unit),
                    esc(&g.role.clone().unwrap_or_default()),
                    esc(&g
                        .ghs_hazards
                        .iter()
                        .map(|h| format!("{h} {}", crate::hazards::statement(h).unwrap_or("")))
                        .collect::<Vec<_>>()
                        .join("; "))
                );
            }
            html.push_str("</table><ol>");
            for s in &view.steps {
                let _ = write!(
                    html,
                    "<li>{}{}{}</li>",
                    esc(&s.action),
                    s.temperature_c.map(|t| format!(" at {t} °C")).unwrap_or_default(),
                    s.duration_min.map(|m| format!(" for {m} min")).unwrap_or_default()
                );
            }
            html.push_str("</ol>");
        }
        html.push_str("<div class=\"caution\"><b>Cautions</b><ul>");
        for c in &sheet.cautions {
            let _ = write!(html, "<li>{}</li>", esc(c));
        }
        html.push_str("</ul></div><h3>Growth series</h3><table><tr><th>aliquot</th><th>min / stage</th><th>first exciton (nm)</th><th>D (nm)</th><th>σ/D (%)</th><th>conc. (µM)</th><th>PL (nm)</th><th>FWHM (nm)</th><th>QY</th><th>curve</th><th>calibration</th></tr>");
        // Void aliquots stay in the lab's record but not in what a new student works from.
        for a in sheet.aliquots.iter().filter(|a| !a.voided) {
            let _ = write!(
                html,
                "<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>v{}{}</td></tr>",
                a.id,
                finite(a.minutes)
                    .map(|m| m.to_string())
                    .unwrap_or_else(|| esc(a.stage.as_deref().unwrap_or(""))),
                n(finite(a.first_exciton_nm), 1),
                n(finite(a.diameter_nm), 2),
                n(finite(a.size_dispersion_pct), 1),
                n(finite(a.concentration_molar).map(|c| c * 1e6), 2),
                n(finite(a.pl_peak_nm), 1),
                n(finite(a.pl_fwhm_nm), 1),
                n(finite(a.qy), 2),
                esc(a.curve.as_deref().unwrap_or("–")),
                // As the JSON view printed it, so the pack reads as it always has.
                a.calibration_version
                    .map(|v| v.to_string())
                    .unwrap_or_else(|| "null".into()),
                if a.stale { " (stale)" } else { "" }
            );
        }
        html.push_str("</table>");
        let g = &sheet.growth;
        let _ = write!(
            html,
            "<p>Growth: {}; rate {} nm/min.</p>",
            esc(&g.regime),
            n(finite(g.growth_rate_nm_per_min), 3)
        );
        let svg = plot::plot_batch_svg(tx, batch.id)?;
        let _ = write!(html, "<div class=\"plot\">{svg}</div>");
        html.push_str("<h3>Storage</h3><ul>");
        let product_nm = finite(sheet.product.as_ref().and_then(|p| p.diameter_nm));
        for v in &sheet.vials {
            let _ = write!(
                html,
                "<li>vial {} {}: {:.3} mL at {} ({}, owner {})</li>",
                v.id,
                esc(&v.label),
                v.volume_ml,
                esc(&v.location),
                esc(&v.status),
                esc(&v.owner.clone().unwrap_or_default())
            );
            if vial_ids.contains(&v.id) {
                let hazards: Vec<String> = match &sheet.recipe_detail {
                    Some(r) => r.reagents.iter().flat_map(|g| g.ghs_hazards.clone()).collect(),
                    None => vec![],
                };
                let pict = crate::hazards::pictograms(hazards.iter().map(String::as_str));
                let _ = write!(
                    labels,
                    "<div class=\"label\" data-vial-id=\"{}\"><b>{}</b><br>batch {} · {}<br>D {} nm · {}<br>{} · {}<br>{}</div>",
                    v.id,
                    esc(&v.label),
                    batch.id,
                    esc(&batch.material),
                    n(product_nm, 1),
                    v.concentration_molar
                        .map(|c| format!(
                            "{:.1} µM {}{}",
                            c * 1e6,
                            super::concentration_note(v),
                            v.calibration_version.map(|c| format!(" v{c}")).unwrap_or_default()
                        ))
                        .unwrap_or("–".into()),
                    esc(v.created_at.get(..10).unwrap_or("")),
                    esc(to),
                    esc(&if pict.is_empty() {
                        "no GHS pictogram".to_string()
                    } else {
                        pict.join(", ")
                    })
                );
            }
        }
        html.push_str("</ul></section>");
    }
    progress(batch_ids.len(), batch_ids.len());
    labels.push_str("</div>");
    html.push_str(&labels);
    html.push_str("</body></html>");
    std::fs::write(dir.join("index.html"), &html)?;
    let mut w = csv::Writer::from_path(dir.join("inventory.csv")).map_err(|e| Error::Invalid(format!("csv: {e}")))?;
    w.write_record([
        "vial_id",
        "label",
        "batch_id",
        "material",
        "location",
        "position",
        "volume_ml",
        "solvent",
        "concentration_molar",
        "owner",
        "status",
    ])
    .map_err(|e| Error::Invalid(format!("csv: {e}")))?;
    for v in &vials {
        w.write_record([
            v.id.to_string(),
            csv_text(&v.label).into_owned(),
            v.batch_id.to_string(),
            csv_text(&v.material).into_owned(),
            csv_text(&v.location).into_owned(),
            csv_text(v.position.as_deref().unwrap_or_default()).into_owned(),
            format!("{:.4}", v.volume_ml),
            csv_text(&v.solvent).into_owned(),
            v.concentration_molar.map(csv_number).unwrap_or_default(),
            csv_text(to).into_owned(),
            csv_text(&v.status).into_owned(),
        ])
        .map_err(|e| Error::Invalid(format!("csv: {e}")))?;
    }
    w.flush()?;
    Ok(vec!["index.html".into(), "inventory.csv".into()])
}
