//! Issue 13, point 5: the fast reading paths give what the plain ones give. Files are written
//! here from stated numbers (invented), so the known truth is the written text itself: every
//! point must be what `str::parse` makes of the cell that was written (correctly rounded), on
//! the one-pass path and on the fallback alike; a file read into a reused buffer must be its
//! bytes; `analyze` over a folder keeps the file order on stdout and names each refused file
//! on stderr, flushed in order when both streams go to one place.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use cuvette::spectra::{ReadOptions, file_bytes_into, read_bytes};
use proptest::prelude::*;

/// The cells exports write, in the forms the one-pass reader takes and in forms it leaves to
/// the general reader (exponents, more than 19 digits, leading '+', bare '.5', quotes).
fn cell() -> impl Strategy<Value = String> {
    prop_oneof![
        6 => (0u32..3, 0u32..1_000_000).prop_map(|(i, f)| format!("{i}.{f:06}")),
        2 => (-2.0f64..3.0, 0usize..18).prop_map(|(v, d)| format!("{v:.d$}")),
        1 => (-2.0f64..3.0).prop_map(|v| format!("{v:e}")),
        1 => "[0-9]{17,24}\\.[0-9]{1,4}",
        1 => "0\\.[0-9]{20,26}",
        1 => "\\+?\\.[0-9]{1,5}",
        1 => "[0-9]{1,4}\\.".prop_map(|s| s.to_string()),
        1 => "[0-9]\\.[0-9]{1,5}".prop_map(|s| format!("\"{s}\"")),
    ]
}

fn unquoted(s: &str) -> &str {
    s.trim_matches('"')
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    /// Two-column CSVs (the analyze benchmark's shape and its near relatives): x and y read
    /// back bit for bit as `str::parse` reads the written cells.
    #[test]
    fn csv_points_are_the_written_numbers(
        ys in proptest::collection::vec(cell(), 8..80),
        crlf in any::<bool>(),
        header in any::<bool>(),
    ) {
        let eol = if crlf { "\r\n" } else { "\n" };
        let xs: Vec<String> = (0..ys.len()).map(|i| format!("{}", 400.0 + 0.5 * i as f64)).collect();
        let mut text = String::new();
        if header {
            text.push_str("Wavelength (nm),Absorbance");
            text.push_str(eol);
        }
        for (x, y) in xs.iter().zip(&ys) {
            text.push_str(&format!("{x},{y}{eol}"));
        }
        let s = read_bytes("t.csv", text.as_bytes(), &ReadOptions::default())
            .unwrap_or_else(|e| panic!("{e}\n{text}"));
        let want_x: Vec<u64> = xs.iter().map(|c| c.parse::<f64>().unwrap().to_bits()).collect();
        let want_y: Vec<u64> = ys.iter().map(|c| unquoted(c).parse::<f64>().unwrap().to_bits()).collect();
        prop_assert_eq!(s.x.iter().map(|v| v.to_bits()).collect::<Vec<_>>(), want_x);
        prop_assert_eq!(s.y.iter().map(|v| v.to_bits()).collect::<Vec<_>>(), want_y);
    }
}

#[test]
fn a_reused_buffer_holds_each_file_exactly() {
    let dir = tempfile::tempdir().unwrap();
    let mut buf = b"left over from the file before".to_vec();
    // Around the sizes where a read could stop short: empty, one byte, the 8 KiB a read is
    // often given, and larger than the buffer held before.
    for (k, size) in [0usize, 1, 8191, 8192, 8193, 100_000, 17].into_iter().enumerate() {
        let bytes: Vec<u8> = (0..size).map(|i| (i * 31 + k) as u8).collect();
        let p = dir.path().join(format!("f{k}"));
        std::fs::write(&p, &bytes).unwrap();
        file_bytes_into(&p, &mut buf).unwrap();
        assert_eq!(buf, bytes, "size {size}");
    }
    let e = file_bytes_into(&dir.path().join("missing"), &mut buf)
        .unwrap_err()
        .to_string();
    assert!(e.contains("missing") && e.contains("cannot read"), "{e}");
}

#[test]
fn analyze_keeps_file_order_and_names_each_refusal_in_place() {
    let lab = common::Lab::new();
    let dir = lab.path("exports");
    std::fs::create_dir_all(&dir).unwrap();
    // Twelve files in name order; every fourth one cannot be read as a spectrum.
    for i in 0..12 {
        let name = format!("s{i:02}.csv");
        if i % 4 == 3 {
            std::fs::write(dir.join(&name), "nm,A\n400,0.1\n401,oops\n").unwrap();
        } else {
            let src = lab.abs_file(&name, 520.0 + 5.0 * i as f64);
            std::fs::rename(&src, dir.join(&name)).unwrap();
        }
    }
    let out = lab.run(&["analyze", dir.to_str().unwrap(), "--kind", "abs", "--json"]);
    assert_eq!(out.code, 1, "a refused file makes the exit code 1: {}", out.stderr);
    let files: Vec<String> = out
        .stdout
        .lines()
        .map(|l| {
            serde_json::from_str::<serde_json::Value>(l).unwrap()["file"]
                .as_str()
                .unwrap()
                .to_string()
        })
        .collect();
    let want: Vec<String> = (0..12)
        .map(|i| dir.join(format!("s{i:02}.csv")).display().to_string())
        .collect();
    assert_eq!(files, want);
    let refused: Vec<&str> = out.stderr.lines().collect();
    assert_eq!(refused.len(), 3, "{}", out.stderr);
    for (line, i) in refused.iter().zip([3, 7, 11]) {
        assert!(
            line.starts_with(&format!("cuvette: refused {}", want[i])) && line.contains("non-numeric cell 'oops'"),
            "{line}"
        );
    }

    // Both streams into one file: each refusal sits after the lines of the files before it.
    let both = lab.path("both.txt");
    let f = std::fs::File::create(&both).unwrap();
    let status = std::process::Command::new(env!("CARGO_BIN_EXE_cuvette"))
        .args(["analyze", dir.to_str().unwrap(), "--kind", "abs", "--json"])
        .env_remove("CUVETTE_DB")
        .stdout(f.try_clone().unwrap())
        .stderr(f)
        .status()
        .unwrap();
    assert_eq!(status.code(), Some(1));
    let text = std::fs::read_to_string(&both).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    for i in [3, 7, 11] {
        let warn = lines
            .iter()
            .position(|l| l.starts_with("cuvette: refused") && l.contains(&want[i]))
            .unwrap();
        let json = lines
            .iter()
            .position(|l| l.starts_with('{') && l.contains(&format!("\"{}\"", want[i])))
            .unwrap();
        assert_eq!(
            warn + 1,
            json,
            "the refusal of {} comes just before its line:\n{text}",
            want[i]
        );
    }
}
