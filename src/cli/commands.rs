//! What each command does: open the store, call the library, print. No science and no SQL
//! live here.

use super::args::*;
use super::identity;
use super::output::{self, Progress, json, json_line, line, molar, num};
use crate::bench::{self, SpectrumFile};
use crate::derive::{calibration, engine, growth, qy, sizing, solvents, yields};
use crate::spectra::{self, ReadOptions, analysis};
use crate::store::{Store, model};
use anyhow::{Context, Result, anyhow, bail};
use serde_json::{Value, json};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

pub fn default_db_path() -> PathBuf {
    let home = std::env::var_os("HOME")
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from("."));
    let base = if let Some(x) = std::env::var_os("XDG_DATA_HOME") {
        PathBuf::from(x)
    } else if cfg!(target_os = "macos") {
        home.join("Library/Application Support")
    } else if cfg!(windows) {
        std::env::var_os("APPDATA").map(PathBuf::from).unwrap_or(home)
    } else {
        home.join(".local/share")
    };
    base.join("cuvette").join("lab.db")
}

fn db_path(cli: &Cli) -> PathBuf {
    cli.db
        .clone()
        .map(PathBuf::from)
        .filter(|p| !p.as_os_str().is_empty())
        .or_else(|| {
            std::env::var_os("CUVETTE_DB")
                .filter(|v| !v.is_empty())
                .map(PathBuf::from)
        })
        .unwrap_or_else(default_db_path)
}

fn with_path(path: &Path, e: crate::Error) -> anyhow::Error {
    let msg = e.to_string();
    if msg.contains(&path.display().to_string()) {
        anyhow!("{msg}")
    } else {
        anyhow!("{}: {msg}", path.display())
    }
}

fn report_migration(store: &Store, path: &Path) {
    if let Some(b) = &store.migrated_backup {
        output::warn(&format!(
            "migrated {}; the previous file is kept at {}",
            path.display(),
            b.display()
        ));
    }
}

/// Opens the lab for a command that only reads: it must exist, and nothing is changed.
fn open_read(cli: &Cli) -> Result<Store> {
    let path = db_path(cli);
    Store::open_read(&path, &identity::for_read(cli.actor.as_deref())).map_err(|e| with_path(&path, e))
}

/// Opens the lab for a command that writes: it must exist unless `--create` is given.
fn open_write(cli: &Cli) -> Result<Store> {
    if cli.create {
        return open_create(cli);
    }
    let path = db_path(cli);
    // A mistyped path is told before anyone is asked who they are.
    if std::fs::metadata(&path).is_err() {
        return Err(with_path(
            &path,
            crate::Error::Invalid(format!(
                "no lab at {}: create one with `cuvette init` (or give the right --db)",
                path.display()
            )),
        ));
    }
    let who = identity::for_write(cli.actor.as_deref())?;
    let store = Store::open_existing(&path, &who).map_err(|e| with_path(&path, e))?;
    report_migration(&store, &path);
    Ok(store)
}

/// Opens the lab, creating the file (and its folder) when missing: init, demo, `--create`.
fn open_create(cli: &Cli) -> Result<Store> {
    let path = db_path(cli);
    if path.is_dir() {
        bail!(
            "{} is a folder; give the database file (for example {}/lab.db)",
            path.display(),
            path.display()
        );
    }
    let who = identity::for_write(cli.actor.as_deref())?;
    if let Some(dir) = path.parent()
        && !dir.as_os_str().is_empty()
        && !dir.exists()
    {
        std::fs::create_dir_all(dir).with_context(|| format!("cannot create {}", dir.display()))?;
    }
    let store = Store::open(&path, &who).map_err(|e| with_path(&path, e))?;
    report_migration(&store, &path);
    Ok(store)
}

/// Opens for writing or for reading, as the subcommand needs.
fn open_for(cli: &Cli, writes: bool) -> Result<Store> {
    if writes { open_write(cli) } else { open_read(cli) }
}

/// The reading choices a command was given, the same wherever a file is read.
fn read_options(
    x_col: Option<usize>,
    y_col: Option<usize>,
    x_unit: &Option<String>,
    block: &Option<String>,
    choice: &FileChoice,
) -> ReadOptions {
    ReadOptions {
        x_col,
        y_col,
        x_unit: x_unit.clone(),
        block: block.clone(),
        column: choice.column.clone(),
        sheet: choice.sheet.clone(),
    }
}

pub fn dispatch(cli: Cli) -> Result<ExitCode> {
    let Some(cmd) = &cli.cmd else {
        use std::io::IsTerminal;
        if !std::io::stdout().is_terminal() || !std::io::stdin().is_terminal() {
            bail!("the terminal UI needs a terminal; for scripts use a command (see `cuvette --help`)");
        }
        let store = match open_write(&cli) {
            Ok(s) => s,
            Err(_) if db_path(&cli).exists() => open_read(&cli)?,
            Err(e) => return Err(e),
        };
        crate::tui::run(store, tui_writer(cli.actor.as_deref()))?;
        return Ok(ExitCode::SUCCESS);
    };
    match cmd {
        Cmd::Init => {
            let path = db_path(&cli);
            let existed = path.exists();
            open_create(&cli)?;
            line(&format!(
                "{} {}",
                if existed { "opened existing lab" } else { "created lab" },
                path.display()
            ))?;
        }
        Cmd::Demo(a) => return demo(&cli, a),
        Cmd::Person(c) => person(&cli, c)?,
        Cmd::Material(c) => material(&cli, c)?,
        Cmd::Reagent(c) => reagent(&cli, c)?,
        Cmd::Recipe(c) => recipe(&cli, c)?,
        Cmd::Batch(c) => batch(&cli, c)?,
        Cmd::Aliquot(c) => aliquot(&cli, c)?,
        Cmd::Location(c) => location(&cli, c)?,
        Cmd::Vial(c) => vial(&cli, c)?,
        Cmd::Shelf(a) => shelf(&cli, a)?,
        Cmd::Log(a) => log(&cli, a)?,
        Cmd::Analyze(a) => return analyze(a),
        Cmd::Read(a) => read(a)?,
        Cmd::Size(a) => size(a)?,
        Cmd::Qy(a) => match &a.method {
            Some(QyMethod::Gradient { aliquots, json: j }) => qy_gradient(&cli, aliquots, *j)?,
            None => qy_cmd(a)?,
        },
        Cmd::ShellPlan(a) => {
            let plan = yields::shell_plan(&a.shell, a.core_nm, a.crystals_umol, a.layers, a.ml_nm)?;
            if a.json {
                json(&plan)?;
            } else {
                line(&format!(
                    "{} shell, {} nm a monolayer (from memory; check your own value)",
                    plan.shell, plan.monolayer_nm
                ))?;
                for l in &plan.per_monolayer {
                    line(&format!(
                        "  ML {:>2}: {:.2} nm, {:.4} mmol of each shell element",
                        l.layer, l.diameter_nm, l.precursor_mmol
                    ))?;
                }
            }
        }
        Cmd::Calib(c) => calib(&cli, c)?,
        Cmd::Recompute(a) => recompute(&cli, a)?,
        Cmd::Explain(a) => explain(&cli, a)?,
        Cmd::Find(a) => return find(&cli, a),
        Cmd::Handover(a) => handover(&cli, a)?,
        Cmd::Plot(a) => {
            let mut store = open_read(&cli)?;
            let svg = store.read(|tx| crate::report::plot_batch_svg(tx, a.batch))?;
            match &a.out {
                Some(p) => {
                    use std::io::Write as _;
                    let mut f = crate::report::create_output(p, a.force)?;
                    f.write_all(svg.as_bytes())
                        .with_context(|| format!("cannot write {}", p.display()))?;
                    line(&format!("wrote {}", p.display()))?;
                }
                None => line(&svg)?,
            }
        }
        Cmd::Export(a) => {
            let mut store = open_read(&cli)?;
            let written = store
                .read(|tx| crate::report::export(tx, a.format == ExportFormat::Json, a.out.as_deref(), a.force))?;
            for w in written {
                line(&w)?;
            }
        }
        Cmd::Check(a) => return check(&cli, a),
        Cmd::Backup(a) => {
            let store = open_read(&cli)?;
            store.backup_to(&a.out)?;
            line(&format!("backed up {} to {}", db_path(&cli).display(), a.out.display()))?;
        }
        Cmd::Spectrum(SpectrumCmd::Move {
            spectrum,
            to_aliquot,
            why,
            json: j,
        }) => {
            let mut store = open_write(&cli)?;
            let (from, to) = crate::corrections::move_spectrum(&mut store, *spectrum, *to_aliquot, why)?;
            if *j {
                json(&json!({"spectrum_id": spectrum, "from_aliquot": from, "to_aliquot": to}))?;
            } else {
                line(&format!(
                    "spectrum {spectrum} moved from aliquot {from} to aliquot {to}; both recomputed"
                ))?;
            }
        }
        Cmd::Spectrum(SpectrumCmd::Cuvette {
            spectrum,
            path_cm,
            dilution,
            why,
            json: j,
        }) => {
            let mut store = open_write(&cli)?;
            let aliquot = crate::corrections::set_spectrum_cuvette(&mut store, *spectrum, *path_cm, *dilution, why)?;
            if *j {
                json(&json!({"spectrum_id": spectrum, "aliquot_id": aliquot}))?;
            } else {
                line(&format!(
                    "spectrum {spectrum}: cuvette corrected; aliquot {aliquot} recomputed"
                ))?;
            }
        }
        Cmd::Whoami(a) => {
            if let Some(n) = &a.set {
                let p = identity::remember(n)?;
                line(&format!(
                    "cuvette will attribute your writes to '{}' (kept in {})",
                    n.trim(),
                    p.display()
                ))?;
            } else {
                let id = identity::resolve(cli.actor.as_deref());
                if a.json {
                    json(&id)?;
                } else {
                    match &id.name {
                        Some(n) => line(&format!("{n} (from {})", id.from))?,
                        None => {
                            line("nobody: set a name with `cuvette whoami --set NAME`")?;
                            return Ok(ExitCode::from(1));
                        }
                    }
                }
            }
        }
        Cmd::Restore(a) => restore(&cli, &a.file, a.recompute)?,
        Cmd::Import(a) => import(&cli, a)?,
        Cmd::ImportManifest(a) => return import_manifest(&cli, a),
    }
    Ok(ExitCode::SUCCESS)
}

