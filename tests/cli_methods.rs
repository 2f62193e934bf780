//! Methods the library had that the command line now reaches, run through the real binary on
//! a temporary lab: the PL measurement's own cuvette (`--pl-path-cm`, `--pl-dilution`), the
//! gradient quantum yield (`qy gradient`), the homogeneous linewidth setting
//! (`calib set-homogeneous-hwhm`) and a shelled batch's core following a changed parent
//! (`batch edit --parent`). Values are checked against the published formulas they come from.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use serde_json::Value;

fn close(got: f64, want: f64, rel: f64) {
    assert!(
        (got - want).abs() <= rel * want.abs().max(1e-300),
        "got {got}, want {want} (relative tolerance {rel})"
    );
}

fn new_lab() -> Lab {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab
}

fn batch(lab: &Lab, material: &str, name: &str, extra: &[&str]) -> i64 {
    let mut args = vec!["batch", "new", "--material", material, "--name", name, "--json"];
    args.extend_from_slice(extra);
    lab.ok(&args).json()["id"].as_i64().unwrap()
}

/// One value of an aliquot's derivation chain, as `explain --json` gives it.
fn chain_value(lab: &Lab, aliquot: i64, quantity: &str) -> Option<Value> {
    let e = lab.ok(&["explain", &aliquot.to_string(), "--json"]).json();
    e["chain"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["quantity"] == quantity)
        .cloned()
}

fn chain_number(lab: &Lab, aliquot: i64, quantity: &str) -> f64 {
    chain_value(lab, aliquot, quantity)
        .and_then(|v| v["value"].as_f64())
        .unwrap_or_else(|| panic!("aliquot {aliquot} has no {quantity}"))
}

/// Yu, Qu, Guo & Peng, Chem. Mater. 15, 2854 (2003), CdSe (coefficients from memory, as in
/// the project's domain notes): D = 1.6122e-9 λ⁴ - 2.6575e-6 λ³ + 1.6242e-3 λ² - 0.4277 λ + 41.57.
fn yu2003_cdse_nm(l: f64) -> f64 {
    1.6122e-9 * l.powi(4) - 2.6575e-6 * l.powi(3) + 1.6242e-3 * l * l - 0.4277 * l + 41.57
}

fn core_aliquot(lab: &Lab, batch_id: i64, peak_nm: f64) -> i64 {
    let f = lab.abs_file(&format!("core_{batch_id}.csv"), peak_nm);
    lab.ok(&[
        "aliquot",
        "add",
        &batch_id.to_string(),
        "--abs",
        s(&f),
        "--stage",
        "washed",
        "--json",
    ])
    .json()["id"]
        .as_i64()
        .unwrap()
}

// ---------------------------------------------------------------- batch edit --parent

