//! Criterion benchmarks: analysing one spectrum, analysing many files, recompute against merely
//! reading the spectra, a search query on 10,000 batches, and drawing the batch list.
//! The large labs are built once with the demo generator and cached under target/.
//! Run: `cargo bench --bench perf` (README's Performance section has the figures).

use criterion::{Criterion, criterion_group, criterion_main};
use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance};
use cuvette::spectra::{ReadOptions, Trace};
use std::hint::black_box;
use std::path::PathBuf;

fn lab(batches: usize) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("target")
        .join("bench-labs");
    std::fs::create_dir_all(&dir).expect("bench folder");
    let path = dir.join(format!("lab-{batches}.db"));
    if !path.exists() {
        let tmp = dir.join(format!("lab-{batches}.building"));
        let _ = std::fs::remove_file(&tmp);
        let mut st = cuvette::lab::open(&tmp, "bench").expect("open");
        cuvette::lab::demo::build(&mut st, Some(batches), |_, _| {}).expect("build");
        drop(st);
        std::fs::rename(&tmp, &path).expect("rename");
        for ext in ["-wal", "-shm"] {
            let _ = std::fs::remove_file(dir.join(format!("lab-{batches}.building{ext}")));
        }
    }
    path
}

fn spectrum() -> Trace {
    let (x, y) = cuvette::lab::demo::absorbance("CdSe", 550.0, 0.045, 0.3, 0.001, &mut cuvette::lab::demo::Rng::new(1));
    Trace { nm: x, y }
}

fn analysis(c: &mut Criterion) {
    let t = spectrum();
    let set = AnalysisSettings::default();
    c.bench_function("analyze one 601-point absorbance spectrum", |b| {
        b.iter(|| analyze_absorbance(black_box(&t), &set))
    });
}

fn many_files(c: &mut Criterion) {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("target")
        .join("bench-files");
    std::fs::create_dir_all(&dir).expect("files folder");
    // 10,000 files are written once (the notebook pipeline is timed over all of them); the
    // criterion run reads the first 1,000.
    let n = 10_000;
    let files: Vec<PathBuf> = (0..n)
        .map(|i| {
            let p = dir.join(format!("abs_{i:05}.csv"));
            if !p.exists() {
                let (x, y) = cuvette::lab::demo::absorbance(
                    "CdSe",
                    500.0 + (i % 100) as f64,
                    0.045,
                    0.3,
                    0.001,
                    &mut cuvette::lab::demo::Rng::new(i as u64),
                );
                let mut s = String::from("Wavelength (nm),Absorbance\n");
                for (a, b) in x.iter().zip(&y) {
                    s.push_str(&format!("{a},{b:.6}\n"));
                }
                std::fs::write(&p, s).expect("write");
            }
            p
        })
        .collect();
    let set = AnalysisSettings::default();
    let mut g = c.benchmark_group("analyze files");
    g.sample_size(10);
    g.bench_function("read and analyse 1,000 export files on 2 threads", |b| {
        b.iter(|| {
            cuvette::report::parallel_map(&files[..1000], 2, |p| {
                let (raw, _) = cuvette::spectra::read_file(p, &ReadOptions::default()).expect("read");
                analyze_absorbance(&raw.to_trace("f", None).expect("trace"), &set)
                    .expect("analyse")
                    .first_exciton_nm
            })
        })
    });
    g.finish();
}

/// A copy of a lab in which the CdSe curve has just been changed, so every CdSe value is stale.
fn lab_after_curve_change(batches: usize) -> PathBuf {
    let src = lab(batches);
    let dst = src.with_file_name(format!("lab-{batches}-curve.db"));
    if !dst.exists() {
        let tmp = src.with_file_name(format!("lab-{batches}-curve.building"));
        std::fs::copy(&src, &tmp).expect("copy");
        let mut st = cuvette::lab::open(&tmp, "bench").expect("open");
        st.write(|tx, who| {
            let mut body = cuvette::lab::calibrations::latest(tx)?.body;
            body.set_curve("CdSe", "jasieniak2009");
            cuvette::lab::calibrations::save(tx, who, "bench: curve change", &body)?;
            cuvette::lab::derivation::mark_stale(tx)
        })
        .expect("change curve");
        drop(st);
        std::fs::rename(&tmp, &dst).expect("rename");
    }
    dst
}

