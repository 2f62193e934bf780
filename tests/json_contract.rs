//! The JSON contract, pinned: what every `--json` command of the command line prints for the
//! invented demo lab, as insta snapshots in `tests/snapshots/`. Outside scripts and acceptance
//! checks read these keys, so a field added to a view struct, renamed, reordered or given another
//! type shows here as a snapshot diff that has to be accepted on purpose (and then written into
//! README's contract table), never as a silent change. The lab is the demo lab, which is built
//! from fixed seeds; only the moments of writing (which are "now") are redacted.
//!
//! Accept an intended change with `INSTA_UPDATE=always cargo test --test json_contract`, then
//! review `git diff tests/snapshots`.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;

use common::Lab;
use serde_json::Value;
use std::sync::OnceLock;

/// One demo lab shared by the read-only snapshots (building it takes a few seconds).
fn demo() -> &'static Lab {
    static LAB: OnceLock<Lab> = OnceLock::new();
    LAB.get_or_init(|| {
        let lab = Lab::new();
        lab.ok(&["demo", "--no-ui", "--create"]);
        lab
    })
}

fn samples(rel: &str) -> String {
    format!("{}/demo-db/samples/{rel}", env!("CARGO_MANIFEST_DIR"))
}

/// Timestamps written while the test ran are "now" and differ per run; every other value (the
/// demo's own dates included) is kept as printed. Paths into the temporary folder and the
/// checkout are written relative, so the snapshot does not depend on where it runs.
fn redact(v: &mut Value, lab: &Lab) {
    let tmp = lab.dir.path().to_string_lossy().to_string();
    let root = env!("CARGO_MANIFEST_DIR").to_string();
    let today = chrono::Utc::now().format("%Y-%m-%d").to_string();
    let yesterday = (chrono::Utc::now() - chrono::Duration::days(1))
        .format("%Y-%m-%d")
        .to_string();
    fn walk(v: &mut Value, tmp: &str, root: &str, days: &[&str]) {
        match v {
            Value::String(s) => {
                let is_now = days.iter().any(|d| s.starts_with(d)) && chrono::DateTime::parse_from_rfc3339(s).is_ok();
                if is_now {
                    *s = "[now]".into();
                } else if s.contains(tmp) || s.contains(root) {
                    *s = s.replace(tmp, "[lab]").replace(root, "[checkout]");
                }
            }
            Value::Array(a) => a.iter_mut().for_each(|x| walk(x, tmp, root, days)),
            Value::Object(o) => o.values_mut().for_each(|x| walk(x, tmp, root, days)),
            _ => {}
        }
    }
    walk(v, &tmp, &root, &[&today, &yesterday]);
}

/// Runs one `--json` command and returns its output (one JSON document, or one per line as an
/// array) with the run's own moments redacted.
fn json_of(lab: &Lab, args: &[&str]) -> String {
    let out = lab.ok(args);
    let mut v: Value = match serde_json::from_str(&out.stdout) {
        Ok(v) => v,
        Err(_) => Value::Array(
            out.stdout
                .lines()
                .filter(|l| !l.trim().is_empty())
                .map(|l| serde_json::from_str(l).unwrap_or_else(|e| panic!("{args:?}: not JSON ({e}): {l}")))
                .collect(),
        ),
    };
    redact(&mut v, lab);
    serde_json::to_string_pretty(&v).unwrap()
}

macro_rules! contract {
    ($name:ident, $($arg:expr),+) => {
        #[test]
        fn $name() {
            insta::assert_snapshot!(stringify!($name), json_of(demo(), &[$($arg),+]));
        }
    };
}

// The lab's lists.
contract!(batch_list, "batch", "list", "--json");
contract!(shelf, "shelf", "--json");
contract!(person_list, "person", "list", "--json");
contract!(material_list, "material", "list", "--json");
contract!(location_list, "location", "list", "--json");
contract!(reagent_list, "reagent", "list", "--json");
contract!(recipe_list, "recipe", "list", "--json");
contract!(calib_list, "calib", "list", "--json");
contract!(calib_show, "calib", "show", "--json");

// The batch sheet for each kind of batch the demo holds: a CdSe growth series, a failed batch,
// a shelled batch (with its parent's core), PbS, InP, a batch still growing and a planned one.
contract!(batch_show_cdse, "batch", "show", "3", "--json");
contract!(batch_show_failed, "batch", "show", "4", "--json");
contract!(batch_show_shelled, "batch", "show", "5", "--json");
contract!(batch_show_pbs, "batch", "show", "7", "--json");
contract!(batch_show_inp, "batch", "show", "9", "--json");
contract!(batch_show_growing, "batch", "show", "24", "--json");
contract!(batch_show_planned, "batch", "show", "25", "--json");

