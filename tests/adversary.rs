//! Adversarial tests of issue 10's guarantees: restore and backup that cannot lose data, reads
//! that never change a lab, corrections that refuse cleanly and audit what they do, `check`
//! that notices tampering without false alarms, and attribution. A test that found a real bug
//! is kept and marked `` so the suite stays green until it is fixed.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use rusqlite::Connection;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

// ------------------------------------------------------------------ helpers

fn out_of(o: std::process::Output) -> Out {
    Out {
        code: o.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&o.stdout).to_string(),
        stderr: String::from_utf8_lossy(&o.stderr).to_string(),
    }
}

fn no_panic(o: &Out, what: &str) {
    assert!(!o.stderr.contains("panicked"), "{what} panicked: {}", o.stderr);
}

/// A read-only look at a lab that creates no side file and cannot checkpoint it.
fn ro(db: &Path) -> Connection {
    Connection::open_with_flags(
        db,
        rusqlite::OpenFlags::SQLITE_OPEN_READ_ONLY | rusqlite::OpenFlags::SQLITE_OPEN_NO_MUTEX,
    )
    .unwrap()
}

fn files_in(dir: &Path, needle: &str) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.contains(needle))
        .collect();
    v.sort();
    v
}

/// Folds the write-ahead log into the file and removes the side files, so the file alone is
/// the lab (as after every process closed it).
fn settle(db: &Path) {
    let c = Connection::open(db).unwrap();
    c.execute_batch("PRAGMA wal_checkpoint(TRUNCATE)").unwrap();
    drop(c);
    for side in ["-wal", "-shm"] {
        let _ = std::fs::remove_file(format!("{}{side}", db.display()));
    }
}

fn snapshot(p: &Path) -> (Vec<u8>, std::time::SystemTime) {
    (
        std::fs::read(p).unwrap(),
        std::fs::metadata(p).unwrap().modified().unwrap(),
    )
}

fn id_of(o: &Out) -> i64 {
    o.json()["id"].as_i64().unwrap()
}

fn problems(o: &Out) -> Vec<String> {
    o.json()["problems"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| format!("{}: {}", p["kind"].as_str().unwrap(), p["detail"].as_str().unwrap()))
        .collect()
}

fn check_ok(lab: &Lab, db: &Path) {
    let o = lab.run_on(db, &["check", "--deep", "--json"]);
    no_panic(&o, "check");
    assert_eq!(o.code, 0, "check --deep found problems: {:?}{}", problems(&o), o.stderr);
}

/// A lab with one batch of four timed aliquots (abs), a second batch with one PL-only aliquot,
/// and a location.
struct Series {
    lab: Lab,
    batch: i64,
    aliquots: Vec<i64>,
    other_batch: i64,
    pl_aliquot: i64,
}

fn series() -> Series {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["location", "add", "Fridge A", "--kind", "fridge"]);
    let batch = id_of(&lab.ok(&["batch", "new", "--material", "CdSe", "--name", "growth", "--json"]));
    let mut aliquots = Vec::new();
    for (m, peak) in [(2, 520.0), (5, 545.0), (9, 565.0), (14, 580.0)] {
        let f = lab.abs_file(&format!("a{m}.csv"), peak);
        aliquots.push(id_of(&lab.ok(&[
            "aliquot",
            "add",
            &batch.to_string(),
            "--abs",
            s(&f),
            "--minutes",
            &m.to_string(),
            "--dilution",
            "20",
            "--json",
        ])));
    }
    let other_batch = id_of(&lab.ok(&["batch", "new", "--material", "CdSe", "--name", "other", "--json"]));
    let pl = lab.pl_file("p.csv", 600.0, 1e4);
    let pl_aliquot = id_of(&lab.ok(&[
        "aliquot",
        "add",
        &other_batch.to_string(),
        "--pl",
        s(&pl),
        "--excitation-nm",
        "450",
        "--minutes",
        "20",
        "--json",
    ]));
    Series {
        lab,
        batch,
        aliquots,
        other_batch,
        pl_aliquot,
    }
}

fn abs_spectrum_of(lab: &Lab, aliquot: i64) -> i64 {
    let a = lab.ok(&["aliquot", "show", &aliquot.to_string(), "--json"]).json();
    a["spectra"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["kind"] == "abs")
        .unwrap_or_else(|| panic!("no abs spectrum: {a}"))["id"]
        .as_i64()
        .unwrap()
}

/// An old lab file: only the first `version` migrations, with a person, a batch, an aliquot
/// with a stored absorbance spectrum, a location, a vial with a recorded concentration and
/// audit rows, written straight through SQLite as an old cuvette would have.
fn old_lab(path: &Path, version: usize) {
    let c = Connection::open(path).unwrap();
    for (i, (_, sql)) in cuvette::store::MIGRATIONS.iter().take(version).enumerate() {
        c.execute_batch(sql).unwrap();
        c.pragma_update(None, "user_version", (i + 1) as i64).unwrap();
    }
    c.execute(
        "INSERT OR IGNORE INTO material (name, core) VALUES ('CdSe', 'CdSe')",
        [],
    )
    .unwrap();
    let (x, y) = cuvette::lab::demo::absorbance("CdSe", 560.0, 0.04, 0.1, 0.0005, &mut cuvette::lab::demo::Rng::new(7));
    let data = cuvette::store::encode_xy(&x, &y);
    c.execute_batch(
        "INSERT INTO person (name) VALUES ('Old Timer');
         INSERT INTO batch (name, material_id, started_at, status)
           VALUES ('old batch', (SELECT id FROM material WHERE name = 'CdSe'), '2025-01-01T00:00:00Z', 'done');
         INSERT INTO aliquot (batch_id, minutes, dilution_factor, path_cm, solvent, taken_at)
           VALUES (1, 10, 20, 1, 'hexane', '2025-01-01T00:10:00Z');
         INSERT INTO location (name, kind) VALUES ('Old fridge', 'fridge');
         INSERT INTO vial (batch_id, label, volume_ml, initial_ml, solvent, location_id, status, concentration_molar, created_at)
           VALUES (1, 'OLD-1', 3, 3, 'hexane', 1, 'in_use', 2.5e-6, '2025-01-02T00:00:00Z');
         INSERT INTO vial_event (vial_id, kind, amount_ml, to_location_id, who, at)
           VALUES (1, 'create', 3, 1, 'Old Timer', '2025-01-02T00:00:00Z');
         INSERT INTO audit_log (at, who, entity, entity_id, action) VALUES ('2025-01-01T00:00:00Z', 'Old Timer', 'batch', 1, 'create');
         INSERT INTO audit_log (at, who, entity, entity_id, action) VALUES ('2025-01-02T00:00:00Z', 'Old Timer', 'vial', 1, 'create');",
    )
    .unwrap();
    c.execute(
        "INSERT INTO spectrum (aliquot_id, kind, x_unit, y_unit, npoints, data, file_name, sha256, created_at)
         VALUES (1, 'abs', 'nm', 'absorbance', ?1, ?2, 'old.csv', 'f00d', '2025-01-01T00:10:00Z')",
        rusqlite::params![x.len() as i64, data],
    )
    .unwrap();
}

// ------------------------------------------------------------------ restore and backup

