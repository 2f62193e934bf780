//! Criterion benchmarks of the lab's actions end to end, as a person at the bench runs them:
//! adding an aliquot with two 601-point spectra (an absorbance and a PL export read from files,
//! analysed, written with its derived values, the summary returned), to a lab of a few hundred
//! batches. Run: `cargo bench --bench lab_actions` (README's Performance section has the
//! figures before and after the use-case layer).

use criterion::{Criterion, criterion_group, criterion_main};
use cuvette::lab::bench::{Door, SpectrumFile};
use cuvette::store::model::NewAliquot;
use std::hint::black_box;
use std::path::{Path, PathBuf};

const HC_EV_NM: f64 = 1239.841984;

/// Two invented exports of 601 points each, 300-900 nm on a 1 nm grid: the demo's CdSe
/// absorbance with its first exciton at 560 nm, and a PL band at 575 nm (a Gaussian in energy,
/// 40 meV wide, on a dark-count baseline).
fn spectrum_files(dir: &Path) -> (PathBuf, PathBuf) {
    let abs = dir.join("abs_601.csv");
    let pl = dir.join("pl_601.csv");
    let mut rng = cuvette::lab::demo::Rng::new(7);
    let (x, y) = cuvette::lab::demo::absorbance("CdSe", 560.0, 0.045, 0.3, 0.001, &mut rng);
    let mut s = String::from("Wavelength (nm),Absorbance\n");
    for (a, b) in x.iter().zip(&y).filter(|(a, _)| (300.0..=900.0).contains(*a)) {
        s.push_str(&format!("{a},{b:.6}\n"));
    }
    std::fs::write(&abs, s).expect("write abs");
    let e0 = HC_EV_NM / 575.0;
    let mut s = String::from("Wavelength (nm),Intensity (counts)\n");
    for i in 0..601 {
        let l = 300.0 + i as f64;
        let z = (HC_EV_NM / l - e0) / 0.040;
        s.push_str(&format!("{l},{:.3}\n", 20.0 + 5.0e4 * (-0.5 * z * z).exp()));
    }
    std::fs::write(&pl, s).expect("write pl");
    (abs, pl)
}

fn add_aliquot(c: &mut Criterion) {
    let dir = tempfile::tempdir().expect("temp folder");
    let (abs, pl) = spectrum_files(dir.path());
    let db = dir.path().join("lab.db");
    let mut store = cuvette::lab::open(&db, "bench").expect("open");
    cuvette::lab::demo::build(&mut store, Some(300), |_, _| {}).expect("build");
    let batch = cuvette::lab::batches::log_batch(
        &mut store,
        &cuvette::store::model::NewBatch {
            name: "bench growth".into(),
            material: "CdSe".into(),
            status: Some(cuvette::vocab::BatchStatus::Growing),
            ..Default::default()
        },
    )
    .expect("batch")
    .id;
    let files = [
        SpectrumFile {
            path: abs,
            kind: "abs",
            ..Default::default()
        },
        SpectrumFile {
            path: pl,
            kind: "pl",
            excitation_nm: Some(400.0),
            ..Default::default()
        },
    ];
    // The same two files each time: the bench logs them again on purpose.
    let door = Door {
        again: true,
        ..Default::default()
    };
    let mut minutes = 0.0;
    let mut g = c.benchmark_group("lab actions");
    g.sample_size(30);
    g.bench_function("add an aliquot, two 601-point spectra, end to end", |b| {
        b.iter(|| {
            minutes += 1.0;
            let a = NewAliquot {
                batch_id: batch,
                minutes: Some(minutes),
                stage: None,
                dilution_factor: 20.0,
                path_cm: 1.0,
                solvent: "hexane".into(),
                taken_at: None,
            };
            cuvette::lab::bench::add_aliquot(&mut store, black_box(&a), &files, &Default::default(), &door)
                .expect("add aliquot")
        })
    });
    g.finish();
}

criterion_group!(benches, add_aliquot);
criterion_main!(benches);