fn demo(cli: &Cli, a: &DemoArgs) -> Result<ExitCode> {
    // Without --db the demo goes to its own file beside the default lab, never into it.
    let path = match cli.db.as_ref().filter(|p| !p.is_empty()) {
        Some(p) => PathBuf::from(p),
        None => default_db_path().with_file_name("demo.db"),
    };
    let cli = &Cli {
        db: Some(path.clone().into_os_string()),
        actor: cli.actor.clone(),
        create: true,
        cmd: None,
    };
    crate::demo::prepare_file(&path, a.force)?;
    let mut store = open_create(cli)?;
    let progress = Progress::new("demo", false);
    let n = crate::demo::build(&mut store, a.scale, |d, t| progress.tick(d, t))?;
    use std::io::IsTerminal;
    if !a.no_ui && std::io::stdout().is_terminal() && std::io::stdin().is_terminal() {
        crate::tui::run(store, tui_writer(cli.actor.as_deref()))?;
    } else {
        line(&format!("built the demo lab ({n} batches) in {}", path.display()))?;
    }
    Ok(ExitCode::SUCCESS)
}

fn person(cli: &Cli, c: &PersonCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, PersonCmd::Add { .. }))?;
    match c {
        PersonCmd::Add { name, email } => {
            let id = store.write(|tx, who| model::add_person(tx, who, name, email.as_deref()))?;
            line(&format!("person {id}: {name}"))?;
        }
        PersonCmd::List(f) => {
            let people = store.read(|tx| model::list_people(tx))?;
            if f.json {
                json(&people)?;
            } else {
                for p in people {
                    line(&format!("{:>4}  {}", p.id, p.name))?;
                }
            }
        }
    }
    Ok(())
}

fn material(cli: &Cli, c: &MaterialCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, MaterialCmd::Add { .. }))?;
    match c {
        MaterialCmd::Add { name, core, shell } => {
            let id = store.write(|tx, who| model::add_material(tx, who, name, core, shell.as_deref()))?;
            line(&format!("material {id}: {name}"))?;
        }
        MaterialCmd::List(f) => {
            let ms = store.read(|tx| model::list_materials(tx))?;
            if f.json {
                let v: Vec<Value> = ms
                    .iter()
                    .map(|m| json!({"id": m.id, "name": m.name, "core": m.core, "shell": m.shell, "curves": sizing::curves_for(&m.core)}))
                    .collect();
                json(&v)?;
            } else {
                for m in ms {
                    line(&format!(
                        "{:>4}  {:<10} core {:<5} curves: {}",
                        m.id,
                        m.name,
                        m.core,
                        sizing::curves_for(&m.core).join(", ")
                    ))?;
                }
            }
        }
    }
    Ok(())
}

fn reagent(cli: &Cli, c: &ReagentCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, ReagentCmd::Add { .. }))?;
    match c {
        ReagentCmd::Add {
            name,
            formula,
            cas,
            hazards,
            pyrophoric,
        } => {
            let hz: Vec<String> = hazards.iter().map(|h| h.to_ascii_uppercase()).collect();
            let id = store.write(|tx, who| {
                model::add_reagent(tx, who, name, formula.as_deref(), cas.as_deref(), &hz, *pyrophoric)
            })?;
            line(&format!("reagent {id}: {name}"))?;
        }
        ReagentCmd::List(f) => {
            let rs = store.read(|tx| model::list_reagents(tx))?;
            if f.json {
                json(&rs)?;
            } else {
                for r in rs {
                    line(&format!(
                        "{:>4}  {:<32} {}{}",
                        r.id,
                        r.name,
                        r.ghs_hazards.join(" "),
                        if r.pyrophoric { "  PYROPHORIC" } else { "" }
                    ))?;
                }
                line(crate::hazards::SDS_NOTICE)?;
            }
        }
    }
    Ok(())
}

/// "cadmium oxide=0.2 mmol:precursor"
fn parse_reagent(s: &str) -> Result<model::RecipeReagent> {
    let (name, rest) = s
        .split_once('=')
        .ok_or_else(|| anyhow!("reagent '{s}' should read NAME=AMOUNT UNIT[:ROLE]"))?;
    let (amount_unit, role) = match rest.split_once(':') {
        Some((a, r)) => (a, Some(r.trim().to_string())),
        None => (rest, None),
    };
    let mut parts = amount_unit.split_whitespace();
    let amount: f64 = parts
        .next()
        .and_then(|a| a.parse().ok())
        .ok_or_else(|| anyhow!("reagent '{s}': amount is not a number"))?;
    let unit = parts
        .next()
        .ok_or_else(|| anyhow!("reagent '{s}': no unit"))?
        .to_string();
    Ok(model::RecipeReagent {
        reagent: name.trim().to_string(),
        amount,
        unit,
        role,
    })
}

/// "inject Se-TOP@260 C/5 min"
fn parse_step(s: &str) -> Result<model::RecipeStep> {
    let (head, minutes) = match s.rsplit_once('/') {
        Some((h, m)) if m.trim().ends_with("min") => {
            let v: f64 = m
                .trim()
                .trim_end_matches("min")
                .trim()
                .parse()
                .map_err(|_| anyhow!("step '{s}': minutes is not a number"))?;
            (h, Some(v))
        }
        _ => (s, None),
    };
    let (action, temp) = match head.rsplit_once('@') {
        Some((a, t)) => {
            let v: f64 = t
                .trim()
                .trim_end_matches('C')
                .trim_end_matches('°')
                .trim()
                .parse()
                .map_err(|_| anyhow!("step '{s}': temperature is not a number"))?;
            (a, Some(v))
        }
        None => (head, None),
    };
    Ok(model::RecipeStep {
        action: action.trim().to_string(),
        temperature_c: temp,
        duration_min: minutes,
    })
}

fn print_recipe(r: &model::RecipeView) -> Result<()> {
    line(&format!("{} v{} ({})", r.name, r.version, r.material))?;
    for g in &r.reagents {
        line(&format!(
            "  {:<32} {:>8} {:<5} {:<10} {}{}",
            g.reagent,
            g.amount,
            g.unit,
            g.role.clone().unwrap_or_default(),
            g.ghs_hazards.join(" "),
            if g.pyrophoric { " PYROPHORIC" } else { "" }
        ))?;
    }
    for (i, s) in r.steps.iter().enumerate() {
        line(&format!(
            "  {}. {}{}{}",
            i + 1,
            s.action,
            s.temperature_c.map(|t| format!(" at {t} °C")).unwrap_or_default(),
            s.duration_min.map(|m| format!(" for {m} min")).unwrap_or_default()
        ))?;
    }
    for c in crate::report::cautions(r) {
        line(&format!("  ! {c}"))?;
    }
    Ok(())
}

fn recipe(cli: &Cli, c: &RecipeCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, RecipeCmd::New { .. }))?;
    match c {
        RecipeCmd::New {
            name,
            material,
            reagents,
            steps,
            notes,
            json: j,
        } => {
            let rs: Vec<model::RecipeReagent> = reagents.iter().map(|s| parse_reagent(s)).collect::<Result<_>>()?;
            let ss: Vec<model::RecipeStep> = steps.iter().map(|s| parse_step(s)).collect::<Result<_>>()?;
            let view = store.write(|tx, who| {
                let (_, vid) = model::save_recipe(tx, who, name, material, &rs, &ss, notes.as_deref())?;
                model::recipe_view(tx, vid)
            })?;
            if *j { json(&view)? } else { print_recipe(&view)? }
        }
        RecipeCmd::Show { name, version, json: j } => {
            let view = store.read(|tx| {
                let vid = model::recipe_version_id(tx, name, *version)?;
                model::recipe_view(tx, vid)
            })?;
            if *j {
                let mut v = serde_json::to_value(&view)?;
                v["cautions"] = json!(crate::report::cautions(&view));
                json(&v)?
            } else {
                print_recipe(&view)?
            }
        }
        RecipeCmd::List(f) => {
            let rs = store.read(|tx| model::list_recipes(tx))?;
            if f.json {
                json(&rs)?;
            } else {
                for r in rs {
                    line(&format!(
                        "{:>4}  {:<30} {:<10} v{}",
                        r.id, r.name, r.material, r.latest_version
                    ))?;
                }
            }
        }
        RecipeCmd::Stats { name, version, json: j } => {
            let st = store.read(|tx| {
                let vid = model::recipe_version_id(tx, name, *version)?;
                growth::recipe_stats(tx, vid)
            })?;
            if *j {
                json(&st)?;
            } else {
                line(&format!(
                    "{} v{}: {} batches ({} failed)",
                    st.recipe, st.version, st.batches, st.failed
                ))?;
                for (label, s) in [
                    ("diameter nm", &st.diameter_nm),
                    ("dispersion %", &st.size_dispersion_pct),
                    ("PL peak nm", &st.pl_peak_nm),
                    ("QY", &st.qy),
                ] {
                    if let Some(s) = s {
                        line(&format!(
                            "  {label:<13} mean {:.3}  sd {}  (n={})",
                            s.mean,
                            num(s.sd, 3),
                            s.n
                        ))?;
                    }
                }
            }
        }
    }
    Ok(())
}

