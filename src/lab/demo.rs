//! The invented demo lab. `demo-db/lab.json` (compiled in) names the people, locations,
//! recipes and batch plans; this module turns each plan into aliquots whose spectra are
//! generated from stated formulas — excitonic Gaussians in energy on a background rising
//! towards the UV, plus noise; PL a Gaussian in energy scaled to a target quantum yield — and
//! logs them through the same store and engine a user's files go through. `--scale N` makes a
//! large invented lab for load tests. Nothing here is real data.

use crate::derive::{calibration, qy};
use crate::error::{Error, Result};
use crate::spectra::HC_EV_NM;
use crate::store::demo_marks::DemoMarks;
use crate::store::model::{self, NewAliquot, NewBatch, NewSpectrum, NewVial, RecipeReagent, RecipeStep};
use crate::store::{Store, model::meta_set};
use crate::vocab::{BatchRelation, BatchStatus, LocationKind, VialStatus};
use serde::Deserialize;
use std::path::Path;

pub const MANIFEST: &str = include_str!("../../demo-db/lab.json");

#[derive(Debug, Deserialize)]
struct Manifest {
    lab: String,
    people: Vec<Person>,
    locations: Vec<Location>,
    recipes: Vec<Recipe>,
    batches: Vec<BatchPlan>,
    qy_reference: QyRef,
}
#[derive(Debug, Deserialize)]
struct Person {
    name: String,
    email: Option<String>,
}
#[derive(Debug, Deserialize)]
struct Location {
    name: String,
    kind: LocationKind,
    position: Option<String>,
}
#[derive(Debug, Deserialize)]
struct Recipe {
    name: String,
    material: String,
    notes: Option<String>,
    reagents: Vec<RecipeReagent>,
    steps: Vec<RecipeStep>,
}
#[derive(Debug, Deserialize, Clone)]
struct BatchPlan {
    name: String,
    material: String,
    recipe: String,
    operator: String,
    started_at: String,
    status: BatchStatus,
    final_peak_nm: Option<f64>,
    aliquots: usize,
    parent: Option<usize>,
    relation: Option<BatchRelation>,
    notes: String,
}
#[derive(Debug, Deserialize)]
struct QyRef {
    dye: String,
    solvent: String,
    qy: f64,
    excitation_nm: f64,
    integral: f64,
    abs_at_excitation: f64,
    set_by: String,
    why: String,
}

/// A small deterministic generator (splitmix64), so the demo is the same on every machine.
pub struct Rng(u64);

