//! Reliability (issue 7): faults, concurrent use and bad files. Each batch import and each
//! recompute is one transaction, so a process killed in the middle leaves all or nothing.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use std::process::{Command, Stdio};
use std::time::Duration;

fn bin() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_cuvette"));
    c.env("CUVETTE_USER", "Test Runner").env_remove("CUVETTE_DB");
    c
}

fn scalar(lab: &Lab, sql: &str) -> i64 {
    let c = rusqlite::Connection::open(&lab.db).unwrap();
    c.query_row(sql, [], |r| r.get(0)).unwrap()
}

#[test]
fn check_passes_on_a_sound_lab_and_names_what_is_wrong() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    let v = lab.ok(&["check", "--json"]).json();
    assert_eq!(v["ok"], true, "{v}");
    {
        let c = rusqlite::Connection::open(&lab.db).unwrap();
        c.execute_batch("PRAGMA ignore_check_constraints = ON; UPDATE vial SET volume_ml = -0.5 WHERE id = 1;")
            .unwrap();
    }
    let o = lab.run(&["check", "--json"]);
    assert_eq!(o.code, 1);
    let v = o.json();
    assert!(
        v["problems"]
            .as_array()
            .unwrap()
            .iter()
            .any(|p| p["kind"] == "invariant" && p["detail"].as_str().unwrap().contains("below zero")),
        "{v}"
    );
}

#[test]
fn backup_while_writing_and_restore_keeps_the_replaced_file() {
    let lab = Lab::new();
    lab.ok(&["demo"]);
    // A writer in another process while the backup runs.
    let mut writer = bin()
        .arg("--db")
        .arg(&lab.db)
        .args(["recompute", "--all"])
        .stdout(Stdio::null())
        .spawn()
        .unwrap();
    let copy = lab.path("copy.db");
    lab.ok(&["backup", "--out", s(&copy)]);
    writer.wait().unwrap();
    let o = lab.run_on(&copy, &["check", "--json"]);
    assert_eq!(o.json()["ok"], true);
    lab.refuses(&["backup", "--out", s(&copy)], "already exists");
    // Restore: the current file is kept aside; a bad backup is refused before anything moves.
    lab.ok(&["batch", "new", "--material", "CdSe", "--name", "after the backup"]);
    let junk = lab.write("junk.db", "not a database");
    lab.refuses(&["restore", s(&junk)], "not a cuvette database");
    let o = lab.ok(&["restore", s(&copy)]);
    assert!(o.stdout.contains("the content it replaced is kept"), "{}", o.stdout);
    let names = lab.ok(&["batch", "list", "--json"]).json();
    assert!(
        !names
            .as_array()
            .unwrap()
            .iter()
            .any(|b| b["name"] == "after the backup")
    );
    let kept: Vec<_> = std::fs::read_dir(lab.dir.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().contains(".replaced-"))
        .collect();
    assert!(!kept.is_empty());
}

#[test]
fn a_killed_import_leaves_the_batch_whole_or_empty() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let b = lab
        .ok(&["batch", "new", "--material", "CdSe", "--name", "K", "--json"])
        .json()["id"]
        .as_i64()
        .unwrap();
    let dir = lab.path("exports");
    std::fs::create_dir(&dir).unwrap();
    for i in 0..120 {
        let (x, y) = cuvette::lab::demo::absorbance(
            "CdSe",
            520.0 + 0.3 * i as f64,
            0.04,
            0.1,
            0.0005,
            &mut cuvette::lab::demo::Rng::new(i),
        );
        std::fs::write(dir.join(format!("abs_{i:03}min.csv")), csv(&x, &y)).unwrap();
    }
    for delay_ms in [30u64, 120, 250, 400] {
        let mut child = bin()
            .arg("--db")
            .arg(&lab.db)
            .args(["import", &b.to_string(), s(&dir)])
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(Duration::from_millis(delay_ms));
        let _ = child.kill(); // SIGKILL on Unix
        let _ = child.wait();
        assert_eq!(
            lab.run(&["check", "--json"]).json()["ok"],
            true,
            "after a kill at {delay_ms} ms"
        );
        let n = scalar(&lab, &format!("SELECT count(*) FROM aliquot WHERE batch_id = {b}"));
        assert_eq!(n % 120, 0, "a killed import left {n} aliquots: not whole");
    }
}

