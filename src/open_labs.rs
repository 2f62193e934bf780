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
//! file. A registered lab counts only while its path still names the same file: once a lab is
//! deleted (a test's temporary folder, a lab replaced by another file), its inode may be given
//! to a new file, which must not then pass for the lab.

use std::path::{Path, PathBuf};
use std::sync::Mutex;

/// Each registered lab's path and the identity it had when registered.
static OPEN_LABS: Mutex<Vec<(PathBuf, (u64, u64))>> = Mutex::new(Vec::new());

/// The file's device and inode, without opening it (None where the platform gives none): the
/// identity the store also checks a lab by before each write.
pub fn identity(path: &Path) -> Option<(u64, u64)> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        std::fs::metadata(path).ok().map(|m| (m.dev(), m.ino()))
    }
    #[cfg(not(unix))]
    {
        // Elsewhere a lock is not released by another handle's close, and no inode is given.
        let _ = path;
        None
    }
}

/// Records that this process has the lab at `path` open.
pub fn register(path: &Path) {
    let Some(id) = identity(path) else { return };
    let mut held = OPEN_LABS.lock().unwrap_or_else(|p| p.into_inner());
    // Labs gone from their paths are forgotten as new ones come.
    held.retain(|(p, was)| identity(p) == Some(*was));
    if !held.iter().any(|(p, was)| *was == id && p == path) {
        held.push((path.to_path_buf(), id));
    }
}

/// Whether `path` is a lab this process has open, or one of SQLite's files beside it.
pub fn is_open_lab(path: &Path) -> bool {
    let held = OPEN_LABS.lock().unwrap_or_else(|p| p.into_inner());
    if held.is_empty() {
        return false;
    }
    let is_held = |p: &Path| {
        identity(p).is_some_and(|id| held.iter().any(|(lab, was)| *was == id && identity(lab) == Some(*was)))
    };
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    #[allow(clippy::unwrap_used)]
    fn a_deleted_lab_does_not_lend_its_inode_to_a_new_file() {
        let dir = tempfile::tempdir().unwrap();
        let lab = dir.path().join("gone.db");
        std::fs::write(&lab, b"x").unwrap();
        register(&lab);
        assert!(is_open_lab(&lab));
        assert!(
            is_open_lab(&dir.path().join("gone.db-wal")),
            "SQLite's files beside it too"
        );
        std::fs::remove_file(&lab).unwrap();
        // New files, one of which the file system may well give the freed inode.
        for i in 0..8 {
            let p = dir.path().join(format!("abs_{i}.csv"));
            std::fs::write(&p, b"1,2\n").unwrap();
            assert!(!is_open_lab(&p), "{} passed for the deleted lab", p.display());
        }
    }
}