#[test]
fn a_shelled_batchs_core_follows_a_parent_set_or_changed_by_batch_edit() {
    let lab = new_lab();
    let p1 = batch(&lab, "CdSe", "core one", &[]);
    let p2 = batch(&lab, "CdSe", "core two", &[]);
    let a1 = core_aliquot(&lab, p1, 540.0);
    let a2 = core_aliquot(&lab, p2, 590.0);
    let d1 = chain_number(&lab, a1, "diameter_nm");
    let d2 = chain_number(&lab, a2, "diameter_nm");
    // The parents' sizes are Yu 2003's at their measured first excitons.
    close(d1, yu2003_cdse_nm(chain_number(&lab, a1, "first_exciton_nm")), 1e-9);
    close(d2, yu2003_cdse_nm(chain_number(&lab, a2, "first_exciton_nm")), 1e-9);
    assert!((d2 - d1).abs() > 0.3, "the two cores should differ: {d1} and {d2}");

    // Made with its parent: its aliquot takes that core.
    let shell = batch(
        &lab,
        "CdSe/ZnS",
        "shelled",
        &["--parent", &p1.to_string(), "--relation", "shell"],
    );
    let f = lab.abs_file("shell.csv", 600.0);
    let sa = lab
        .ok(&[
            "aliquot",
            "add",
            &shell.to_string(),
            "--abs",
            s(&f),
            "--stage",
            "crude",
            "--json",
        ])
        .json()["id"]
        .as_i64()
        .unwrap();
    close(chain_number(&lab, sa, "core_diameter_nm"), d1, 1e-12);

    // The parent changed: the core follows in the same command, nothing left stale.
    lab.ok(&["batch", "edit", &shell.to_string(), "--parent", &p2.to_string()]);
    let core = chain_value(&lab, sa, "core_diameter_nm").unwrap();
    close(core["value"].as_f64().unwrap(), d2, 1e-12);
    assert_eq!(core["stale"], false, "{core}");
    assert!(
        core["method"].as_str().unwrap().contains(&format!("parent batch {p2}")),
        "{core}"
    );
    let d = lab.ok(&["recompute", "--dry-run", "--json"]).json();
    assert_eq!(d["changed"], 0, "recompute would still move values: {d}");

    // A batch made without a parent and given one afterwards.
    let late = batch(&lab, "CdSe/ZnS", "parent later", &[]);
    let f = lab.abs_file("late.csv", 605.0);
    let la = lab
        .ok(&[
            "aliquot",
            "add",
            &late.to_string(),
            "--abs",
            s(&f),
            "--stage",
            "crude",
            "--json",
        ])
        .json()["id"]
        .as_i64()
        .unwrap();
    assert_eq!(chain_value(&lab, la, "core_diameter_nm").unwrap()["value"], Value::Null);
    let said = lab
        .ok(&["batch", "edit", &late.to_string(), "--parent", &p1.to_string()])
        .stdout;
    assert!(said.contains("derived again"), "{said}");
    close(chain_number(&lab, la, "core_diameter_nm"), d1, 1e-12);
}

#[test]
fn batch_edit_refuses_a_parent_that_descends_from_the_batch() {
    let lab = new_lab();
    let core = batch(&lab, "CdSe", "core", &[]);
    let shell = batch(
        &lab,
        "CdSe/ZnS",
        "shell",
        &["--parent", &core.to_string(), "--relation", "shell"],
    );
    let outer = batch(
        &lab,
        "CdSe/ZnS",
        "second shell",
        &["--parent", &shell.to_string(), "--relation", "shell"],
    );
    lab.refuses(
        &["batch", "edit", &core.to_string(), "--parent", &outer.to_string()],
        "descends from",
    );
    lab.refuses(
        &["batch", "edit", &core.to_string(), "--parent", &core.to_string()],
        "own parent",
    );
    lab.refuses(&["batch", "edit", &core.to_string(), "--parent", "999"], "999");
}

// ---------------------------------------------------------------- the PL cuvette

/// Hexane (the aliquots' solvent) and ethanol (the reference's): n_D at 20 °C, CRC Handbook
/// (from memory).
const N_HEXANE: f64 = 1.3749;
const N_ETHANOL: f64 = 1.3611;
/// Rhodamine 101 in ethanol: 0.913 (Brouwer, Pure Appl. Chem. 83, 2213 (2011)).
const RHODAMINE_101_QY: f64 = 0.913;
const REF_INTEGRAL: f64 = 52_000.0;
const REF_ABS: f64 = 0.05;

fn absorptance(a: f64) -> f64 {
    1.0 - 10f64.powf(-a)
}

fn lab_with_reference() -> (Lab, i64) {
    let lab = new_lab();
    lab.ok(&[
        "calib",
        "set-reference",
        "--dye",
        "rhodamine 101",
        "--excitation-nm",
        "480",
        "--integral",
        &REF_INTEGRAL.to_string(),
        "--abs",
        &REF_ABS.to_string(),
        "--why",
        "reference for the test",
    ]);
    let b = batch(&lab, "CdSe", "QY run", &[]);
    (lab, b)
}