/// A truncated, corrupt, empty, foreign, folder or missing "backup" is refused in one line,
/// and the lab, its folder and its content are exactly as they were.
#[test]
fn restore_from_a_damaged_file_refuses_and_keeps_the_lab() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let good = lab.path("good.db");
    lab.ok(&["backup", "--out", s(&good)]);
    lab.ok(&["batch", "new", "--material", "CdSe", "--name", "after the backup"]);
    let bytes = std::fs::read(&good).unwrap();
    std::fs::write(lab.path("trunc.db"), &bytes[..bytes.len() / 3]).unwrap();
    let mut flipped = bytes.clone();
    for b in flipped.iter_mut().skip(8192).take(20000) {
        *b ^= 0x5a;
    }
    std::fs::write(lab.path("flipped.db"), &flipped).unwrap();
    lab.write("garbage.db", "no database here\n");
    lab.write("empty.db", "");
    let foreign = lab.path("foreign.db");
    Connection::open(&foreign)
        .unwrap()
        .execute_batch("CREATE TABLE t (x); INSERT INTO t VALUES (1); PRAGMA user_version = 3;")
        .unwrap();
    std::fs::create_dir(lab.path("folder.db")).unwrap();
    for (f, needle) in [
        ("trunc.db", "trunc.db"),
        ("flipped.db", "malformed"),
        ("garbage.db", "not an SQLite file"),
        ("empty.db", "empty"),
        ("foreign.db", "foreign.db"),
        ("folder.db", "folder"),
        ("missing.db", "missing.db"),
    ] {
        lab.refuses(&["restore", s(&lab.path(f))], needle);
        assert!(
            files_in(lab.dir.path(), ".replaced-").is_empty(),
            "{f}: a copy was kept"
        );
        assert!(
            files_in(lab.dir.path(), "partial").is_empty(),
            "{f}: a partial file left"
        );
    }
    assert_eq!(
        scalar(&lab.db, "SELECT count(*) FROM batch WHERE name = 'after the backup'"),
        1
    );
    check_ok(&lab, &lab.db);
}

/// A backup written by an older cuvette (every schema from 1 to the one before this) restores
/// with every row it holds, migrated, and the backup file itself is left exactly as it was.
#[test]
fn restore_from_an_older_schema_keeps_its_rows_and_leaves_the_backup_alone() {
    for version in 1..cuvette::store::MIGRATIONS.len() {
        let lab = Lab::new();
        lab.ok(&["init"]);
        lab.ok(&["person", "add", "Current Person"]);
        let old = lab.path(&format!("v{version}.db"));
        old_lab(&old, version);
        let before = snapshot(&old);
        let o = lab.run(&["restore", s(&old)]);
        no_panic(&o, "restore");
        assert_eq!(o.code, 0, "v{version}: {}", o.stderr);
        assert_eq!(snapshot(&old), before, "v{version}: the backup file changed");
        assert!(
            files_in(lab.dir.path(), &format!("v{version}.db.v")).is_empty(),
            "v{version}: a migration copy was made beside the backup"
        );
        for (sql, want) in [
            ("SELECT count(*) FROM person WHERE name = 'Old Timer'", 1),
            ("SELECT count(*) FROM person WHERE name = 'Current Person'", 0),
            ("SELECT count(*) FROM batch WHERE name = 'old batch'", 1),
            ("SELECT count(*) FROM spectrum WHERE data_sha256 IS NOT NULL", 1),
            ("SELECT count(*) FROM vial WHERE label = 'OLD-1'", 1),
            // Labs of version 5 on keep vial concentrations in their own table, never in the
            // vial row this fixture fills; older ones have theirs carried over as 'recorded'.
            (
                "SELECT count(*) FROM vial_concentration WHERE source = 'recorded' AND value = 2.5e-6",
                i64::from(version < 5),
            ),
            ("SELECT count(*) FROM audit_log WHERE who = 'Old Timer'", 2),
            ("SELECT count(*) FROM audit_log WHERE action = 'restore'", 1),
        ] {
            assert_eq!(scalar(&lab.db, sql), want, "v{version}: {sql}");
        }
        assert_eq!(
            scalar(&lab.db, "PRAGMA user_version"),
            cuvette::store::SCHEMA_VERSION,
            "v{version}"
        );
        // The kept copy holds what the restore replaced.
        let kept = files_in(lab.dir.path(), ".replaced-");
        assert_eq!(kept.len(), 1, "v{version}: {kept:?}");
        assert_eq!(
            scalar(
                &lab.path(&kept[0]),
                "SELECT count(*) FROM person WHERE name = 'Current Person'"
            ),
            1
        );
        check_ok(&lab, &lab.db);
        // The restored lab takes new work and derives values for the old aliquot.
        lab.ok(&["recompute", "--all"]);
        let a = lab.ok(&["aliquot", "show", "1", "--json"]).json();
        assert!(a["diameter_nm"].as_f64().is_some(), "v{version}: {a}");
        check_ok(&lab, &lab.db);
    }
}

/// Where there is no lab yet, restore makes one from the backup (an older one too): whole,
/// checked, and writable; a target folder that does not exist is refused and nothing made.
#[test]
fn restore_where_there_is_no_lab_yet() {
    let lab = Lab::new();
    let old = lab.path("v3.db");
    old_lab(&old, 3);
    let before = snapshot(&old);
    let fresh = lab.path("fresh.db");
    let o = lab.run_on(&fresh, &["restore", s(&old)]);
    no_panic(&o, "restore");
    assert_eq!(o.code, 0, "{}", o.stderr);
    assert_eq!(snapshot(&old), before, "the backup changed");
    assert_eq!(scalar(&fresh, "PRAGMA user_version"), cuvette::store::SCHEMA_VERSION);
    assert_eq!(scalar(&fresh, "SELECT count(*) FROM batch WHERE name = 'old batch'"), 1);
    check_ok(&lab, &fresh);
    let o = lab.run_on(&fresh, &["person", "add", "New Hand"]);
    assert_eq!(o.code, 0, "{}", o.stderr);
    // Into a folder that does not exist: one line, nothing created anywhere.
    let nested = lab.path("no/such/folder/lab.db");
    let o = lab.run_on(&nested, &["restore", s(&old)]);
    no_panic(&o, "restore");
    assert_eq!(o.code, 1, "{}", o.stderr);
    assert_eq!(o.stderr.trim().lines().count(), 1, "{}", o.stderr);
    assert!(!lab.path("no").exists());
    assert!(files_in(lab.dir.path(), "partial").is_empty());
}

/// Two restores of one lab at the same time: each either completes (keeping what it replaced)
/// or is refused with a message; nothing that was in the lab before is lost, and no partial
/// file is left.
#[test]
fn two_restores_at_once_lose_nothing() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["person", "add", "Only In A"]);
    let a = lab.path("a.db");
    lab.ok(&["backup", "--out", s(&a)]);
    lab.ok(&["person", "add", "Only In B"]);
    let b = lab.path("b.db");
    lab.ok(&["backup", "--out", s(&b)]);
    lab.ok(&["person", "add", "Only In The Lab"]);
    let spawn = |f: &Path| {
        bin()
            .arg("--db")
            .arg(&lab.db)
            .arg("restore")
            .arg(f)
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .unwrap()
    };
    let (pa, pb) = (spawn(&a), spawn(&b));
    let (oa, ob) = (
        out_of(pa.wait_with_output().unwrap()),
        out_of(pb.wait_with_output().unwrap()),
    );
    for o in [&oa, &ob] {
        no_panic(o, "restore");
        assert!(o.code == 0 || o.code == 1, "{}", o.stderr);
        if o.code == 1 {
            assert_eq!(o.stderr.trim().lines().count(), 1, "{}", o.stderr);
        }
    }
    let done = [&oa, &ob].iter().filter(|o| o.code == 0).count();
    assert!(done >= 1, "neither restore ran: {} / {}", oa.stderr, ob.stderr);
    let kept = files_in(lab.dir.path(), ".replaced-");
    assert_eq!(kept.len(), done, "one kept copy per restore: {kept:?}");
    // The lab's own last person is in one of the kept copies.
    let q = "SELECT count(*) FROM person WHERE name = 'Only In The Lab'";
    let found: i64 = kept.iter().map(|k| scalar(&lab.path(k), q)).sum::<i64>() + scalar(&lab.db, q);
    assert_eq!(found, 1, "the lab's last write is gone: {kept:?}");
    assert!(files_in(lab.dir.path(), "partial").is_empty());
    check_ok(&lab, &lab.db);
}