fn batch(cli: &Cli, c: &BatchCmd) -> Result<()> {
    let mut store = open_for(cli, !matches!(c, BatchCmd::List(_) | BatchCmd::Show { .. }))?;
    match c {
        BatchCmd::New(a) => {
            let nb = model::NewBatch {
                name: a.name.clone(),
                material: a.material.clone(),
                recipe: a.recipe.clone(),
                recipe_version: a.recipe_version,
                operator: a.operator.clone(),
                started_at: a.started.clone(),
                status: a.status.clone(),
                parent_batch_id: a.parent,
                parent_relation: a.relation.clone(),
                notes: a.notes.clone(),
            };
            let row = store.write(|tx, who| {
                let id = model::insert_batch(tx, who, &nb)?;
                model::get_batch(tx, id)
            })?;
            if a.json {
                json(&row)?
            } else {
                line(&format!(
                    "batch {}: {} ({}, {})",
                    row.id, row.name, row.material, row.status
                ))?
            }
        }
        BatchCmd::List(a) => {
            if let Some(s) = &a.status {
                model::check_status(s)?;
            }
            let rows = store.read(|tx| {
                let mut all = model::list_batches(tx)?;
                if let Some(m) = &a.material {
                    let mat = model::material_by_name(tx, m)?;
                    all.retain(|b| b.material == mat.name);
                }
                Ok(all)
            })?;
            let rows: Vec<_> = rows
                .into_iter()
                .filter(|b| a.status.as_ref().is_none_or(|s| &b.status == s))
                .collect();
            if a.json {
                json(&rows)?;
            } else {
                for b in rows {
                    line(&format!(
                        "{:>5}  {:<28} {:<10} {:<9} {:<10} {}",
                        b.id,
                        b.name,
                        b.material,
                        b.status,
                        &b.started_at[..10.min(b.started_at.len())],
                        b.operator.unwrap_or_default()
                    ))?;
                }
            }
        }
        BatchCmd::Show { id, json: j } => {
            let v = store.read(|tx| crate::report::batch_detail(tx, *id))?;
            if *j { json(&v)? } else { print_batch(&v)? }
        }
        BatchCmd::Edit(a) => {
            let e = model::BatchEdit {
                name: a.name.clone(),
                notes: a.notes.clone(),
                append_notes: a.append_notes.clone(),
                operator: a.operator.clone(),
                product_aliquot_id: a.product_aliquot,
                pin_calibration: a.pin_calibration,
                unpin: a.unpin,
                parent_batch_id: a.parent,
            };
            let row = store.write(|tx, who| {
                let r = model::edit_batch(tx, who, a.id, &e)?;
                if e.pin_calibration.is_some() || e.unpin {
                    engine::mark_stale(tx)?;
                }
                if e.product_aliquot_id.is_some() {
                    engine::refresh_vials(tx, Some(a.id), false)?;
                }
                // A shelled batch takes its core's size from its parent's product: a new parent
                // moves it, in this same transaction.
                let followed = match e.parent_batch_id {
                    Some(p) => engine::follow_parent_cores(tx, Some(p))?,
                    None => 0,
                };
                Ok((r, followed))
            })?;
            let (row, followed) = row;
            if a.json {
                json(&row)?
            } else if let (true, Some(p)) = (followed > 0, a.parent) {
                line(&format!(
                    "batch {} updated; {followed} aliquots of batch {p}'s shelled batches derived again with its core",
                    row.id
                ))?
            } else {
                line(&format!("batch {} updated", row.id))?
            }
        }
        BatchCmd::SetStatus { id, status, json: j } => {
            let row = store.write(|tx, who| model::set_batch_status(tx, who, *id, status))?;
            if *j {
                json(&row)?
            } else {
                line(&format!("batch {} is now {}", row.id, row.status))?
            }
        }
        BatchCmd::Repeat { id, name, json: j } => {
            let row = store.write(|tx, who| {
                let b = model::get_batch(tx, *id)?;
                let nb = model::NewBatch {
                    name: name.clone().unwrap_or_else(|| format!("{} (repeat)", b.name)),
                    material: b.material.clone(),
                    recipe: b.recipe.clone(),
                    recipe_version: b.recipe_version,
                    parent_batch_id: Some(b.id),
                    parent_relation: Some("repeat".into()),
                    ..Default::default()
                };
                let nid = model::insert_batch(tx, who, &nb)?;
                model::get_batch(tx, nid)
            })?;
            if *j {
                json(&row)?
            } else {
                line(&format!("batch {}: {} repeats batch {id}", row.id, row.name))?
            }
        }
        BatchCmd::Void { id, why, json: j } | BatchCmd::Reinstate { id, why, json: j } => {
            let voiding = matches!(c, BatchCmd::Void { .. });
            let row = crate::corrections::set_batch_void(&mut store, *id, voiding, why)?;
            if *j {
                json(&row)?
            } else if voiding {
                line(&format!("batch {} is void: {}", row.id, why.trim()))?
            } else {
                line(&format!("batch {} is reinstated", row.id))?
            }
        }
    }
    Ok(())
}

fn print_batch(v: &Value) -> Result<()> {
    let s = |k: &str| v[k].as_str().unwrap_or("").to_string();
    line(&format!(
        "batch {} {} ({}) {}",
        v["id"],
        s("name"),
        s("material"),
        s("status")
    ))?;
    line(&format!("  started {} by {}", s("started_at"), s("operator")))?;
    if let Some(r) = v["recipe"].as_str() {
        line(&format!("  recipe {r} v{}", v["recipe_version"]))?;
    }
    if !s("notes").is_empty() {
        line(&format!("  notes: {}", s("notes")))?;
    }
    line("   id   min  stage     peak nm   abs    D nm   σ/D %   conc       PL nm  QY     curve (cal)")?;
    for a in v["aliquots"].as_array().into_iter().flatten() {
        let f = |k: &str, d: usize| num(a[k].as_f64(), d);
        line(&format!(
            "  {:>4} {:>5} {:<8} {:>8} {:>6} {:>6} {:>6}   {:<10} {:>6} {:>5}  {} ({}){}",
            a["id"],
            f("minutes", 1),
            a["stage"].as_str().unwrap_or(""),
            f("first_exciton_nm", 1),
            f("first_exciton_abs", 3),
            f("diameter_nm", 2),
            f("size_dispersion_pct", 1),
            molar(a["concentration_molar"].as_f64()),
            f("pl_peak_nm", 1),
            f("qy", 2),
            a["curve"].as_str().unwrap_or("-"),
            a["calibration_version"],
            match (a["voided"].as_bool() == Some(true), a["stale"].as_bool() == Some(true)) {
                (true, _) => format!(" VOID: {}", a["void_why"].as_str().unwrap_or("")),
                (false, true) => " STALE".to_string(),
                _ => String::new(),
            }
        ))?;
    }
    if v["voided"].as_bool() == Some(true) {
        line(&format!("  VOID batch: {}", s("void_why")))?;
    }
    let g = &v["growth"];
    line(&format!(
        "  growth: {} ; rate {} nm/min{}",
        g["regime"].as_str().unwrap_or(""),
        num(g["growth_rate_nm_per_min"].as_f64(), 3),
        g["focusing_turn_min"]
            .as_f64()
            .map(|m| format!("; focusing turns to defocusing at {m} min"))
            .unwrap_or_default()
    ))?;
    if g["mixed_calibrations"].as_bool() == Some(true) {
        line(&format!(
            "  growth uses only aliquots sized under calibration v{}; others are under older versions (run `cuvette recompute`)",
            g["calibration_version"]
        ))?;
    }
    if g["stale"].as_bool() == Some(true) {
        line("  growth: STALE values (run `cuvette recompute`)")?;
    }
    for j in g["jumps"].as_array().into_iter().flatten() {
        line(&format!(
            "  ! aliquot {}: first exciton {:.1} -> {:.1} nm at {} min, a step blue while the crystals grow (beyond {:.1} nm): check that reading",
            j["aliquot_id"],
            j["from_nm"].as_f64().unwrap_or(f64::NAN),
            j["to_nm"].as_f64().unwrap_or(f64::NAN),
            j["minutes"],
            j["tolerance_nm"].as_f64().unwrap_or(f64::NAN)
        ))?;
    }
    for r in g["reassigned"].as_array().into_iter().flatten() {
        line(&format!(
            "  ~ aliquot {}: first exciton reassigned {:.1} -> {:.1} nm: the series grows through {:.1}-{:.1} nm there and a feature at {:.1} nm stands on its own (`explain {}` keeps the first reading)",
            r["aliquot_id"],
            r["as_read_nm"].as_f64().unwrap_or(f64::NAN),
            r["first_exciton_nm"].as_f64().unwrap_or(f64::NAN),
            r["expected_lo_nm"].as_f64().unwrap_or(f64::NAN),
            r["expected_hi_nm"].as_f64().unwrap_or(f64::NAN),
            r["first_exciton_nm"].as_f64().unwrap_or(f64::NAN),
            r["aliquot_id"],
        ))?;
    }
    for r in g["unsupported"].as_array().into_iter().flatten() {
        line(&format!(
            "  ! aliquot {}: first exciton {:.1} nm lies outside the {:.1}-{:.1} nm its neighbours give, and no feature there stands on its own: kept as read; check it",
            r["aliquot_id"],
            r["as_read_nm"].as_f64().unwrap_or(f64::NAN),
            r["expected_lo_nm"].as_f64().unwrap_or(f64::NAN),
            r["expected_hi_nm"].as_f64().unwrap_or(f64::NAN),
        ))?;
    }
    let ry = &v["reaction_yield"];
    if let Some(f) = ry["yield_fraction"].as_f64() {
        line(&format!(
            "  reaction yield {:.0} % against the limiting {} (`batch show --json` has the terms)",
            100.0 * f,
            ry["limiting_element"].as_str().unwrap_or("precursor"),
        ))?;
    }
    for x in v["vials"].as_array().into_iter().flatten() {
        line(&format!(
            "  vial {} {} {:.2} mL at {} ({})",
            x["id"],
            x["label"].as_str().unwrap_or(""),
            x["volume_ml"].as_f64().unwrap_or(0.0),
            x["location"].as_str().unwrap_or(""),
            x["status"].as_str().unwrap_or("")
        ))?;
    }
    for c in v["cautions"].as_array().into_iter().flatten() {
        line(&format!("  ! {}", c.as_str().unwrap_or("")))?;
    }
    Ok(())
}

