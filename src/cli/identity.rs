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
    let base = nonempty(std::env::var("XDG_CONFIG_HOME").ok())
        .map(PathBuf::from)
        .or_else(|| nonempty(std::env::var("HOME").ok()).map(|h| PathBuf::from(h).join(".config")))?;
    Some(base.join("cuvette").join("whoami"))
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

/// Where a name came from, for `whoami`.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Identity {
    pub name: Option<String>,
    /// "--as", "CUVETTE_USER", "whoami --set", "login name" or "none".
    pub from: &'static str,
}

pub fn resolve(flag: Option<&str>) -> Identity {
    let found = [
        (nonempty(flag.map(String::from)), "--as"),
        (nonempty(std::env::var("CUVETTE_USER").ok()), "CUVETTE_USER"),
        (remembered(), "whoami --set"),
        (
            nonempty(std::env::var("USER").ok())
                .or_else(|| nonempty(std::env::var("LOGNAME").ok()))
                .or_else(|| nonempty(std::env::var("USERNAME").ok())),
            "login name",
        ),
    ]
    .into_iter()
    .find(|(n, _)| n.is_some());
    match found {
        Some((name, from)) => Identity { name, from },
        None => Identity {
            name: None,
            from: "none",
        },
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
    let id = resolve(flag);
    if let Some(n) = id.name {
        return check_name(&n).map_err(|e| anyhow!("the name from {} is refused: {e}; nothing was written", id.from));
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
    bail!(
        "cuvette cannot tell who is writing: run `cuvette whoami --set NAME` once, or pass --as NAME, or set CUVETTE_USER; nothing was written"
    )
}

/// The name reads carry (they write nothing, so an unresolved one is harmless).
pub fn for_read(flag: Option<&str>) -> String {
    resolve(flag).name.unwrap_or_else(|| "reader".into())
}