/// A backup damaged past its header is refused with a message that names the backup, so nobody
/// takes the lab itself for the damaged file.
#[test]

fn a_damaged_backup_is_named_in_the_refusal() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let good = lab.path("good.db");
    lab.ok(&["backup", "--out", s(&good)]);
    let mut bytes = std::fs::read(&good).unwrap();
    for b in bytes.iter_mut().skip(8192).take(20000) {
        *b ^= 0x5a;
    }
    std::fs::write(lab.path("flipped.db"), &bytes).unwrap();
    lab.refuses(&["restore", s(&lab.path("flipped.db"))], "flipped.db");
}

/// Backups to a path in a missing folder, to a folder, to a symbolic link (dangling or not)
/// and to the lab's own name through another path are refused in one line; nothing is made
/// or changed.
#[test]
fn backup_to_awkward_targets_is_refused() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["person", "add", "Someone"]);
    settle(&lab.db);
    let mine = lab.write("mine.txt", "a user's file");
    std::os::unix::fs::symlink(&mine, lab.path("to-mine.db")).unwrap();
    std::os::unix::fs::symlink(lab.path("nowhere.db"), lab.path("dangling.db")).unwrap();
    std::os::unix::fs::symlink(&lab.db, lab.path("to-lab.db")).unwrap();
    std::fs::create_dir(lab.path("folder")).unwrap();
    let before = snapshot(&lab.db);
    for (target, needle) in [
        ("missing/copy.db", "missing"),
        ("folder", "folder"),
        ("to-mine.db", "to-mine.db"),
        ("dangling.db", "dangling.db"),
        ("to-lab.db", "to-lab.db"),
    ] {
        lab.refuses(&["backup", "--out", s(&lab.path(target))], needle);
    }
    assert!(!lab.path("missing").exists());
    assert!(!lab.path("nowhere.db").exists(), "wrote through a dangling link");
    assert_eq!(std::fs::read_to_string(&mine).unwrap(), "a user's file");
    assert!(files_in(lab.dir.path(), "partial").is_empty());
    assert_eq!(snapshot(&lab.db).0, before.0, "the lab changed");
}

/// A `cuvette backup` of a large lab killed at any moment leaves no file under the real name
/// unless it is whole; the next backup in that folder sweeps the partial file away.
#[test]
fn a_killed_backup_leaves_no_half_file_and_the_next_backup_sweeps() {
    let lab = Lab::new();
    lab.ok(&["demo", "--scale", "300"]);
    settle(&lab.db);
    let out = lab.path("out");
    std::fs::create_dir(&out).unwrap();
    let target = out.join("copy.db");
    let mut child = bin()
        .arg("--db")
        .arg(&lab.db)
        .arg("backup")
        .arg("--out")
        .arg(&target)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    // Kill it as soon as its partial file shows (or when it has finished: either way the
    // folder must hold no half file under a real name).
    loop {
        if !files_in(&out, "partial").is_empty() {
            break;
        }
        if child.try_wait().unwrap().is_some() {
            break;
        }
        std::thread::yield_now();
    }
    let _ = child.kill();
    let _ = child.wait();
    if target.exists() {
        // Finished before the kill: it must be whole.
        check_ok(&lab, &target);
        std::fs::remove_file(&target).unwrap();
    }
    for side in ["-wal", "-shm", "-journal"] {
        assert!(!out.join(format!("copy.db{side}")).exists());
    }
    let leftovers = files_in(&out, "partial");
    // The next backup there clears what the killed one left.
    lab.ok(&["backup", "--out", s(&out.join("second.db"))]);
    let after = files_in(&out, "partial");
    assert!(
        after.is_empty(),
        "left {after:?} (before the second backup: {leftovers:?})"
    );
    check_ok(&lab, &out.join("second.db"));
}

// ------------------------------------------------------------------ reads never change a lab

fn read_commands(lab: &Lab) -> Vec<Vec<String>> {
    let out = lab.path("export-out");
    let _ = std::fs::create_dir(&out);
    let plot = lab.path("plot.svg");
    let _ = std::fs::remove_file(&plot);
    let copy = lab.path("read-copy.db");
    let _ = std::fs::remove_file(&copy);
    let _ = std::fs::remove_dir_all(&out);
    std::fs::create_dir(&out).unwrap();
    [
        vec!["batch", "list", "--json"],
        vec!["batch", "show", "1", "--json"],
        vec!["aliquot", "show", "1", "--json"],
        vec!["shelf", "--json"],
        vec!["vial", "show", "1", "--json"],
        vec!["find", "CdSe size>2 qy>10%", "--json"],
        vec!["check", "--json"],
        vec!["check", "--deep", "--json"],
        vec!["log", "--json"],
        vec!["explain", "1", "--json"],
        vec!["recompute", "--dry-run", "--json"],
        vec!["calib", "show"],
        vec!["calib", "history"],
        vec!["person", "list"],
        vec!["location", "list"],
        vec!["plot", "1", "--out", s(&plot)],
        vec!["export", "--format", "csv", "--out", s(&out)],
        vec!["backup", "--out", s(&copy)],
    ]
    .into_iter()
    .map(|v| v.into_iter().map(String::from).collect())
    .collect()
}

/// Every read command leaves the lab file's bytes and its modification time exactly as they
/// were, and panics on nothing.
#[test]
fn read_commands_leave_the_file_bytes_and_mtime_alone() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    settle(&lab.db);
    let before = snapshot(&lab.db);
    for args in read_commands(&lab) {
        let a: Vec<&str> = args.iter().map(String::as_str).collect();
        let o = lab.run(&a);
        no_panic(&o, &args.join(" "));
        assert_eq!(o.code, 0, "{args:?}: {}", o.stderr);
        assert_eq!(snapshot(&lab.db), before, "{args:?} changed the lab file");
    }
}

/// `open_read` promises that nothing "in the file or beside it" is changed, yet every read of a
/// settled lab leaves a `-wal` and a `-shm` file next to it (and beside a backup it restores
/// from).
#[test]

fn read_commands_create_no_side_files() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    settle(&lab.db);
    let mut made = Vec::new();
    for args in read_commands(&lab) {
        let a: Vec<&str> = args.iter().map(String::as_str).collect();
        lab.ok(&a);
        for side in ["-wal", "-shm"] {
            let p = PathBuf::from(format!("{}{side}", lab.db.display()));
            if p.exists() {
                made.push(format!("{} made {side}", args.join(" ")));
                let _ = std::fs::remove_file(&p);
            }
        }
    }
    // Restoring from a settled backup file leaves that file's folder as it was, too.
    let backup = lab.path("settled.db");
    lab.ok(&["backup", "--out", s(&backup)]);
    settle(&backup);
    let other = Lab::new();
    other.ok(&["init"]);
    other.ok(&["restore", s(&backup)]);
    for side in ["-wal", "-shm"] {
        if Path::new(&format!("{}{side}", backup.display())).exists() {
            made.push(format!("restore made {side} beside the backup"));
        }
    }
    assert!(made.is_empty(), "{made:?}");
}

