//! Who the writes are attributed to. In order: `--as`, `$CUVETTE_USER`, the name remembered
//! with `cuvette whoami --set` (one small file in the user's configuration folder), then the
//! OS login name. An empty value counts as not given. When nothing resolves, a write on a
//! terminal asks once and remembers the answer; elsewhere it is refused with the way out,
//! instead of logging "unknown".

use anyhow::{Context, Result, anyhow, bail};
use std::path::PathBuf;

fn nonempty(v: Option<String>) -> Option<String> {
    v.map(|s| s.trim().to_string()).filter(|s| !s.is_empty())
}

/// The file `whoami --set` writes.
pub fn remembered_path() -> Option<PathBuf> {
    crate::paths::whoami_file()
}

fn remembered() -> Option<String> {
    let p = remembered_path()?;
    let meta = std::fs::metadata(&p).ok()?;
    if meta.len() > 4096 {
        return None;
    }
    nonempty(
        std::fs::read_to_string(p)
            .ok()
            .and_then(|t| t.lines().next().map(String::from)),
    )
}

/// The OS account this process runs as, from the account database, for a session whose
/// environment names nobody (a service, a container). Unix only; elsewhere none.
fn os_account() -> Option<String> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        // /proc/self belongs to the process's own user; the account database names it.
        let uid = std::fs::metadata("/proc/self").ok()?.uid();
        let passwd = std::fs::read_to_string("/etc/passwd").ok()?;
        passwd.lines().find_map(|l| {
            let mut f = l.split(':');
            let name = f.next()?;
            let _pw = f.next()?;
            (f.next()?.parse::<u32>().ok()? == uid).then(|| name.to_string())
        })
    }
    #[cfg(not(unix))]
    {
        None
    }
}

/// Where a name came from, for `whoami`.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Identity {
    pub name: Option<String>,
    /// "--as", "CUVETTE_USER", "whoami --set", "login name" or "none".
    pub from: &'static str,
}

pub fn resolve(flag: Option<&str>) -> Identity {
    first_of([
        (nonempty(flag.map(String::from)), "--as"),
        (nonempty(std::env::var("CUVETTE_USER").ok()), "CUVETTE_USER"),
        (remembered(), "whoami --set"),
        (
            nonempty(std::env::var("USER").ok())
                .or_else(|| nonempty(std::env::var("LOGNAME").ok()))
                .or_else(|| nonempty(std::env::var("USERNAME").ok()))
                .or_else(os_account),
            "login name",
        ),
    ])
}

/// The first source that names someone, in order.
fn first_of(sources: [(Option<String>, &'static str); 4]) -> Identity {
    match sources.into_iter().find(|(n, _)| n.is_some()) {
        Some((name, from)) => Identity { name, from },
        None => Identity {
            name: None,
            from: "none",
        },
    }
}

/// What a write does with an identity: its checked name, or none when nobody resolved.
fn name_for_write(id: Identity) -> Result<Option<String>> {
    match id.name {
        Some(n) => check_name(&n)
            .map(Some)
            .map_err(|e| anyhow!("the name from {} is refused: {e}; nothing was written", id.from)),
        None => Ok(None),
    }
}

/// Checks a name given for attribution: one line, printable, not too long.
pub fn check_name(name: &str) -> Result<String> {
    let n = name.trim();
    if n.is_empty() {
        bail!("a name cannot be empty");
    }
    if n.chars().count() > 80 || n.chars().any(|c| c.is_control()) {
        bail!("a name must be one line of at most 80 printable characters");
    }
    Ok(n.to_string())
}

/// Remembers `name` for this account.
pub fn remember(name: &str) -> Result<PathBuf> {
    let n = check_name(name)?;
    let p = remembered_path().ok_or_else(|| anyhow!("no configuration folder (set HOME or XDG_CONFIG_HOME)"))?;
    if let Some(d) = p.parent() {
        std::fs::create_dir_all(d).with_context(|| format!("cannot create {}", d.display()))?;
    }
    std::fs::write(&p, format!("{n}\n")).with_context(|| format!("cannot write {}", p.display()))?;
    Ok(p)
}

/// The name a write is attributed to; asks once on a terminal when nothing resolves. A name
/// from any source must pass [`check_name`]: the audit log's "who" is one printable line.
pub fn for_write(flag: Option<&str>) -> Result<String> {
    if let Some(n) = name_for_write(resolve(flag))? {
        return Ok(n);
    }
    use std::io::{BufRead, IsTerminal, Write};
    if std::io::stdin().is_terminal() && std::io::stderr().is_terminal() {
        eprint!("cuvette does not know who you are. Your name, as the lab knows you: ");
        let _ = std::io::stderr().flush();
        let mut line = String::new();
        std::io::stdin().lock().read_line(&mut line)?;
        let n = check_name(&line)?;
        let p = remember(&n)?;
        eprintln!(
            "cuvette: remembered '{n}' in {} (change it with `cuvette whoami --set NAME`)",
            p.display()
        );
        return Ok(n);
    }
    bail!("{NOBODY}")
}

const NOBODY: &str = "cuvette cannot tell who is writing: run `cuvette whoami --set NAME` once, or pass --as NAME, or set CUVETTE_USER; nothing was written";

/// The name reads carry (they write nothing, so an unresolved one is harmless).
pub fn for_read(flag: Option<&str>) -> String {
    resolve(flag).name.unwrap_or_else(|| "reader".into())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The order of the sources, and that nobody resolved is no name at all, never "unknown"
    /// (the caller then asks once on a terminal, or refuses with [`NOBODY`]).
    #[test]
    fn sources_in_order_and_nobody_is_no_name() {
        let id = first_of([
            (None, "--as"),
            (Some("Ines Roth".into()), "CUVETTE_USER"),
            (Some("kept".into()), "whoami --set"),
            (Some("login".into()), "login name"),
        ]);
        assert_eq!((id.name.as_deref(), id.from), (Some("Ines Roth"), "CUVETTE_USER"));
        let nobody = first_of([
            (None, "--as"),
            (None, "CUVETTE_USER"),
            (None, "whoami --set"),
            (None, "login name"),
        ]);
        assert_eq!((nobody.name.clone(), nobody.from), (None, "none"));
        assert_eq!(name_for_write(nobody).unwrap(), None);
        let hostile = first_of([
            (Some("Eve\u{1b}]0;x\u{7}".into()), "--as"),
            (None, "a"),
            (None, "b"),
            (None, "c"),
        ]);
        assert!(name_for_write(hostile).unwrap_err().to_string().contains("--as"));
        assert!(NOBODY.contains("whoami --set"));
    }
}
