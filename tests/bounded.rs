//! Bounded work on any input (issue 10, point 6): a file, a query or a setting never makes
//! cuvette use unbounded memory or time, and never panics. Work is shown bounded by counting
//! what each test allocates on its own thread (a counting allocator that also refuses to let one
//! thread hold more than 1 GiB, so a regression fails here instead of exhausting the machine);
//! no test measures wall time.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance, analyze_pl};
use cuvette::spectra::{HC_EV_NM, ReadOptions, Trace, read_bytes};
use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

/// Counts the bytes each thread holds and the most it held.
struct Counting;

const THREAD_LIMIT_BYTES: usize = 1 << 30;

thread_local! {
    static LIVE: Cell<usize> = const { Cell::new(0) };
    static PEAK: Cell<usize> = const { Cell::new(0) };
}

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        let live = LIVE.try_with(Cell::get).unwrap_or(0);
        if live.saturating_add(layout.size()) > THREAD_LIMIT_BYTES {
            return std::ptr::null_mut();
        }
        let p = unsafe { System.alloc(layout) };
        if !p.is_null() {
            let _ = LIVE.try_with(|l| {
                let v = l.get() + layout.size();
                l.set(v);
                let _ = PEAK.try_with(|p| p.set(p.get().max(v)));
            });
        }
        p
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) };
        let _ = LIVE.try_with(|l| l.set(l.get().saturating_sub(layout.size())));
    }
}

#[global_allocator]
static ALLOC: Counting = Counting;

/// Runs `f` and returns its result with the most bytes it held at once beyond what was held
/// before it started.
fn peak_bytes<R>(f: impl FnOnce() -> R) -> (R, usize) {
    let base = LIVE.with(Cell::get);
    PEAK.with(|p| p.set(base));
    let r = f();
    let peak = PEAK.with(Cell::get);
    (r, peak.saturating_sub(base))
}

const MIB: usize = 1 << 20;

#[test]
fn a_repeat_count_bomb_is_refused_before_allocating() {
    let bytes = include_bytes!("data/dup_bomb.jdx");
    assert_eq!(bytes.len(), 181, "the bomb is the 181-byte file of issue 10");
    let (r, peak) = peak_bytes(|| read_bytes("dup_bomb.jdx", bytes, &ReadOptions::default()));
    let e = r
        .expect_err("a repeat count far past NPOINTS must be refused")
        .to_string();
    assert!(e.starts_with("dup_bomb.jdx line 9: "), "{e}");
    assert!(e.contains("repeat count") && e.contains("NPOINTS=11"), "{e}");
    assert!(!e.contains('\n'), "one line: {e}");
    assert!(peak < MIB, "refused after holding {peak} bytes");
}

#[test]
fn values_past_npoints_are_refused_on_the_line_that_overflows() {
    // Plain AFFN values, more than NPOINTS of them, on many lines: the reader stops at the
    // first line that goes past the stated count.
    let mut text = String::from(
        "##TITLE=t\n##JCAMP-DX=5.01\n##XUNITS=NANOMETERS\n##FIRSTX=400\n##LASTX=409\n##NPOINTS=10\n##XYDATA=(X++(Y..Y))\n",
    );
    for line in 0..50 {
        text.push_str(&format!("{} 1 2 3 4 5\n", 400 + 5 * line));
    }
    text.push_str("##END=\n");
    let e = read_bytes("t.jdx", text.as_bytes(), &ReadOptions::default())
        .unwrap_err()
        .to_string();
    assert!(e.starts_with("t.jdx line 10: ") && e.contains("NPOINTS=10"), "{e}");
}

#[test]
fn an_absurd_npoints_is_refused_before_allocating() {
    let text = "##TITLE=t\n##JCAMP-DX=5.01\n##XUNITS=NANOMETERS\n##FIRSTX=400\n##LASTX=800\n##NPOINTS=1e15\n##XYDATA=(X++(Y..Y))\n400A0Z99999999999999\n##END=\n";
    let (r, peak) = peak_bytes(|| read_bytes("t.jdx", text.as_bytes(), &ReadOptions::default()));
    let e = r.unwrap_err().to_string();
    assert!(e.contains("NPOINTS") && e.contains("1000000"), "{e}");
    assert!(peak < MIB, "refused after holding {peak} bytes");
}

#[test]
fn a_repeat_count_within_npoints_still_reads() {
    // DUP used as the standard means it: 400..409 nm, ten equal ordinates written once.
    let text = "##TITLE=t\n##JCAMP-DX=5.01\n##XUNITS=NANOMETERS\n##FIRSTX=400\n##LASTX=409\n##NPOINTS=10\n##XYDATA=(X++(Y..Y))\n400A0S0\n##END=\n";
    let s = read_bytes("t.jdx", text.as_bytes(), &ReadOptions::default()).unwrap();
    assert_eq!(s.y, vec![10.0; 10]);
}

