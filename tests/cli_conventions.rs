//! The conventions of a good command-line tool, held for cuvette's: a closed stdout ends a
//! command quietly with exit 0 (no panic, no "Broken pipe"), the exit codes come from one
//! table that README repeats word for word, completions and the man page are generated from
//! the grammar and name every command, every command's help carries an example that parses
//! and every argument its help, and the per-user files sit where they always have on Linux.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;

use clap::{CommandFactory, Parser, ValueEnum};
use common::Lab;
use cuvette::cli::Cli;
use cuvette::cli::exit::{EXIT_CODES, Outcome};
use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

fn cuvette(db: &Path) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_cuvette"));
    c.arg("--db")
        .arg(db)
        .env("CUVETTE_USER", "Wren Halloway")
        .env_remove("CUVETTE_DB")
        .current_dir(env!("CARGO_MANIFEST_DIR"));
    c
}

/// The invented demo lab (`demo-db/lab.json`), built once per test that needs it.
fn demo_lab() -> Lab {
    let lab = Lab::new();
    let o = cuvette(&lab.db).args(["demo", "--no-ui"]).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    lab
}

/// Runs a command whose stdout is a pipe with no reader at all: its very first write fails
/// with EPIPE, whatever the size of what it prints.
fn run_into_a_closed_pipe(cmd: &mut Command) -> (Option<i32>, String) {
    let (reader, writer) = std::io::pipe().unwrap();
    drop(reader);
    let o = cmd.stdout(Stdio::from(writer)).stderr(Stdio::piped()).output().unwrap();
    (o.status.code(), String::from_utf8_lossy(&o.stderr).to_string())
}

/// Runs a command, reads its first line of output, then closes the pipe while the command
/// is still writing (its output must be larger than a pipe holds: checked by the caller).
fn run_and_close_after_one_line(cmd: &mut Command) -> (Option<i32>, String, String) {
    let mut child = cmd.stdout(Stdio::piped()).stderr(Stdio::piped()).spawn().unwrap();
    let mut first = String::new();
    {
        let mut out = BufReader::new(child.stdout.take().unwrap());
        out.read_line(&mut first).unwrap();
    }
    let o = child.wait_with_output().unwrap();
    (o.status.code(), first, String::from_utf8_lossy(&o.stderr).to_string())
}

fn assert_quiet_success(what: &str, code: Option<i32>, stderr: &str) {
    assert_eq!(code, Some(0), "{what}: exit {code:?}, stderr: {stderr}");
    assert!(!stderr.contains("panicked"), "{what}: {stderr}");
    assert!(!stderr.to_lowercase().contains("broken pipe"), "{what}: {stderr}");
    assert!(!stderr.contains("stdout was closed"), "{what}: {stderr}");
    assert_eq!(stderr, "", "{what}: nothing is said on stderr");
}

/// A folder of `n` absorbance and PL exports, copies of the invented sample series.
fn many_exports(dir: &Path, n: usize) -> PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-db/samples/growth");
    let out = dir.join("many");
    std::fs::create_dir_all(&out).unwrap();
    let files: Vec<_> = ["abs_02min.csv", "abs_05min.csv", "abs_10min.csv", "abs_20min.csv"]
        .iter()
        .map(|f| std::fs::read(src.join(f)).unwrap())
        .collect();
    for i in 0..n {
        std::fs::write(out.join(format!("abs_{i:04}.csv")), &files[i % files.len()]).unwrap();
    }
    out
}

#[test]
fn a_stdout_closed_before_anything_is_written_ends_every_kind_of_command_quietly() {
    let lab = demo_lab();
    let growth = "demo-db/samples/growth";
    let cases: &[&[&str]] = &[
        &["batch", "list"],
        &["batch", "list", "--json"],
        &["batch", "show", "1"],
        &["shelf"],
        &["log", "--limit", "1000"],
        &["log", "--limit", "1000", "--json"],
        &["find", "CdSe size 3 to 3.5"],
        &["calib", "history"],
        &["explain", "3", "--json"],
        &["analyze", growth, "--kind", "abs"],
        &["analyze", growth, "--kind", "abs", "--json"],
        &["read", "demo-db/samples/formats/plain.csv", "--json"],
        &["completions", "bash"],
        &["man"],
    ];
    for args in cases {
        let (code, stderr) = run_into_a_closed_pipe(cuvette(&lab.db).args(*args));
        assert_quiet_success(&format!("{args:?}"), code, &stderr);
    }
}

