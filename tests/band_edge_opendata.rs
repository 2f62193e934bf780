//! Real, openly published CdSe growth series (see ../shared/opendata/README.md): the crystals
//! grow through each run, so the first exciton must move red from aliquot to aliquot and never
//! jump blue; early aliquots are shoulders. The data are read in place, never copied.

mod common;

#[test]
fn real_growth_series_read_as_growing_without_jumps_or_fallbacks() {
    let Some(dir) = common::cdse_series_dir() else { return };
    let mut runs = 0;
    for entry in std::fs::read_dir(&dir).expect("the open-data folder lists") {
        let path = entry.expect("an entry").path();
        let name = path
            .file_name()
            .and_then(|n| n.to_str())
            .unwrap_or_default()
            .to_string();
        if !name.contains("UV-Vis") {
            continue;
        }
        runs += 1;
        let out = std::process::Command::new(env!("CARGO_BIN_EXE_cuvette"))
            .args([
                "analyze",
                path.to_str().expect("a UTF-8 path"),
                "--kind",
                "abs",
                "--json",
            ])
            .output()
            .expect("cuvette runs");
        let text = String::from_utf8_lossy(&out.stdout);
        let mut previous: Option<f64> = None;
        let mut n = 0;
        for line in text.lines() {
            let v: serde_json::Value = serde_json::from_str(line).expect("one JSON object per line");
            let peak = v["first_exciton_nm"]
                .as_f64()
                .unwrap_or_else(|| panic!("{name}: no first exciton in {line}"));
            let warnings = v["warnings"].to_string();
            assert!(
                !warnings.contains("failed its checks"),
                "{name} {}: fell back to the derivative ({warnings})",
                v["label"]
            );
            if let Some(p) = previous {
                // 1.5 nm: the readings' own scatter on these scans (common practice).
                assert!(
                    peak > p - 1.5,
                    "{name} {}: {peak:.1} nm after {p:.1} nm, a jump blue",
                    v["label"]
                );
            }
            previous = Some(peak);
            n += 1;
        }
        assert!(n >= 10, "{name}: only {n} aliquots read");
    }
    assert!(runs >= 3, "three absorbance runs expected, found {runs}");
}