fn read_all_spectra(path: &std::path::Path) -> usize {
    let conn = rusqlite::Connection::open(path).expect("open");
    let mut st = conn.prepare("SELECT data FROM spectrum").expect("prepare");
    let mut rows = st.query([]).expect("query");
    let mut n = 0usize;
    while let Some(r) = rows.next().expect("row") {
        let blob: Vec<u8> = r.get(0).expect("blob");
        n += cuvette::store::decode_xy(&blob).expect("decode").0.len();
    }
    n
}

fn recompute_group(c: &mut Criterion, batches: usize, label: &str) {
    let path = lab(batches);
    let changed = lab_after_curve_change(batches);
    let mut g = c.benchmark_group(format!("recompute, {label}"));
    g.sample_size(10);
    g.bench_function("read every spectrum out of the database", |b| {
        b.iter(|| read_all_spectra(&path))
    });
    g.bench_function("recompute after a curve change (dry run)", |b| {
        b.iter(|| {
            let mut st = cuvette::lab::open(&changed, "bench").expect("open");
            st.read(|tx| cuvette::lab::derivation::recompute(tx, false, true, |_, _| {}))
                .expect("recompute")
        })
    });
    g.bench_function("recompute --all, spectra analysed again (dry run)", |b| {
        b.iter(|| {
            let mut st = cuvette::lab::open(&path, "bench").expect("open");
            st.read(|tx| cuvette::lab::derivation::recompute(tx, true, true, |_, _| {}))
                .expect("recompute")
        })
    });
    g.finish();
}

fn recompute(c: &mut Criterion) {
    recompute_group(c, 2000, "6,000 aliquots");
    // The 100,000-aliquot lab takes minutes to build; ask for it with CUVETTE_BENCH_BIG=1.
    if std::env::var_os("CUVETTE_BENCH_BIG").is_some() {
        recompute_group(c, 33_334, "100,000 aliquots");
    }
}

fn search(c: &mut Criterion) {
    let path = lab(10000);
    let st = cuvette::lab::open(&path, "bench").expect("open");
    let facts = cuvette::search::load_facts(&st.conn).expect("facts");
    let q = cuvette::search::parse("CdSe size 3 to 3.5 qy > 30% stock").expect("parse");
    let words = cuvette::search::parse("Halloway oleylamine").expect("parse");
    let mut g = c.benchmark_group("search 10,000 batches");
    g.bench_function("filters", |b| b.iter(|| cuvette::search::filter(black_box(&facts), &q)));
    g.bench_function("fuzzy words", |b| {
        b.iter(|| cuvette::search::filter(black_box(&facts), &words))
    });
    g.sample_size(10);
    g.bench_function("load facts from the file", |b| {
        b.iter(|| cuvette::search::load_facts(&st.conn).expect("facts"))
    });
    g.finish();
}

fn render(c: &mut Criterion) {
    use ratatui::Terminal;
    use ratatui::backend::TestBackend;
    let path = lab(10000);
    let keys = || cuvette::tui::keys::KeyMap::new(&Default::default()).expect("keys");
    let mut g = c.benchmark_group("ui on 10,000 batches");
    g.sample_size(10);
    g.bench_function("first frame (open, load, draw 80x24)", |b| {
        b.iter(|| {
            let app = cuvette::tui::app::App::new(cuvette::lab::open(&path, "bench").expect("open"), keys());
            let mut t = Terminal::new(TestBackend::new(80, 24)).expect("terminal");
            t.draw(|f| cuvette::tui::draw::draw(f, &app)).expect("draw");
        })
    });
    let mut app = cuvette::tui::app::App::new(cuvette::lab::open(&path, "bench").expect("open"), keys());
    let mut t = Terminal::new(TestBackend::new(80, 24)).expect("terminal");
    g.sample_size(50);
    g.bench_function("keystroke in the search box: re-filter and redraw", |b| {
        let mut flip = false;
        b.iter(|| {
            flip = !flip;
            app.query = if flip {
                "CdSe size:3..3.5".into()
            } else {
                "CdSe size:3..3.".into()
            };
            app.refilter();
            t.draw(|f| cuvette::tui::draw::draw(f, &app)).expect("draw");
        })
    });
    g.finish();
}

criterion_group!(benches, analysis, many_files, recompute, search, render);
criterion_main!(benches);