/// Reads of an older lab work, leave it at its version, byte for byte, and make no migration
/// copy; a backup of it is a current, checked lab.
#[test]
fn reads_of_an_older_lab_change_nothing() {
    for version in 1..cuvette::store::MIGRATIONS.len() {
        let lab = Lab::new();
        old_lab(&lab.db, version);
        let before = snapshot(&lab.db);
        let copy = lab.path("copy.db");
        let export = lab.path("export");
        std::fs::create_dir(&export).unwrap();
        for args in [
            &["batch", "list", "--json"][..],
            &["batch", "show", "1", "--json"],
            &["shelf", "--json"],
            &["vial", "show", "OLD-1", "--json"],
            &["check", "--json"],
            &["find", "old", "--json"],
            &["log", "--json"],
            &["export", "--format", "json", "--out", s(&export)],
            &["backup", "--out", s(&copy)],
        ] {
            let o = lab.run(args);
            no_panic(&o, &args.join(" "));
            assert_eq!(o.code, 0, "v{version} {args:?}: {}", o.stderr);
            assert_eq!(snapshot(&lab.db), before, "v{version} {args:?} changed the file");
        }
        assert_eq!(scalar(&lab.db, "PRAGMA user_version"), version as i64);
        assert!(
            files_in(lab.dir.path(), ".bak").is_empty(),
            "v{version}: a read made a migration copy"
        );
        assert_eq!(scalar(&copy, "PRAGMA user_version"), cuvette::store::SCHEMA_VERSION);
        assert_eq!(scalar(&copy, "SELECT count(*) FROM batch WHERE name = 'old batch'"), 1);
        check_ok(&lab, &copy);
    }
}

/// While another connection holds the write lock with uncommitted work, reads still answer,
/// show only committed work, and do not wait for the writer.
#[test]
fn reads_while_a_writer_holds_the_lock_see_committed_work() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["person", "add", "Committed"]);
    let holder = Connection::open(&lab.db).unwrap();
    holder
        .execute_batch("BEGIN IMMEDIATE; INSERT INTO person (name) VALUES ('Uncommitted');")
        .unwrap();
    let o = lab.run(&["person", "list", "--json"]);
    no_panic(&o, "person list");
    assert_eq!(o.code, 0, "{}", o.stderr);
    assert!(
        o.stdout.contains("Committed") && !o.stdout.contains("Uncommitted"),
        "{}",
        o.stdout
    );
    let copy = lab.path("copy.db");
    lab.ok(&["backup", "--out", s(&copy)]);
    assert_eq!(scalar(&copy, "SELECT count(*) FROM person WHERE name = 'Committed'"), 1);
    assert_eq!(
        scalar(&copy, "SELECT count(*) FROM person WHERE name = 'Uncommitted'"),
        0
    );
    holder.execute_batch("ROLLBACK").unwrap();
}

/// A connection in exclusive locking mode (the sqlite3 shell with `PRAGMA locking_mode =
/// EXCLUSIVE`, or any writer at a moment it holds the file's exclusive lock) makes the
/// ordinary read-only open fail with SQLITE_BUSY; `open_read_only` then falls back to
/// `immutable=1`, which ignores the write-ahead log: reads silently show an older lab and a
/// backup that "succeeded" lacks committed work.
#[test]

fn reads_never_silently_miss_committed_work() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let holder = Connection::open(&lab.db).unwrap();
    holder.execute_batch("PRAGMA locking_mode = EXCLUSIVE").unwrap();
    holder
        .execute("INSERT INTO person (name) VALUES ('Committed Before')", [])
        .unwrap();
    // A short wait for the stuck lock keeps the test quick; the behaviour is the same.
    let run = |args: &[&str]| {
        let o = bin()
            .env("CUVETTE_BUSY_SECONDS", "1")
            .arg("--db")
            .arg(&lab.db)
            .args(args)
            .output()
            .unwrap();
        Out {
            code: o.status.code().unwrap_or(-1),
            stdout: String::from_utf8_lossy(&o.stdout).to_string(),
            stderr: String::from_utf8_lossy(&o.stderr).to_string(),
        }
    };
    let list = run(&["person", "list", "--json"]);
    let copy = lab.path("copy.db");
    let backup = run(&["backup", "--out", s(&copy)]);
    drop(holder);
    assert!(list.stderr.contains("busy") || list.code == 0, "{}", list.stderr);
    // Either the read waits / refuses, or it shows the committed person; never an older lab.
    assert!(
        list.code != 0 || list.stdout.contains("Committed Before"),
        "person list exited 0 without the committed person: {}",
        list.stdout
    );
    if backup.code == 0 {
        assert_eq!(
            scalar(&copy, "SELECT count(*) FROM person WHERE name = 'Committed Before'"),
            1,
            "backup said it succeeded but lacks a committed write"
        );
    }
}

// ------------------------------------------------------------------ corrections

/// Every bad correction is refused in one line with exit 1 and changes nothing.
#[test]
fn bad_corrections_are_refused_and_change_nothing() {
    let sr = series();
    let lab = &sr.lab;
    let [a0, a1, a2, _a3] = [sr.aliquots[0], sr.aliquots[1], sr.aliquots[2], sr.aliquots[3]];
    let (a0s, a1s, a2s) = (a0.to_string(), a1.to_string(), a2.to_string());
    lab.ok(&["aliquot", "void", &a0s, "--why", "wrong file"]);
    lab.refuses(&["aliquot", "void", &a0s, "--why", "again"], "already void");
    lab.refuses(&["aliquot", "reinstate", &a1s, "--why", "never void"], "not void");
    lab.refuses(&["aliquot", "void", &a1s, "--why", "   "], "reason");
    lab.refuses(&["aliquot", "void", "9999", "--why", "x"], "9999");
    lab.refuses(&["aliquot", "reinstate", "9999", "--why", "x"], "9999");
    for (flag, v, needle) in [
        ("--dilution", "NaN", "finite"),
        ("--dilution", "inf", "finite"),
        ("--dilution", "-5", "above zero"),
        ("--dilution", "0", "above zero"),
        ("--dilution", "0.5", "below 1"),
        ("--dilution", "1e300", "plausible"),
        ("--minutes", "NaN", "finite"),
        ("--minutes", "-1", "zero or more"),
        ("--minutes", "1e300", "plausible"),
        ("--path-cm", "0", "above zero"),
        ("--path-cm", "-1", "above zero"),
        ("--path-cm", "inf", "finite"),
        ("--dilution", "-inf", "finite"),
        ("--path-cm", "1e300", "plausible"),
        ("--solvent", "plasma", "unknown solvent"),
        ("--stage", " ", "stage"),
    ] {
        lab.refuses(
            &["aliquot", "edit", &a1s, &format!("{flag}={v}"), "--why", "typo"],
            needle,
        );
    }
    lab.refuses(&["aliquot", "edit", &a1s, "--why", "nothing"], "nothing to change");
    lab.refuses(&["aliquot", "edit", &a1s, "--dilution", "2", "--why", ""], "reason");
    lab.refuses(
        &[
            "aliquot",
            "edit",
            &a1s,
            "--minutes",
            "3",
            "--stage",
            "washed",
            "--why",
            "x",
        ],
        "not both",
    );
    let sp1 = abs_spectrum_of(lab, a1);
    let sp1s = sp1.to_string();
    lab.refuses(
        &["spectrum", "move", &sp1s, "--to", &a1s, "--why", "x"],
        "already belongs",
    );
    lab.refuses(&["spectrum", "move", &sp1s, "--to", &a0s, "--why", "x"], "void");
    lab.refuses(&["spectrum", "move", &sp1s, "--to", &a2s, "--why", "x"], "already has");
    lab.refuses(&["spectrum", "move", &sp1s, "--to", "9999", "--why", "x"], "9999");
    lab.refuses(&["spectrum", "move", "9999", "--to", &a2s, "--why", "x"], "9999");
    lab.refuses(&["spectrum", "move", &sp1s, "--to", &a2s, "--why", " "], "reason");
    // A vial's own spectrum belongs to no aliquot and cannot be moved to one.
    lab.ok(&[
        "vial",
        "new",
        &sr.batch.to_string(),
        "--ml",
        "2",
        "--location",
        "Fridge A",
        "--label",
        "V1",
    ]);
    let vf = lab.abs_file("vial.csv", 580.0);
    lab.ok(&["vial", "measure", "V1", "--abs", s(&vf), "--dilution", "10"]);
    let vs: i64 = ro(&lab.db)
        .query_row("SELECT id FROM spectrum WHERE vial_id IS NOT NULL", [], |r| r.get(0))
        .unwrap();
    lab.refuses(
        &[
            "spectrum",
            "move",
            &vs.to_string(),
            "--to",
            &sr.pl_aliquot.to_string(),
            "--why",
            "x",
        ],
        "vial",
    );
    lab.refuses(&["vial", "reinstate", "V1", "--why", "not disposed"], "not disposed");
    let b = sr.batch.to_string();
    lab.ok(&["batch", "void", &b, "--why", "test run"]);
    lab.refuses(&["batch", "void", &b, "--why", "again"], "already void");
    lab.refuses(
        &["batch", "reinstate", &sr.other_batch.to_string(), "--why", "never void"],
        "not void",
    );
    lab.refuses(&["vial", "new", &b, "--ml", "1", "--location", "Fridge A"], "void");
    check_ok(lab, &lab.db);
}

