//! The store and the scripting command line (issue 2): every entity round-trips, migrations
//! apply to empty and older files, newer and foreign files are refused untouched, every write
//! leaves an audit row, and each command refuses bad input with one line and no change.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use cuvette::store::{MIGRATIONS, SCHEMA_VERSION, model};

fn lab_with_batch() -> (Lab, i64) {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["person", "add", "Test Runner"]);
    lab.ok(&["location", "add", "Fridge A", "--kind", "fridge"]);
    let b = lab
        .ok(&["batch", "new", "--material", "CdSe", "--name", "T1", "--json"])
        .json();
    (lab, b["id"].as_i64().unwrap())
}

#[test]
fn every_entity_round_trips_through_the_store() {
    let mut st = cuvette::lab::in_memory("tester").unwrap();
    let out = st
        .write(|tx, who| {
            model::add_person(tx, who, "tester", Some("t@example.invalid"))?;
            model::add_material(tx, who, "ZnSe/ZnS", "ZnSe", Some("ZnS"))?;
            let loc = model::add_location(tx, who, "Glovebox 1", model::LocationKind::Glovebox, Some("shelf B"))?;
            model::add_reagent(tx, who, "test reagent", Some("X2"), None, &["H302".into()], false)?;
            let (_, rv) = model::save_recipe(
                tx,
                who,
                "r1",
                "CdSe",
                &[model::RecipeReagent {
                    reagent: "test reagent".into(),
                    amount: 1.5,
                    unit: "mmol".into(),
                    role: Some("precursor".into()),
                }],
                &[model::RecipeStep {
                    action: "heat".into(),
                    temperature_c: Some(250.0),
                    duration_min: Some(5.0),
                }],
                Some("note"),
            )?;
            let b = model::insert_batch(
                tx,
                who,
                &model::NewBatch {
                    name: "B".into(),
                    material: "CdSe".into(),
                    recipe: Some("r1".into()),
                    notes: Some("n".into()),
                    ..Default::default()
                },
            )?;
            let child = model::insert_batch(
                tx,
                who,
                &model::NewBatch {
                    name: "shell".into(),
                    material: "CdSe/ZnS".into(),
                    parent_batch_id: Some(b),
                    parent_relation: Some(model::BatchRelation::Shell),
                    ..Default::default()
                },
            )?;
            let a = model::insert_aliquot(
                tx,
                who,
                &model::NewAliquot {
                    batch_id: b,
                    minutes: Some(2.5),
                    stage: None,
                    dilution_factor: 20.0,
                    path_cm: 1.0,
                    solvent: "toluene".into(),
                    taken_at: None,
                },
            )?;
            let sp = model::insert_spectrum(
                tx,
                who,
                &model::NewSpectrum {
                    aliquot_id: Some(a),
                    vial_id: None,
                    kind: "abs".into(),
                    x_unit: "nm".into(),
                    y_unit: None,
                    x: vec![400.0, 401.0, 402.5],
                    y: vec![0.1, 0.2, 0.30000000000000004],
                    file_name: "f.csv".into(),
                    sha256: "ab".into(),
                    excitation_nm: None,
                    instrument: None,
                    dilution_factor: None,
                    path_cm: None,
                    label: None,
                },
            )?;
            let v = model::insert_vial(
                tx,
                who,
                &model::NewVial {
                    batch_id: b,
                    label: Some("V1".into()),
                    volume_ml: 2.0,
                    solvent: "hexane".into(),
                    location: "Glovebox 1".into(),
                    position: None,
                    owner: None,
                    concentration_molar: Some(1e-6),
                    created_at: None,
                },
            )?;
            Ok((rv, b, child, a, sp, v, loc))
        })
        .unwrap();
    let (rv, b, child, a, sp, v, _loc) = out;
    let c = &st.conn;
    let m = model::material_by_name(c, "znse/zns").unwrap();
    assert_eq!((m.core.as_str(), m.shell.as_deref()), ("ZnSe", Some("ZnS")));
    assert_eq!(
        model::list_people(c).unwrap()[0].email.as_deref(),
        Some("t@example.invalid")
    );
    let r = model::recipe_view(c, rv).unwrap();
    assert_eq!(
        (
            r.reagents[0].amount,
            r.reagents[0].unit.as_str(),
            r.reagents[0].ghs_hazards.clone()
        ),
        (1.5, "mmol", vec!["H302".to_string()])
    );
    assert_eq!(r.steps[0].temperature_c, Some(250.0));
    let batch = model::get_batch(c, b).unwrap();
    assert_eq!(
        (
            batch.recipe.as_deref(),
            batch.recipe_version,
            batch.status.as_str(),
            batch.notes.as_str()
        ),
        (Some("r1"), Some(1), "planned", "n")
    );
    assert_eq!(model::get_batch(c, child).unwrap().parent_batch_id, Some(b));
    let al = model::get_aliquot(c, a).unwrap();
    assert_eq!(
        (al.minutes, al.dilution_factor, al.solvent.as_str()),
        (Some(2.5), 20.0, "toluene")
    );
    let spec = model::get_spectrum(c, sp).unwrap();
    assert_eq!(
        spec.y,
        vec![0.1, 0.2, 0.30000000000000004],
        "the BLOB keeps values bit for bit"
    );
    assert_eq!(spec.x, vec![400.0, 401.0, 402.5]);
    let vial = model::get_vial(c, v).unwrap();
    assert_eq!(
        (vial.label.as_str(), vial.volume_ml, vial.location.as_str()),
        ("V1", 2.0, "Glovebox 1")
    );
    // A second recipe save is a new version; the first stays as it was.
    st.write(|tx, who| model::save_recipe(tx, who, "r1", "CdSe", &[], &[], None))
        .unwrap();
    assert_eq!(model::recipe_view(&st.conn, rv).unwrap().reagents.len(), 1);
    assert_ne!(model::recipe_version_id(&st.conn, "r1", None).unwrap(), rv);
}

