//! Choosing export files for an aliquot: browsing folders, typing a path with completion, and a
//! preview of the file under the cursor (how it reads, what kind it looks like, its first
//! exciton or PL peak, a small outline). The picker only reads the file system; nothing is
//! logged until the aliquot's form that follows is saved. Drawing lives in `draw`.

use crate::lab::bench::{self, FilePreview};
use std::path::{Path, PathBuf};

/// One row of a folder listing.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Entry {
    pub name: String,
    pub path: PathBuf,
    pub is_dir: bool,
}

/// The picker's state: the folder shown, the files taken so far and the path being typed.
#[derive(Debug, Clone, Default)]
pub struct Picker {
    /// The batch the chosen files will be logged into.
    pub batch: Option<i64>,
    pub folder: PathBuf,
    /// The folder above first (as `..`), then folders, then files, each by name.
    pub entries: Vec<Entry>,
    pub selected: usize,
    pub abs: Option<PathBuf>,
    pub pl: Option<PathBuf>,
    /// A path is being typed (the list waits).
    pub typing: bool,
    pub path_text: String,
    pub path_cursor: usize,
    /// What the last Tab found where more than one name fits.
    pub completions: Vec<String>,
    /// The path line still holds only the folder it was opened with: a `/` or `~` typed
    /// first starts a new path instead of being appended to it.
    pub path_fresh: bool,
    /// The preview of the selected file, or why it cannot be read.
    pub preview: Option<(PathBuf, Result<FilePreview, String>)>,
    /// A problem with the last key (a folder that cannot be read, a path that is not there).
    pub problem: Option<String>,
}

/// How many outline values a preview keeps for its small plot.
pub const OUTLINE_WIDTH: usize = 40;

/// `~` at the start of a typed path is the home folder, as in a shell.
fn expand_home(text: &str) -> PathBuf {
    match (text.strip_prefix('~'), std::env::var_os("HOME")) {
        (Some(rest), Some(home)) if rest.is_empty() || rest.starts_with('/') => {
            PathBuf::from(home).join(rest.trim_start_matches('/'))
        }
        _ => PathBuf::from(text),
    }
}

/// A folder's entries as the picker lists them; hidden files are left out.
pub fn list_folder(folder: &Path) -> Result<Vec<Entry>, String> {
    let read = std::fs::read_dir(folder).map_err(|e| format!("cannot read folder {}: {e}", folder.display()))?;
    let mut v: Vec<Entry> = read
        .filter_map(|e| e.ok())
        .filter(|e| !e.file_name().to_string_lossy().starts_with('.'))
        .map(|e| {
            let path = e.path();
            Entry {
                name: e.file_name().to_string_lossy().to_string(),
                is_dir: path.is_dir(),
                path,
            }
        })
        .collect();
    v.sort_by(|a, b| {
        b.is_dir
            .cmp(&a.is_dir)
            .then_with(|| a.name.to_lowercase().cmp(&b.name.to_lowercase()))
    });
    if let Some(parent) = folder.parent() {
        v.insert(
            0,
            Entry {
                name: "..".into(),
                path: parent.to_path_buf(),
                is_dir: true,
            },
        );
    }
    Ok(v)
}

fn common_prefix(names: &[String]) -> String {
    let Some(first) = names.first() else {
        return String::new();
    };
    let mut len = first.chars().count();
    for n in &names[1..] {
        len = len.min(first.chars().zip(n.chars()).take_while(|(a, b)| a == b).count());
    }
    first.chars().take(len).collect()
}

impl Picker {
    /// Opens on `folder`; a folder that is gone (a remembered one, say) falls back to the
    /// nearest one above it that can be read, and says so.
    pub fn open(batch: Option<i64>, folder: &Path) -> Picker {
        let mut p = Picker {
            batch,
            ..Default::default()
        };
        let mut at = folder.to_path_buf();
        loop {
            match list_folder(&at) {
                Ok(entries) => {
                    if at != folder {
                        p.problem = Some(format!("{} cannot be read; showing {}", folder.display(), at.display()));
                    }
                    p.folder = at;
                    p.entries = entries;
                    break;
                }
                Err(e) => match at.parent() {
                    Some(up) => at = up.to_path_buf(),
                    None => {
                        p.folder = folder.to_path_buf();
                        p.problem = Some(e);
                        break;
                    }
                },
            }
        }
        p.selected = p.first_file_or_folder();
        p.refresh_preview();
        p
    }

    /// The first row that is not `..`, so Enter on a fresh listing never climbs out.
    fn first_file_or_folder(&self) -> usize {
        usize::from(self.entries.first().is_some_and(|e| e.name == "..") && self.entries.len() > 1)
    }

    pub fn selected_entry(&self) -> Option<&Entry> {
        self.entries.get(self.selected)
    }