#[test]
fn aliquot_add_records_the_pl_cuvettes_own_path_and_dilution_and_the_qy_uses_them() {
    let (lab, b) = lab_with_reference();
    let abs = lab.abs_file("abs.csv", 560.0);
    let pl = lab.pl_file("pl.csv", 575.0, 30_000.0);
    // Absorbance of the stock in a 0.2 cm cuvette; PL of a twofold dilution in a 1 cm one.
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
            "--stage",
            "washed",
            "--path-cm",
            "0.2",
            "--pl-path-cm",
            "1",
            "--pl-dilution",
            "2",
            "--json",
        ])
        .json()["id"]
        .as_i64()
        .unwrap();
    let e = lab.ok(&["explain", &a.to_string(), "--json"]).json();
    let spectra = e["spectra"].as_array().unwrap();
    let pl_row = spectra.iter().find(|s| s["kind"] == "pl").unwrap();
    assert_eq!(pl_row["path_cm"].as_f64(), Some(1.0), "{pl_row}");
    assert_eq!(pl_row["dilution_factor"].as_f64(), Some(2.0), "{pl_row}");
    // The audit log keeps what was recorded.
    let log = lab
        .ok(&["log", "--entity", "spectrum", "--limit", "1", "--json"])
        .json();
    assert_eq!(log[0]["after"]["path_cm"].as_f64(), Some(1.0), "{log}");
    assert_eq!(log[0]["after"]["dilution_factor"].as_f64(), Some(2.0), "{log}");
    let abs_row = spectra.iter().find(|s| s["kind"] == "abs").unwrap();
    assert_eq!(
        abs_row["path_cm"],
        Value::Null,
        "the absorbance keeps the aliquot's cuvette"
    );
    // Beer-Lambert: A scales with path and concentration, (1 / 0.2) x (1 / 2).
    let a_abs = chain_number(&lab, a, "abs_at_excitation");
    let in_pl = chain_value(&lab, a, "abs_at_excitation_pl").unwrap();
    close(in_pl["value"].as_f64().unwrap(), a_abs * 2.5, 1e-12);
    let method = in_pl["method"].as_str().unwrap();
    assert!(
        method.contains("1 cm, dilution 2") && !method.contains("assumed"),
        "{method}"
    );
    // Brouwer 2011: Φ = Φref (F/Fref) (fref/f) (n²/nref²), f = 1 - 10^-A in the PL cuvette.
    let f = chain_number(&lab, a, "pl_integral");
    let want =
        RHODAMINE_101_QY * (f / REF_INTEGRAL) * (absorptance(REF_ABS) / absorptance(a_abs * 2.5)) * N_HEXANE.powi(2)
            / N_ETHANOL.powi(2);
    close(chain_number(&lab, a, "qy"), want, 1e-9);

    // Without the flags nothing is recorded and the 1 cm taken is said.
    let a2 = lab
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
            "--stage",
            "again",
            "--path-cm",
            "0.2",
            "--again",
            "--json",
        ])
        .json()["id"]
        .as_i64()
        .unwrap();
    let in_pl = chain_value(&lab, a2, "abs_at_excitation_pl").unwrap();
    close(
        in_pl["value"].as_f64().unwrap(),
        chain_number(&lab, a2, "abs_at_excitation") * 5.0,
        1e-12,
    );
    assert!(in_pl["method"].as_str().unwrap().contains("assumed"), "{in_pl}");
    assert!(
        in_pl["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .any(|w| w.as_str().unwrap().contains("not recorded")),
        "{in_pl}"
    );
}