/// A synthetic absorbance spectrum (invented parameters): a first exciton that is a Gaussian
/// in energy at `e1_ev` (sigma 0.06 eV, height 0.5) and a higher transition at 2.95 eV (sigma
/// 0.10 eV, height 0.9), sampled at `n` points evenly in wavelength over 400..800 nm.
fn dense_trace(n: usize, e1_ev: f64) -> Trace {
    let g = |e: f64, e0: f64, s: f64| (-(e - e0).powi(2) / (2.0 * s * s)).exp();
    let nm: Vec<f64> = (0..n).map(|i| 400.0 + 400.0 * i as f64 / (n - 1) as f64).collect();
    let y = nm
        .iter()
        .map(|&l| {
            let e = HC_EV_NM / l;
            0.5 * g(e, e1_ev, 0.06) + 0.9 * g(e, 2.95, 0.10)
        })
        .collect();
    Trace { nm, y }
}

#[test]
fn a_dense_spectrum_analyses_in_bounded_memory_and_finds_its_exciton() {
    // The peak of a Gaussian in energy lies at hc/E0 in wavelength too (the map is monotonic);
    // the higher transition's tail adds less than 1e-9 there.
    let e1 = HC_EV_NM / 560.0;
    let t = dense_trace(100_000, e1);
    let (r, peak) = peak_bytes(|| analyze_absorbance(&t, &AnalysisSettings::default()));
    let r = r.unwrap();
    let got = r.first_exciton_nm.unwrap();
    assert!((got - 560.0).abs() < 0.5, "first exciton at {got} nm, built at 560 nm");
    assert!(!r.shoulder);
    // The trace itself is 1.6 MB; analysis may hold a few copies, not a window per point.
    assert!(peak < 32 * MIB, "analysis held {peak} bytes");
    // The same spectrum at 1 nm gives the same exciton within a tenth of a nanometre.
    let coarse = analyze_absorbance(&dense_trace(401, e1), &AnalysisSettings::default()).unwrap();
    let c = coarse.first_exciton_nm.unwrap();
    assert!((got - c).abs() < 0.1, "dense {got} nm, 1 nm sampling {c} nm");
    let hw_dense = r.hwhm_nm.unwrap();
    let hw_coarse = coarse.hwhm_nm.unwrap();
    assert!((hw_dense - hw_coarse).abs() < 0.2, "HWHM {hw_dense} vs {hw_coarse}");
}

/// A synthetic PL band (invented parameters): Gaussian in energy at 600 nm, sigma 0.04 eV,
/// height 1000 counts, sampled at `n` points over 450..800 nm.
fn dense_pl(n: usize) -> Trace {
    let e1 = HC_EV_NM / 600.0;
    let nm: Vec<f64> = (0..n).map(|i| 450.0 + 350.0 * i as f64 / (n - 1) as f64).collect();
    let y = nm
        .iter()
        .map(|&l| 1000.0 * (-(HC_EV_NM / l - e1).powi(2) / (2.0 * 0.04f64.powi(2))).exp())
        .collect();
    Trace { nm, y }
}

#[test]
fn a_dense_pl_spectrum_analyses_in_bounded_memory() {
    let (r, peak) = peak_bytes(|| analyze_pl(&dense_pl(100_000), &AnalysisSettings::default()));
    let r = r.unwrap();
    assert!(peak < 32 * MIB, "PL analysis held {peak} bytes");
    // The peak of a Gaussian in energy is at its centre in wavelength too.
    let got = r.pl_peak_nm.unwrap();
    assert!((got - 600.0).abs() < 0.5, "PL peak {got} nm, built at 600 nm");
    let coarse = analyze_pl(&dense_pl(351), &AnalysisSettings::default()).unwrap();
    let c = coarse.pl_peak_nm.unwrap();
    assert!((got - c).abs() < 0.1, "dense {got} nm, 1 nm sampling {c} nm");
    let (fd, fc) = (r.pl_fwhm_nm.unwrap(), coarse.pl_fwhm_nm.unwrap());
    assert!((fd - fc).abs() < 0.2, "FWHM {fd} vs {fc}");
    assert!((r.pl_integral - coarse.pl_integral).abs() < 1e-3 * coarse.pl_integral);
}

#[test]
fn a_multi_byte_unit_in_a_query_is_an_error_not_a_panic() {
    let e = cuvette::search::parse("conc > 1µµM").unwrap_err().to_string();
    assert!(
        e.contains("column 9") && e.contains("`µµM` is not a unit of conc"),
        "{e}"
    );
    // The units that are meant still read.
    let q = cuvette::search::parse("conc>1µM conc<2uM").unwrap();
    assert_eq!(q.clauses.len(), 2);
    for q in [
        "conc>µ",
        "conc>µM",
        "conc µµ to µ",
        "qy>€%",
        "size €nm",
        "conc>1MµM",
        "size µ3",
        "size 1 to €",
        "size 1-€",
    ] {
        assert!(cuvette::search::parse(q).is_err(), "{q}");
    }
}

#[test]
fn query_errors_count_columns_in_characters() {
    // "µ" is two bytes; the bad upper end starts at character 13 (byte 14).
    let e = cuvette::search::parse("conc 1µM to x").unwrap_err().to_string();
    assert!(e.contains("column 13"), "{e}");
}