/// A void batch takes no new vial; it must take no new aliquot either (by `aliquot add` or
/// `import`), or work lands in a batch that every view leaves out.
#[test]

fn a_void_batch_takes_no_new_aliquot() {
    let sr = series();
    let lab = &sr.lab;
    let b = sr.batch.to_string();
    lab.ok(&["batch", "void", &b, "--why", "a test run"]);
    let f = lab.abs_file("late.csv", 590.0);
    lab.refuses(&["aliquot", "add", &b, "--abs", s(&f), "--minutes", "30"], "void");
    let dir = lab.path("more");
    std::fs::create_dir(&dir).unwrap();
    let (x, y) = cuvette::lab::demo::absorbance("CdSe", 595.0, 0.04, 0.1, 0.0005, &mut cuvette::lab::demo::Rng::new(9));
    std::fs::write(dir.join("abs_40min.csv"), csv(&x, &y)).unwrap();
    lab.refuses(&["import", &b, s(&dir)], "void");
}

/// Each successful correction writes one audit row with a before and an after, and leaves a
/// lab `check --deep` passes.
#[test]
fn every_correction_is_audited_with_before_and_after() {
    let sr = series();
    let lab = &sr.lab;
    let [a0, a1, _, a3] = [sr.aliquots[0], sr.aliquots[1], sr.aliquots[2], sr.aliquots[3]];
    lab.ok(&[
        "vial",
        "new",
        &sr.batch.to_string(),
        "--ml",
        "2",
        "--location",
        "Fridge A",
        "--label",
        "V1",
    ]);
    let audited = |entity: &str, id: i64, action: &str| -> (String, String) {
        ro(&lab.db)
            .query_row(
                "SELECT before, after FROM audit_log WHERE entity = ?1 AND entity_id = ?2 AND action = ?3 ORDER BY id DESC LIMIT 1",
                rusqlite::params![entity, id, action],
                |r| Ok((r.get::<_, Option<String>>(0)?.unwrap_or_default(), r.get::<_, Option<String>>(1)?.unwrap_or_default())),
            )
            .unwrap_or_else(|e| panic!("no audit row for {entity} {id} {action}: {e}"))
    };
    let steps: Vec<(Vec<String>, &str, i64, &str, &str)> = vec![
        (
            vec!["aliquot", "void", &a0.to_string(), "--why", "PL logged as abs"]
                .into_iter()
                .map(String::from)
                .collect(),
            "aliquot",
            a0,
            "void",
            "PL logged as abs",
        ),
        (
            vec!["aliquot", "reinstate", &a0.to_string(), "--why", "it was abs"]
                .into_iter()
                .map(String::from)
                .collect(),
            "aliquot",
            a0,
            "reinstate",
            "it was abs",
        ),
        (
            vec![
                "aliquot",
                "edit",
                &a1.to_string(),
                "--dilution",
                "40",
                "--why",
                "diluted twice",
            ]
            .into_iter()
            .map(String::from)
            .collect(),
            "aliquot",
            a1,
            "edit",
            "diluted twice",
        ),
        (
            vec!["batch", "void", &sr.other_batch.to_string(), "--why", "a test"]
                .into_iter()
                .map(String::from)
                .collect(),
            "batch",
            sr.other_batch,
            "void",
            "a test",
        ),
        (
            vec![
                "batch",
                "reinstate",
                &sr.other_batch.to_string(),
                "--why",
                "it was real",
            ]
            .into_iter()
            .map(String::from)
            .collect(),
            "batch",
            sr.other_batch,
            "reinstate",
            "it was real",
        ),
        (
            vec!["vial", "dispose", "V1", "--why", "wrong vial"]
                .into_iter()
                .map(String::from)
                .collect(),
            "vial",
            0,
            "dispose",
            "wrong vial",
        ),
        (
            vec!["vial", "reinstate", "V1", "--why", "the neighbour"]
                .into_iter()
                .map(String::from)
                .collect(),
            "vial",
            0,
            "reinstate",
            "the neighbour",
        ),
    ];
    let vial_id = lab.ok(&["vial", "show", "V1", "--json"]).json()["id"].as_i64().unwrap();
    for (args, entity, id, action, why) in steps {
        let a: Vec<&str> = args.iter().map(String::as_str).collect();
        let n = scalar(&lab.db, "SELECT count(*) FROM audit_log");
        let o = lab.ok(&a);
        no_panic(&o, action);
        assert!(
            scalar(&lab.db, "SELECT count(*) FROM audit_log") > n,
            "{args:?} wrote no audit row"
        );
        let id = if entity == "vial" { vial_id } else { id };
        let (before, after) = audited(entity, id, action);
        if action != "dispose" {
            assert!(
                !before.is_empty() && !after.is_empty(),
                "{args:?}: before {before:?} after {after:?}"
            );
            assert_ne!(before, after, "{args:?}");
            assert!(
                after.contains(why),
                "{args:?}: the reason is not in the audit row: {after}"
            );
        }
        check_ok(lab, &lab.db);
    }
    // A moved spectrum: audited with where it was and where it went.
    let sp = abs_spectrum_of(lab, a3);
    lab.ok(&[
        "spectrum",
        "move",
        &sp.to_string(),
        "--to",
        &sr.pl_aliquot.to_string(),
        "--why",
        "wrong batch",
    ]);
    let (before, after) = audited("spectrum", sp, "move");
    assert!(before.contains(&a3.to_string()), "{before}");
    assert!(
        after.contains(&sr.pl_aliquot.to_string()) && after.contains("wrong batch"),
        "{after}"
    );
    check_ok(lab, &lab.db);
}

/// Moving the last spectrum of an aliquot into another batch's aliquot voids the emptied one,
/// re-derives both batches, and moving it back and reinstating restores the first product.
#[test]
fn moving_the_last_spectrum_across_batches_and_back() {
    let sr = series();
    let lab = &sr.lab;
    let a3 = sr.aliquots[3];
    let show = |b: i64| lab.ok(&["batch", "show", &b.to_string(), "--json"]).json();
    let before = show(sr.batch);
    assert_eq!(before["product"]["id"], a3);
    let d_before = before["product"]["diameter_nm"].as_f64().unwrap();
    let sp = abs_spectrum_of(lab, a3);
    lab.ok(&[
        "spectrum",
        "move",
        &sp.to_string(),
        "--to",
        &sr.pl_aliquot.to_string(),
        "--why",
        "wrong batch",
    ]);
    let moved = lab.ok(&["aliquot", "show", &a3.to_string(), "--json"]).json();
    assert_eq!(moved["voided"], true, "{moved}");
    assert_eq!(show(sr.batch)["product"]["id"], sr.aliquots[2]);
    let target = lab
        .ok(&["aliquot", "show", &sr.pl_aliquot.to_string(), "--json"])
        .json();
    assert!(
        (target["diameter_nm"].as_f64().unwrap() - d_before).abs() < 1e-9,
        "{target}"
    );
    check_ok(lab, &lab.db);
    // Refusals at each step are one line and change nothing.
    lab.refuses(
        &["aliquot", "reinstate", &a3.to_string(), "--why", "back"],
        "no spectrum",
    );
}