fn aliquot(cli: &Cli, c: &AliquotCmd) -> Result<()> {
    let mut store = open_for(cli, !matches!(c, AliquotCmd::Show { .. }))?;
    match c {
        AliquotCmd::Add(a) => {
            if a.minutes.is_some() && a.stage.is_some() {
                bail!("give either --minutes or --stage, not both");
            }
            if a.excitation_nm.is_some() && a.pl.is_none() {
                bail!("--excitation-nm goes with --pl");
            }
            let pl_cuvette = pl_cuvette(a.pl_path_cm, a.pl_dilution)?;
            if pl_cuvette != bench::OwnCuvette::default() && a.pl.is_none() {
                bail!("--pl-path-cm and --pl-dilution go with --pl");
            }
            let mut files = Vec::new();
            if let Some(p) = &a.abs {
                files.push(SpectrumFile {
                    path: p.clone(),
                    kind: "abs",
                    ..Default::default()
                });
            }
            if let Some(p) = &a.pl {
                files.push(SpectrumFile {
                    path: p.clone(),
                    kind: "pl",
                    excitation_nm: a.excitation_nm,
                    cuvette: pl_cuvette,
                });
            }
            if let Some(p) = &a.ple {
                files.push(SpectrumFile {
                    path: p.clone(),
                    kind: "ple",
                    ..Default::default()
                });
            }
            let na = model::NewAliquot {
                batch_id: a.batch_id,
                minutes: a.minutes,
                stage: a.stage.clone(),
                dilution_factor: a.dilution,
                path_cm: a.path_cm,
                solvent: a.solvent.clone(),
                taken_at: None,
            };
            let opts = read_options(a.x_col, a.y_col, &a.x_unit, &a.block, &a.choice);
            let door = bench::Door {
                again: a.again,
                kind_as_is: a.kind_as_is,
                series: a.series,
            };
            if a.series {
                if files.len() != 1 {
                    bail!("--series takes one file: give one of --abs, --pl or --ple");
                }
                if a.minutes.is_some() || a.stage.is_some() {
                    bail!("--series times each aliquot by its column header; leave out --minutes and --stage");
                }
                let series = bench::add_series(&mut store, &na, &files[0], &opts, &door)?;
                if a.json {
                    json(&series)?;
                } else {
                    for s in &series {
                        line(&format!(
                            "aliquot {} ({}): first exciton {} nm, D {} nm, conc {}",
                            s.id,
                            s.minutes
                                .map(|m| format!("{m:.2} min"))
                                .or(s.stage.clone())
                                .unwrap_or_default(),
                            num(s.first_exciton_nm, 1),
                            num(s.diameter_nm, 2),
                            molar(s.concentration_molar)
                        ))?;
                    }
                }
                return Ok(());
            }
            let s = bench::add_aliquot(&mut store, &na, &files, &opts, &door)?;
            if a.json {
                json(&s)?;
            } else {
                line(&format!(
                    "aliquot {}: first exciton {} nm, D {} nm ({}), conc {}, PL {} nm, QY {}",
                    s.id,
                    num(s.first_exciton_nm, 1),
                    num(s.diameter_nm, 2),
                    s.curve.clone().unwrap_or("-".into()),
                    molar(s.concentration_molar),
                    num(s.pl_peak_nm, 1),
                    num(s.qy, 2)
                ))?;
                for w in &s.warnings {
                    line(&format!("  warning: {w}"))?;
                }
            }
        }
        AliquotCmd::Void { id, why, json: j } | AliquotCmd::Reinstate { id, why, json: j } => {
            let voiding = matches!(c, AliquotCmd::Void { .. });
            let row = crate::corrections::set_aliquot_void(&mut store, *id, voiding, why)?;
            if *j {
                json(&row)?;
            } else if voiding {
                line(&format!(
                    "aliquot {} of batch {} is void ({}); the batch's values no longer use it",
                    row.id,
                    row.batch_id,
                    why.trim()
                ))?;
            } else {
                line(&format!("aliquot {} of batch {} is reinstated", row.id, row.batch_id))?;
            }
        }
        AliquotCmd::Edit {
            id,
            minutes,
            stage,
            dilution,
            path_cm,
            solvent,
            why,
            json: j,
        } => {
            let e = model::AliquotEdit {
                minutes: *minutes,
                stage: stage.clone(),
                dilution_factor: *dilution,
                path_cm: *path_cm,
                solvent: solvent.clone(),
            };
            let row = crate::corrections::edit_aliquot(&mut store, *id, &e, why)?;
            let s = store.read(|tx| growth::aliquot_summary(tx, &row))?;
            if *j {
                json(&s)?;
            } else {
                line(&format!(
                    "aliquot {} corrected: D {} nm, conc {}",
                    s.id,
                    num(s.diameter_nm, 2),
                    molar(s.concentration_molar)
                ))?;
            }
        }
        AliquotCmd::Show { id, json: j } => {
            let s = store.read(|tx| {
                let a = model::get_aliquot(tx, *id)?;
                growth::aliquot_summary(tx, &a)
            })?;
            if *j {
                json(&s)?
            } else {
                line(&serde_json::to_string_pretty(&s)?)?
            }
        }
    }
    Ok(())
}

/// The PL cuvette as the flags give it, refused (naming the flag) when out of range.
fn pl_cuvette(path_cm: Option<f64>, dilution: Option<f64>) -> Result<bench::OwnCuvette> {
    Ok(bench::OwnCuvette {
        path_cm,
        dilution_factor: dilution,
    }
    .checked("--pl-path-cm", "--pl-dilution")?)
}

fn location(cli: &Cli, c: &LocationCmd) -> Result<()> {
    let mut store = open_for(cli, matches!(c, LocationCmd::Add { .. }))?;
    match c {
        LocationCmd::Add { name, kind, position } => {
            let id = store.write(|tx, who| model::add_location(tx, who, name, kind, position.as_deref()))?;
            line(&format!("location {id}: {name}"))?;
        }
        LocationCmd::List(f) => {
            let ls = store.read(|tx| model::list_locations(tx))?;
            if f.json {
                json(&ls)?;
            } else {
                for l in ls {
                    line(&format!(
                        "{:>4}  {:<24} {:<9} {}",
                        l.id,
                        l.name,
                        l.kind,
                        l.position.unwrap_or_default()
                    ))?;
                }
            }
        }
    }
    Ok(())
}

fn vial_id(store: &mut Store, key: &str) -> Result<i64> {
    Ok(store.read(|tx| model::find_vial(tx, key))?.id)
}

fn print_vial(v: &model::VialRow, j: bool) -> Result<()> {
    if j {
        json(&crate::report::shelf_entry(v))
    } else {
        line(&format!(
            "vial {} {}: {:.3} mL left at {} ({}); concentration {}{}",
            v.id,
            v.label,
            v.volume_ml,
            v.location,
            v.status,
            molar(v.concentration_molar),
            match (crate::report::concentration_note(v), v.calibration_version) {
                ("", _) => String::new(),
                (n, Some(c)) => format!(" ({n}, calibration v{c})"),
                (n, None) => format!(" ({n})"),
            }
        ))
    }
}

fn vial(cli: &Cli, c: &VialCmd) -> Result<()> {
    let mut store = open_for(cli, !matches!(c, VialCmd::Show { .. }))?;
    match c {
        VialCmd::New {
            batch_id,
            ml,
            location,
            label,
            solvent,
            position,
            owner,
            conc,
            json: j,
        } => {
            let v = store.write(|tx, who| {
                let id = model::insert_vial(
                    tx,
                    who,
                    &model::NewVial {
                        batch_id: *batch_id,
                        label: label.clone(),
                        volume_ml: *ml,
                        solvent: solvent.clone(),
                        location: location.clone(),
                        position: position.clone(),
                        owner: owner.clone(),
                        concentration_molar: *conc,
                        created_at: None,
                    },
                )?;
                if conc.is_none() {
                    engine::estimate_vial(tx, id)?;
                }
                model::get_vial(tx, id)
            })?;
            print_vial(&v, *j)?;
        }
        VialCmd::Draw { vial, ml, why, json: j } => {
            let id = vial_id(&mut store, vial)?;
            let v = store.write(|tx, who| model::draw_from_vial(tx, who, id, *ml, why.as_deref()))?;
            print_vial(&v, *j)?;
        }
        VialCmd::Move {
            vial,
            to,
            position,
            why,
            json: j,
        } => {
            let id = vial_id(&mut store, vial)?;
            let v = store.write(|tx, who| model::move_vial(tx, who, id, to, position.as_deref(), why.as_deref()))?;
            print_vial(&v, *j)?;
        }
        VialCmd::Dispose { vial, why, json: j } => {
            let id = vial_id(&mut store, vial)?;
            let v = store.write(|tx, who| model::dispose_vial(tx, who, id, why))?;
            print_vial(&v, *j)?;
        }
        VialCmd::Reinstate { vial, why, json: j } => {
            let id = vial_id(&mut store, vial)?;
            let v = crate::corrections::reinstate_vial(&mut store, id, why)?;
            print_vial(&v, *j)?;
        }
        VialCmd::Measure {
            vial,
            abs,
            dilution,
            path_cm,
            json: j,
        } => {
            let id = vial_id(&mut store, vial)?;
            let m = bench::measure_vial(&mut store, id, abs, *dilution, *path_cm)?;
            if *j {
                json(&m)?;
            } else {
                line(&format!(
                    "vial {id}: first exciton {} nm, D {} nm, concentration {}",
                    num(m.first_exciton_nm, 1),
                    num(m.diameter_nm, 2),
                    molar(m.concentration_molar)
                ))?;
                for w in &m.warnings {
                    line(&format!("  warning: {w}"))?;
                }
            }
        }
        VialCmd::Show { vial, json: j } => {
            let (v, events) = store.read(|tx| {
                let v = model::find_vial(tx, vial)?;
                let e = model::vial_events(tx, v.id)?;
                Ok((v, e))
            })?;
            if *j {
                let mut x = serde_json::to_value(crate::report::shelf_entry(&v))?;
                x["events"] = serde_json::to_value(&events)?;
                json(&x)?;
            } else {
                print_vial(&v, false)?;
                for e in events {
                    line(&format!(
                        "  {} {:<8} {:>8} {} {}",
                        e.at,
                        e.kind,
                        num(e.amount_ml, 3),
                        e.who,
                        e.why.unwrap_or_default()
                    ))?;
                }
            }
        }
    }
    Ok(())
}

