//! A small harness for binary-level tests: a temporary folder per test, the real `cuvette`
//! binary, spectrum files written from stated formulas, and row counts to prove that a failed
//! command changed nothing.
#![allow(dead_code, clippy::unwrap_used, clippy::panic, clippy::expect_used)]

use std::path::{Path, PathBuf};
use std::process::Command;

pub const HC: f64 = 1239.841984;

pub struct Lab {
    pub dir: tempfile::TempDir,
    pub db: PathBuf,
}

pub struct Out {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

impl Out {
    pub fn json(&self) -> serde_json::Value {
        serde_json::from_str(&self.stdout)
            .unwrap_or_else(|e| panic!("not JSON ({e}): {}\nstderr: {}", self.stdout, self.stderr))
    }
}

impl Lab {
    pub fn new() -> Lab {
        let dir = tempfile::tempdir().unwrap();
        let db = dir.path().join("lab.db");
        Lab { dir, db }
    }
    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }
    pub fn run(&self, args: &[&str]) -> Out {
        self.run_on(&self.db, args)
    }
    pub fn run_on(&self, db: &Path, args: &[&str]) -> Out {
        let out = Command::new(env!("CARGO_BIN_EXE_cuvette"))
            .arg("--db")
            .arg(db)
            .args(args)
            .env("CUVETTE_USER", "Test Runner")
            .env_remove("CUVETTE_DB")
            .output()
            .unwrap();
        Out {
            code: out.status.code().unwrap_or(-1),
            stdout: String::from_utf8_lossy(&out.stdout).to_string(),
            stderr: String::from_utf8_lossy(&out.stderr).to_string(),
        }
    }
    pub fn ok(&self, args: &[&str]) -> Out {
        let o = self.run(args);
        assert_eq!(o.code, 0, "cuvette {args:?} failed: {}{}", o.stderr, o.stdout);
        o
    }
    pub fn counts(&self) -> Vec<(String, i64)> {
        let c = rusqlite::Connection::open(&self.db).unwrap();
        cuvette::store::row_counts(&c).unwrap()
    }
    /// A failing command: exit code 1, a one-line message containing `needle`, nothing changed.
    pub fn refuses(&self, args: &[&str], needle: &str) {
        let before = self.counts();
        let o = self.run(args);
        assert_eq!(
            o.code, 1,
            "expected exit 1 for {args:?}, got {}: {}{}",
            o.code, o.stderr, o.stdout
        );
        assert!(
            o.stderr.contains(needle),
            "message for {args:?} lacks '{needle}': {}",
            o.stderr
        );
        assert_eq!(o.stderr.trim().lines().count(), 1, "not one line: {}", o.stderr);
        assert!(!o.stderr.contains("panicked"), "{}", o.stderr);
        assert_eq!(self.counts(), before, "{args:?} changed the database");
    }
    pub fn write(&self, name: &str, text: &str) -> PathBuf {
        let p = self.path(name);
        std::fs::write(&p, text).unwrap();
        p
    }
    /// A CdSe-like absorbance file: a Gaussian in energy at `peak_nm` on a rising background.
    pub fn abs_file(&self, name: &str, peak_nm: f64) -> PathBuf {
        let (x, y) = cuvette::lab::demo::absorbance(
            "CdSe",
            peak_nm,
            0.04,
            0.1,
            0.0005,
            &mut cuvette::lab::demo::Rng::new(peak_nm as u64),
        );
        self.write(name, &csv(&x, &y))
    }
    pub fn pl_file(&self, name: &str, peak_nm: f64, integral: f64) -> PathBuf {
        let (x, y) = cuvette::lab::demo::photoluminescence(
            "CdSe",
            peak_nm,
            0.045,
            integral,
            2.0,
            &mut cuvette::lab::demo::Rng::new(3),
        );
        self.write(name, &csv(&x, &y).replacen("Absorbance", "Intensity (counts)", 1))
    }
}

pub fn csv(x: &[f64], y: &[f64]) -> String {
    let mut s = String::from("Wavelength (nm),Absorbance\n");
    for (a, b) in x.iter().zip(y) {
        s.push_str(&format!("{a},{b}\n"));
    }
    s
}

pub fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// The real binary with a test person as the writer and no lab from the environment.
pub fn bin() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_cuvette"));
    c.env("CUVETTE_USER", "Test Runner").env_remove("CUVETTE_DB");
    c
}

/// One number from a lab file (or any SQLite file).
pub fn scalar(db: &Path, sql: &str) -> i64 {
    let c = rusqlite::Connection::open(db).unwrap();
    c.query_row(sql, [], |r| r.get(0)).unwrap()
}

pub fn press(app: &mut cuvette::tui::app::App, code: crossterm::event::KeyCode) {
    app.on_key(crossterm::event::KeyEvent::new(
        code,
        crossterm::event::KeyModifiers::NONE,
    ));
}