/// A last spectrum moved away by mistake must be movable back: today `aliquot reinstate` says
/// "move one back to it first" while `spectrum move` says "aliquot ... is void; reinstate it
/// first", so the emptied aliquot can never hold its spectrum again.
#[test]

fn a_last_spectrum_moved_by_mistake_can_be_moved_back() {
    let sr = series();
    let lab = &sr.lab;
    let a3 = sr.aliquots[3];
    let before = lab.ok(&["batch", "show", &sr.batch.to_string(), "--json"]).json()["product"].clone();
    let sp = abs_spectrum_of(lab, a3);
    lab.ok(&[
        "spectrum",
        "move",
        &sp.to_string(),
        "--to",
        &sr.pl_aliquot.to_string(),
        "--why",
        "wrong batch",
    ]);
    let back = lab.run(&[
        "spectrum",
        "move",
        &sp.to_string(),
        "--to",
        &a3.to_string(),
        "--why",
        "undo",
    ]);
    let back = if back.code == 0 {
        back
    } else {
        let r = lab.run(&["aliquot", "reinstate", &a3.to_string(), "--why", "undo"]);
        assert_eq!(
            r.code,
            0,
            "neither move back ({}) nor reinstate ({}) works",
            back.stderr.trim(),
            r.stderr.trim()
        );
        lab.run(&[
            "spectrum",
            "move",
            &sp.to_string(),
            "--to",
            &a3.to_string(),
            "--why",
            "undo",
        ])
    };
    assert_eq!(back.code, 0, "{}", back.stderr);
    let a = lab.ok(&["aliquot", "show", &a3.to_string(), "--json"]).json();
    assert_eq!(a["voided"], false, "{a}");
    let after = lab.ok(&["batch", "show", &sr.batch.to_string(), "--json"]).json()["product"].clone();
    assert_eq!(after["id"], before["id"]);
    assert_eq!(after["diameter_nm"], before["diameter_nm"]);
    check_ok(lab, &lab.db);
}

/// Voiding the product moves the batch's product to the aliquot before it and a new vial's
/// estimate follows that one; voiding every aliquot leaves a new vial without a figure and
/// marks the old estimates stale; `check --deep` agrees all along, and after a recompute.
#[test]
fn voiding_the_product_then_adding_a_vial() {
    let sr = series();
    let lab = &sr.lab;
    let b = sr.batch.to_string();
    let v1 = lab
        .ok(&[
            "vial",
            "new",
            &b,
            "--ml",
            "2",
            "--location",
            "Fridge A",
            "--label",
            "E1",
            "--json",
        ])
        .json();
    assert_eq!(v1["concentration_source"], "estimate", "{v1}");
    lab.ok(&["aliquot", "void", &sr.aliquots[3].to_string(), "--why", "wrong file"]);
    let product = lab.ok(&["batch", "show", &b, "--json"]).json()["product"].clone();
    assert_eq!(product["id"], sr.aliquots[2]);
    let v2 = lab
        .ok(&[
            "vial",
            "new",
            &b,
            "--ml",
            "2",
            "--location",
            "Fridge A",
            "--label",
            "E2",
            "--json",
        ])
        .json();
    assert_eq!(v2["concentration_source"], "estimate");
    assert!(
        v2["concentration_method"]
            .as_str()
            .unwrap()
            .contains(&format!("aliquot {}", sr.aliquots[2])),
        "{v2}"
    );
    let e1 = lab.ok(&["vial", "show", "E1", "--json"]).json();
    assert_eq!(
        e1["concentration_molar"], v2["concentration_molar"],
        "E1 follows the new product"
    );
    check_ok(lab, &lab.db);
    for a in &sr.aliquots[..3] {
        lab.ok(&["aliquot", "void", &a.to_string(), "--why", "all wrong"]);
    }
    assert!(lab.ok(&["batch", "show", &b, "--json"]).json()["product"].is_null());
    let v3 = lab
        .ok(&[
            "vial",
            "new",
            &b,
            "--ml",
            "2",
            "--location",
            "Fridge A",
            "--label",
            "E3",
            "--json",
        ])
        .json();
    assert!(v3["concentration_molar"].is_null(), "{v3}");
    for l in ["E1", "E2"] {
        let v = lab.ok(&["vial", "show", l, "--json"]).json();
        assert_eq!(v["concentration_stale"], true, "{l}: {v}");
    }
    check_ok(lab, &lab.db);
    lab.ok(&["recompute", "--all"]);
    check_ok(lab, &lab.db);
    // Reinstated, the estimates come back current.
    lab.ok(&[
        "aliquot",
        "reinstate",
        &sr.aliquots[3].to_string(),
        "--why",
        "was right",
    ]);
    for l in ["E1", "E2"] {
        let v = lab.ok(&["vial", "show", l, "--json"]).json();
        assert_eq!(v["concentration_stale"], false, "{l}: {v}");
        assert!(v["concentration_molar"].as_f64().is_some());
    }
    check_ok(lab, &lab.db);
}

// ------------------------------------------------------------------ check

/// `check` passes a fresh demo lab, after a recompute, after a curve change and recompute,
/// after corrections, and on a restored lab and on the copy it kept.
#[test]
fn check_gives_no_false_alarm() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    check_ok(&lab, &lab.db);
    let plain = lab.ok(&["check", "--json"]).json();
    assert_eq!(plain["ok"], true, "{plain}");
    lab.ok(&["recompute", "--all"]);
    check_ok(&lab, &lab.db);
    let backup = lab.path("b.db");
    lab.ok(&["backup", "--out", s(&backup)]);
    check_ok(&lab, &backup);
    lab.ok(&["calib", "set-curve", "CdSe", "jasieniak2009", "--why", "adopt 2009"]);
    // Stale values are known to be stale: not a problem.
    check_ok(&lab, &lab.db);
    lab.ok(&["recompute"]);
    check_ok(&lab, &lab.db);
    lab.ok(&["aliquot", "void", "2", "--why", "wrong"]);
    lab.ok(&["aliquot", "edit", "3", "--dilution", "7", "--why", "typo"]);
    lab.ok(&["batch", "void", "2", "--why", "test"]);
    check_ok(&lab, &lab.db);
    lab.ok(&["restore", s(&backup)]);
    check_ok(&lab, &lab.db);
    let kept = files_in(lab.dir.path(), ".replaced-");
    assert_eq!(kept.len(), 1);
    check_ok(&lab, &lab.path(&kept[0]));
}

fn tampered(lab: &Lab, sql: &str, deep: bool) -> Vec<String> {
    let c = Connection::open(&lab.db).unwrap();
    c.execute_batch(sql).unwrap();
    drop(c);
    let o = lab.run(if deep {
        &["check", "--deep", "--json"][..]
    } else {
        &["check", "--json"]
    });
    no_panic(&o, "check");
    assert_eq!(o.code, 1, "check passed after: {sql}\n{}", o.stdout);
    problems(&o)
}