#[test]
fn out_of_range_pl_cuvettes_are_refused_naming_the_flag() {
    let (lab, b) = lab_with_reference();
    let abs = lab.abs_file("abs.csv", 560.0);
    let pl = lab.pl_file("pl.csv", 575.0, 30_000.0);
    let bs = b.to_string();
    let base = [
        "aliquot",
        "add",
        &bs,
        "--abs",
        s(&abs),
        "--pl",
        s(&pl),
        "--excitation-nm",
        "480",
        "--stage",
        "x",
    ];
    for (flag, v) in [
        ("--pl-path-cm", "0"),
        ("--pl-path-cm", "-1"),
        ("--pl-path-cm", "NaN"),
        ("--pl-path-cm", "inf"),
        ("--pl-path-cm", "1e9"),
        ("--pl-dilution", "0"),
        ("--pl-dilution", "-3"),
        ("--pl-dilution", "0.5"),
        ("--pl-dilution", "NaN"),
    ] {
        let mut args = base.to_vec();
        args.extend_from_slice(&[flag, v]);
        lab.refuses(&args, flag);
    }
    // Without a PL file there is no PL cuvette.
    lab.refuses(
        &[
            "aliquot",
            "add",
            &bs,
            "--abs",
            s(&abs),
            "--stage",
            "x",
            "--pl-path-cm",
            "1",
        ],
        "--pl-path-cm and --pl-dilution go with --pl",
    );
    // import checks them the same way, before anything is read.
    let dir = lab.path("run");
    std::fs::create_dir(&dir).unwrap();
    lab.refuses(
        &["import", &bs, s(&dir), "--excitation-nm", "480", "--pl-dilution", "0"],
        "--pl-dilution",
    );
}

#[test]
fn import_and_the_manifest_record_the_pl_cuvette_of_each_pl_file() {
    let (lab, b) = lab_with_reference();
    let dir = lab.path("run");
    std::fs::create_dir(&dir).unwrap();
    for (m, peak) in [(2, 540.0), (5, 555.0)] {
        let (x, y) =
            cuvette::lab::demo::absorbance("CdSe", peak, 0.04, 0.1, 0.0005, &mut cuvette::lab::demo::Rng::new(m));
        std::fs::write(dir.join(format!("abs_{m:02}min.csv")), csv(&x, &y)).unwrap();
        let (x, y) = cuvette::lab::demo::photoluminescence(
            "CdSe",
            peak + 15.0,
            0.045,
            20_000.0,
            2.0,
            &mut cuvette::lab::demo::Rng::new(m),
        );
        std::fs::write(
            dir.join(format!("pl_{m:02}min.csv")),
            csv(&x, &y).replacen("Absorbance", "Intensity (counts)", 1),
        )
        .unwrap();
    }
    let r = lab
        .ok(&[
            "import",
            &b.to_string(),
            s(&dir),
            "--excitation-nm",
            "480",
            "--pl-path-cm",
            "0.5",
            "--pl-dilution",
            "4",
            "--json",
        ])
        .json();
    let ids: Vec<i64> = r["aliquots"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_i64().unwrap())
        .collect();
    assert_eq!(ids.len(), 2, "{r}");
    for id in &ids {
        let e = lab.ok(&["explain", &id.to_string(), "--json"]).json();
        for sp in e["spectra"].as_array().unwrap() {
            let (p, d) = (sp["path_cm"].as_f64(), sp["dilution_factor"].as_f64());
            if sp["kind"] == "pl" {
                assert_eq!((p, d), (Some(0.5), Some(4.0)), "{sp}");
            } else {
                assert_eq!((p, d), (None, None), "{sp}");
            }
        }
        // (0.5 / 1) x (1 / 4) of the absorbance cuvette's value.
        close(
            chain_number(&lab, *id, "abs_at_excitation_pl"),
            chain_number(&lab, *id, "abs_at_excitation") * 0.125,
            1e-12,
        );
    }

    // The manifest's columns; a bad one is refused before anything is imported.
    let b2 = batch(&lab, "CdSe", "from manifest", &[]);
    lab.write(
        "bad.csv",
        &format!("batch_id,folder,excitation_nm,pl_path_cm,pl_dilution\n{b2},run,480,-1,2\n"),
    );
    lab.refuses(&["import-manifest", s(&lab.path("bad.csv"))], "pl_path_cm");
    lab.write(
        "manifest.csv",
        &format!("batch_id,folder,excitation_nm,pl_path_cm,pl_dilution\n{b2},run,480,1,3\n"),
    );
    let m = lab
        .ok(&["import-manifest", s(&lab.path("manifest.csv")), "--json"])
        .json();
    let id = m[0]["aliquots"][0].as_i64().unwrap();
    let e = lab.ok(&["explain", &id.to_string(), "--json"]).json();
    let sp = e["spectra"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["kind"] == "pl")
        .unwrap()
        .clone();
    assert_eq!(
        (sp["path_cm"].as_f64(), sp["dilution_factor"].as_f64()),
        (Some(1.0), Some(3.0)),
        "{sp}"
    );
}