#[test]
fn a_killed_recompute_applies_all_or_nothing() {
    let lab = Lab::new();
    lab.ok(&["demo", "--scale", "150"]);
    lab.ok(&["calib", "set-curve", "CdSe", "jasieniak2009", "--why", "test"]);
    for delay_ms in [20u64, 80, 200] {
        let mut child = bin()
            .arg("--db")
            .arg(&lab.db)
            .args(["recompute"])
            .stdout(Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(Duration::from_millis(delay_ms));
        let _ = child.kill();
        let _ = child.wait();
        assert_eq!(lab.run(&["check", "--json"]).json()["ok"], true);
        let yu = scalar(
            &lab,
            "SELECT count(*) FROM derived_value d JOIN aliquot a ON a.id = d.aliquot_id JOIN batch b ON b.id = a.batch_id JOIN material m ON m.id = b.material_id WHERE m.core = 'CdSe' AND d.quantity = 'diameter_nm' AND d.superseded_at IS NULL AND d.method = 'yu2003'",
        );
        let jas = scalar(
            &lab,
            "SELECT count(*) FROM derived_value d WHERE d.quantity = 'diameter_nm' AND d.superseded_at IS NULL AND d.method = 'jasieniak2009'",
        );
        assert!(
            yu == 0 || jas == 0,
            "a partial recompute: {yu} old and {jas} new values"
        );
    }
}

#[test]
fn two_processes_writing_at_once_lose_nothing() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["location", "add", "Fridge A", "--kind", "fridge"]);
    let b = lab
        .ok(&["batch", "new", "--material", "CdSe", "--name", "C", "--json"])
        .json()["id"]
        .as_i64()
        .unwrap();
    lab.ok(&[
        "vial",
        "new",
        &b.to_string(),
        "--ml",
        "10",
        "--location",
        "Fridge A",
        "--label",
        "V",
    ]);
    let f = lab.abs_file("a.csv", 550.0);
    let db = lab.db.clone();
    let runs = 12;
    let aliquots = {
        let (db, f) = (db.clone(), f.clone());
        std::thread::spawn(move || {
            (0..runs)
                .map(|i| {
                    bin()
                        .arg("--db")
                        .arg(&db)
                        .args([
                            "aliquot",
                            "add",
                            &b.to_string(),
                            "--abs",
                            s(&f),
                            "--minutes",
                            &i.to_string(),
                            // The same export each time: logged on purpose.
                            "--again",
                        ])
                        .output()
                        .unwrap()
                })
                .collect::<Vec<_>>()
        })
    };
    let draws = std::thread::spawn(move || {
        (0..runs)
            .map(|_| {
                bin()
                    .arg("--db")
                    .arg(&db)
                    .args(["vial", "draw", "V", "--ml", "0.25"])
                    .output()
                    .unwrap()
            })
            .collect::<Vec<_>>()
    });
    for o in aliquots.join().unwrap().into_iter().chain(draws.join().unwrap()) {
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(o.status.success(), "{err}");
        assert!(!err.contains("locked") && !err.contains("busy"), "{err}");
    }
    assert_eq!(
        scalar(&lab, &format!("SELECT count(*) FROM aliquot WHERE batch_id = {b}")),
        runs as i64
    );
    assert_eq!(
        scalar(&lab, "SELECT count(*) FROM vial_event WHERE kind = 'draw'"),
        runs as i64
    );
    let left: f64 = rusqlite::Connection::open(&lab.db)
        .unwrap()
        .query_row("SELECT volume_ml FROM vial", [], |r| r.get(0))
        .unwrap();
    assert!((left - (10.0 - 0.25 * runs as f64)).abs() < 1e-9);
    assert_eq!(lab.ok(&["check", "--json"]).json()["ok"], true);
}

#[test]
fn a_read_only_file_gets_a_clear_message_and_stays_untouched() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    // Root ignores permission bits, so make the file immutable instead, where the file system
    // allows it.
    if !Command::new("chattr")
        .arg("+i")
        .arg(&lab.db)
        .status()
        .is_ok_and(|s| s.success())
    {
        eprintln!("skipped: chattr +i is not available here");
        return;
    }
    let before = std::fs::read(&lab.db).unwrap();
    let o = lab.run(&["batch", "new", "--material", "CdSe", "--name", "x"]);
    let _ = Command::new("chattr").arg("-i").arg(&lab.db).status();
    assert_eq!(o.code, 1);
    assert!(o.stderr.contains("read-only"), "{}", o.stderr);
    assert_eq!(o.stderr.trim().lines().count(), 1);
    assert_eq!(std::fs::read(&lab.db).unwrap(), before);
}