/// Each kind of tampering, on its own fresh copy of one lab, is found by `check`.
#[test]
fn check_notices_each_tampering() {
    let sr = series();
    let lab = &sr.lab;
    let b = sr.batch.to_string();
    lab.ok(&[
        "vial",
        "new",
        &b,
        "--ml",
        "2",
        "--location",
        "Fridge A",
        "--label",
        "EST",
    ]);
    lab.ok(&[
        "vial",
        "new",
        &b,
        "--ml",
        "2",
        "--location",
        "Fridge A",
        "--label",
        "MEAS",
    ]);
    let vf = lab.abs_file("vial.csv", 580.0);
    lab.ok(&["vial", "measure", "MEAS", "--abs", s(&vf), "--dilution", "10"]);
    check_ok(lab, &lab.db);
    settle(&lab.db);
    let pristine = lab.path("pristine.db");
    std::fs::copy(&lab.db, &pristine).unwrap();
    let a3 = sr.aliquots[3];
    let cases: Vec<(&str, String, &str)> = vec![
        (
            "spectrum data",
            "UPDATE spectrum SET data = CAST(upper(hex(data)) AS BLOB) WHERE id = (SELECT min(id) FROM spectrum)".into(),
            "spectrum_data",
        ),
        (
            "one point of a spectrum",
            // The same length, one y value changed (the blob is rewritten whole).
            "ONE POINT".into(),
            "spectrum_data",
        ),
        (
            "a derived value",
            format!(
                "UPDATE derived_value SET value = value * 1.01 WHERE aliquot_id = {a3} AND quantity = 'first_exciton_nm' AND superseded_at IS NULL"
            ),
            "derived_value",
        ),
        (
            "a derived value's inputs hash",
            format!(
                "UPDATE derived_value SET inputs_hash = 'x' WHERE aliquot_id = {a3} AND quantity = 'diameter_nm' AND superseded_at IS NULL"
            ),
            "derived_value",
        ),
        (
            "an aliquot's dilution without a recompute",
            format!("UPDATE aliquot SET dilution_factor = 99 WHERE id = {a3}"),
            "derived_value",
        ),
        (
            "an estimated vial concentration",
            "UPDATE vial_concentration SET value = value * 2 WHERE superseded_at IS NULL AND source = 'estimate'".into(),
            "derived_value",
        ),
        (
            "a measured vial concentration",
            "UPDATE vial_concentration SET value = value * 2 WHERE superseded_at IS NULL AND source = 'measured'".into(),
            "derived_value",
        ),
        (
            "a middle audit row deleted",
            "DROP TRIGGER audit_no_delete; DELETE FROM audit_log WHERE id = 3; CREATE TRIGGER audit_no_delete BEFORE DELETE ON audit_log BEGIN SELECT RAISE(ABORT, 'the audit log is append-only'); END;".into(),
            "audit_log",
        ),
        (
            "the last audit row deleted",
            "DROP TRIGGER audit_no_delete; DELETE FROM audit_log WHERE id = (SELECT max(id) FROM audit_log); CREATE TRIGGER audit_no_delete BEFORE DELETE ON audit_log BEGIN SELECT RAISE(ABORT, 'the audit log is append-only'); END;".into(),
            "audit_log",
        ),
        (
            "an audit row rewritten out of order",
            "DROP TRIGGER audit_no_update; UPDATE audit_log SET at = '2000-01-01T00:00:00Z' WHERE id = 5; CREATE TRIGGER audit_no_update BEFORE UPDATE ON audit_log BEGIN SELECT RAISE(ABORT, 'the audit log is append-only'); END;".into(),
            "audit_log",
        ),
        ("the update guard dropped", "DROP TRIGGER audit_no_update".into(), "audit_no_update"),
        ("the delete guard dropped", "DROP TRIGGER audit_no_delete".into(), "audit_no_delete"),
        (
            "sqlite_sequence raised",
            "UPDATE sqlite_sequence SET seq = seq + 5 WHERE name = 'audit_log'".into(),
            "audit_log",
        ),
        (
            "a vial's volume",
            "UPDATE vial SET volume_ml = volume_ml + 1 WHERE label = 'EST'".into(),
            "invariant",
        ),
    ];
    for (what, sql, needle) in cases {
        std::fs::copy(&pristine, &lab.db).unwrap();
        for side in ["-wal", "-shm"] {
            let _ = std::fs::remove_file(format!("{}{side}", lab.db.display()));
        }
        let sql = if sql == "ONE POINT" {
            let c = Connection::open(&lab.db).unwrap();
            let (id, mut data): (i64, Vec<u8>) = c
                .query_row(
                    "SELECT id, data FROM spectrum WHERE aliquot_id IS NOT NULL ORDER BY id DESC LIMIT 1",
                    [],
                    |r| Ok((r.get(0)?, r.get(1)?)),
                )
                .unwrap();
            let y = f64::from_le_bytes(data[24..32].try_into().unwrap()) + 0.001;
            data[24..32].copy_from_slice(&y.to_le_bytes());
            c.execute(
                "UPDATE spectrum SET data = ?1 WHERE id = ?2",
                rusqlite::params![data, id],
            )
            .unwrap();
            "SELECT 1".to_string()
        } else {
            sql
        };
        let p = tampered(lab, &sql, true);
        assert!(p.iter().any(|p| p.contains(needle)), "{what}: {p:?}");
    }
}

/// A spectrum whose stored data is no longer a blob (text written over it) is a problem for
/// `check` to report, not a reason for `check` to stop with a database error and no report.
#[test]

fn check_reports_spectrum_data_that_is_not_a_blob() {
    let sr = series();
    let lab = &sr.lab;
    let p = tampered(lab, "UPDATE spectrum SET data = 'hello' WHERE id = 1", false);
    assert!(p.iter().any(|p| p.contains("spectrum 1")), "{p:?}");
}

/// A guard trigger replaced by one of the same name that does nothing passes the check, which
/// only asks whether a trigger of that name exists.
#[test]

fn check_notices_a_defanged_audit_guard() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["person", "add", "A"]);
    let p = tampered(
        &lab,
        "DROP TRIGGER audit_no_delete; CREATE TRIGGER audit_no_delete BEFORE DELETE ON audit_log BEGIN SELECT 1; END;",
        false,
    );
    assert!(p.iter().any(|p| p.contains("audit_no_delete")), "{p:?}");
}

// ------------------------------------------------------------------ who did it

fn anon(lab: &Lab, home: &Path) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_cuvette"));
    c.env_remove("CUVETTE_USER")
        .env_remove("USER")
        .env_remove("LOGNAME")
        .env_remove("USERNAME")
        .env_remove("CUVETTE_DB")
        .env_remove("XDG_CONFIG_HOME")
        .env("HOME", home)
        .stdin(Stdio::null())
        .arg("--db")
        .arg(&lab.db);
    c
}

/// An empty `--as` and a CUVETTE_USER of spaces count as not given; with nothing else in the
/// environment the write falls through to the OS account (from the account database), never
/// to a blank or "unknown" writer.
#[test]
fn blank_names_count_as_not_given() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let home = lab.path("home");
    std::fs::create_dir(&home).unwrap();
    for (i, (flag, env)) in [(Some(""), None), (None, Some("   ")), (Some("  "), Some("\t"))]
        .iter()
        .enumerate()
    {
        let mut c = anon(&lab, &home);
        if let Some(e) = env {
            c.env("CUVETTE_USER", e);
        }
        if let Some(f) = flag {
            c.args(["--as", f]);
        }
        let o = out_of(
            c.args(["person", "add", &format!("Nobody Known {i}")])
                .output()
                .unwrap(),
        );
        no_panic(&o, "person add");
        assert_eq!(o.code, 0, "{flag:?} {env:?}: {}", o.stderr);
    }
    assert_eq!(
        scalar(
            &lab.db,
            "SELECT count(*) FROM audit_log WHERE entity = 'person' AND who NOT IN ('', 'unknown', 'Test Runner')"
        ),
        3
    );
    // `--as ""` falls through to CUVETTE_USER.
    lab.ok(&["--as", "", "person", "add", "Via Env"]);
    assert_eq!(
        scalar(
            &lab.db,
            "SELECT count(*) FROM audit_log WHERE who = 'Test Runner' AND entity = 'person'"
        ),
        1
    );
    assert_eq!(
        scalar(&lab.db, "SELECT count(*) FROM audit_log WHERE trim(who) = ''"),
        0
    );
}