// ---------------------------------------------------------------- qy gradient

/// Logs one sample's dilution series the way a bench does it: the stock's absorbance once (in
/// a 1 cm cuvette), then the PL of each dilution D in the 1 cm PL cuvette, whose integral falls
/// as 1/D. Returns the aliquot ids.
fn dilution_series(lab: &Lab, b: i64, dilutions: &[f64], stock_integral: f64) -> Vec<i64> {
    let abs = lab.abs_file("stock_abs.csv", 560.0);
    dilutions
        .iter()
        .map(|d| {
            let pl = lab.pl_file(&format!("pl_d{d}.csv"), 575.0, stock_integral / d);
            lab.ok(&[
                "aliquot",
                "add",
                &b.to_string(),
                "--abs",
                s(&abs),
                "--pl",
                s(&pl),
                "--excitation-nm",
                "480",
                "--stage",
                &format!("dilution {d}"),
                "--pl-path-cm",
                "1",
                "--pl-dilution",
                &d.to_string(),
                "--again",
                "--json",
            ])
            .json()["id"]
                .as_i64()
                .unwrap()
        })
        .collect()
}

/// Least-squares slope of y on x.
fn slope(points: &[(f64, f64)]) -> f64 {
    let n = points.len() as f64;
    let mx = points.iter().map(|p| p.0).sum::<f64>() / n;
    let my = points.iter().map(|p| p.1).sum::<f64>() / n;
    let sxy: f64 = points.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    let sxx: f64 = points.iter().map(|p| (p.0 - mx).powi(2)).sum();
    sxy / sxx
}

