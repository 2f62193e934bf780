//! Where cuvette keeps its per-user files: the one place that decides them. The platform's
//! folders come from the `directories` crate; the overrides cuvette has always honoured come
//! first, so a lab, a remembered name or a key file found before is found in the same place.
//!
//! | file | override | default |
//! |---|---|---|
//! | the lab (`--db` and `$CUVETTE_DB` are read by the command line first) | `$XDG_DATA_HOME/cuvette/lab.db` | the platform's data folder: `~/.local/share/cuvette/lab.db` on Linux, `~/Library/Application Support/cuvette/lab.db` on macOS, `%APPDATA%\cuvette\lab.db` on Windows |
//! | the name `whoami --set` remembers | `$XDG_CONFIG_HOME/cuvette/whoami` | `~/.config/cuvette/whoami`; `%APPDATA%\cuvette\whoami` on Windows |
//! | the UI's key overrides | `$CUVETTE_KEYS`, else `$XDG_CONFIG_HOME/cuvette/keys.json` | `~/.config/cuvette/keys.json`; `%APPDATA%\cuvette\keys.json` on Windows |
//!
//! Two choices keep what was there before rather than what `directories` alone would give:
//! an `XDG_*` variable is honoured on every platform and also when it holds a relative path
//! (the XDG specification, and `directories`, ignore those), and the configuration folder on
//! macOS stays `~/.config` (not `~/Library/Application Support`), where a name remembered by
//! an earlier cuvette already is. An empty variable counts as not set. The search-bounds queue
//! is no per-user file: it lives beside its lab (`store::search_bounds::queue_path`).

use directories::BaseDirs;
use std::ffi::OsString;
use std::path::PathBuf;

/// The folder name cuvette's files go under.
const APP: &str = "cuvette";

/// A folder named by an environment variable; empty or blank counts as not set.
fn env_dir(var: &str) -> Option<PathBuf> {
    env_dir_from(std::env::var_os(var))
}

fn env_dir_from(value: Option<OsString>) -> Option<PathBuf> {
    value
        .filter(|v| !v.to_string_lossy().trim().is_empty())
        .map(PathBuf::from)
}

/// The folder the default lab lives in (`lab.db`, and the demo's `demo.db` beside it).
pub fn data_dir() -> PathBuf {
    env_dir("XDG_DATA_HOME")
        .or_else(|| BaseDirs::new().map(|b| b.data_dir().to_path_buf()))
        // No home folder at all (an account without one): under the current folder, as on
        // Linux before.
        .unwrap_or_else(|| PathBuf::from(".").join(".local").join("share"))
        .join(APP)
}

/// The lab a command opens when neither `--db` nor `$CUVETTE_DB` names one.
pub fn default_lab() -> PathBuf {
    data_dir().join("lab.db")
}

/// The folder of cuvette's configuration files, when the account has one.
pub fn config_dir() -> Option<PathBuf> {
    env_dir("XDG_CONFIG_HOME")
        .or_else(|| {
            let base = BaseDirs::new()?;
            Some(if cfg!(windows) {
                base.config_dir().to_path_buf()
            } else {
                base.home_dir().join(".config")
            })
        })
        .map(|d| d.join(APP))
}

/// The file `cuvette whoami --set` writes.
pub fn whoami_file() -> Option<PathBuf> {
    config_dir().map(|d| d.join("whoami"))
}

/// The UI's key-override file: `$CUVETTE_KEYS`, else `keys.json` in the configuration folder.
pub fn keys_file() -> Option<PathBuf> {
    // Set, even empty, it is the file (an empty one names none): how it has always been read.
    std::env::var_os("CUVETTE_KEYS")
        .map(PathBuf::from)
        .or_else(|| config_dir().map(|d| d.join("keys.json")))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_empty_or_blank_variable_is_not_set() {
        assert_eq!(env_dir_from(None), None);
        assert_eq!(env_dir_from(Some("".into())), None);
        assert_eq!(env_dir_from(Some("  ".into())), None);
        assert_eq!(env_dir_from(Some("/srv/lab".into())), Some(PathBuf::from("/srv/lab")));
        // A relative value is taken as given, as cuvette always has.
        assert_eq!(env_dir_from(Some("labs".into())), Some(PathBuf::from("labs")));
    }

    #[test]
    fn the_files_sit_under_cuvettes_own_folders() {
        assert!(default_lab().ends_with("cuvette/lab.db"));
        if let (Some(w), Some(c)) = (whoami_file(), config_dir()) {
            assert_eq!(w, c.join("whoami"));
            assert!(c.ends_with("cuvette"));
        }
    }
}
