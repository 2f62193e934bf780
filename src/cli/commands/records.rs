//! Keeping the record whole: `check` of the lab, `restore` from a backup, `handover` of one
//! person's vials and open batches to another, and `demo`, the invented lab to try it on.

use super::{db_path, default_db_path, open_create, open_read, open_write, tui_writer};
use crate::cli::args::*;
use crate::cli::identity;
use crate::cli::output::{Progress, json, line};
use anyhow::Result;
use serde::Serialize;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// What `check --json` prints: whether the lab holds, each problem found, and how many
/// aliquots' values were recomputed to compare.
#[derive(Serialize)]
struct CheckReport<'a> {
    // Fields in alphabetical order: the order these keys have always been printed in.
    aliquots_recomputed: usize,
    deep: bool,
    ok: bool,
    problems: Vec<ProblemLine<'a>>,
}

/// A problem as `check --json` prints it (the store's `Problem`, its keys in that order).
#[derive(Serialize)]
struct ProblemLine<'a> {
    detail: &'a str,
    kind: &'a str,
}

pub(super) fn check(cli: &Cli, a: &CheckArgs) -> Result<ExitCode> {
    let mut store = open_read(cli)?;
    let (problems, checked) = store.read(|tx| {
        let mut p = crate::store::check::check(tx)?;
        let (n, more) = crate::lab::derivation::verify_values(tx, a.deep)?;
        p.extend(more);
        Ok((p, n))
    })?;
    if a.json {
        json(&CheckReport {
            aliquots_recomputed: checked,
            deep: a.deep,
            ok: problems.is_empty(),
            problems: problems
                .iter()
                .map(|p| ProblemLine {
                    detail: &p.detail,
                    kind: &p.kind,
                })
                .collect(),
        })?;
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

pub(super) fn restore(cli: &Cli, file: &Path, recompute_after: bool) -> Result<()> {
    use crate::lab::restore::{Target, restore};
    let target = db_path(cli);
    let done = if target.exists() {
        let mut store = open_write(cli)?;
        restore(Target::Open(&mut store), file, recompute_after)?
    } else {
        let who = identity::for_write(cli.actor.as_deref())?;
        restore(
            Target::New {
                path: &target,
                who: &who,
            },
            file,
            recompute_after,
        )?
    };
    if let Some(rep) = &done.recomputed {
        line(&format!(
            "recomputed {} values, {} changed",
            rep.recomputed, rep.changed
        ))?;
    }
    let r = done.report;
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

pub(super) fn handover(cli: &Cli, a: &HandoverArgs) -> Result<()> {
    let mut store = open_write(cli)?;
    let out = a.out.clone().unwrap_or_else(|| {
        PathBuf::from(format!(
            "handover-{}-to-{}",
            a.from.replace(' ', "_"),
            a.to.replace(' ', "_")
        ))
    });
    let p = Progress::new("handover", a.json);
    let r = crate::lab::handover::handover(&mut store, &a.from, &a.to, &out, None, &mut |d, t| p.tick(d, t))?;
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

pub(super) fn demo(cli: &Cli, a: &DemoArgs) -> Result<ExitCode> {
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
    crate::lab::demo::prepare_file(&path, a.force)?;
    let mut store = open_create(cli)?;
    let progress = Progress::new("demo", false);
    let n = crate::lab::demo::build(&mut store, a.scale, |d, t| progress.tick(d, t))?;
    use std::io::IsTerminal;
    if !a.no_ui && std::io::stdout().is_terminal() && std::io::stdin().is_terminal() {
        crate::tui::run(store, tui_writer(cli.actor.as_deref()))?;
    } else {
        line(&format!("built the demo lab ({n} batches) in {}", path.display()))?;
    }
    Ok(ExitCode::SUCCESS)
}