#[test]
fn every_write_leaves_an_audit_row() {
    let (lab, b) = lab_with_batch();
    let audit = || lab.counts().into_iter().find(|(t, _)| t == "audit_log").unwrap().1;
    let f = lab.abs_file("a.csv", 540.0);
    for args in [
        vec!["batch", "edit", &b.to_string(), "--notes", "changed"],
        vec!["batch", "set-status", &b.to_string(), "growing"],
        vec!["aliquot", "add", &b.to_string(), "--abs", s(&f), "--minutes", "3"],
        vec![
            "vial",
            "new",
            &b.to_string(),
            "--ml",
            "2",
            "--location",
            "Fridge A",
            "--label",
            "V-1",
        ],
        vec!["vial", "draw", "V-1", "--ml", "0.5", "--why", "test"],
        vec!["person", "add", "Someone Else"],
        vec!["calib", "set-curve", "CdSe", "jasieniak2009", "--why", "test"],
    ] {
        let before = audit();
        lab.ok(&args);
        assert!(audit() > before, "{args:?} wrote no audit row");
    }
    // The audit log refuses edits at the SQL level.
    let c = rusqlite::Connection::open(&lab.db).unwrap();
    assert!(c.execute("UPDATE audit_log SET who = 'x'", []).is_err());
    assert!(c.execute("DELETE FROM audit_log", []).is_err());
}