/// A key pressed with Ctrl held (Ctrl-U clears a text field to its start).
pub fn ctrl(app: &mut cuvette::tui::app::App, c: char) {
    app.on_key(crossterm::event::KeyEvent::new(
        crossterm::event::KeyCode::Char(c),
        crossterm::event::KeyModifiers::CONTROL,
    ));
}

/// Waits (up to `secs`) until `done`, letting the UI take its background jobs' news meanwhile.
pub fn wait_until(app: &mut cuvette::tui::app::App, secs: u64, done: impl Fn(&cuvette::tui::app::App) -> bool) {
    let start = std::time::Instant::now();
    while !done(app) && start.elapsed() < std::time::Duration::from_secs(secs) {
        app.poll_workers();
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
}

pub fn typ(app: &mut cuvette::tui::app::App, s: &str) {
    for c in s.chars() {
        press(app, crossterm::event::KeyCode::Char(c));
    }
}

/// The UI drawn into a test terminal of `w` x `h`, as text.
pub fn screen_at(app: &cuvette::tui::app::App, w: u16, h: u16) -> String {
    let mut t = ratatui::Terminal::new(ratatui::backend::TestBackend::new(w, h)).unwrap();
    t.draw(|f| cuvette::tui::draw::draw(f, app)).unwrap();
    let buf = t.backend().buffer().clone();
    let mut out = String::new();
    for y in 0..buf.area.height {
        for x in 0..buf.area.width {
            out.push_str(buf[(x, y)].symbol());
        }
        out.push('\n');
    }
    out
}

/// The open CdSe growth series (see `../shared/opendata/README.md`), read in place: beside the
/// checkout, else in the workplace's shared folder. None, with a line saying so, where this
/// machine does not have it, so a clone elsewhere still runs the rest of the suite.
pub fn cdse_series_dir() -> Option<PathBuf> {
    let candidates = [
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../shared/opendata/cdse-growth-series"),
        PathBuf::from("/work/shared/opendata/cdse-growth-series"),
    ];
    let found = candidates.into_iter().find(|p| p.is_dir());
    if found.is_none() {
        eprintln!("skipped: the open CdSe growth series is not on this machine");
    }
    found
}

/// The terminal UI on a lab, as `Test Runner`, with the shipped keys.
pub fn open_ui(lab: &Lab) -> cuvette::tui::app::App {
    let store = cuvette::lab::open(&lab.db, "Test Runner").unwrap();
    cuvette::tui::app::App::new(store, cuvette::tui::keys::KeyMap::new(&Default::default()).unwrap())
}

/// A new demo lab and the terminal UI on it.
pub fn demo_ui() -> (Lab, cuvette::tui::app::App) {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let app = open_ui(&lab);
    (lab, app)
}

/// Waits (up to a minute) for the UI's background job to finish.
pub fn wait_idle(app: &mut cuvette::tui::app::App) {
    let start = std::time::Instant::now();
    while app.busy && start.elapsed() < std::time::Duration::from_secs(60) {
        app.poll_workers();
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    assert!(!app.busy, "the background job did not finish");
}

/// How long the settled helpers wait for the UI's worker: far longer than any answer takes, so
/// only a worker that never answers fails a test on it.
pub const SETTLE_LIMIT: std::time::Duration = std::time::Duration::from_secs(60);

/// The harness's key helpers, each waiting until the UI's worker has answered everything the
/// key asked (a sheet opened, a form saved), so a test can look at the app right after a key
/// as a person looks at the screen. Import them by name, after `use common::*`, to drive the
/// app this way: `use common::settled::{ctrl, press, typ};`.
pub mod settled {
    use cuvette::tui::app::App;

    fn settle(app: &mut App) {
        assert!(
            app.settle_workers(super::SETTLE_LIMIT),
            "the UI's worker did not answer: still {:?}",
            app.working()
        );
    }

    pub fn press(app: &mut App, code: crossterm::event::KeyCode) {
        super::press(app, code);
        settle(app);
    }

    pub fn ctrl(app: &mut App, c: char) {
        super::ctrl(app, c);
        settle(app);
    }

    pub fn typ(app: &mut App, s: &str) {
        for c in s.chars() {
            press(app, crossterm::event::KeyCode::Char(c));
        }
    }

    /// As `super::wait_idle`, then until the reload the job's end asked for has been read.
    pub fn wait_idle(app: &mut App) {
        super::wait_idle(app);
        settle(app);
    }

    /// As `super::wait_until`, then until what the last report asked for has been read.
    pub fn wait_until(app: &mut App, secs: u64, done: impl Fn(&App) -> bool) {
        super::wait_until(app, secs, done);
        settle(app);
    }

    /// The UI asked to check its lab (`App::check_lab`) and given the answer.
    pub fn check_lab(app: &mut App) {
        app.check_lab();
        settle(app);
    }

    /// The UI asked to read the lab again (`App::reload`) and given the answer.
    pub fn reload(app: &mut App) {
        app.reload();
        settle(app);
    }
}