/// `whoami --set` refuses a name with control characters or a newline; `--as` and
/// CUVETTE_USER must too, or the audit log records a name no one can read back or type.
#[test]
fn whoami_refuses_control_characters() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let home = lab.path("home");
    std::fs::create_dir(&home).unwrap();
    for bad in ["Eve\u{1b}]0;owned\u{7}", "Eve\nroot", "Eve\u{7f}", &"x".repeat(81)] {
        let o = out_of(anon(&lab, &home).args(["whoami", "--set", bad]).output().unwrap());
        no_panic(&o, "whoami --set");
        assert_eq!(o.code, 1, "{bad:?}: {}", o.stderr);
        assert_eq!(o.stderr.trim().lines().count(), 1, "{}", o.stderr);
    }
    assert!(!home.join(".config/cuvette/whoami").exists());
}

#[test]

fn attribution_refuses_control_characters() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let before = lab.counts();
    let bad = ["Eve\u{1b}]0;owned\u{7}", "Eve\nroot", &"y".repeat(200)];
    for name in bad {
        let o = lab.run(&["--as", name, "person", "add", "Someone New"]);
        no_panic(&o, "--as");
        assert_eq!(o.code, 1, "--as {name:?} was accepted");
        assert_eq!(lab.counts(), before);
        let o = out_of(
            bin()
                .env("CUVETTE_USER", name)
                .args(["--db", s(&lab.db), "person", "add", "Someone New"])
                .output()
                .unwrap(),
        );
        assert_eq!(o.code, 1, "CUVETTE_USER {name:?} was accepted");
        assert_eq!(lab.counts(), before);
    }
}

/// Whatever a name holds, the text log shows it on one line, with no escape sequence sent to
/// the terminal (otherwise one audit row can be made to read as two).
#[test]

fn a_hostile_name_in_the_log_is_neutralised() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let o = lab.run(&["--as", "Eve\u{1b}]0;owned\u{7}\nroot", "person", "add", "Someone"]);
    no_panic(&o, "--as");
    if o.code != 0 {
        return; // refused at the door: nothing to show
    }
    let log = lab.ok(&["log", "--limit", "1"]);
    assert!(!log.stdout.contains('\u{1b}'), "{:?}", log.stdout);
    assert!(!log.stdout.contains('\u{7}'), "{:?}", log.stdout);
    assert_eq!(log.stdout.trim().lines().count(), 1, "{:?}", log.stdout);
}

/// A restore killed at any moment leaves the lab as it was or as restored, never between:
/// `check` passes and the content is one or the other. (The kill points vary; the assertions
/// hold at every one.)
#[test]
fn a_killed_restore_leaves_one_lab_or_the_other() {
    let lab = Lab::new();
    lab.ok(&["demo", "--scale", "60"]);
    let backup = lab.path("b.db");
    lab.ok(&["backup", "--out", s(&backup)]);
    lab.ok(&["person", "add", "Only Before The Restore"]);
    settle(&lab.db);
    let pristine = lab.path("pristine.db");
    std::fs::copy(&lab.db, &pristine).unwrap();
    let q = "SELECT count(*) FROM person WHERE name = 'Only Before The Restore'";
    for step in 0..6u64 {
        std::fs::copy(&pristine, &lab.db).unwrap();
        for side in ["-wal", "-shm"] {
            let _ = std::fs::remove_file(format!("{}{side}", lab.db.display()));
        }
        let mut child = bin()
            .arg("--db")
            .arg(&lab.db)
            .arg("restore")
            .arg(&backup)
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(std::time::Duration::from_millis(step * 40));
        let _ = child.kill();
        let status = child.wait().unwrap();
        let o = lab.run(&["check", "--json"]);
        no_panic(&o, "check");
        assert_eq!(o.code, 0, "after a kill at step {step} ({status}): {:?}", problems(&o));
        let before = scalar(&lab.db, q);
        let restored = scalar(&lab.db, "SELECT count(*) FROM audit_log WHERE action = 'restore'");
        assert!(
            (before == 1 && restored == 0) || (before == 0 && restored == 1),
            "step {step}: half a restore (person {before}, restore rows {restored})"
        );
        for k in files_in(lab.dir.path(), ".replaced-")
            .into_iter()
            .filter(|k| !k.contains("partial"))
        {
            // A kept copy is a whole lab holding the content that was there before.
            assert_eq!(scalar(&lab.path(&k), q), 1, "step {step}: {k}");
            std::fs::remove_file(lab.path(&k)).unwrap();
        }
    }
    // The next backup in the folder sweeps what the killed restores left.
    lab.ok(&["backup", "--out", s(&lab.path("after.db"))]);
    let left = files_in(lab.dir.path(), "partial");
    assert!(left.is_empty(), "{left:?}");
}

/// A backup taken while another process keeps writing is a whole, checked lab.
#[test]
fn a_backup_during_writes_is_whole() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let db = lab.db.clone();
    let writer = std::thread::spawn(move || {
        for i in 0..25 {
            let o = bin()
                .arg("--db")
                .arg(&db)
                .args(["batch", "new", "--material", "CdSe", "--name", &format!("w{i}")])
                .output()
                .unwrap();
            assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        }
    });
    let mut copies = Vec::new();
    for i in 0..5 {
        let c = lab.path(&format!("during-{i}.db"));
        lab.ok(&["backup", "--out", s(&c)]);
        copies.push(c);
    }
    writer.join().unwrap();
    for c in &copies {
        let o = lab.run_on(c, &["check", "--json"]);
        assert_eq!(o.code, 0, "{}: {:?}", c.display(), problems(&o));
    }
}

/// `restore` "checks the backup first", but only with the file-level check: a backup whose
/// derived values were changed behind cuvette's back is restored, and `check` on the lab
/// fails straight after.
#[test]

fn restore_refuses_a_backup_that_fails_check() {
    let sr = series();
    let lab = &sr.lab;
    let backup = lab.path("b.db");
    lab.ok(&["backup", "--out", s(&backup)]);
    Connection::open(&backup)
        .unwrap()
        .execute(
            "UPDATE derived_value SET value = value * 1.5 WHERE quantity = 'diameter_nm' AND superseded_at IS NULL",
            [],
        )
        .unwrap();
    settle(&backup);
    let o = lab.run_on(&backup, &["check", "--json"]);
    assert_eq!(o.code, 1, "the tampered backup passes check: {}", o.stdout);
    lab.refuses(&["restore", s(&backup)], "b.db");
}

/// A restore into an existing lab is in the restored lab's audit log; one where there was no
/// lab yet must be too, or nobody can tell later who brought that content in, or from where.
#[test]

fn a_restore_where_there_was_no_lab_is_audited() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["person", "add", "Someone"]);
    let backup = lab.path("b.db");
    lab.ok(&["backup", "--out", s(&backup)]);
    let fresh = lab.path("fresh.db");
    let o = lab.run_on(&fresh, &["restore", s(&backup)]);
    assert_eq!(o.code, 0, "{}", o.stderr);
    assert_eq!(
        scalar(&fresh, "SELECT count(*) FROM audit_log WHERE action = 'restore'"),
        1,
        "the restore is not in the audit log"
    );
}