#[test]
fn absurdly_long_queries_are_refused_with_their_reason() {
    let long = "a ".repeat(300);
    let e = cuvette::search::parse(&long).unwrap_err().to_string();
    assert!(e.contains("600 characters long") && e.contains("at most 500"), "{e}");
    let word = "w".repeat(65);
    let e = cuvette::search::parse(&format!("CdSe {word}")).unwrap_err().to_string();
    assert!(e.contains("column 6") && e.contains("65 characters long"), "{e}");
    let many = (0..17).map(|i| format!("w{i}")).collect::<Vec<_>>().join(" ");
    let e = cuvette::search::parse(&many).unwrap_err().to_string();
    assert!(e.contains("more than 16 free words"), "{e}");
    // At the limits, queries still parse; a quoted phrase may be longer than a word.
    assert!(cuvette::search::parse(&"w".repeat(64)).is_ok());
    assert!(cuvette::search::parse(&format!("\"{} x\"", "p".repeat(100))).is_ok());
}

#[test]
fn search_over_a_very_long_word_in_a_note_is_bounded() {
    use cuvette::store::model;
    let mut st = cuvette::lab::in_memory("tester").unwrap();
    // One 200,000-character word: every short run of a's then b's is a subsequence of it,
    // which is what makes a fuzzy matcher fill its whole length-by-length table.
    let note = format!("{} washed twice", "ab".repeat(100_000));
    st.write(|tx, who| {
        model::insert_batch(
            tx,
            who,
            &model::NewBatch {
                name: "µµ-probe".into(),
                material: "CdSe".into(),
                notes: Some(note.clone()),
                ..Default::default()
            },
        )
    })
    .unwrap();
    let facts = st.read(|tx| cuvette::search::load_facts(tx)).unwrap();
    let q = cuvette::search::parse(&format!("{}{}", "a".repeat(32), "b".repeat(32))).unwrap();
    let (hits, peak) = peak_bytes(|| cuvette::search::filter(&facts, &q));
    assert!(hits.is_empty(), "a word that long is matched by substring only");
    assert!(peak < 4 * MIB, "filter held {peak} bytes");
    let q = cuvette::search::parse(&"ab".repeat(32)).unwrap();
    assert_eq!(
        cuvette::search::filter(&facts, &q).len(),
        1,
        "a substring still matches"
    );
    let q = cuvette::search::parse("µµ-prob").unwrap();
    assert_eq!(cuvette::search::filter(&facts, &q).len(), 1, "multi-byte names match");
    let q = cuvette::search::parse("wahsed").unwrap();
    assert_eq!(cuvette::search::filter(&facts, &q).len(), 1, "a typo is still forgiven");
}

#[test]
fn a_trace_too_short_to_analyse_is_an_error() {
    let t = Trace {
        nm: vec![500.0, 501.0],
        y: vec![1.0, 2.0],
    };
    assert!(analyze_pl(&t, &AnalysisSettings::default()).is_err());
    assert!(analyze_absorbance(&t, &AnalysisSettings::default()).is_err());
    let empty = Trace { nm: vec![], y: vec![] };
    assert!(analyze_pl(&empty, &AnalysisSettings::default()).is_err());
    assert!(analyze_absorbance(&empty, &AnalysisSettings::default()).is_err());
    let ragged = Trace {
        nm: (0..20).map(|i| 500.0 + i as f64).collect(),
        y: vec![1.0; 5],
    };
    assert!(analyze_pl(&ragged, &AnalysisSettings::default()).is_err());
    assert!(analyze_absorbance(&ragged, &AnalysisSettings::default()).is_err());
}

#[test]
fn an_oversized_keys_file_is_refused_without_reading_it_all() {
    use cuvette::tui::keys::KeyMap;
    let dir = std::env::temp_dir().join(format!("cuvette-keys-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    // A valid JSON object, padded with whitespace past the limit.
    let big = dir.join("big.json");
    std::fs::write(&big, format!("{{\"draw\": \"D\"{}}}", " ".repeat(200 * 1024))).unwrap();
    let small = dir.join("small.json");
    std::fs::write(&small, "{\"draw\": \"D\"}").unwrap();
    // No other test in this file reads CUVETTE_KEYS, and this one sets it and reads it alone.
    unsafe { std::env::set_var("CUVETTE_KEYS", &big) };
    let e = KeyMap::load().err().expect("a 200 KiB keys file is refused");
    assert!(e.contains("big.json") && e.contains("larger than 64 KiB"), "{e}");
    unsafe { std::env::set_var("CUVETTE_KEYS", &small) };
    let k = KeyMap::load().expect("a small keys file loads");
    assert!(
        k.footer(cuvette::tui::keys::Scope::Shelf)
            .iter()
            .any(|(key, n)| key == "D" && *n == "draw")
    );
    unsafe { std::env::remove_var("CUVETTE_KEYS") };
    // A device that never ends is read only up to the limit.
    let (r, peak) = peak_bytes(|| cuvette::tui::keys::read_overrides(std::path::Path::new("/dev/zero")));
    assert!(r.unwrap_err().contains("larger than 64 KiB"));
    assert!(peak < MIB, "held {peak} bytes");
    std::fs::remove_dir_all(&dir).unwrap();
}