#[test]
fn a_full_disk_gets_a_clear_message_and_loses_nothing() {
    let lab = Lab::new();
    let mnt = lab.path("small");
    std::fs::create_dir(&mnt).unwrap();
    if !Command::new("mount")
        .args(["-t", "tmpfs", "-o", "size=1m", "tmpfs"])
        .arg(&mnt)
        .status()
        .is_ok_and(|s| s.success())
    {
        eprintln!("skipped: cannot mount a small tmpfs here");
        return;
    }
    struct Unmount(std::path::PathBuf);
    impl Drop for Unmount {
        fn drop(&mut self) {
            let _ = Command::new("umount").arg(&self.0).status();
        }
    }
    let _guard = Unmount(mnt.clone());
    let db = mnt.join("lab.db");
    assert!(lab.run_on(&db, &["init"]).code == 0);
    let b = lab
        .run_on(&db, &["batch", "new", "--material", "CdSe", "--name", "F", "--json"])
        .json()["id"]
        .as_i64()
        .unwrap();
    let counts = |p: &std::path::Path| cuvette::store::row_counts(&rusqlite::Connection::open(p).unwrap()).unwrap();
    let before = counts(&db);
    // Fill the rest of the disk.
    let filler = mnt.join("filler");
    let mut f = std::fs::File::create(&filler).unwrap();
    let chunk = vec![0u8; 4096];
    while std::io::Write::write_all(&mut f, &chunk).is_ok() {}
    drop(f);
    let big = lab.abs_file("a.csv", 550.0);
    let mut failed = false;
    for i in 0..20 {
        let o = lab.run_on(
            &db,
            &[
                "aliquot",
                "add",
                &b.to_string(),
                "--abs",
                s(&big),
                "--minutes",
                &i.to_string(),
            ],
        );
        if o.code != 0 {
            assert_eq!(o.code, 1);
            assert!(o.stderr.contains("full"), "{}", o.stderr);
            assert_eq!(o.stderr.trim().lines().count(), 1, "{}", o.stderr);
            failed = true;
            break;
        }
    }
    assert!(failed, "the disk never filled");
    std::fs::remove_file(&filler).unwrap();
    let after = counts(&db);
    // Whatever landed before the disk filled is whole; the failed write left no trace.
    let aliquots = |c: &[(String, i64)]| c.iter().find(|(t, _)| t == "aliquot").unwrap().1;
    let spectra = |c: &[(String, i64)]| c.iter().find(|(t, _)| t == "spectrum").unwrap().1;
    assert_eq!(aliquots(&after) - aliquots(&before), spectra(&after) - spectra(&before));
    assert_eq!(lab.run_on(&db, &["check", "--json"]).json()["ok"], true);
}

#[test]
fn a_manifest_imports_each_batch_whole_or_not_at_all() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    for n in ["A", "B"] {
        lab.ok(&["batch", "new", "--material", "CdSe", "--name", n]);
    }
    for (dir, good) in [("a", true), ("b", false)] {
        let d = lab.path(dir);
        std::fs::create_dir(&d).unwrap();
        for i in 0..3 {
            let (x, y) = cuvette::lab::demo::absorbance(
                "CdSe",
                530.0 + 5.0 * i as f64,
                0.04,
                0.1,
                0.0005,
                &mut cuvette::lab::demo::Rng::new(i),
            );
            std::fs::write(d.join(format!("abs_{i:02}min.csv")), csv(&x, &y)).unwrap();
        }
        if !good {
            std::fs::write(d.join("abs_09min.csv"), "nm,A\n400,0.1\n401,broken\n").unwrap();
        }
    }
    let m = lab.write("manifest.csv", "batch_id,folder,dilution\n1,a,20\n2,b,20\n");
    let o = lab.run(&["import-manifest", s(&m), "--json"]);
    assert_eq!(o.code, 1, "{}", o.stderr);
    assert!(
        o.stderr.contains("batch 2") && o.stderr.contains("non-numeric cell 'broken'"),
        "{}",
        o.stderr
    );
    assert_eq!(scalar(&lab, "SELECT count(*) FROM aliquot WHERE batch_id = 1"), 3);
    assert_eq!(scalar(&lab, "SELECT count(*) FROM aliquot WHERE batch_id = 2"), 0);
    assert_eq!(
        scalar(&lab, "SELECT CAST(min(dilution_factor) AS INTEGER) FROM aliquot"),
        20
    );
}