    /// Shows another folder, with the cursor on `select` if it is there.
    pub fn go_to(&mut self, folder: &Path, select: Option<&Path>) {
        match list_folder(folder) {
            Ok(entries) => {
                self.folder = folder.to_path_buf();
                self.entries = entries;
                self.problem = None;
                self.selected = select
                    .and_then(|s| self.entries.iter().position(|e| e.path == s && e.name != ".."))
                    .unwrap_or_else(|| self.first_file_or_folder());
                self.refresh_preview();
            }
            Err(e) => self.problem = Some(e),
        }
    }

    /// The folder above, with the cursor on the folder just left.
    pub fn up(&mut self) {
        let here = self.folder.clone();
        if let Some(parent) = here.parent() {
            let parent = parent.to_path_buf();
            self.go_to(&parent, Some(&here));
        }
    }

    pub fn step(&mut self, by: isize) {
        let n = self.entries.len();
        if n == 0 {
            return;
        }
        self.selected = (self.selected as isize + by).clamp(0, n as isize - 1) as usize;
        self.refresh_preview();
    }

    /// Reads the selected file for its preview (once per file: moving back to it reuses it).
    pub fn refresh_preview(&mut self) {
        let Some(e) = self.selected_entry() else {
            self.preview = None;
            return;
        };
        if e.is_dir {
            self.preview = None;
            return;
        }
        if self.preview.as_ref().is_some_and(|(p, _)| *p == e.path) {
            return;
        }
        let path = e.path.clone();
        let look = bench::preview_file(&path, OUTLINE_WIDTH).map_err(|e| e.to_string());
        self.preview = Some((path, look));
    }