#[test]
fn a_pipe_closed_while_the_command_is_still_writing_ends_it_quietly() {
    let lab = demo_lab();
    let folder = many_exports(lab.dir.path(), 400);
    let folder = folder.to_str().unwrap();
    let cases: &[&[&str]] = &[
        // One large write through the printing helper.
        &["log", "--limit", "100000", "--json"],
        // Many writes through analyze's own buffer, one JSON line a file.
        &["analyze", folder, "--kind", "abs", "--json"],
    ];
    for args in cases {
        // More than a pipe holds (64 KiB on Linux), so the command is still writing when the
        // reader goes away, and its next write meets a closed pipe.
        let full = cuvette(&lab.db).args(*args).output().unwrap();
        assert!(
            full.status.success(),
            "{args:?}: {}",
            String::from_utf8_lossy(&full.stderr)
        );
        assert!(
            full.stdout.len() > 4 * 65536,
            "{args:?} prints only {} bytes",
            full.stdout.len()
        );

        let (code, first, stderr) = run_and_close_after_one_line(cuvette(&lab.db).args(*args));
        assert!(!first.is_empty(), "{args:?}: the first line arrived");
        assert_quiet_success(&format!("{args:?}"), code, &stderr);
    }
}

#[test]
fn a_write_whose_stdout_is_closed_is_still_committed_whole() {
    let lab = demo_lab();
    let (code, stderr) = run_into_a_closed_pipe(cuvette(&lab.db).args([
        "batch",
        "new",
        "--material",
        "CdSe",
        "--name",
        "CS-261030-z",
        "--json",
    ]));
    assert_quiet_success("batch new", code, &stderr);
    let list = lab.ok(&["batch", "list", "--json"]).json();
    let names: Vec<_> = list
        .as_array()
        .unwrap()
        .iter()
        .map(|b| b["name"].as_str().unwrap())
        .collect();
    assert!(names.contains(&"CS-261030-z"), "{names:?}");
    let check = lab.ok(&["check", "--json"]).json();
    assert_eq!(check["ok"], true, "{check}");
}

#[test]
fn no_error_is_sorted_by_its_message_text() {
    // The old top level hid any error whose text held "Broken pipe"; now only the type says.
    let src = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("src/cli/mod.rs")).unwrap();
    assert!(
        !src.contains("\"Broken pipe\""),
        "src/cli/mod.rs matches on an error's text"
    );
    for dir in ["src/cli", "src/cli/commands"] {
        for entry in std::fs::read_dir(Path::new(env!("CARGO_MANIFEST_DIR")).join(dir)).unwrap() {
            let path = entry.unwrap().path();
            if path.extension().is_some_and(|e| e == "rs") {
                let text = std::fs::read_to_string(&path).unwrap();
                assert!(!text.contains("process::exit"), "{} exits mid-command", path.display());
            }
        }
    }
}

// ---- exit codes ----

#[test]
fn the_exit_code_table_holds_every_outcome_once() {
    for o in Outcome::ALL {
        let rows = EXIT_CODES.iter().filter(|r| r.outcome == *o).count();
        assert_eq!(rows, 1, "{o:?} has {rows} rows");
    }
    assert_eq!(EXIT_CODES.len(), Outcome::ALL.len());
    // The codes cuvette has always had (README before this table, and the tests that pin 1).
    assert_eq!(Outcome::Success.code(), 0);
    assert_eq!(Outcome::StdoutClosed.code(), 0);
    assert_eq!(Outcome::Usage.code(), 2);
    for o in Outcome::ALL {
        if !matches!(o, Outcome::Success | Outcome::StdoutClosed | Outcome::Usage) {
            assert_eq!(o.code(), 1, "{o:?}");
        }
    }
}

#[test]
fn readme_shows_the_exit_code_table_from_the_code() {
    let readme = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md")).unwrap();
    let start = readme
        .find("<!-- exit-codes -->")
        .expect("README marks the exit-code table")
        + "<!-- exit-codes -->".len();
    let end = readme
        .find("<!-- /exit-codes -->")
        .expect("README closes the exit-code table");
    let shown = readme[start..end].trim();
    let table = cuvette::cli::exit::markdown_table();
    assert_eq!(
        shown,
        table.trim(),
        "README's exit codes differ from src/cli/exit.rs; put this between the markers:\n{table}"
    );
}

