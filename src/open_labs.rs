//! The lab files this process holds open through SQLite, so that no other code of the process
//! opens them as plain files.
//!
//! On POSIX systems SQLite's locks belong to the process, and closing *any* descriptor on the
//! database file releases all of them while SQLite still believes it holds them. A spectrum
//! reader that opened the lab and closed it again (a file picker's preview landing on it, a
//! folder import over the lab's own folder) would let another process write under this one's
//! feet. The store registers every lab it opens; the readers ask [`is_open_lab`] before they
//! open a file. Identity is by device and inode from `stat`, which opens nothing, and covers
//! SQLite's companions beside the lab (`-wal`, `-shm`, `-journal`). Promises: never opens a
//! file; a lab once registered stays registered for the life of the process (refusing to read
//! a database as a spectrum is right whether or not it is still open).

use std::path::Path;
use std::sync::Mutex;

static OPEN_LABS: Mutex<Vec<(u64, u64)>> = Mutex::new(Vec::new());

/// The file's device and inode, without opening it.
fn identity(path: &Path) -> Option<(u64, u64)> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        std::fs::metadata(path).ok().map(|m| (m.dev(), m.ino()))
    }
    #[cfg(not(unix))]
    {
        // Elsewhere a lock is not released by another handle's close; nothing to guard.
        let _ = path;
        None
    }
}

/// Records that this process has the lab at `path` open.
pub fn register(path: &Path) {
    let Some(id) = identity(path) else { return };
    let mut held = OPEN_LABS.lock().unwrap_or_else(|p| p.into_inner());
    if !held.contains(&id) {
        held.push(id);
    }
}

/// Whether `path` is a lab this process has open, or one of SQLite's files beside it.
pub fn is_open_lab(path: &Path) -> bool {
    let held = OPEN_LABS.lock().unwrap_or_else(|p| p.into_inner());
    if held.is_empty() {
        return false;
    }
    let is_held = |p: &Path| identity(p).is_some_and(|id| held.contains(&id));
    if is_held(path) {
        return true;
    }
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    ["-wal", "-shm", "-journal"].iter().any(|suffix| {
        name.strip_suffix(suffix)
            .is_some_and(|base| !base.is_empty() && is_held(&path.with_file_name(base)))
    })
}

/// The one-line refusal for a reader asked to open the lab itself.
pub fn refusal(path: &Path) -> String {
    format!(
        "{} is the lab's own database (or SQLite's file beside it), not a spectrum: it is not read",
        path.display()
    )
}
