//! What each command does: open the store, call the library, print. No science and no SQL
//! live here. This file opens the lab and dispatches; each command family has its own module.

mod aliquot;
mod analyze;
mod batch;
mod calc;
mod calib;
mod find;
mod people;
mod recipe;
mod records;
mod vial;

use super::args::*;
use super::identity;
use super::output::{self, json, line};
use crate::derive::yields;
use crate::spectra::ReadOptions;
use crate::store::Store;
use aliquot::{aliquot, import, import_manifest};
use analyze::analyze;
use anyhow::{Context, Result, bail};
use batch::batch;
use calc::{qy_cmd, qy_gradient, read, size};
use calib::{calib, explain, recompute};
use find::{find, log};
use people::{location, material, person, reagent};
use recipe::recipe;
use records::{check, demo, handover, restore};
use serde::Serialize;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use vial::{shelf, vial};

pub fn default_db_path() -> PathBuf {
    crate::paths::default_lab()
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

/// An error opening the lab, with the file named in front unless the message names it
/// already. The error itself stays in the chain, so the exit table sorts it by its type.
fn with_path(path: &Path, e: crate::Error) -> anyhow::Error {
    let shown = path.display().to_string();
    if e.to_string().contains(&shown) {
        anyhow::Error::new(e)
    } else {
        anyhow::Error::new(e).context(shown)
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
    let store = crate::lab::open_existing(&path, &who).map_err(|e| with_path(&path, e))?;
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
    let store = crate::lab::open(&path, &who).map_err(|e| with_path(&path, e))?;
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

/// What `spectrum move --json` prints.
#[derive(Serialize)]
struct SpectrumMoved {
    // Fields in alphabetical order: the order these keys have always been printed in.
    from_aliquot: i64,
    spectrum_id: i64,
    to_aliquot: i64,
}

/// What `spectrum cuvette --json` prints: the spectrum and the aliquot derived again.
#[derive(Serialize)]
struct CuvetteCorrected {
    // Fields in alphabetical order: the order these keys have always been printed in.
    aliquot_id: i64,
    spectrum_id: i64,
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
            let (from, to) = crate::lab::corrections::move_spectrum(&mut store, *spectrum, *to_aliquot, why)?;
            if *j {
                json(&SpectrumMoved {
                    from_aliquot: from,
                    spectrum_id: *spectrum,
                    to_aliquot: to,
                })?;
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
            let aliquot =
                crate::lab::corrections::set_spectrum_cuvette(&mut store, *spectrum, *path_cm, *dilution, why)?;
            if *j {
                json(&CuvetteCorrected {
                    aliquot_id: aliquot,
                    spectrum_id: *spectrum,
                })?;
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
        Cmd::Completions(a) => super::generate::completions(a)?,
        Cmd::Man(a) => super::generate::man(a)?,
    }
    Ok(ExitCode::SUCCESS)
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
    use crate::cli::exit::Outcome;

    /// The file's name goes in front of an opening error once, and the error keeps its kind,
    /// so the exit table sorts it by type (not as "other").
    #[test]
    fn an_opening_error_keeps_its_kind_and_names_the_file_once() {
        let path = Path::new("/labs/group.cuvette");
        let named = with_path(
            path,
            crate::Error::NotADatabase {
                path: path.display().to_string(),
                reason: "no cuvette tables".into(),
            },
        );
        assert_eq!(Outcome::of(&named), Outcome::NotADatabase);
        let text = format!("{named:#}");
        assert_eq!(text.matches("/labs/group.cuvette").count(), 1, "{text}");
        let unnamed = with_path(path, crate::Error::Storage("the lab stayed busy".into()));
        assert_eq!(Outcome::of(&unnamed), Outcome::Storage);
        assert_eq!(format!("{unnamed:#}"), "/labs/group.cuvette: the lab stayed busy");
    }
}