#[test]
fn errors_are_sorted_by_their_type_through_added_context() {
    use anyhow::Context;
    let e = anyhow::Error::new(cuvette::Error::NotFound {
        kind: "batch",
        what: "99".into(),
    })
    .context("batch show");
    assert_eq!(Outcome::of(&e), Outcome::NotFound);
    let e: anyhow::Result<()> = Err(cuvette::cli::StdoutClosed.into());
    assert_eq!(Outcome::of(&e.context("printing").unwrap_err()), Outcome::StdoutClosed);
    let e = anyhow::Error::new(cuvette::Error::Storage("the disk is full".into()));
    assert_eq!(Outcome::of(&e), Outcome::Storage);
    let e = anyhow::Error::new(cuvette::Error::NewerSchema {
        found: 99,
        supported: 9,
    });
    assert_eq!(Outcome::of(&e), Outcome::NewerSchema);
    // A message that merely mentions a broken pipe is an error like any other.
    let e = anyhow::anyhow!("cannot write out.svg: Broken pipe (os error 32)");
    assert_eq!(Outcome::of(&e), Outcome::Other);
    assert!(Outcome::of(&e).is_reported());
}

#[test]
fn the_binary_exits_with_the_tables_codes() {
    let lab = demo_lab();
    let code = |args: &[&str]| cuvette(&lab.db).args(args).output().unwrap().status.code();
    assert_eq!(code(&["batch", "list"]), Some(Outcome::Success.code().into()));
    assert_eq!(code(&["--help"]), Some(Outcome::Success.code().into()));
    assert_eq!(code(&["no-such-command"]), Some(Outcome::Usage.code().into()));
    assert_eq!(code(&["batch", "show"]), Some(Outcome::Usage.code().into()));
    assert_eq!(code(&["batch", "show", "999"]), Some(Outcome::NotFound.code().into()));
    assert_eq!(code(&["find", "size:3.5..4"]), Some(Outcome::Query.code().into()));
    assert_eq!(
        code(&["size", "--material", "CdSe", "--peak-nm", "-5"]),
        Some(Outcome::Invalid.code().into())
    );
    let help = cuvette(&lab.db).arg("--help").output().unwrap();
    let help = String::from_utf8_lossy(&help.stdout);
    for row in EXIT_CODES {
        assert!(help.contains(row.meaning), "--help lacks '{}'", row.meaning);
    }
}

// ---- completions and the man page ----

fn top_level_names() -> Vec<String> {
    Cli::command()
        .get_subcommands()
        .map(|c| c.get_name().to_string())
        .collect()
}

#[test]
fn completions_are_made_for_every_shell_and_bash_knows_every_command() {
    let lab = Lab::new();
    for shell in clap_complete::Shell::value_variants() {
        let name = shell.to_possible_value().unwrap().get_name().to_string();
        let o = cuvette(&lab.db).args(["completions", &name]).output().unwrap();
        assert!(o.status.success(), "{name}: {}", String::from_utf8_lossy(&o.stderr));
        let script = String::from_utf8(o.stdout).unwrap();
        assert!(script.contains("cuvette"), "{name}");
        assert!(script.contains("import-manifest"), "{name} completes no subcommand");
    }
    let bash = cuvette(&lab.db).args(["completions", "bash"]).output().unwrap();
    let script = String::from_utf8(bash.stdout).unwrap();
    for name in top_level_names() {
        assert!(
            script
                .split(|c: char| !(c.is_alphanumeric() || c == '-'))
                .any(|w| w == name),
            "the bash completion lacks `{name}`"
        );
    }
    // Completion of a nested command and of an option.
    assert!(script.contains("set-homogeneous-hwhm"));
    assert!(script.contains("--excitation-nm"));
    // The script is valid bash.
    let path = lab.path("cuvette.bash");
    std::fs::write(&path, &script).unwrap();
    let syntax = Command::new("bash").arg("-n").arg(&path).output().unwrap();
    assert!(syntax.status.success(), "{}", String::from_utf8_lossy(&syntax.stderr));
    assert_eq!(
        cuvette(&lab.db)
            .args(["completions", "tcsh"])
            .output()
            .unwrap()
            .status
            .code(),
        Some(2),
        "an unknown shell is a usage error"
    );
}

/// The requests and macros a man(7) page may use that clap_mangen writes; a line starting
/// with anything else is a typo roff would print or drop.
const ROFF_REQUESTS: &[&str] = &[
    "TH", "SH", "SS", "TP", "PP", "LP", "P", "IP", "RS", "RE", "B", "I", "BR", "IR", "RB", "RI", "BI", "IB", "br",
    "sp", "nf", "fi", "in", "ti", "ie", "el", "if", "nh", "ad", "na", "ne", "EX", "EE",
];