fn shelf(cli: &Cli, a: &ShelfArgs) -> Result<()> {
    if let Some(l) = a.low
        && !(l >= 0.0)
    {
        bail!("--low must be a volume of zero or more mL, got {l}");
    }
    let mut store = open_read(cli)?;
    let vials = store.read(|tx| model::list_vials(tx, a.all))?;
    let vials: Vec<_> = vials
        .into_iter()
        .filter(|v| a.low.is_none_or(|l| v.volume_ml < l))
        .collect();
    if a.json {
        let v: Vec<crate::report::ShelfEntry> = vials.iter().map(crate::report::shelf_entry).collect();
        return json(&v);
    }
    let mut current = String::new();
    for v in &vials {
        if v.location != current {
            current = v.location.clone();
            line(&current.to_string())?;
        }
        let e = crate::report::shelf_entry(v);
        line(&format!(
            "  {:>4} {:<14} batch {:>4} {:<9} {:>7.3} mL {:>10} {:<10} {:>9} nmol  {:<10} {}",
            v.id,
            v.label,
            v.batch_id,
            v.material,
            v.volume_ml,
            molar(v.concentration_molar),
            crate::report::concentration_note(v),
            num(e.nanomoles_left, 2),
            v.owner.clone().unwrap_or_default(),
            if v.status == "in_use" {
                String::new()
            } else {
                v.status.clone()
            }
        ))?;
    }
    Ok(())
}

