//! Shell completions and man pages, generated from the clap grammar in `args/` so they can
//! never disagree with what the command line takes. Both are rendered into memory first and
//! then written to stdout in one go: the generators' own writers panic on a closed pipe, and
//! ours turns it into the quiet exit every other command has.

use super::args::{Cli, CompletionsArgs, ManArgs};
use super::output::{line, raw};
use anyhow::{Context, Result};
use clap::CommandFactory;
use std::path::{Path, PathBuf};

/// The completion script for one shell, as bytes.
pub fn completion_script(shell: clap_complete::Shell) -> Vec<u8> {
    let mut cmd = Cli::command();
    let mut script = Vec::new();
    clap_complete::generate(shell, &mut cmd, "cuvette", &mut script);
    script
}

/// The man page of the whole command line (roff), as bytes.
pub fn man_page() -> Result<Vec<u8>> {
    let mut page = Vec::new();
    clap_mangen::Man::new(Cli::command())
        .render(&mut page)
        .context("cannot render the man page")?;
    Ok(page)
}

/// Writes `cuvette.1` and one page per subcommand (`cuvette-batch-list.1`, ...) into `dir`,
/// creating it when missing; returns the files written. Pages already there are replaced:
/// they are generated text, made again from the same grammar.
pub fn man_pages_to(dir: &Path) -> Result<Vec<PathBuf>> {
    fn each(cmd: clap::Command, dir: &Path, written: &mut Vec<PathBuf>) -> Result<()> {
        for sub in cmd.get_subcommands().filter(|s| !s.is_hide_set()).cloned() {
            each(sub, dir, written)?;
        }
        let page = clap_mangen::Man::new(cmd);
        let path = dir.join(page.get_filename());
        page.generate_to(dir)
            .with_context(|| format!("cannot write {}", path.display()))?;
        written.push(path);
        Ok(())
    }
    std::fs::create_dir_all(dir).with_context(|| format!("cannot create {}", dir.display()))?;
    // Built once so that every page knows its full name (`cuvette batch list`); the `help`
    // subcommand clap adds gets no page of its own.
    let mut cmd = Cli::command().disable_help_subcommand(true);
    cmd.build();
    let mut written = Vec::new();
    each(cmd, dir, &mut written)?;
    written.sort();
    Ok(written)
}

/// `cuvette completions SHELL`.
pub fn completions(a: &CompletionsArgs) -> Result<()> {
    raw(&completion_script(a.shell))
}

/// `cuvette man [--dir DIR]`.
pub fn man(a: &ManArgs) -> Result<()> {
    match &a.dir {
        None => raw(&man_page()?),
        Some(dir) => {
            for path in man_pages_to(dir)? {
                line(&format!("wrote {}", path.display()))?;
            }
            Ok(())
        }
    }
}