#[test]
fn qy_gradient_follows_williams_1983_over_a_dilution_series() {
    let (lab, b) = lab_with_reference();
    let dilutions = [2.0, 3.0, 4.0, 6.0, 10.0];
    let ids = dilution_series(&lab, b, &dilutions, 70_000.0);
    let args: Vec<String> = ids.iter().map(|i| i.to_string()).collect();
    let mut cmd = vec!["qy", "gradient"];
    cmd.extend(args.iter().map(String::as_str));
    cmd.push("--json");
    let g = lab.ok(&cmd).json();
    assert_eq!(g["dilutions"], 5, "{g}");
    let points: Vec<(f64, f64)> = g["points"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| {
            (
                p["abs_at_excitation_pl"].as_f64().unwrap(),
                p["pl_integral"].as_f64().unwrap(),
            )
        })
        .collect();
    // The points are the aliquots' own values: A(ex) scaled by 1/D into the PL cuvette.
    for (id, (p, d)) in ids.iter().zip(points.iter().zip(dilutions)) {
        close(p.0, chain_number(&lab, *id, "abs_at_excitation") / d, 1e-12);
        close(p.1, chain_number(&lab, *id, "pl_integral"), 1e-12);
    }
    // Williams, Winfield & Miller, Analyst 108, 1067 (1983): Φ = Φref (Grad/Grad_ref)(n²/nref²);
    // the reference is one point, so its line runs through the origin and (A_ref, F_ref).
    let want = RHODAMINE_101_QY * slope(&points) / (REF_INTEGRAL / REF_ABS) * N_HEXANE.powi(2) / N_ETHANOL.powi(2);
    close(g["qy"].as_f64().unwrap(), want, 1e-9);
    close(g["sample_fit"]["slope"].as_f64().unwrap(), slope(&points), 1e-9);
    assert_eq!(g["reference_dye"], "rhodamine 101");
    assert_eq!(g["reference_dilutions"], 1);
    close(g["n_sample"].as_f64().unwrap(), N_HEXANE, 1e-12);
    close(g["n_ref"].as_f64().unwrap(), N_ETHANOL, 1e-12);
    let warnings: Vec<&str> = g["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w.as_str().unwrap())
        .collect();
    assert!(warnings.iter().any(|w| w.contains("one point")), "{warnings:?}");
    assert!(!warnings.iter().any(|w| w.contains("at least 4")), "{warnings:?}");
    // A reference of one point has no slope error: no uncertainty is claimed.
    assert_eq!(g["qy_sd"], Value::Null, "{g}");
    // Known truth: integrals made as 70000/D against the stock's absorbance at 480 nm give a
    // slope of 70000 / A(ex); the PL analysis recovers integrals within a few per cent.
    let a_ex = chain_number(&lab, ids[0], "abs_at_excitation");
    let truth = RHODAMINE_101_QY * (70_000.0 / a_ex) / (REF_INTEGRAL / REF_ABS) * N_HEXANE.powi(2) / N_ETHANOL.powi(2);
    close(g["qy"].as_f64().unwrap(), truth, 0.05);
    assert!(!warnings.iter().any(|w| w.contains("above 1")), "{warnings:?}");

    // Three dilutions: the number, with the warning.
    let g3 = lab
        .ok(&["qy", "gradient", &args[0], &args[1], &args[2], "--json"])
        .json();
    assert_eq!(g3["dilutions"], 3);
    assert!(
        g3["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .any(|w| w.as_str().unwrap().contains("at least 4")),
        "{g3}"
    );
    // The text form says the same.
    let t = lab.ok(&["qy", "gradient", &args[0], &args[1], &args[2]]).stdout;
    assert!(
        t.starts_with("QY = ") && t.contains("3 dilutions") && t.contains("at least 4"),
        "{t}"
    );
}

#[test]
fn a_gradient_yield_above_one_is_said() {
    // Twice the PL per unit absorbance of the test above: about 1.1, which no sample gives
    // (a quantum yield is a fraction of photons, IUPAC, Brouwer 2011).
    let (lab, b) = lab_with_reference();
    let ids: Vec<String> = dilution_series(&lab, b, &[2.0, 3.0, 4.0, 6.0], 140_000.0)
        .iter()
        .map(|i| i.to_string())
        .collect();
    let g = lab
        .ok(&["qy", "gradient", &ids[0], &ids[1], &ids[2], &ids[3], "--json"])
        .json();
    assert!(g["qy"].as_f64().unwrap() > 1.0, "{g}");
    assert!(
        g["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .any(|w| w.as_str().unwrap().contains("above 1")),
        "{g}"
    );
}

#[test]
fn qy_gradient_refuses_what_is_no_dilution_series() {
    let (lab, b) = lab_with_reference();
    let ids = dilution_series(&lab, b, &[2.0, 4.0], 100_000.0);
    let (a, c) = (ids[0].to_string(), ids[1].to_string());
    lab.refuses(&["qy", "gradient", &a, &a, &c], "named twice");
    lab.refuses(&["qy", "gradient", &a, "999"], "999");
    let abs_only = lab.abs_file("only_abs.csv", 565.0);
    let n = lab
        .ok(&[
            "aliquot",
            "add",
            &b.to_string(),
            "--abs",
            s(&abs_only),
            "--stage",
            "no pl",
            "--json",
        ])
        .json()["id"]
        .as_i64()
        .unwrap()
        .to_string();
    lab.refuses(&["qy", "gradient", &a, &n], "no absorbance at excitation");
    lab.ok(&["aliquot", "void", &c, "--why", "spilled"]);
    lab.refuses(&["qy", "gradient", &a, &c], "void");
    // No reference in the calibration: said.
    let bare = new_lab();
    let b2 = batch(&bare, "CdSe", "no reference", &[]);
    let ids = dilution_series(&bare, b2, &[2.0, 4.0], 100_000.0);
    bare.refuses(
        &["qy", "gradient", &ids[0].to_string(), &ids[1].to_string()],
        "no QY reference",
    );
}

// ---------------------------------------------------------------- homogeneous linewidth

#[test]
fn calib_set_homogeneous_hwhm_takes_a_width_out_in_quadrature_and_can_be_turned_off() {
    let lab = new_lab();
    let b = batch(&lab, "CdSe", "widths", &[]);
    let a = core_aliquot(&lab, b, 560.0);
    let whole = chain_number(&lab, a, "size_dispersion_pct");
    let hwhm = chain_number(&lab, a, "hwhm_mev");
    assert!(hwhm > 40.0, "the test wants a width above 40 meV, got {hwhm}");
    let show = lab.ok(&["calib", "show"]).stdout;
    assert!(show.contains("homogeneous HWHM: off"), "{show}");

    let v = lab
        .ok(&[
            "calib",
            "set-homogeneous-hwhm",
            "CdSe",
            "25",
            "--why",
            "single-dot linewidth",
            "--json",
        ])
        .json();
    assert_eq!(v["version"], 2, "{v}");
    assert!(v["marked_stale"].as_i64().unwrap() > 0, "{v}");
    assert_eq!(chain_value(&lab, a, "size_dispersion_pct").unwrap()["stale"], true);
    let show = lab.ok(&["calib", "show", "--json"]).json();
    assert_eq!(
        show["body"]["homogeneous_hwhm_mev"]["CdSe"].as_f64(),
        Some(25.0),
        "{show}"
    );
    assert!(
        lab.ok(&["calib", "show"])
            .stdout
            .contains("homogeneous HWHM: CdSe 25 meV")
    );
    lab.ok(&["recompute"]);
    // σ/D is linear in the converted width (σ_D = |dD/dE| HWHM/√(2 ln 2), common practice),
    // and the homogeneous part leaves √(HWHM² - 25²).
    let narrowed = chain_value(&lab, a, "size_dispersion_pct").unwrap();
    close(
        narrowed["value"].as_f64().unwrap(),
        whole * (hwhm * hwhm - 25.0 * 25.0).sqrt() / hwhm,
        1e-9,
    );
    assert!(narrowed["method"].as_str().unwrap().contains("25 meV"), "{narrowed}");
    // A material name reaches its core: CdSe/ZnS sets CdSe's.
    lab.ok(&[
        "calib",
        "set-homogeneous-hwhm",
        "CdSe/ZnS",
        "30",
        "--why",
        "re-measured",
    ]);
    let show = lab.ok(&["calib", "show", "--json"]).json();
    assert_eq!(
        show["body"]["homogeneous_hwhm_mev"]["CdSe"].as_f64(),
        Some(30.0),
        "{show}"
    );

    lab.ok(&[
        "calib",
        "set-homogeneous-hwhm",
        "CdSe",
        "--off",
        "--why",
        "back to the whole width",
    ]);
    lab.ok(&["recompute"]);
    close(chain_number(&lab, a, "size_dispersion_pct"), whole, 1e-12);
    assert!(lab.ok(&["calib", "show"]).stdout.contains("homogeneous HWHM: off"));
    let h = lab.ok(&["calib", "history", "--json"]).json();
    assert_eq!(h.as_array().unwrap().len(), 4, "{h}");
}

#[test]
fn calib_set_homogeneous_hwhm_refuses_what_is_no_linewidth() {
    let lab = new_lab();
    for v in ["-5", "0", "NaN", "inf", "250"] {
        lab.refuses(
            &["calib", "set-homogeneous-hwhm", "CdSe", v, "--why", "x"],
            "the homogeneous HWHM must be above 0 and at most 200 meV",
        );
    }
    lab.refuses(
        &["calib", "set-homogeneous-hwhm", "Unobtainium", "20", "--why", "x"],
        "Unobtainium",
    );
    // Off when it is off already: nothing to change.
    lab.refuses(
        &["calib", "set-homogeneous-hwhm", "CdSe", "--off", "--why", "x"],
        "nothing to change",
    );
    lab.refuses(&["calib", "set-homogeneous-hwhm", "CdSe", "20", "--why", " "], "--why");
}
