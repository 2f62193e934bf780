//! Criterion benchmarks of the absorbance analysis stage by stage, on the bench's own
//! 601-point spectrum (`benches/perf.rs`'s `analyze one`): the even wavelength copy, the
//! energy grid, the local noise, the candidate search at five widths, the choice of the first
//! transition, the band-edge fit, and the whole analysis, so a change shows where it saved.
//! Run: `cargo bench --bench analysis_stages`.

use criterion::{Criterion, criterion_group, criterion_main};
use cuvette::spectra::Trace;
use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance, uniform};
use cuvette::spectra::band_edge::{BandEdgeHint, energy_grid, first_transition, stages};
use std::hint::black_box;

fn spectrum() -> Trace {
    let (x, y) = cuvette::lab::demo::absorbance("CdSe", 550.0, 0.045, 0.3, 0.001, &mut cuvette::lab::demo::Rng::new(1));
    Trace { nm: x, y }
}

fn stages_of_one(c: &mut Criterion) {
    let t = spectrum();
    let set = AnalysisSettings::default();
    let prepared = stages::prepare(&t).expect("the bench spectrum has a band edge");
    let mut g = c.benchmark_group("analysis stages, one 601-point spectrum");
    g.bench_function("even wavelength copy", |b| b.iter(|| uniform(black_box(&t))));
    g.bench_function("energy grid", |b| b.iter(|| energy_grid(black_box(&t))));
    g.bench_function("local noise", |b| b.iter(|| stages::noise(black_box(&prepared))));
    g.bench_function("candidates at five widths", |b| {
        b.iter(|| stages::candidates(black_box(&prepared)))
    });
    g.bench_function("choice of the first transition", |b| {
        b.iter(|| stages::choose(black_box(&prepared)))
    });
    g.bench_function("band-edge fit", |b| b.iter(|| stages::fit(black_box(&prepared))));
    g.bench_function("first transition, all stages", |b| {
        b.iter(|| first_transition(black_box(&t), &BandEdgeHint::default(), 2.0))
    });
    g.bench_function("whole analysis", |b| b.iter(|| analyze_absorbance(black_box(&t), &set)));
    g.finish();
}

/// The same over 100 bench spectra (first excitons 500-599 nm), as `analyze files` reads them.
fn hundred(c: &mut Criterion) {
    let set = AnalysisSettings::default();
    let traces: Vec<Trace> = (0..100)
        .map(|i| {
            let (x, y) = cuvette::lab::demo::absorbance(
                "CdSe",
                500.0 + i as f64,
                0.045,
                0.3,
                0.001,
                &mut cuvette::lab::demo::Rng::new(i as u64),
            );
            Trace { nm: x, y }
        })
        .collect();
    let mut g = c.benchmark_group("analysis stages, 100 spectra");
    g.bench_function("whole analysis of 100 spectra", |b| {
        b.iter(|| {
            traces
                .iter()
                .filter_map(|t| analyze_absorbance(black_box(t), &set).ok())
                .count()
        })
    });
    g.finish();
}

criterion_group!(benches, stages_of_one, hundred);
criterion_main!(benches);