    /// The kind the selected file looks like, from its preview.
    pub fn selected_kind(&self) -> Option<&'static str> {
        let e = self.selected_entry()?;
        match &self.preview {
            Some((p, Ok(look))) if *p == e.path => look.kind,
            _ => None,
        }
    }

    /// Takes (or, taken already as that kind, puts back) the selected file as `kind`.
    pub fn take(&mut self, kind: &str) -> Result<String, String> {
        let e = self.selected_entry().ok_or("no file here")?.clone();
        if e.is_dir {
            return Err(format!("{} is a folder: Enter opens it", e.name));
        }
        if let Some((p, Err(why))) = &self.preview
            && *p == e.path
        {
            return Err(why.clone());
        }
        let slot = match kind {
            "abs" => &mut self.abs,
            "pl" => &mut self.pl,
            other => {
                return Err(format!(
                    "a {other} spectrum is logged from the command line (aliquot add --ple)"
                ));
            }
        };
        if slot.as_ref() == Some(&e.path) {
            *slot = None;
            return Ok(format!("{} put back", e.name));
        }
        *slot = Some(e.path.clone());
        // One file is one spectrum: taken as the other kind before, it is that no longer.
        let other = if kind == "abs" { &mut self.pl } else { &mut self.abs };
        if other.as_ref() == Some(&e.path) {
            *other = None;
        }
        Ok(format!(
            "{} taken as {}",
            e.name,
            if kind == "abs" { "absorbance" } else { "PL" }
        ))
    }

    /// Starts typing a path, beginning with `start` (the current folder, or `~/`).
    pub fn start_typing(&mut self, start: String) {
        self.typing = true;
        self.path_cursor = start.chars().count();
        self.path_text = start;
        self.completions.clear();
        self.path_fresh = true;
    }

    /// Tab in the path line: completes the last part of the path as far as the names that fit
    /// agree; a folder gets its `/`. Lists the names when more than one fits.
    pub fn complete(&mut self) {
        let text = self.path_text.clone();
        let (dir_text, prefix) = match text.rfind('/') {
            Some(i) => (&text[..=i], &text[i + 1..]),
            None => ("", text.as_str()),
        };
        let dir = if dir_text.is_empty() {
            self.folder.clone()
        } else {
            expand_home(dir_text)
        };
        let Ok(read) = std::fs::read_dir(&dir) else {
            self.problem = Some(format!("no folder {}", dir.display()));
            return;
        };
        let mut fits: Vec<(String, bool)> = read
            .filter_map(|e| e.ok())
            .map(|e| (e.file_name().to_string_lossy().to_string(), e.path().is_dir()))
            .filter(|(n, _)| n.starts_with(prefix) && (prefix.starts_with('.') || !n.starts_with('.')))
            .collect();
        fits.sort();
        self.completions.clear();
        match fits.len() {
            0 => self.problem = Some(format!("nothing in {} starts with '{prefix}'", dir.display())),
            1 => {
                let (name, is_dir) = &fits[0];
                self.path_text = format!("{dir_text}{name}{}", if *is_dir { "/" } else { "" });
                self.problem = None;
            }
            _ => {
                let names: Vec<String> = fits.iter().map(|(n, _)| n.clone()).collect();
                self.path_text = format!("{dir_text}{}", common_prefix(&names));
                self.completions = fits
                    .iter()
                    .map(|(n, d)| format!("{n}{}", if *d { "/" } else { "" }))
                    .collect();
                self.problem = None;
            }
        }
        self.path_cursor = self.path_text.chars().count();
    }

    /// Enter in the path line: a folder is opened; a file opens its folder with the cursor on
    /// it, ready to take. Returns whether the path was found.
    pub fn go_typed(&mut self) -> bool {
        let typed = self.path_text.trim().to_string();
        let path = expand_home(&typed);
        let path = if path.is_relative() {
            self.folder.join(path)
        } else {
            path
        };
        if path.is_dir() {
            self.typing = false;
            self.completions.clear();
            self.go_to(&path, None);
            true
        } else if path.is_file() {
            self.typing = false;
            self.completions.clear();
            let folder = path.parent().map(Path::to_path_buf).unwrap_or_default();
            self.go_to(&folder, Some(&path));
            true
        } else {
            self.problem = Some(format!("no file or folder {}", path.display()));
            false
        }
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used)]
    use super::*;

    fn tree() -> tempfile::TempDir {
        let d = tempfile::tempdir().unwrap();
        std::fs::create_dir_all(d.path().join("run-07/growth")).unwrap();
        std::fs::create_dir_all(d.path().join("run-08")).unwrap();
        // A readable spectrum (the values matter not here, only that the file reads).
        let csv: String = std::iter::once("Wavelength (nm),Absorbance\n".to_string())
            .chain((0..40).map(|i| format!("{},{}\n", 400 + 5 * i, 0.1 + 0.001 * i as f64)))
            .collect();
        std::fs::write(d.path().join("run-07/growth/abs_05min.csv"), &csv).unwrap();
        std::fs::write(d.path().join("run-07/growth/abs_10min.csv"), &csv).unwrap();
        std::fs::write(d.path().join("notes.txt"), "x").unwrap();
        std::fs::write(d.path().join(".hidden"), "x").unwrap();
        d
    }

    #[test]
    fn folders_first_hidden_left_out_and_up_returns_to_the_folder_left() {
        let d = tree();
        let mut p = Picker::open(None, d.path());
        let names: Vec<&str> = p.entries.iter().map(|e| e.name.as_str()).collect();
        assert_eq!(names, ["..", "run-07", "run-08", "notes.txt"]);
        assert_eq!(p.selected, 1, "the cursor starts past ..");
        p.go_to(&d.path().join("run-07"), None);
        p.up();
        assert_eq!(p.folder, d.path());
        assert_eq!(p.selected_entry().unwrap().name, "run-07");
    }

    #[test]
    fn tab_completes_a_unique_name_and_lists_several() {
        let d = tree();
        let mut p = Picker::open(None, d.path());
        p.start_typing(format!("{}/run-07/gr", d.path().display()));
        p.complete();
        assert_eq!(p.path_text, format!("{}/run-07/growth/", d.path().display()));
        p.start_typing(format!("{}/run-07/growth/abs_", d.path().display()));
        p.complete();
        assert_eq!(p.path_text, format!("{}/run-07/growth/abs_", d.path().display()));
        assert_eq!(p.completions, ["abs_05min.csv", "abs_10min.csv"]);
        p.start_typing(format!("{}/ru", d.path().display()));
        p.complete();
        assert_eq!(p.path_text, format!("{}/run-0", d.path().display()));
    }

    #[test]
    fn a_typed_file_opens_its_folder_on_it_and_a_missing_path_is_named() {
        let d = tree();
        let mut p = Picker::open(None, d.path());
        p.start_typing("run-07/growth/abs_10min.csv".into());
        assert!(p.go_typed());
        assert_eq!(p.folder, d.path().join("run-07/growth"));
        assert_eq!(p.selected_entry().unwrap().name, "abs_10min.csv");
        p.start_typing("nowhere/x.csv".into());
        assert!(!p.go_typed());
        assert!(p.problem.as_deref().unwrap().contains("no file or folder"));
        assert!(p.typing, "the typed text stays to be corrected");
    }

    #[test]
    fn a_folder_that_is_gone_falls_back_to_the_nearest_above() {
        let d = tree();
        let p = Picker::open(None, &d.path().join("run-07/removed/deeper"));
        assert_eq!(p.folder, d.path().join("run-07"));
        assert!(p.problem.unwrap().contains("cannot be read"));
    }

    #[test]
    fn taking_a_file_as_one_kind_frees_it_from_the_other_and_again_puts_it_back() {
        let d = tree();
        let mut p = Picker::open(None, &d.path().join("run-07/growth"));
        p.take("abs").unwrap();
        assert!(p.abs.is_some());
        p.take("pl").unwrap();
        assert!(p.abs.is_none() && p.pl.is_some());
        p.take("pl").unwrap();
        assert!(p.pl.is_none());
        p.selected = 0;
        assert!(p.take("abs").unwrap_err().contains("folder"));
        // A file that cannot be read is refused when taken, with the reader's reason.
        std::fs::write(d.path().join("run-07/growth/broken.csv"), "no numbers at all").unwrap();
        p.go_to(
            &d.path().join("run-07/growth"),
            Some(&d.path().join("run-07/growth/broken.csv")),
        );
        assert_eq!(p.selected_entry().unwrap().name, "broken.csv");
        assert!(p.take("abs").is_err());
        assert!(p.abs.is_none());
    }
}