// How values came about, vials, and the record's state.
contract!(explain_first, "explain", "1", "--json");
contract!(explain_shelled, "explain", "21", "--json");
contract!(vial_show, "vial", "show", "11", "--json");
contract!(
    recipe_stats,
    "recipe",
    "stats",
    "CdSe hot injection (oleate/TOP-Se)",
    "--json"
);
contract!(
    recipe_show,
    "recipe",
    "show",
    "PbS from lead oleate and (TMS)2S",
    "--json"
);
contract!(check, "check", "--json");
contract!(recompute_dry_run, "recompute", "--dry-run", "--json");

// Searches over the lab.
contract!(find_size_and_yield, "find", "CdSe size 3.5 to 4 qy >= 20%", "--json");
contract!(find_stock, "find", "PbS stock", "--json");
contract!(find_everything, "find", "", "--json");

// The calculators and readers, which touch no lab.
contract!(size_cdse, "size", "--material", "CdSe", "--peak-nm", "550", "--json");
contract!(size_pbs, "size", "--material", "PbS", "--peak-nm", "1200", "--json");
contract!(
    analyze_growth,
    "analyze",
    &samples("growth"),
    "--kind",
    "abs",
    "--material",
    "CdSe",
    "--path-cm",
    "1",
    "--dilution",
    "20",
    "--json"
);
contract!(
    analyze_pl,
    "analyze",
    &samples("growth/pl_10min.csv"),
    "--kind",
    "pl",
    "--json"
);
contract!(read_plain, "read", &samples("formats/plain.csv"), "--json");
contract!(read_jcamp, "read", &samples("formats/jcamp.jdx"), "--json");
contract!(
    read_side_by_side,
    "read",
    &samples("formats/side_by_side.csv"),
    "--all",
    "--json"
);

/// What the write commands answer, on a lab of their own so the read-only snapshots above see
/// the demo as built.
#[test]
fn writes_answer_with_the_contracted_keys() {
    let lab = Lab::new();
    lab.ok(&["demo", "--no-ui", "--create"]);
    let runs: &[(&str, Vec<String>)] = &[
        (
            "batch_new",
            ["batch", "new", "--material", "CdSe", "--name", "CS-contract", "--json"]
                .map(String::from)
                .to_vec(),
        ),
        (
            "aliquot_add",
            vec![
                "aliquot".into(),
                "add".into(),
                "26".into(),
                "--abs".into(),
                samples("growth/abs_10min.csv"),
                "--pl".into(),
                samples("growth/pl_10min.csv"),
                "--excitation-nm".into(),
                "400".into(),
                "--minutes".into(),
                "10".into(),
                "--dilution".into(),
                "20".into(),
                "--path-cm".into(),
                "1".into(),
                "--solvent".into(),
                "hexane".into(),
                "--json".into(),
            ],
        ),
        (
            "aliquot_void",
            ["aliquot", "void", "1", "--why", "contract test", "--json"]
                .map(String::from)
                .to_vec(),
        ),
        (
            "calib_set_homogeneous_hwhm",
            [
                "calib",
                "set-homogeneous-hwhm",
                "CdSe",
                "30",
                "--why",
                "contract test",
                "--json",
            ]
            .map(String::from)
            .to_vec(),
        ),
        ("recompute", ["recompute", "--json"].map(String::from).to_vec()),
        ("whoami", ["whoami", "--json"].map(String::from).to_vec()),
        (
            "person_add",
            ["person", "add", "Odile Brandt", "--json"].map(String::from).to_vec(),
        ),
        (
            "material_add",
            [
                "material", "add", "CdTe/CdS", "--core", "CdTe", "--shell", "CdS", "--json",
            ]
            .map(String::from)
            .to_vec(),
        ),
        (
            "reagent_add",
            ["reagent", "add", "zinc undecylenate", "--hazard", "h410", "--json"]
                .map(String::from)
                .to_vec(),
        ),
        (
            "location_add",
            ["location", "add", "Glovebox G2", "--kind", "glovebox", "--json"]
                .map(String::from)
                .to_vec(),
        ),
    ];
    for (name, args) in runs {
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        insta::assert_snapshot!(format!("write_{name}"), json_of(&lab, &args));
    }
}