impl Rng {
    pub fn new(seed: u64) -> Rng {
        Rng(seed)
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.uniform()
    }
    /// Box-Muller.
    pub fn normal(&mut self) -> f64 {
        let u1 = self.uniform().max(1e-300);
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

/// The wavelength grid a material's spectra are taken on.
pub fn grid(core: &str) -> (f64, f64, f64) {
    match core {
        "PbS" | "PbSe" => (400.0, 1700.0, 2.0),
        _ => (300.0, 900.0, 1.0),
    }
}

fn gauss(e: f64, e0: f64, s: f64) -> f64 {
    (-(e - e0).powi(2) / (2.0 * s * s)).exp()
}

/// An absorbance spectrum: the first exciton (a Gaussian in energy of width `sigma_ev`), two
/// higher transitions, a continuum rising towards the UV, a little scattering and noise.
pub fn absorbance(core: &str, peak_nm: f64, sigma_ev: f64, a1: f64, noise: f64, rng: &mut Rng) -> (Vec<f64>, Vec<f64>) {
    let (lo, hi, step) = grid(core);
    let e1 = HC_EV_NM / peak_nm;
    let (d2, d3) = match core {
        "PbS" | "PbSe" => (0.35, 0.9),
        "InP" => (0.25, 0.6),
        _ => (0.18, 0.5),
    };
    let n = ((hi - lo) / step).round() as usize + 1;
    let mut x = Vec::with_capacity(n);
    let mut y = Vec::with_capacity(n);
    for i in 0..n {
        let l = lo + i as f64 * step;
        let e = HC_EV_NM / l;
        let rise = 1.0 / (1.0 + (-(e - e1 - 0.25) / 0.12).exp());
        let v = a1 * gauss(e, e1, sigma_ev)
            + 0.45 * a1 * gauss(e, e1 + d2, sigma_ev * 1.3)
            + 0.8 * a1 * gauss(e, e1 + d3, sigma_ev * 2.0)
            + a1 * if core == "InP" { 1.6 } else { 0.9 } * rise * (1.0 + 1.5 * (e - e1).max(0.0))
            + 0.003 * (400.0 / l).powi(4)
            + noise * rng.normal();
        x.push(l);
        y.push(v);
    }
    (x, y)
}

/// A PL spectrum: a Gaussian in energy at `peak_nm`, scaled so its integral over wavelength is
/// `integral`, on a small dark-count baseline with noise.
pub fn photoluminescence(
    core: &str,
    peak_nm: f64,
    sigma_ev: f64,
    integral: f64,
    noise: f64,
    rng: &mut Rng,
) -> (Vec<f64>, Vec<f64>) {
    let (lo, hi, step) = match core {
        "PbS" | "PbSe" => (800.0, 1700.0, 2.0),
        _ => (peak_nm - 150.0, peak_nm + 150.0, 1.0),
    };
    let n = ((hi - lo) / step).round() as usize + 1;
    let e0 = HC_EV_NM / peak_nm;
    let x: Vec<f64> = (0..n).map(|i| lo + i as f64 * step).collect();
    let shape: Vec<f64> = x.iter().map(|l| gauss(HC_EV_NM / l, e0, sigma_ev)).collect();
    let area: f64 = shape.iter().sum::<f64>() * step;
    let y = shape
        .iter()
        .map(|s| s * integral / area + 20.0 + noise * rng.normal())
        .collect();
    (x, y)
}

fn csv_bytes(x: &[f64], y: &[f64]) -> Vec<u8> {
    let mut s = String::from("wavelength_nm,value\n");
    for (a, b) in x.iter().zip(y) {
        s.push_str(&format!("{a},{b:.6}\n"));
    }
    s.into_bytes()
}

/// The lab_meta key holding the last audit id the demo build wrote: any later change but a
/// lab_meta setting is work someone did in the demo lab.
const BUILT_THROUGH_KEY: &str = "demo_built_through_audit_id";

/// Refuses to overwrite a file that is not a demo lab, and (unless `force`) a demo lab that
/// holds work logged after it was built; removes an old demo lab.
pub fn prepare_file(path: &Path, force: bool) -> Result<()> {
    if !path.exists() || std::fs::metadata(path)?.len() == 0 {
        return Ok(());
    }
    let refuse = || {
        Error::Invalid(format!(
            "refusing to overwrite {}: it is not a demo lab",
            path.display()
        ))
    };
    crate::store::check_is_sqlite(path).map_err(|_| refuse())?;
    {
        let c = DemoMarks::open(path).ok_or_else(refuse)?;
        let is_demo = c.meta("demo").is_some_and(|v| v == "1");
        if !is_demo {
            return Err(refuse());
        }
        if !force {
            refuse_real_work(&c, path)?;
        }
    }
    std::fs::remove_file(path)?;
    for ext in ["-wal", "-shm"] {
        let mut side = path.as_os_str().to_os_string();
        side.push(ext);
        let _ = std::fs::remove_file(side);
    }
    Ok(())
}

/// Work is any audited change after the build's last one, except lab_meta settings (the
/// remembered bits a read may leave). A demo lab without the mark (built by an older cuvette,
/// or a build that stopped half way) cannot be told apart from one with work in it.
fn refuse_real_work(c: &DemoMarks, path: &Path) -> Result<()> {
    let through: Option<i64> = c.meta(BUILT_THROUGH_KEY).and_then(|v| v.parse().ok());
    let Some(through) = through else {
        return Err(Error::Invalid(format!(
            "refusing to rebuild the demo lab in {}: it does not record where the demo ended \
             (an older or unfinished build), so work logged in it cannot be ruled out; use --force to replace it",
            path.display()
        )));
    };
    let (count, first) = c.work_after(through)?;
    if count > 0 {
        return Err(Error::Invalid(format!(
            "refusing to rebuild the demo lab in {}: it holds work logged after the demo was built \
             ({count} change{}, the first: {}); use --force to replace it anyway",
            path.display(),
            if count == 1 { "" } else { "s" },
            first.unwrap_or_default()
        )));
    }
    Ok(())
}

struct Sample {
    minutes: Option<f64>,
    stage: Option<String>,
    peak_nm: f64,
    sigma_ev: f64,
    qy: Option<f64>,
}

fn core_of(material: &str) -> &str {
    material.split('/').next().unwrap_or(material)
}

fn growth_series(plan: &BatchPlan, final_peak: f64, rng: &mut Rng) -> Vec<Sample> {
    let core = core_of(&plan.material).to_string();
    let minutes = [0.5, 1.0, 2.0, 4.0, 7.0, 10.0, 14.0, 20.0];
    let (span, sigma_min, tau): (f64, f64, f64) = match core.as_str() {
        "PbS" => (220.0, 0.045, 1.5),
        "InP" => (45.0, 0.075, 6.0),
        _ => (55.0, 0.036, 4.0),
    };
    let failed = plan.status == BatchStatus::Failed;
    let turn = rng.range(5.0, 11.0);
    let qy_base = match plan.material.as_str() {
        "CdSe/ZnS" => rng.range(0.5, 0.8),
        "CdSe" => rng.range(0.15, 0.55),
        "InP" => rng.range(0.08, 0.35),
        _ => 0.0,
    };
    let n = plan.aliquots;
    let mut out = Vec::new();
    for (i, &t) in minutes.iter().enumerate().take(n) {
        let peak = final_peak - span * (-(t / tau)).exp() * if failed { 0.5 } else { 1.0 };
        let u = (t - turn) / turn;
        let growth = if u < 0.0 { 1.2 * u * u } else { (0.5 * u * u).min(0.8) };
        let mut sigma = sigma_min * (1.0 + growth) * rng.range(0.97, 1.03);
        if failed {
            sigma *= 2.2;
        }
        let has_pl = core != "PbS";
        out.push(Sample {
            minutes: Some(t),
            stage: None,
            peak_nm: peak,
            sigma_ev: sigma,
            qy: has_pl.then_some(qy_base * (0.6 + 0.4 * (i as f64 + 1.0) / n as f64)),
        });
    }
    out
}

/// Builds the demo lab (or, with `scale`, an invented lab of that many batches). Returns the
/// number of batches.
pub fn build(store: &mut Store, scale: Option<usize>, mut progress: impl FnMut(usize, usize)) -> Result<usize> {
    let m: Manifest = serde_json::from_str(MANIFEST).map_err(|e| Error::Invalid(format!("demo manifest: {e}")))?;
    store.write(|tx, who| {
        meta_set(tx, who, "demo", "1")?;
        meta_set(tx, who, "lab", &m.lab)?;
        for p in &m.people {
            model::add_person(tx, who, &p.name, p.email.as_deref())?;
        }
        for l in &m.locations {
            model::add_location(tx, who, &l.name, l.kind, l.position.as_deref())?;
        }
        for r in &m.recipes {
            model::save_recipe(
                tx,
                &m.people[2].name,
                &r.name,
                &r.material,
                &r.reagents,
                &r.steps,
                r.notes.as_deref(),
            )?;
        }
        let mut cal = crate::lab::calibrations::latest(tx)?.body;
        let q = &m.qy_reference;
        cal.qy_reference = Some(calibration::QyReference {
            dye: q.dye.clone(),
            solvent: q.solvent.clone(),
            qy: q.qy,
            excitation_nm: q.excitation_nm,
            integral: q.integral,
            abs_at_excitation: q.abs_at_excitation,
        });
        crate::lab::calibrations::save(tx, &q.set_by, &q.why, &cal)?;
        Ok(())
    })?;
    let total = scale.unwrap_or(m.batches.len());
    let mut rng = Rng::new(0x00C0_FFEE);
    let cal = crate::lab::calibrations::latest(&store.conn)?.body;
    let qref = cal
        .qy_reference
        .clone()
        .ok_or_else(|| Error::Invalid("demo: no QY reference".into()))?;
    let n_ref = cal.refractive_index(&qref.solvent).unwrap_or(1.36);
    store.write(|tx, who| {
        let mut final_peaks: Vec<f64> = Vec::new();
        let mut batch_ids: Vec<i64> = Vec::new();
        let locations: Vec<String> = m.locations.iter().map(|l| l.name.clone()).collect();
        for i in 0..total {
            let plan = match scale {
                None => m.batches[i].clone(),
                Some(_) => scaled_plan(&m, i, total, &mut rng),
            };
            let core = core_of(&plan.material).to_string();
            let parent_id = plan.parent.and_then(|p| batch_ids.get(p).copied());
            let nb = NewBatch {
                name: plan.name.clone(),
                material: plan.material.clone(),
                recipe: Some(plan.recipe.clone()),
                recipe_version: None,
                operator: Some(plan.operator.clone()),
                started_at: Some(plan.started_at.clone()),
                status: Some(if matches!(plan.status, BatchStatus::Done | BatchStatus::Failed) {
                    BatchStatus::Growing
                } else {
                    plan.status
                }),
                parent_batch_id: parent_id,
                parent_relation: plan.relation,
                notes: Some(plan.notes.clone()),
            };
            let op = &plan.operator;
            let bid = model::insert_batch(tx, op, &nb)?;
            batch_ids.push(bid);
            let final_peak = match (plan.final_peak_nm, plan.parent) {
                (Some(p), _) => p,
                (None, Some(pi)) => {
                    let base = final_peaks.get(pi).copied().unwrap_or(560.0);
                    if plan.relation == Some(BatchRelation::Shell) {
                        base + 9.0
                    } else {
                        base + rng.range(-7.0, 7.0)
                    }
                }
                (None, None) => 560.0,
            };
            final_peaks.push(final_peak);
            let mut samples = growth_series(&plan, final_peak, &mut rng);
            if plan.relation == Some(BatchRelation::Fraction) {
                samples = vec![Sample {
                    minutes: None,
                    stage: Some("fraction".into()),
                    peak_nm: final_peak,
                    sigma_ev: 0.032,
                    qy: Some(rng.range(0.3, 0.5)),
                }];
            }
            let day = plan.started_at.get(..10).unwrap_or("2026-05-01").to_string();
            for s in &samples {
                let a1 = match core.as_str() {
                    "PbS" => rng.range(0.12, 0.2),
                    _ => rng.range(0.035, 0.055),
                };
                let noise = if core == "PbS" { 0.0012 } else { 0.0004 };
                let (x, y) = absorbance(&core, s.peak_nm, s.sigma_ev, a1, noise, &mut rng);
                let dilution = match core.as_str() {
                    "PbS" => 50.0,
                    _ => 100.0,
                };
                let aid = model::insert_aliquot(
                    tx,
                    op,
                    &NewAliquot {
                        batch_id: bid,
                        minutes: s.minutes,
                        stage: s.stage.clone(),
                        dilution_factor: dilution,
                        path_cm: 1.0,
                        solvent: if core == "PbS" {
                            "tetrachloroethylene".into()
                        } else {
                            "hexane".into()
                        },
                        taken_at: Some(format!("{day} 11:{:02}", (s.minutes.unwrap_or(30.0) as i64).min(59))),
                    },
                )?;
                let base = plan.name.replace(' ', "_");
                let tag = s
                    .minutes
                    .map(|t| format!("{t}min"))
                    .unwrap_or_else(|| s.stage.clone().unwrap_or_default());
                let bytes = csv_bytes(&x, &y);
                model::insert_spectrum(
                    tx,
                    op,
                    &NewSpectrum {
                        aliquot_id: Some(aid),
                        vial_id: None,
                        kind: "abs".into(),
                        x_unit: "nm".into(),
                        y_unit: Some("absorbance".into()),
                        sha256: crate::spectra::sha256_hex(&bytes),
                        x: x.clone(),
                        y: y.clone(),
                        file_name: format!("{base}_abs_{tag}.csv"),
                        excitation_nm: None,
                        instrument: None,
                        dilution_factor: None,
                        path_cm: None,
                        label: None,
                    },
                )?;
                if let Some(target_qy) = s.qy {
                    // The integral that gives `target_qy` against the reference (inverting
                    // the single-point relation), so the derived QY comes out near it.
                    let t = crate::spectra::Trace {
                        nm: x.clone(),
                        y: y.clone(),
                    };
                    let a_ex = crate::spectra::analysis::interpolate(&t, qref.excitation_nm)
                        .unwrap_or(0.05)
                        .max(1e-4);
                    let n_s = cal.refractive_index("hexane").unwrap_or(1.37);
                    let integral = target_qy / qref.qy * qref.integral * qy::absorptance(a_ex)
                        / qy::absorptance(qref.abs_at_excitation)
                        * n_ref
                        * n_ref
                        / (n_s * n_s);
                    let stokes = if core == "InP" { 0.08 } else { 0.025 };
                    let pl_peak = HC_EV_NM / (HC_EV_NM / s.peak_nm - stokes);
                    let (px, py) = photoluminescence(&core, pl_peak, s.sigma_ev * 1.05, integral, 3.0, &mut rng);
                    let pbytes = csv_bytes(&px, &py);
                    model::insert_spectrum(
                        tx,
                        op,
                        &NewSpectrum {
                            aliquot_id: Some(aid),
                            vial_id: None,
                            kind: "pl".into(),
                            x_unit: "nm".into(),
                            y_unit: Some("counts".into()),
                            sha256: crate::spectra::sha256_hex(&pbytes),
                            x: px,
                            y: py,
                            file_name: format!("{base}_pl_{tag}.csv"),
                            excitation_nm: Some(qref.excitation_nm),
                            instrument: Some(r#"{"slit_nm": 2, "integration_s": 0.5}"#.into()),
                            dilution_factor: None,
                            path_cm: None,
                            label: None,
                        },
                    )?;
                }
                crate::lab::derivation::derive_aliquot(tx, aid)?;
            }
            if matches!(plan.status, BatchStatus::Done | BatchStatus::Failed) {
                model::set_batch_status(tx, op, bid, plan.status)?;
            }
            if plan.status == BatchStatus::Done {
                let nvials = if scale.is_some() {
                    1
                } else {
                    2 + (rng.next_u64() % 2) as usize
                };
                for k in 0..nvials {
                    let ml = (rng.range(1.5, 5.0) * 10.0).round() / 10.0;
                    let loc = &locations[(rng.next_u64() % locations.len() as u64) as usize];
                    let vid = model::insert_vial(
                        tx,
                        op,
                        &NewVial {
                            batch_id: bid,
                            label: Some(format!("{}-V{}", plan.name, k + 1)),
                            volume_ml: ml,
                            solvent: if core == "PbS" {
                                "tetrachloroethylene".into()
                            } else {
                                "hexane".into()
                            },
                            location: loc.clone(),
                            position: Some(format!(
                                "box {} slot {}",
                                1 + rng.next_u64() % 4,
                                1 + rng.next_u64() % 25
                            )),
                            owner: Some(op.clone()),
                            // No figure of its own: the estimate from the product aliquot,
                            // labelled as one, until someone measures the vial.
                            concentration_molar: None,
                            created_at: Some(format!("{day} 16:00")),
                        },
                    )?;
                    crate::lab::derivation::estimate_vial(tx, vid)?;
                    let draws = rng.next_u64() % 4;
                    let mut left = ml;
                    for _ in 0..draws {
                        let take = ((rng.range(0.1, 0.35) * left) * 100.0).round() / 100.0;
                        if take <= 0.0 {
                            break;
                        }
                        let why = [
                            "TEM grid",
                            "PL measurement",
                            "ligand exchange test",
                            "XRD sample",
                            "shell growth",
                        ][(rng.next_u64() % 5) as usize];
                        model::draw_from_vial(tx, op, vid, take, Some(why))?;
                        left -= take;
                    }
                    if scale.is_none() && rng.uniform() < 0.08 {
                        model::dispose_vial(tx, op, vid, "aggregated: turbid after two months")?;
                    }
                }
            }
            if let Some(pid) = parent_id
                && plan.relation == Some(BatchRelation::Shell)
            {
                // The shell batch drew its cores from the parent's first vial.
                if let Some(v) = model::vials_of_batch(tx, pid)?
                    .into_iter()
                    .find(|v| v.status == VialStatus::InUse && v.volume_ml > 0.6)
                {
                    model::draw_from_vial(tx, op, v.id, 0.5, Some(&format!("cores for the shell of batch {bid}")))?;
                }
            }
            if (i + 1) % 50 == 0 || i + 1 == total {
                progress(i + 1, total);
            }
        }
        // The mark re-running `demo` checks: changes after it are someone's work.
        let last = crate::store::demo_marks::last_audit_id(tx)?;
        meta_set(tx, who, BUILT_THROUGH_KEY, &last.to_string())?;
        Ok(())
    })?;
    Ok(total)
}

fn scaled_plan(m: &Manifest, i: usize, total: usize, rng: &mut Rng) -> BatchPlan {
    let r = &m.recipes[[0, 2, 3][i % 3]];
    let core = core_of(&r.material);
    let peak = match core {
        "PbS" => rng.range(950.0, 1500.0),
        "InP" => rng.range(520.0, 600.0),
        _ => rng.range(500.0, 610.0),
    };
    let day = chrono::NaiveDate::from_ymd_opt(2017, 1, 2).unwrap_or_default()
        + chrono::Duration::days((i as i64 * 3650) / total.max(1) as i64);
    let status = if rng.uniform() < 0.08 {
        BatchStatus::Failed
    } else {
        BatchStatus::Done
    };
    BatchPlan {
        name: format!("L{:05}", i + 1),
        material: r.material.clone(),
        recipe: r.name.clone(),
        operator: m.people[i % m.people.len()].name.clone(),
        started_at: format!("{} 09:30", day.format("%Y-%m-%d")),
        status,
        final_peak_nm: Some(peak),
        aliquots: 3,
        parent: None,
        relation: None,
        notes: String::new(),
    }
}
