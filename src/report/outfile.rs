//! Opening the files a command writes (a plot, an export) so that nothing of the user's is
//! clobbered: without `force` a file is only ever created new, which refuses an existing file
//! and any symbolic link (a link planted in a shared folder could point anywhere, even where
//! nothing exists yet), atomically, with no check-then-open race. With `force` an existing file
//! is overwritten and a link is followed, as the user asked.

use crate::error::{Error, Result};
use std::fs::{File, OpenOptions};
use std::path::{Path, PathBuf};

/// Opens `path` for writing: created new unless `force`.
pub fn create_output(path: &Path, force: bool) -> Result<File> {
    let mut o = OpenOptions::new();
    o.write(true);
    if force {
        o.create(true).truncate(true);
    } else {
        o.create_new(true);
    }
    o.open(path).map_err(|e| {
        if e.kind() != std::io::ErrorKind::AlreadyExists {
            return Error::Invalid(format!("cannot write {}: {e}", path.display()));
        }
        match std::fs::read_link(path) {
            Ok(target) => Error::Invalid(format!(
                "{} is a symbolic link to {}; refusing to write through it (use --force to follow it)",
                path.display(),
                target.display()
            )),
            Err(_) => Error::Invalid(format!(
                "{} already exists; refusing to overwrite it (use --force to replace it)",
                path.display()
            )),
        }
    })
}

/// Opens every file of `paths` as [`create_output`] does, or none: when one is refused, the
/// ones this call created are removed again, so a refused export leaves no partial set.
pub fn create_outputs(paths: &[PathBuf], force: bool) -> Result<Vec<File>> {
    let mut files = Vec::with_capacity(paths.len());
    for p in paths {
        match create_output(p, force) {
            Ok(f) => files.push(f),
            Err(e) => {
                if !force {
                    // Only files this call made new are removed; with force nothing is.
                    for made in &paths[..files.len()] {
                        let _ = std::fs::remove_file(made);
                    }
                }
                return Err(e);
            }
        }
    }
    Ok(files)
}