fn assert_valid_roff(page: &str, what: &str) {
    assert!(page.lines().any(|l| l.starts_with(".TH ")), "{what}: no .TH");
    assert!(page.lines().any(|l| l.starts_with(".SH ")), "{what}: no section");
    for (i, l) in page.lines().enumerate() {
        if let Some(rest) = l.strip_prefix('.').or_else(|| l.strip_prefix('\'')) {
            if rest.starts_with('\\') && rest.get(1..2) == Some("\"") {
                continue; // a comment
            }
            let name = rest.split_whitespace().next().unwrap_or("");
            assert!(
                name.is_empty() || ROFF_REQUESTS.contains(&name),
                "{what} line {}: unknown request `.{name}`: {l}",
                i + 1
            );
        }
    }
    // Where groff is installed, it reads the page without a warning.
    if let Ok(mut child) = Command::new("groff")
        .args(["-man", "-Tutf8", "-ww", "-z"])
        .stdin(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
    {
        use std::io::Write;
        child.stdin.take().unwrap().write_all(page.as_bytes()).unwrap();
        let o = child.wait_with_output().unwrap();
        assert!(o.status.success(), "{what}: groff failed");
        let warnings = String::from_utf8_lossy(&o.stderr);
        assert!(warnings.trim().is_empty(), "{what}: groff warns: {warnings}");
    }
}

#[test]
fn the_man_page_is_roff_and_names_every_command() {
    let lab = Lab::new();
    let o = cuvette(&lab.db).arg("man").output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let page = String::from_utf8(o.stdout).unwrap();
    assert_valid_roff(&page, "cuvette.1");
    assert!(page.contains(".TH cuvette 1"), "{}", &page[..200.min(page.len())]);
    for name in top_level_names() {
        // roff escapes a dash as \-.
        let escaped = name.replace('-', "\\-");
        assert!(
            page.contains(&name) || page.contains(&escaped),
            "the man page lacks `{name}`"
        );
    }
    // The exit codes are in it, from their table.
    assert!(page.contains("Exit status"));
}

#[test]
fn man_dir_writes_one_page_per_command() {
    fn count(cmd: &clap::Command) -> usize {
        1 + cmd.get_subcommands().map(count).sum::<usize>()
    }
    let lab = Lab::new();
    let dir = lab.path("man1");
    let o = cuvette(&lab.db).args(["man", "--dir"]).arg(&dir).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let pages: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    assert_eq!(pages.len(), count(&Cli::command()), "{pages:?}");
    assert_eq!(String::from_utf8_lossy(&o.stdout).lines().count(), pages.len());
    for want in [
        "cuvette.1",
        "cuvette-batch.1",
        "cuvette-batch-list.1",
        "cuvette-qy-gradient.1",
        "cuvette-man.1",
    ] {
        assert!(pages.iter().any(|p| p == want), "no {want} in {pages:?}");
    }
    let list = std::fs::read_to_string(dir.join("cuvette-batch-list.1")).unwrap();
    assert_valid_roff(&list, "cuvette-batch-list.1");
    assert!(list.contains("\\-\\-material") || list.contains("--material"));
}

// ---- help text ----

/// The shell words of each example in a help text: continuation lines joined, comments,
/// redirections and pipes cut off, quotes honoured.
fn example_invocations(help: &str) -> Vec<Vec<String>> {
    let joined = help.replace("\\\n", " ");
    let mut out = Vec::new();
    for l in joined.lines().map(str::trim).filter(|l| l.starts_with("cuvette ")) {
        let mut words = Vec::new();
        let mut word = String::new();
        let mut quote: Option<char> = None;
        let mut in_word = false;
        for c in l.chars() {
            match (quote, c) {
                (Some(q), c) if c == q => quote = None,
                (Some(_), c) => word.push(c),
                (None, '"' | '\'') => {
                    quote = Some(c);
                    in_word = true;
                }
                (None, '#' | '>' | '|') => break,
                (None, c) if c.is_whitespace() => {
                    if in_word {
                        words.push(std::mem::take(&mut word));
                        in_word = false;
                    }
                }
                (None, c) => {
                    word.push(c);
                    in_word = true;
                }
            }
        }
        assert!(quote.is_none(), "unclosed quote in example: {l}");
        if in_word {
            words.push(word);
        }
        out.push(words);
    }
    out
}

#[test]
fn every_command_has_an_example_that_parses_and_every_argument_its_help() {
    fn walk(cmd: &clap::Command, path: &[String], problems: &mut Vec<String>, examples: &mut usize) {
        let name = if path.is_empty() {
            "cuvette".to_string()
        } else {
            format!("cuvette {}", path.join(" "))
        };
        let help = cmd
            .get_after_long_help()
            .or(cmd.get_after_help())
            .map(|h| h.to_string())
            .unwrap_or_default();
        let runs = example_invocations(&help);
        if runs.is_empty() {
            problems.push(format!("`{name}` has no example"));
        }
        if cmd.get_about().is_none() && !path.is_empty() {
            problems.push(format!("`{name}` has no description"));
        }
        // Some example runs this very command (the words of its path, in order, after any
        // global options).
        if !path.is_empty() && !runs.iter().any(|w| w.windows(path.len()).any(|win| win == path)) {
            problems.push(format!("no example of `{name}` runs it"));
        }
        for words in &runs {
            *examples += 1;
            if let Err(e) = Cli::try_parse_from(words) {
                problems.push(format!("the example `{}` does not parse: {e}", words.join(" ")));
            }
        }
        for arg in cmd.get_arguments() {
            let has_help = arg
                .get_help()
                .or(arg.get_long_help())
                .is_some_and(|h| !h.to_string().trim().is_empty());
            if !has_help {
                problems.push(format!("`{name}`'s argument `{}` has no help", arg.get_id()));
            }
        }
        for sub in cmd.get_subcommands() {
            let mut p = path.to_vec();
            p.push(sub.get_name().to_string());
            walk(sub, &p, problems, examples);
        }
    }
    let mut problems = Vec::new();
    let mut examples = 0;
    walk(&Cli::command(), &[], &mut problems, &mut examples);
    assert!(
        problems.is_empty(),
        "{} problems:\n{}",
        problems.len(),
        problems.join("\n")
    );
    assert!(examples > 80, "only {examples} examples found");
}

#[test]
fn the_walk_catches_a_command_without_an_example() {
    // The check above would pass on a tree it cannot see into: show it failing on one.
    let bare = clap::Command::new("cuvette").subcommand(clap::Command::new("frobnicate").about("x"));
    let sub = bare.get_subcommands().next().unwrap();
    let help = sub.get_after_help().map(|h| h.to_string()).unwrap_or_default();
    assert!(example_invocations(&help).is_empty());
    let words = example_invocations(
        "Examples:\n  cuvette batch new --name \"CS 1\" \\\n      --json  # a note\n  cuvette man | man -l -\n",
    );
    assert_eq!(words[0], ["cuvette", "batch", "new", "--name", "CS 1", "--json"]);
    assert_eq!(words[1], ["cuvette", "man"]);
}

// ---- per-user paths ----

#[cfg(target_os = "linux")]
#[test]
fn the_default_lab_and_the_remembered_name_stay_where_they_were_on_linux() {
    let lab = Lab::new();
    let home = lab.path("home");
    std::fs::create_dir_all(&home).unwrap();
    let base = |c: &mut Command| {
        c.env("HOME", &home)
            .env_remove("XDG_DATA_HOME")
            .env_remove("XDG_CONFIG_HOME")
            .env_remove("CUVETTE_DB")
            .env("CUVETTE_USER", "Wren Halloway")
            .current_dir(lab.dir.path());
    };
    let mut init = Command::new(env!("CARGO_BIN_EXE_cuvette"));
    base(&mut init);
    let o = init.arg("init").output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(home.join(".local/share/cuvette/lab.db").is_file());

    let mut set = Command::new(env!("CARGO_BIN_EXE_cuvette"));
    base(&mut set);
    let o = set.args(["whoami", "--set", "Juno Achterberg"]).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let remembered = std::fs::read_to_string(home.join(".config/cuvette/whoami")).unwrap();
    assert_eq!(remembered.trim(), "Juno Achterberg");

    // The XDG overrides, and an empty one counting as not set.
    let data = lab.path("data");
    let mut init = Command::new(env!("CARGO_BIN_EXE_cuvette"));
    base(&mut init);
    let o = init.arg("init").env("XDG_DATA_HOME", &data).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(data.join("cuvette/lab.db").is_file());
    let mut list = Command::new(env!("CARGO_BIN_EXE_cuvette"));
    base(&mut list);
    let o = list
        .args(["batch", "list", "--json"])
        .env("XDG_DATA_HOME", "")
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "the lab under HOME is found: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(
        !lab.path("cuvette/lab.db").exists(),
        "an empty XDG_DATA_HOME made a relative lab"
    );
}