#[test]
fn migrates_an_empty_and_an_older_database_and_refuses_a_newer_one() {
    let lab = Lab::new();
    lab.ok(&["init"]);
    let c = rusqlite::Connection::open(&lab.db).unwrap();
    let v: i64 = c.query_row("PRAGMA user_version", [], |r| r.get(0)).unwrap();
    assert_eq!(v, SCHEMA_VERSION);
    let mode: String = c.query_row("PRAGMA journal_mode", [], |r| r.get(0)).unwrap();
    assert_eq!(mode, "wal");
    drop(c);

    // An older file: only the first migration applied, with a batch in it.
    let old = lab.path("old.db");
    {
        let c = rusqlite::Connection::open(&old).unwrap();
        c.execute_batch(MIGRATIONS[0].1).unwrap();
        c.execute_batch("PRAGMA user_version = 1; INSERT INTO material (name, core) VALUES ('CdSe','CdSe');
            INSERT INTO batch (name, material_id, started_at, status) VALUES ('kept', 1, '2026-01-01T00:00:00Z', 'done');").unwrap();
    }
    // A read migrates in memory only: the file stays at version 1, byte for byte.
    let before = std::fs::read(&old).unwrap();
    let o = lab.run_on(&old, &["batch", "list", "--json"]);
    assert_eq!(o.code, 0, "{}", o.stderr);
    assert_eq!(o.json()[0]["name"], "kept");
    assert_eq!(std::fs::read(&old).unwrap(), before, "a read changed an older lab");
    // The first write migrates, keeping a copy of the old file.
    let o = lab.run_on(&old, &["person", "add", "Wren Halloway"]);
    assert_eq!(o.code, 0, "{}", o.stderr);
    assert!(o.stderr.contains("previous file is kept"), "{}", o.stderr);
    let backups: Vec<_> = std::fs::read_dir(lab.dir.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().contains(".v1-"))
        .collect();
    assert_eq!(backups.len(), 1, "a backup copy is taken before migrating");

    // A newer file is refused and left byte for byte as it was.
    let newer = lab.path("newer.db");
    {
        let c = rusqlite::Connection::open(&newer).unwrap();
        c.execute_batch("CREATE TABLE x (a); PRAGMA user_version = 99; PRAGMA application_id = 1129666132;")
            .unwrap();
    }
    let bytes = std::fs::read(&newer).unwrap();
    let o = lab.run_on(&newer, &["batch", "list"]);
    assert_eq!(o.code, 1);
    assert!(o.stderr.contains("newer than this cuvette understands"), "{}", o.stderr);
    assert_eq!(std::fs::read(&newer).unwrap(), bytes);
    // Another application's SQLite file, whatever its user_version, is refused untouched.
    for (i, pragma) in [
        "PRAGMA user_version = 3;",
        "PRAGMA user_version = 99;",
        "PRAGMA application_id = 7; PRAGMA user_version = 2;",
    ]
    .iter()
    .enumerate()
    {
        let other = lab.path(&format!("other{i}.db"));
        {
            let c = rusqlite::Connection::open(&other).unwrap();
            c.execute_batch(&format!("CREATE TABLE notes (t TEXT); {pragma}"))
                .unwrap();
        }
        let bytes = std::fs::read(&other).unwrap();
        for args in [&["batch", "list"][..], &["person", "add", "X"][..]] {
            let o = lab.run_on(&other, args);
            assert_eq!(o.code, 1, "{pragma} {args:?}: {}", o.stderr);
            assert!(o.stderr.contains("not a cuvette database"), "{}", o.stderr);
        }
        assert_eq!(std::fs::read(&other).unwrap(), bytes, "{pragma}: the file was changed");
    }

    // A file that is not SQLite.
    let text = lab.write("notes.db", "this is a lab notebook, not a database\n");
    let o = lab.run_on(&text, &["batch", "list"]);
    assert_eq!(o.code, 1);
    assert!(o.stderr.contains("not a cuvette database"), "{}", o.stderr);
    assert_eq!(
        std::fs::read_to_string(&text).unwrap(),
        "this is a lab notebook, not a database\n"
    );
}

#[test]
fn the_contract_commands_print_their_keys() {
    let (lab, b) = lab_with_batch();
    let list = lab.ok(&["batch", "list", "--json"]).json();
    let first = &list[0];
    assert!(
        first["id"].is_i64() && first["name"] == "T1" && first["material"] == "CdSe" && first["status"] == "planned"
    );
    let abs = lab.abs_file("a5.csv", 545.0);
    let pl = lab.pl_file("p5.csv", 552.0, 10000.0);
    let a = lab
        .ok(&[
            "aliquot",
            "add",
            &b.to_string(),
            "--abs",
            s(&abs),
            "--pl",
            s(&pl),
            "--excitation-nm",
            "480",
            "--minutes",
            "5",
            "--dilution",
            "20",
            "--path-cm",
            "1",
            "--json",
        ])
        .json();
    assert!(a["id"].is_i64());
    let show = lab.ok(&["batch", "show", &b.to_string(), "--json"]).json();
    let al = &show["aliquots"][0];
    assert_eq!(al["minutes"], 5.0);
    for k in ["first_exciton_nm", "diameter_nm", "concentration_molar"] {
        assert!(al[k].is_f64(), "{k} missing: {al}");
    }
    assert!(al.get("qy").is_some());
    assert_eq!(al["curve"], "yu2003");
    assert!(al["calibration_version"].is_i64());
    assert!((al["first_exciton_nm"].as_f64().unwrap() - 545.0).abs() < 1.5, "{al}");
    lab.ok(&["vial", "new", &b.to_string(), "--ml", "3", "--location", "Fridge A"]);
    let shelf = lab.ok(&["shelf", "--json"]).json();
    let v = &shelf[0];
    for k in ["id", "label", "batch_id", "location", "volume_ml", "owner", "status"] {
        assert!(v.get(k).is_some(), "shelf entry lacks {k}");
    }
    lab.ok(&["vial", "draw", &v["id"].to_string(), "--ml", "1.25", "--why", "TEM"]);
    let shelf = lab.ok(&["shelf", "--json"]).json();
    assert_eq!(shelf[0]["volume_ml"], 1.75);
    let log = lab.ok(&["log", "--json", "--limit", "3"]).json();
    assert_eq!(log[0]["action"], "draw");
}

#[test]
fn bad_input_is_refused_with_one_line_and_no_change() {
    let (lab, b) = lab_with_batch();
    let bs = b.to_string();
    let good = lab.abs_file("good.csv", 540.0);
    lab.ok(&[
        "vial",
        "new",
        &bs,
        "--ml",
        "1",
        "--location",
        "Fridge A",
        "--label",
        "V9",
    ]);
    let garbage = lab.write("garbage.csv", "nm,A\n400,0.1\n401,zz\n");
    lab.refuses(
        &["batch", "new", "--material", "Unobtainium", "--name", "x"],
        "unknown material 'Unobtainium'",
    );
    lab.refuses(&["batch", "new", "--material", "CdSe", "--name", " "], "needs a name");
    lab.refuses(&["batch", "show", "999"], "batch 999 not found");
    lab.refuses(&["batch", "edit", "999", "--notes", "x"], "batch 999 not found");
    lab.refuses(&["aliquot", "add", "999", "--abs", s(&good)], "batch 999 not found");
    lab.refuses(
        &["aliquot", "add", &bs, "--abs", s(&garbage)],
        "line 3: non-numeric cell 'zz'",
    );
    lab.refuses(
        &["aliquot", "add", &bs, "--abs", "/nonexistent/file.csv"],
        "cannot read",
    );
    lab.refuses(
        &["aliquot", "add", &bs, "--abs", s(&good), "--dilution", "-2"],
        "dilution factor must be above zero",
    );
    lab.refuses(
        &["aliquot", "add", &bs, "--abs", s(&good), "--path-cm", "0"],
        "path length (cm) must be above zero",
    );
    lab.refuses(
        &["aliquot", "add", &bs, "--abs", s(&good), "--solvent", "lava"],
        "unknown solvent 'lava'",
    );
    lab.refuses(
        &["vial", "new", &bs, "--ml", "-1", "--location", "Fridge A"],
        "volume must be above zero",
    );
    lab.refuses(
        &["vial", "new", &bs, "--ml", "1", "--location", "Attic"],
        "unknown location 'Attic'",
    );
    lab.refuses(&["vial", "draw", "V9", "--ml", "5"], "only 1 mL left");
    lab.refuses(&["vial", "draw", "V9", "--ml", "-0.1"], "must be above zero");
    lab.refuses(&["vial", "move", "V9", "--to", "Attic"], "unknown location 'Attic'");
    lab.refuses(&["vial", "dispose", "V9", "--why", " "], "needs a reason");
    lab.refuses(
        &[
            "recipe",
            "new",
            "r",
            "--material",
            "CdSe",
            "--reagent",
            "selenium=1 bucket",
        ],
        "bad unit 'bucket'",
    );
    lab.refuses(&["person", "add", "Test Runner"], "already exists");
    lab.ok(&["vial", "dispose", "V9", "--why", "aggregated"]);
    lab.refuses(&["vial", "draw", "V9", "--ml", "0.1"], "has been disposed of");
    // An unknown status or location kind is a usage error now (exit 2): tests/vocabulary.rs.
    lab.refuses(&["batch", "list", "--material", "Unobtainium"], "unknown material");
    lab.refuses(&["shelf", "--low", "-1"], "--low must be a volume of zero or more");
    lab.refuses(&["log", "--limit", "0"], "--limit must be 1 or more");
    lab.refuses(&["vial", "show", "NOPE"], "vial NOPE not found");
    lab.refuses(
        &["recipe", "show", "no such recipe"],
        "recipe 'no such recipe' not found",
    );
    lab.refuses(
        &["batch", "edit", &bs, "--product-aliquot", "999"],
        "is not an aliquot of batch",
    );
    lab.refuses(
        &["batch", "edit", &bs, "--pin-calibration", "99"],
        "calibration version 99 not found",
    );
    let dir = lab.path("a-folder");
    std::fs::create_dir(&dir).unwrap();
    let o = lab.run_on(&dir, &["init"]);
    assert_eq!(o.code, 1);
    assert!(o.stderr.contains("is a folder"), "{}", o.stderr);
    // Usage errors exit 2.
    let o = lab.run(&["batch", "new", "--name", "x"]);
    assert_eq!(o.code, 2, "{}", o.stderr);
}

#[test]
fn demo_builds_the_invented_lab_and_refuses_other_files() {
    let lab = Lab::new();
    let o = lab.ok(&["demo"]);
    assert!(o.stdout.contains("built the demo lab"), "{}", o.stdout);
    let list = lab.ok(&["batch", "list", "--json"]).json();
    let batches = list.as_array().unwrap();
    assert!(batches.len() >= 25);
    let mats: std::collections::BTreeSet<&str> = batches.iter().map(|b| b["material"].as_str().unwrap()).collect();
    assert!(mats.len() >= 4, "{mats:?}");
    assert!(batches.iter().any(|b| b["status"] == "failed"));
    assert!(batches.iter().any(|b| b["parent_relation"] == "shell"));
    let shelf = lab.ok(&["shelf", "--json", "--all"]).json();
    assert!(shelf.as_array().unwrap().len() >= 40);
    let people = lab.ok(&["person", "list", "--json"]).json();
    assert!(people.as_array().unwrap().len() >= 3);
    // Building again over a demo lab is fine; over anything else it is refused.
    lab.ok(&["demo"]);
    let other = Lab::new();
    other.ok(&["init"]);
    let before = std::fs::read(&other.db).unwrap();
    let o = other.run(&["demo"]);
    assert_eq!(o.code, 1);
    assert!(o.stderr.contains("not a demo lab"), "{}", o.stderr);
    assert_eq!(std::fs::read(&other.db).unwrap(), before);
}

#[test]
fn measuring_a_vial_sets_its_concentration_by_beer_lambert() {
    let (lab, b) = lab_with_batch();
    lab.ok(&[
        "vial",
        "new",
        &b.to_string(),
        "--ml",
        "2",
        "--location",
        "Fridge A",
        "--label",
        "M1",
    ]);
    let f = lab.abs_file("vial.csv", 550.0);
    let m = lab
        .ok(&["vial", "measure", "M1", "--abs", s(&f), "--dilution", "5", "--json"])
        .json();
    let a = lab.ok(&["analyze", s(&f), "--kind", "abs", "--json"]).json();
    let (peak, abs) = (
        a["first_exciton_nm"].as_f64().unwrap(),
        a["first_exciton_abs"].as_f64().unwrap(),
    );
    // Yu et al. 2003 (from memory): D from the CdSe polynomial, ε = 5857 D^2.65; c = A/(ε l) x 5.
    let d = 1.6122e-9 * peak.powi(4) - 2.6575e-6 * peak.powi(3) + 1.6242e-3 * peak * peak - 0.4277 * peak + 41.57;
    let c = abs / (5857.0 * d.powf(2.65)) * 5.0;
    assert!(
        (m["concentration_molar"].as_f64().unwrap() - c).abs() < 1e-9 * c.max(1e-12),
        "{m}"
    );
    let shelf = lab.ok(&["shelf", "--json"]).json();
    assert_eq!(shelf[0]["concentration_molar"], m["concentration_molar"]);
    assert!((shelf[0]["nanomoles_left"].as_f64().unwrap() - c * 2.0 * 1e6).abs() < 1e-6);
    lab.ok(&["vial", "dispose", "M1", "--why", "used up"]);
    lab.refuses(&["vial", "measure", "M1", "--abs", s(&f)], "has been disposed of");
}

/// Volumes are decimal to the chemist: 2 mL less 0.45 mL leaves 1.55 mL, stored and shown as
/// 1.55 (not 1.5500000000000003, the binary floating-point difference), and a batch without vials
/// holds 0 mL of stock, not -0 (the empty sum of floating-point numbers).
#[test]
fn volumes_left_are_the_decimal_differences_and_no_stock_is_zero() {
    let (lab, b) = lab_with_batch();
    let bs = b.to_string();
    let show = lab.ok(&["batch", "show", &bs, "--json"]).json();
    let stock = show["stock_ml"].as_f64().unwrap();
    assert!(stock == 0.0 && stock.is_sign_positive(), "stock_ml {stock:?}: {show}");
    assert!(!lab.ok(&["batch", "show", &bs, "--json"]).stdout.contains("-0.0"));
    let v = lab
        .ok(&["vial", "new", &bs, "--ml", "2", "--location", "Fridge A", "--json"])
        .json();
    let id = v["id"].to_string();
    lab.ok(&["vial", "draw", &id, "--ml", "0.45", "--why", "TEM"]);
    let shelf = lab.ok(&["shelf", "--json"]).json();
    assert_eq!(shelf[0]["volume_ml"], 1.55, "{shelf}");
    let o = lab.run(&["vial", "draw", &id, "--ml", "5", "--why", "too much"]);
    assert_eq!(o.code, 1, "{}", o.stderr);
    assert!(o.stderr.contains("only 1.55 mL left"), "{}", o.stderr);
}
