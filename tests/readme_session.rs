//! The README's bench session with the sample exports, run top to bottom as it is written
//! (the lines between its `bench-session` markers, as one bash script with `set -euo
//! pipefail`), in a fresh folder that sees the checkout's `demo-db/`. Then the lab it leaves
//! is asked what was logged. The expected wavelengths and yields are those the sample script
//! `demo-db/samples/generate.py` states it generated (λ1 580 nm and QY 0.34 at 20 min; the QY
//! through the single-point relative method, Brouwer, Pure Appl. Chem. 83, 2213 (2011)).
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;

use common::scalar;
use std::path::Path;
use std::process::Command;

fn session() -> String {
    let readme = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md")).unwrap();
    let start = readme
        .find("<!-- bench-session -->")
        .expect("README has no bench-session marker");
    let end = readme
        .find("<!-- /bench-session -->")
        .expect("README has no closing marker");
    let block = &readme[start..end];
    let lines: Vec<&str> = block
        .lines()
        .skip(1)
        .map(|l| {
            l.strip_prefix("    ")
                .unwrap_or_else(|| panic!("not a code line: {l:?}"))
        })
        .collect();
    assert!(lines.len() > 10, "the session is {} lines", lines.len());
    lines.join("\n")
}

#[test]
fn the_readme_bench_session_runs_as_written() {
    let dir = tempfile::tempdir().unwrap();
    std::os::unix::fs::symlink(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-db"),
        dir.path().join("demo-db"),
    )
    .unwrap();
    let bin_dir = Path::new(env!("CARGO_BIN_EXE_cuvette")).parent().unwrap();
    let path = format!("{}:{}", bin_dir.display(), std::env::var("PATH").unwrap_or_default());
    let script = format!("set -euo pipefail\n{}\n", session());
    let out = Command::new("bash")
        .arg("-c")
        .arg(&script)
        .current_dir(dir.path())
        .env("PATH", path)
        .env_remove("CUVETTE_DB")
        .env_remove("CUVETTE_USER")
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        out.status.success(),
        "the session stopped:\n{stderr}\n--- stdout ---\n{stdout}"
    );
    let db = dir.path().join("qd-s1.db");
    assert_eq!(scalar(&db, "SELECT COUNT(*) FROM aliquot"), 5);
    assert_eq!(scalar(&db, "SELECT COUNT(*) FROM spectrum"), 10);
    // find printed the batch: its product (the 20 min aliquot, the last timed one) in range.
    assert!(stdout.contains("\"name\": \"QD-S1\""), "{stdout}");
    let c = rusqlite::Connection::open(&db).unwrap();
    let at_20 = |quantity: &str| -> f64 {
        c.query_row(
            "SELECT d.value FROM derived_value d JOIN aliquot a ON a.id = d.aliquot_id \
             WHERE a.minutes = 20 AND d.quantity = ?1 AND d.superseded_at IS NULL",
            [quantity],
            |r| r.get(0),
        )
        .unwrap()
    };
    assert!((at_20("first_exciton_nm") - 580.0).abs() < 1.5);
    let qy = at_20("qy");
    assert!((qy - 0.34).abs() < 0.03, "QY {qy}");
    // The vial went to the new student with 3.5 mL left, and the pack was written.
    assert_eq!(
        scalar(
            &db,
            "SELECT COUNT(*) FROM vial v JOIN person p ON p.id = v.owner_id WHERE p.name = 'Ilse Brandvold'"
        ),
        1
    );
    assert!(stdout.contains("3.500 mL"), "{stdout}");
    assert!(dir.path().join("handover").read_dir().unwrap().next().is_some());
    assert!(stdout.lines().last().unwrap_or("").starts_with("ok:"), "{stdout}");
}
