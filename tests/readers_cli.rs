//! The command line over files of several spectra (issue 13): `--column`, `--sheet`, `read
//! --all`, `analyze` per sample, and `aliquot add --series` / `import --series` logging a
//! several-sample export as a growth series. Real open data is read in place from
//! `../shared/opendata` (see its README); workbooks are the invented ones in tests/data/sheets.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use std::path::PathBuf;

fn open_data(name: &str) -> Option<PathBuf> {
    cdse_series_dir().map(|d| d.join(name))
}

#[test]
fn a_growth_series_export_is_read_per_column_and_never_as_its_first() {
    let Some(f) = open_data("Run 1 UV-Vis.csv") else { return };
    let lab = Lab::new();
    // Without a choice: refused, the columns listed.
    let o = lab.run(&["read", s(&f)]);
    assert_eq!(o.code, 1);
    assert!(
        o.stderr.contains("14 y columns") && o.stderr.contains("'20 s'") && o.stderr.contains("--column"),
        "{}",
        o.stderr
    );
    let one = lab.ok(&["read", s(&f), "--column", "40 s", "--json"]).json();
    assert_eq!(one["label"], "40 s");
    assert_eq!(one["npoints"], 251);
    let by_number = lab.ok(&["read", s(&f), "--column", "2", "--json"]).json();
    assert_eq!(by_number["y"], one["y"]);
    let all = lab.ok(&["read", s(&f), "--all", "--json"]).json();
    let labels: Vec<&str> = all
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v["label"].as_str().unwrap())
        .collect();
    assert_eq!(labels.len(), 14);
    assert_eq!(labels[0], "20 s");
    assert_eq!(labels[13], "300 s");
    // analyze: a line per sample, each with its label.
    let o = lab.ok(&["analyze", s(&f), "--kind", "abs", "--json"]);
    let lines: Vec<serde_json::Value> = o.stdout.lines().map(|l| serde_json::from_str(l).unwrap()).collect();
    assert_eq!(lines.len(), 14);
    assert!(
        lines.iter().all(|l| l["label"].is_string() && l.get("error").is_none()),
        "{}",
        o.stdout
    );
}

#[test]
fn a_several_sample_export_logs_as_a_growth_series() {
    let Some(f) = open_data("Run 1 UV-Vis.csv") else { return };
    let lab = Lab::new();
    lab.ok(&["init"]);
    let b = lab
        .ok(&["batch", "new", "--material", "CdSe", "--name", "run 1", "--json"])
        .json()["id"]
        .as_i64()
        .unwrap();
    let bs = b.to_string();
    lab.refuses(&["aliquot", "add", &bs, "--abs", s(&f), "--minutes", "1"], "--column");
    lab.refuses(
        &["aliquot", "add", &bs, "--abs", s(&f), "--series", "--minutes", "1"],
        "leave out --minutes",
    );
    let series = lab
        .ok(&["aliquot", "add", &bs, "--abs", s(&f), "--series", "--json"])
        .json();
    let series = series.as_array().unwrap();
    assert_eq!(series.len(), 14);
    // The headers state seconds after injection: "20 s" is 1/3 min, "300 s" 5 min.
    assert!((series[0]["minutes"].as_f64().unwrap() - 20.0 / 60.0).abs() < 1e-12);
    assert!((series[13]["minutes"].as_f64().unwrap() - 5.0).abs() < 1e-12);
    // Logged again: refused, naming the column; one column on its own: also refused.
    lab.refuses(
        &["aliquot", "add", &bs, "--abs", s(&f), "--series"],
        "[20 s] is already logged",
    );
    lab.refuses(
        &[
            "aliquot",
            "add",
            &bs,
            "--abs",
            s(&f),
            "--column",
            "300 s",
            "--minutes",
            "5",
        ],
        "[300 s] is already logged",
    );
    let detail = lab.ok(&["batch", "show", &bs, "--json"]).json();
    assert_eq!(detail["aliquots"].as_array().unwrap().len(), 14);
    assert!(detail["growth"]["regime"].as_str().is_some());
    assert_eq!(lab.ok(&["check", "--json"]).json()["ok"], true);
}

#[test]
fn a_folder_of_series_imports_once() {
    let (Some(a), Some(b2)) = (open_data("Run 2 UV-Vis.csv"), open_data("Run 3 UV-Vis.csv")) else {
        return;
    };
    let lab = Lab::new();
    lab.ok(&["init"]);
    let b = lab
        .ok(&["batch", "new", "--material", "CdSe", "--name", "runs", "--json"])
        .json()["id"]
        .as_i64()
        .unwrap();
    // A folder of links to the open files (the data stay where they are).
    let dir = lab.path("exports");
    std::fs::create_dir(&dir).unwrap();
    std::os::unix::fs::symlink(&a, dir.join("run2_abs.csv")).unwrap();
    std::os::unix::fs::symlink(&b2, dir.join("run3_abs.csv")).unwrap();
    let n_columns = |p: &PathBuf| {
        std::fs::read_to_string(p)
            .unwrap()
            .lines()
            .next()
            .unwrap()
            .split(',')
            .count()
            - 1
    };
    let expected = n_columns(&a) + n_columns(&b2);
    let first = lab
        .ok(&["import", &b.to_string(), s(&dir), "--series", "--json"])
        .json();
    assert_eq!(first["aliquots"].as_array().unwrap().len(), expected);
    let again = lab
        .ok(&["import", &b.to_string(), s(&dir), "--series", "--json"])
        .json();
    assert_eq!(again["aliquots"].as_array().unwrap().len(), 0);
    assert_eq!(again["skipped"].as_array().unwrap().len(), expected);
    // Without --series a several-sample file is not read as its first column.
    let o = lab.run(&["import", &b.to_string(), s(&dir)]);
    assert_eq!(o.code, 1, "{}", o.stdout);
}

#[test]
fn workbooks_are_chosen_by_sheet_and_column() {
    let data = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/data/sheets");
    let lab = Lab::new();
    let two = data.join("two_runs.ods");
    let o = lab.run(&["read", s(&two)]);
    assert_eq!(o.code, 1);
    assert!(o.stderr.contains("--sheet"), "{}", o.stderr);
    let r = lab.ok(&["read", s(&two), "--sheet", "Run 2", "--json"]).json();
    assert_eq!(r["npoints"], 21);
    let side = data.join("side_by_side.xlsx");
    let five = lab.ok(&["read", s(&side), "--column", "5 min", "--json"]).json();
    assert_eq!(five["label"], "5 min");
    lab.ok(&["init"]);
    let b = lab
        .ok(&["batch", "new", "--material", "CdSe", "--name", "wb", "--json"])
        .json()["id"]
        .as_i64()
        .unwrap();
    let series = lab
        .ok(&[
            "aliquot",
            "add",
            &b.to_string(),
            "--abs",
            s(&side),
            "--series",
            "--json",
        ])
        .json();
    let minutes: Vec<f64> = series
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a["minutes"].as_f64().unwrap())
        .collect();
    assert_eq!(minutes, [2.0, 5.0, 10.0]);
}