fn log(cli: &Cli, a: &LogArgs) -> Result<()> {
    if a.limit < 1 {
        bail!("--limit must be 1 or more, got {}", a.limit);
    }
    let mut store = open_read(cli)?;
    let rows = store.read(|tx| model::audit_log(tx, a.entity.as_deref(), a.limit))?;
    if a.json {
        return json(&rows);
    }
    for r in rows {
        // One row, one line, whatever an old row's fields hold.
        let flat = |t: &str| t.replace(['\n', '\r'], " ");
        line(&format!(
            "{:>6} {} {:<10} {:<12} {:>6} {}",
            r.id,
            r.at,
            flat(&r.who),
            flat(&r.entity),
            r.entity_id.map(|i| i.to_string()).unwrap_or_default(),
            r.action
        ))?;
    }
    Ok(())
}

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
/// keys in alphabetical order at every depth, as it always has (it was once built as a
/// `serde_json::Value`, whose maps are sorted), so scripts and tests see the same text.
#[derive(Debug, serde::Serialize)]
#[serde(untagged)]
pub enum AnalyzeLine {
    Abs(Box<AbsLine>),
    /// A PL result, as a JSON object.
    Pl(Value),
    Refused {
        error: String,
        file: String,
    },
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
                    AnalyzeLine::Pl(v) => v["label"] = json!(raw.label),
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
                Ok(AnalyzeLine::Pl(json!({
                    "file": file,
                    "pl_peak_nm": r.pl_peak_nm,
                    "pl_fwhm_nm": r.pl_fwhm_nm,
                    "pl_fwhm_mev": r.pl_fwhm_mev,
                    "pl_integral": r.pl_integral,
                    "pl_integral_energy": r.pl_integral_energy,
                    "pl_integral_band_edge": r.pl_integral_band_edge,
                    "baseline_model": r.baseline_model,
                    "bands": r.bands,
                    "narrow_lines": r.narrow_lines,
                    "grid_gaps": r.grid_gaps,
                    "warnings": r.warnings,
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

fn analyze(a: &AnalyzeArgs) -> Result<ExitCode> {
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
            print_or_quit(out.flush())?;
            output::warn(&format!("refused {e}"));
        }
        let printed = match done {
            Done::Terminal(v) => {
                if a.json {
                    json_line(&v)
                } else {
                    analyze_lines(&serde_json::to_value(&v)?, a)
                        .and_then(|lines| lines.iter().try_for_each(|l| line(l)))
                }
            }
            Done::Rendered { text, .. } => text.and_then(|t| print_or_quit(out.write_all(t.as_bytes()))),
        };
        if let Err(e) = printed {
            outcome = Err(e);
            break;
        }
    }
    print_or_quit(out.flush())?;
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
    for l in analyze_lines(&serde_json::to_value(v)?, a)? {
        text.push_str(&crate::safe_text::for_terminal_lines(&l));
        text.push('\n');
    }
    Ok(text)
}

/// The lines `analyze` prints on stdout for one result, before they are made safe for a
/// terminal: the JSON text, or the summary and its warnings (nothing for a refused file, which
/// is named on stderr).
fn analyze_lines(v: &Value, a: &AnalyzeArgs) -> Result<Vec<String>> {
    let mut lines = Vec::new();
    if a.json {
        lines.push(crate::safe_text::json_text(serde_json::to_string(v)?));
    } else if v.get("error").is_none() {
        let f = |k: &str, d: usize| num(v[k].as_f64(), d);
        let name = match v["label"].as_str() {
            Some(l) => format!("{} [{l}]", v["file"].as_str().unwrap_or("")),
            None => v["file"].as_str().unwrap_or("").to_string(),
        };
        lines.push(match a.kind {
            Kind::Pl => format!(
                "{}  PL {} nm  FWHM {} nm  integral {}",
                name,
                f("pl_peak_nm", 1),
                f("pl_fwhm_nm", 1),
                f("pl_integral", 1)
            ),
            _ => format!(
                "{}  first exciton {} nm{}  A {}  HWHM {} nm{}",
                name,
                f("first_exciton_nm", 1),
                if v["shoulder"].as_bool() == Some(true) {
                    " (shoulder)"
                } else {
                    ""
                },
                f("first_exciton_abs", 3),
                f("hwhm_nm", 1),
                if v.get("diameter_nm").is_some() {
                    format!(
                        "  D {} nm  c {}",
                        f("diameter_nm", 2),
                        molar(v["concentration_molar"].as_f64())
                    )
                } else {
                    String::new()
                }
            ),
        });
        for w in v["warnings"].as_array().into_iter().flatten() {
            lines.push(format!("  warning: {}", w.as_str().unwrap_or("")));
        }
    }
    Ok(lines)
}

/// A write to stdout; a closed pipe ends the program quietly, as [`output::line`] does.
fn print_or_quit(written: std::io::Result<()>) -> Result<()> {
    match written {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => std::process::exit(0),
        r => Ok(r?),
    }
}

fn read(a: &ReadArgs) -> Result<()> {
    let opts = read_options(a.x_col, a.y_col, &a.x_unit, &a.block, &a.choice);
    if a.all {
        let name = a.file.display().to_string();
        let bytes = spectra::file_bytes(&a.file)?;
        let all = spectra::read_all(&name, &bytes, &opts)?;
        let sha = spectra::sha256_hex(&bytes);
        if a.json {
            let v: Vec<Value> = all
                .iter()
                .map(|raw| -> Result<Value> {
                    let mut v = serde_json::to_value(raw)?;
                    v["npoints"] = json!(raw.x.len());
                    v["sha256"] = json!(sha);
                    Ok(v)
                })
                .collect::<Result<_>>()?;
            return json(&v);
        }
        for (i, raw) in all.iter().enumerate() {
            line(&format!(
                "{} {}: {} ({} points), {} .. {} {}, y {}",
                i + 1,
                raw.label.clone().unwrap_or_default(),
                raw.format,
                raw.x.len(),
                raw.x.first().copied().unwrap_or(f64::NAN),
                raw.x.last().copied().unwrap_or(f64::NAN),
                raw.x_unit,
                raw.y_unit.clone().unwrap_or("-".into())
            ))?;
        }
        return Ok(());
    }
    let (raw, sha) = spectra::read_file(&a.file, &opts)?;
    if a.json {
        let mut v = serde_json::to_value(&raw)?;
        v["npoints"] = json!(raw.x.len());
        v["sha256"] = json!(sha);
        return json(&v);
    }
    line(&format!(
        "{}: {} ({} points)",
        a.file.display(),
        raw.format,
        raw.x.len()
    ))?;
    if let Some(t) = &raw.title {
        line(&format!("  title: {t}"))?;
    }
    line(&format!(
        "  x: {} .. {} {}",
        raw.x[0],
        raw.x[raw.x.len() - 1],
        raw.x_unit
    ))?;
    line(&format!("  y unit: {}", raw.y_unit.clone().unwrap_or("-".into())))?;
    for c in &raw.checks {
        line(&format!(
            "  check {}: {} ({})",
            c.name,
            if c.passed { "passed" } else { "FAILED" },
            c.detail
        ))?;
    }
    for w in &raw.warnings {
        line(&format!("  warning: {w}"))?;
    }
    Ok(())
}

fn size(a: &SizeArgs) -> Result<()> {
    let core = a.material.split('/').next().unwrap_or(&a.material).to_string();
    let curve = match &a.curve {
        Some(c) => c.clone(),
        None => sizing::default_curve(&core)
            .ok_or_else(|| {
                anyhow!(
                    "unknown material '{}' (known: CdSe, CdTe, CdS, PbS, PbSe, InP)",
                    a.material
                )
            })?
            .to_string(),
    };
    let sz = sizing::size(&curve, &core, a.peak_nm, None)?;
    let c = sizing::Curve::parse(&curve)?;
    let peak_range = sizing::peak_range_nm(c, &core, None);
    if a.json {
        let mut v = serde_json::to_value(&sz)?;
        v["material"] = json!(a.material);
        v["peak_nm"] = json!(a.peak_nm);
        v["valid_peak_range_nm"] = json!(peak_range.map(|(l, h)| [l, h]));
        v["source"] = json!(c.source());
        return json(&v);
    }
    line(&format!(
        "{} with first exciton at {} nm: D = {:.2} nm ({}; valid {:.1}-{:.1} nm)",
        a.material,
        a.peak_nm,
        sz.diameter_nm,
        c.source(),
        sz.valid_range_nm[0],
        sz.valid_range_nm[1]
    ))?;
    if let Some(e) = sz.edge_nm {
        line(&format!(
            "  tetrahedron edge {e:.2} nm (the diameter is the sphere of equal volume)"
        ))?;
    }
    for w in &sz.warnings {
        line(&format!("  warning: {w}"))?;
    }
    Ok(())
}

fn qy_cmd(a: &QyArgs) -> Result<()> {
    // clap requires both when no subcommand is given.
    let (Some(solvent), Some(ref_solvent)) = (&a.solvent, &a.ref_solvent) else {
        bail!("give --solvent and --ref-solvent");
    };
    let n = solvents::refractive_index(solvent)
        .ok_or_else(|| anyhow!("unknown solvent '{solvent}' (known: {})", solvents::names().join(", ")))?;
    let nr = solvents::refractive_index(ref_solvent).ok_or_else(|| {
        anyhow!(
            "unknown reference solvent '{ref_solvent}' (known: {})",
            solvents::names().join(", ")
        )
    })?;
    let mut extra = Vec::new();
    let ref_qy = match (&a.ref_qy, &a.ref_dye) {
        (Some(q), None) => *q,
        (None, Some(d)) => {
            let dye = solvents::dye(d).ok_or_else(|| {
                anyhow!(
                    "unknown dye '{d}' (known: {})",
                    solvents::DYES.iter().map(|d| d.name).collect::<Vec<_>>().join(", ")
                )
            })?;
            if !dye.solvent.eq_ignore_ascii_case(ref_solvent) {
                extra.push(format!(
                    "{} has its tabulated value in {}, not {ref_solvent}",
                    dye.name, dye.solvent
                ));
            }
            dye.qy
        }
        _ => bail!("give the reference's quantum yield: --ref-qy Q or --ref-dye NAME"),
    };
    let set = analysis::AnalysisSettings::default();
    let numbers = (a.sample_integral, a.sample_abs, a.ref_integral, a.ref_abs);
    let (fs, as_, fr, ar) = match numbers {
        (Some(fs), Some(as_), Some(fr), Some(ar)) => (fs, as_, fr, ar),
        _ => {
            let (Some(sp), Some(sa), Some(rp), Some(ra), Some(ex)) = (
                &a.sample_pl,
                &a.sample_abs_file,
                &a.ref_pl,
                &a.ref_abs_file,
                a.excitation_nm,
            ) else {
                bail!(
                    "give either the numbers (--sample-integral --sample-abs --ref-integral --ref-abs) or the files (--sample-pl --sample-abs-file --ref-pl --ref-abs-file --excitation-nm)"
                );
            };
            let pl_int = |p: &Path| -> Result<f64> {
                let (raw, _) = spectra::read_file(p, &ReadOptions::default())?;
                Ok(analysis::analyze_pl(&raw.to_trace(&p.display().to_string(), None)?, &set)?.pl_integral)
            };
            let abs_at = |p: &Path| -> Result<f64> {
                let (raw, _) = spectra::read_file(p, &ReadOptions::default())?;
                analysis::interpolate(&raw.to_trace(&p.display().to_string(), None)?, ex)
                    .ok_or_else(|| anyhow!("{} does not cover {ex} nm", p.display()))
            };
            (pl_int(sp)?, abs_at(sa)?, pl_int(rp)?, abs_at(ra)?)
        }
    };
    let mut r = qy::single_point(fs, as_, fr, ar, ref_qy, n, nr)?;
    r.warnings.extend(extra);
    if a.json {
        return json(
            &json!({"qy": r.qy, "method": r.method, "ref_qy": ref_qy, "n_sample": n, "n_ref": nr,
            "sample_integral": fs, "sample_abs": as_, "ref_integral": fr, "ref_abs": ar, "warnings": r.warnings}),
        );
    }
    line(&format!("QY = {:.3} ({:.1} %), {}", r.qy, r.qy * 100.0, r.method))?;
    for w in &r.warnings {
        line(&format!("  warning: {w}"))?;
    }
    Ok(())
}

/// `qy gradient`: the gradient quantum yield of a dilution series logged as aliquots.
fn qy_gradient(cli: &Cli, aliquots: &[i64], j: bool) -> Result<()> {
    let mut store = open_read(cli)?;
    let g = store.read(|tx| engine::gradient_qy_series(tx, aliquots))?;
    if j {
        return json(&g);
    }
    line(&format!(
        "QY = {:.3}{} ({:.1} %), {}",
        g.qy,
        g.qy_sd.map(|sd| format!(" ± {sd:.3}")).unwrap_or_default(),
        g.qy * 100.0,
        g.method
    ))?;
    line(&format!(
        "  {} dilutions: slope {:.4e} per unit absorbance, R² {:.4}; n {} against the reference's {} (calibration v{})",
        g.dilutions, g.sample_fit.slope, g.sample_fit.r_squared, g.n_sample, g.n_ref, g.calibration_version
    ))?;
    for p in &g.points {
        line(&format!(
            "  aliquot {:>5}  A(ex, PL cuvette) {:.4}  PL integral {:.4e}",
            p.aliquot_id, p.abs_at_excitation_pl, p.pl_integral
        ))?;
    }
    for w in &g.warnings {
        line(&format!("  warning: {w}"))?;
    }
    Ok(())
}

fn core_of(tx: &rusqlite::Connection, material: &str) -> crate::Result<String> {
    match model::material_by_name(tx, material) {
        Ok(m) => Ok(m.core),
        Err(e) => {
            // A bare core with a curve is fine even if the lab has not added it as a material.
            if sizing::default_curve(material).is_some() {
                Ok(material.to_string())
            } else {
                Err(e)
            }
        }
    }
}

/// A homogeneous HWHM above this is a typing slip, not a linewidth: single crystals' room-
/// temperature linewidths are of order tens of meV (from memory; the calibration itself
/// refuses 500).
const MAX_HOMOGENEOUS_HWHM_MEV: f64 = 200.0;

fn calib(cli: &Cli, c: &CalibCmd) -> Result<()> {
    let mut store = open_for(
        cli,
        !matches!(c, CalibCmd::List(_) | CalibCmd::History(_) | CalibCmd::Show { .. }),
    )?;
    let change = |store: &mut Store,
                  why: &str,
                  j: bool,
                  f: &dyn Fn(&rusqlite::Connection, &mut calibration::Calibration) -> crate::Result<()>|
     -> Result<()> {
        let (v, stale) = store.write(|tx, who| engine::change_calibration(tx, who, why, f))?;
        if j {
            json(&json!({"version": v, "marked_stale": stale}))
        } else {
            line(&format!(
                "calibration version {v}; {stale} derived values are now stale (run `cuvette recompute --dry-run` to preview)"
            ))
        }
    };
    match c {
        CalibCmd::List(f) | CalibCmd::History(f) => {
            let h = store.read(|tx| calibration::history(tx))?;
            if f.json {
                return json(&h);
            }
            for v in h {
                line(&format!(
                    "v{:<3} {} {:<10} {}",
                    v.version, v.created_at, v.created_by, v.why
                ))?;
            }
        }
        CalibCmd::Show { version, json: j } => {
            let v = store.read(|tx| match version {
                Some(v) => calibration::get(tx, *v),
                None => calibration::latest(tx),
            })?;
            if *j {
                return json(&v);
            }
            line(&format!(
                "calibration v{} ({} by {}: {})",
                v.version, v.created_at, v.created_by, v.why
            ))?;
            for (m, curve) in &v.body.curves {
                let src = sizing::Curve::parse(curve).map(|c| c.source()).unwrap_or("");
                line(&format!(
                    "  {m:<6} curve {curve:<14} extinction {:<14} {src}",
                    v.body.extinction.get(m).cloned().unwrap_or("-".into())
                ))?;
            }
            match &v.body.qy_reference {
                Some(r) => line(&format!(
                    "  QY reference: {} in {} = {} (excited at {} nm, A {}, integral {})",
                    r.dye, r.solvent, r.qy, r.excitation_nm, r.abs_at_excitation, r.integral
                ))?,
                None => line("  QY reference: none")?,
            }
            line(&format!(
                "  detector correction: {}",
                v.body
                    .detector_correction
                    .as_ref()
                    .map(|d| d.name.clone())
                    .unwrap_or("none".into())
            ))?;
            if v.body.homogeneous_hwhm_mev.is_empty() {
                line("  homogeneous HWHM: off (size dispersions hold the whole width)")?;
            }
            line(&format!(
                "  plausible size dispersion: up to {} % σ/D{} (above it a value is flagged)",
                v.body.plausible_dispersion_pct(),
                if v.body.plausible_dispersion_pct.is_none() {
                    ", the default"
                } else {
                    ""
                }
            ))?;
            for (core, h) in &v.body.homogeneous_hwhm_mev {
                line(&format!(
                    "  homogeneous HWHM: {core} {h} meV (taken out of the first-exciton width in quadrature)"
                ))?;
            }
            line(&format!(
                "  analysis: smoothing {} nm, order {}, saturation A {}",
                v.body.analysis.smoothing_nm, v.body.analysis.smoothing_order, v.body.analysis.saturation_abs
            ))?;
        }
        CalibCmd::SetCurve {
            material,
            curve,
            why,
            json: j,
        } => {
            change(&mut store, why, *j, &|tx, body| {
                body.set_curve(&core_of(tx, material)?, curve);
                Ok(())
            })?;
        }
        CalibCmd::SetExtinction {
            material,
            model,
            why,
            json: j,
        } => {
            let (material, model) = (
                material.clone(),
                if model.starts_with("lab:") {
                    model.clone()
                } else {
                    model.to_ascii_lowercase()
                },
            );
            change(&mut store, why, *j, &|tx, body| {
                let core = core_of(tx, &material)?;
                body.extinction.insert(core, model.clone());
                Ok(())
            })?;
        }
        CalibCmd::SetReference {
            dye,
            qy: q,
            solvent,
            excitation_nm,
            integral,
            abs,
            why,
            json: j,
        } => {
            let table = solvents::dye(dye);
            let q = q
                .or(table.map(|d| d.qy))
                .ok_or_else(|| anyhow!("dye '{dye}' is not in the table; give its --qy"))?;
            let solvent = solvent
                .clone()
                .or(table.map(|d| d.solvent.to_string()))
                .ok_or_else(|| anyhow!("give the reference's --solvent"))?;
            let r = calibration::QyReference {
                dye: dye.clone(),
                solvent,
                qy: q,
                excitation_nm: *excitation_nm,
                integral: *integral,
                abs_at_excitation: *abs,
            };
            change(&mut store, why, *j, &|_, body| {
                body.qy_reference = Some(r.clone());
                Ok(())
            })?;
        }
        CalibCmd::SetIndex {
            solvent,
            n,
            why,
            json: j,
        } => {
            let (s, n) = (solvent.clone(), *n);
            change(&mut store, why, *j, &|_, body| {
                body.solvent_index.insert(s.clone(), n);
                Ok(())
            })?;
        }
        CalibCmd::SetAnalysis {
            smoothing_nm,
            smoothing_order,
            saturation_abs,
            plausible_dispersion_pct,
            why,
            json: j,
        } => {
            let (a, b, c2) = (*smoothing_nm, *smoothing_order, *saturation_abs);
            let pd = *plausible_dispersion_pct;
            change(&mut store, why, *j, &|_, body| {
                if let Some(v) = pd {
                    body.plausible_dispersion_pct = Some(v);
                }
                if let Some(v) = a {
                    body.analysis.smoothing_nm = v;
                }
                if let Some(v) = b {
                    body.analysis.smoothing_order = v;
                }
                if let Some(v) = c2 {
                    body.analysis.saturation_abs = v;
                }
                Ok(())
            })?;
        }
        CalibCmd::SetDetector { file, why, json: j } => {
            let (raw, _) = spectra::read_file(file, &ReadOptions::default())?;
            let t = raw.to_trace(&file.display().to_string(), None)?;
            let name = file
                .file_name()
                .map(|n| n.to_string_lossy().to_string())
                .unwrap_or_default();
            let d = calibration::DetectorCorrection {
                name,
                nm: t.nm,
                factor: t.y,
            };
            change(&mut store, why, *j, &|_, body| {
                body.detector_correction = Some(d.clone());
                Ok(())
            })?;
        }
        CalibCmd::SetLabCurve {
            name,
            material,
            coeffs,
            range,
            source,
            why,
            json: j,
        } => {
            let coefficients: Vec<f64> = coeffs
                .split(',')
                .map(|c| {
                    c.trim()
                        .parse::<f64>()
                        .map_err(|_| anyhow!("coefficient '{c}' is not a number"))
                })
                .collect::<Result<_>>()?;
            let (lo, hi) = range
                .split_once("..")
                .ok_or_else(|| anyhow!("--range should read LOW..HIGH"))?;
            let valid_range_nm = [
                lo.trim()
                    .parse::<f64>()
                    .map_err(|_| anyhow!("range low '{lo}' is not a number"))?,
                hi.trim()
                    .parse::<f64>()
                    .map_err(|_| anyhow!("range high '{hi}' is not a number"))?,
            ];
            let (name, material, source) = (name.clone(), material.clone(), source.clone());
            change(&mut store, why, *j, &|tx, body| {
                let core = core_of(tx, &material)?;
                body.lab_curves.insert(
                    name.clone(),
                    calibration::LabCurve {
                        material: core,
                        coefficients: coefficients.clone(),
                        valid_range_nm,
                        source: source.clone(),
                    },
                );
                Ok(())
            })?;
        }
        CalibCmd::SetLabExtinction {
            name,
            material,
            prefactor,
            exponent,
            source,
            why,
            json: j,
        } => {
            let (name, material, source, a, b) =
                (name.clone(), material.clone(), source.clone(), *prefactor, *exponent);
            change(&mut store, why, *j, &|tx, body| {
                let core = core_of(tx, &material)?;
                body.lab_extinction.insert(
                    name.clone(),
                    calibration::LabExtinction {
                        material: core,
                        prefactor: a,
                        exponent: b,
                        source: source.clone(),
                    },
                );
                Ok(())
            })?;
        }
        CalibCmd::SetHomogeneousHwhm {
            material,
            mev,
            off,
            why,
            json: j,
        } => {
            let mev = if *off { None } else { *mev };
            if let Some(h) = mev
                && !(h.is_finite() && h > 0.0 && h <= MAX_HOMOGENEOUS_HWHM_MEV)
            {
                bail!(
                    "the homogeneous HWHM must be above 0 and at most {MAX_HOMOGENEOUS_HWHM_MEV} meV, got {h} (give --off to take none out)"
                );
            }
            let m = material.clone();
            change(&mut store, why, *j, &|tx, body| {
                body.set_homogeneous_hwhm(&core_of(tx, &m)?, mev);
                Ok(())
            })?;
        }
        CalibCmd::SetBulk {
            material,
            eg_ev,
            me,
            mh,
            eps_r,
            source,
            why,
            json: j,
        } => {
            let b = sizing::BulkParams {
                eg_ev: *eg_ev,
                me: *me,
                mh: *mh,
                eps_r: *eps_r,
                source: source.clone(),
            };
            let m = material.clone();
            change(&mut store, why, *j, &|tx, body| {
                let core = core_of(tx, &m).unwrap_or(m.clone());
                body.bulk.insert(core, b.clone());
                Ok(())
            })?;
        }
    }
    Ok(())
}

fn recompute(cli: &Cli, a: &RecomputeArgs) -> Result<()> {
    let mut store = open_for(cli, !a.dry_run)?;
    let progress = Progress::new("recompute", a.json);
    let report = if a.dry_run {
        store.read(|tx| engine::recompute(tx, a.all, true, |d, t| progress.tick(d, t)))?
    } else {
        store.write(|tx, who| engine::recompute_recorded(tx, who, a.all, |d, t| progress.tick(d, t)))?
    };
    if a.json {
        return json(&report);
    }
    line(&format!(
        "{}{} of {} aliquots recomputed ({} stale): {} values, {} changed",
        if a.dry_run { "dry run: " } else { "" },
        report.aliquots_recomputed,
        report.aliquots_considered,
        report.stale_found,
        report.recomputed,
        report.changed
    ))?;
    for m in &report.largest_moves {
        line(&format!(
            "  aliquot {:>5} (batch {:>4}) {:<20} {} -> {} ({})",
            m.aliquot_id,
            m.batch_id,
            m.quantity,
            num(m.old, 4),
            num(m.new, 4),
            m.relative_change
                .map(|r| format!("{:+.1} %", r * 100.0))
                .unwrap_or("-".into())
        ))?;
    }
    for c in &report.threshold_crossings {
        line(&format!(
            "  batch {} crosses {} {} ({} -> {})",
            c.batch_id,
            c.field,
            c.threshold,
            num(c.old, 3),
            num(c.new, 3)
        ))?;
    }
    Ok(())
}

fn explain(cli: &Cli, a: &ExplainArgs) -> Result<()> {
    let mut store = open_read(cli)?;
    let v = store.read(|tx| crate::report::explain(tx, a.aliquot))?;
    if a.json {
        return json(&v);
    }
    line(&format!(
        "aliquot {} of batch {} ({})",
        v["aliquot_id"],
        v["batch_id"],
        v["material"].as_str().unwrap_or("")
    ))?;
    for s in v["spectra"].as_array().into_iter().flatten() {
        let own = match (s["path_cm"].as_f64(), s["dilution_factor"].as_f64()) {
            (None, None) => String::new(),
            (p, d) => format!(
                " (own cuvette: {} cm, dilution {})",
                p.map(|v| v.to_string()).unwrap_or("-".into()),
                d.map(|v| v.to_string()).unwrap_or("-".into())
            ),
        };
        line(&format!(
            "  spectrum {} {} {} sha256 {}{own}",
            s["id"],
            s["kind"].as_str().unwrap_or(""),
            s["file_name"].as_str().unwrap_or(""),
            &s["sha256"].as_str().unwrap_or("")[..12.min(s["sha256"].as_str().unwrap_or("").len())]
        ))?;
    }
    for step in v["chain"].as_array().into_iter().flatten() {
        line(&format!(
            "  {:<20} {:>14} {:<11} {} (calibration v{}){}",
            step["quantity"].as_str().unwrap_or(""),
            num(step["value"].as_f64(), 5),
            step["unit"].as_str().unwrap_or(""),
            step["method"].as_str().unwrap_or(""),
            step["calibration_version"],
            if step["stale"].as_bool() == Some(true) {
                " STALE"
            } else {
                ""
            }
        ))?;
        if let Some(src) = step["source"].as_str() {
            line(&format!("  {:<20} source: {src}", ""))?;
        }
        // A value's warnings belong beside it: a chemist reading the chain must see them.
        for w in step["warnings"]
            .as_array()
            .into_iter()
            .flatten()
            .filter_map(|w| w.as_str())
        {
            line(&format!("  {:<20} ! {w}", ""))?;
        }
    }
    Ok(())
}

fn find(cli: &Cli, a: &FindArgs) -> Result<ExitCode> {
    let q = a.query.join(" ");
    let mut store = open_read(cli)?;
    let parsed = crate::search::parse(&q)?;
    let hits = store.read(|tx| crate::search::run(tx, &parsed))?;
    // Remember the numeric bounds people search by, for recompute previews; queued beside the
    // lab, since a search takes no write lock (the next write files them).
    if let Some(p) = &store.path {
        crate::store::search_bounds::queue(p, &crate::search::bounds_of(&parsed));
    }
    if a.json {
        json(&hits)?;
    } else {
        for h in &hits {
            line(&format!(
                "{:>5}  {:<28} {:<9} D {:>5} nm  peak {:>6}  PL {:>6}  QY {:>5}  stock {:>6.2} mL  {}",
                h.id,
                h.name,
                h.material,
                num(h.diameter_nm, 2),
                num(h.first_exciton_nm, 1),
                num(h.pl_peak_nm, 1),
                num(h.qy, 2),
                h.stock_ml,
                h.status
            ))?;
        }
        if hits.is_empty() {
            line("no batches match")?;
        }
    }
    Ok(ExitCode::SUCCESS)
}

fn handover(cli: &Cli, a: &HandoverArgs) -> Result<()> {
    let mut store = open_write(cli)?;
    let out = a.out.clone().unwrap_or_else(|| {
        PathBuf::from(format!(
            "handover-{}-to-{}",
            a.from.replace(' ', "_"),
            a.to.replace(' ', "_")
        ))
    });
    let p = Progress::new("handover", a.json);
    let r = crate::report::handover(&mut store, &a.from, &a.to, &out, None, &mut |d, t| p.tick(d, t))?;
    if a.json {
        return json(&r);
    }
    line(&format!(
        "handed {} vials and {} open batches from {} to {}; pack in {}",
        r.vials,
        r.batches,
        a.from,
        a.to,
        out.display()
    ))?;
    Ok(())
}

fn check(cli: &Cli, a: &CheckArgs) -> Result<ExitCode> {
    let mut store = open_read(cli)?;
    let (problems, checked) = store.read(|tx| {
        let mut p = crate::store::check::check(tx)?;
        let (n, more) = engine::verify_values(tx, a.deep)?;
        p.extend(more);
        Ok((p, n))
    })?;
    if a.json {
        json(
            &json!({"ok": problems.is_empty(), "problems": problems, "aliquots_recomputed": checked, "deep": a.deep}),
        )?;
    } else if problems.is_empty() {
        line(&format!(
            "ok: integrity, foreign keys, cuvette's invariants, spectrum data hashes and the audit log hold; {checked} aliquots recomputed{} agree",
            if a.deep {
                " (all)"
            } else {
                " (a sample; --deep for all)"
            }
        ))?;
    } else {
        for p in &problems {
            line(&format!("problem ({}): {}", p.kind, p.detail))?;
        }
    }
    Ok(if problems.is_empty() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}

fn restore(cli: &Cli, file: &Path, recompute_after: bool) -> Result<()> {
    let target = db_path(cli);
    // A backup must pass the whole check, derived values recomputed included, unless the user
    // takes it to recompute them.
    let extra = |c: &rusqlite::Connection| -> crate::Result<Vec<crate::store::check::Problem>> {
        if recompute_after {
            return Ok(Vec::new());
        }
        Ok(engine::verify_values(c, true)?.1)
    };
    let r = if target.exists() {
        let mut store = open_write(cli)?;
        crate::store::backup::restore(&mut store, file, &extra)?
    } else {
        let who = identity::for_write(cli.actor.as_deref())?;
        crate::store::backup::restore_new(file, &target, &who, &extra)?
    };
    if recompute_after {
        let mut store = open_write(cli)?;
        let rep = store.write(|tx, who| engine::recompute_recorded(tx, who, true, |_, _| {}))?;
        line(&format!(
            "recomputed {} values, {} changed",
            rep.recomputed, rep.changed
        ))?;
    }
    line(&format!(
        "restored {} from {}{}",
        r.lab,
        r.restored_from,
        r.replaced_kept_at
            .map(|k| format!("; the content it replaced is kept at {k}"))
            .unwrap_or_default()
    ))?;
    Ok(())
}

fn import(cli: &Cli, a: &ImportArgs) -> Result<()> {
    let pl = bench::PlSetup {
        excitation_nm: a.excitation_nm,
        cuvette: pl_cuvette(a.pl_path_cm, a.pl_dilution)?,
    };
    let mut store = open_write(cli)?;
    let template = model::NewAliquot {
        batch_id: a.batch_id,
        minutes: None,
        stage: None,
        dilution_factor: a.dilution,
        path_cm: a.path_cm,
        solvent: a.solvent.clone(),
        taken_at: None,
    };
    let progress = Progress::new("import", a.json);
    let door = bench::Door {
        again: a.again,
        kind_as_is: a.kind_as_is,
        series: a.series,
    };
    let r = bench::import_folder(&mut store, a.batch_id, &a.folder, &template, pl, &door, |d, t| {
        progress.tick(d, t)
    })?;
    if a.json {
        return json(&json!({"batch_id": a.batch_id, "aliquots": r.aliquots, "skipped": r.skipped}));
    }
    line(&format!(
        "imported {} aliquots into batch {}",
        r.aliquots.len(),
        a.batch_id
    ))?;
    for f in &r.skipped {
        line(&format!(
            "  skipped {f}: already logged in this batch (give --again to log it twice)"
        ))?;
    }
    let _ = output::num(None, 0);
    Ok(())
}

#[derive(serde::Deserialize)]
struct ManifestRow {
    batch_id: i64,
    folder: String,
    dilution: Option<f64>,
    path_cm: Option<f64>,
    solvent: Option<String>,
    excitation_nm: Option<f64>,
    pl_path_cm: Option<f64>,
    pl_dilution: Option<f64>,
}

fn import_manifest(cli: &Cli, a: &ManifestArgs) -> Result<ExitCode> {
    let text = std::fs::read_to_string(&a.manifest).with_context(|| format!("cannot read {}", a.manifest.display()))?;
    let mut rdr = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let mut rows = Vec::new();
    for (i, r) in rdr.deserialize::<ManifestRow>().enumerate() {
        let r = r.map_err(|e| anyhow!("{} row {}: {e}", a.manifest.display(), i + 2))?;
        bench::OwnCuvette {
            path_cm: r.pl_path_cm,
            dilution_factor: r.pl_dilution,
        }
        .checked("pl_path_cm", "pl_dilution")
        .map_err(|e| anyhow!("{} row {}: {e}", a.manifest.display(), i + 2))?;
        rows.push(r);
    }
    let base = a.manifest.parent().map(Path::to_path_buf).unwrap_or_default();
    let mut store = open_write(cli)?;
    let progress = Progress::new("import", a.json);
    let mut results = Vec::new();
    let mut failed = false;
    for (i, r) in rows.iter().enumerate() {
        let folder = base.join(&r.folder);
        let template = model::NewAliquot {
            batch_id: r.batch_id,
            minutes: None,
            stage: None,
            dilution_factor: r.dilution.unwrap_or(1.0),
            path_cm: r.path_cm.unwrap_or(1.0),
            solvent: r.solvent.clone().unwrap_or_else(|| "hexane".into()),
            taken_at: None,
        };
        match bench::import_folder(
            &mut store,
            r.batch_id,
            &folder,
            &template,
            bench::PlSetup {
                excitation_nm: r.excitation_nm,
                cuvette: bench::OwnCuvette {
                    path_cm: r.pl_path_cm,
                    dilution_factor: r.pl_dilution,
                },
            },
            &bench::Door::default(),
            |_, _| {},
        ) {
            Ok(ids) => results.push(
                json!({"batch_id": r.batch_id, "folder": folder.display().to_string(), "aliquots": ids.aliquots, "skipped": ids.skipped}),
            ),
            Err(e) => {
                failed = true;
                output::warn(&format!(
                    "batch {} ({}): {e}; nothing imported for it",
                    r.batch_id,
                    folder.display()
                ));
                results.push(
                    json!({"batch_id": r.batch_id, "folder": folder.display().to_string(), "error": e.to_string()}),
                );
            }
        }
        progress.tick(i + 1, rows.len());
    }
    if a.json {
        json(&results)?;
    } else {
        for r in &results {
            match r["aliquots"].as_array() {
                Some(ids) => line(&format!("batch {}: {} aliquots", r["batch_id"], ids.len()))?,
                None => line(&format!("batch {}: not imported", r["batch_id"]))?,
            }
        }
    }
    Ok(if failed { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

/// How the UI's writer was named, and how it may remember the first-run form's name.
fn tui_writer(flag: Option<&str>) -> crate::tui::Writer {
    let from = super::identity::resolve(flag).from;
    crate::tui::Writer {
        chosen: matches!(from, "--as" | "CUVETTE_USER" | "whoami --set"),
        remember: Some(|name| {
            super::identity::remember(name)
                .map(|p| p.display().to_string())
                .map_err(|e| e.to_string())
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A line's JSON text is what the same values give as a `serde_json::Value` (whose maps
    /// are sorted), at every depth: the text `analyze --json` has always written.
    #[test]
    fn analyze_lines_serialise_with_sorted_keys() {
        let cal = calibration::Calibration::default();
        for peak in [480.0, 550.0, 610.0] {
            let (nm, y) = crate::demo::absorbance("CdSe", peak, 0.045, 0.3, 0.001, &mut crate::demo::Rng::new(3));
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
