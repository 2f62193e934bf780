//! Criterion benchmark of parse throughput (issue 13, point 5): bytes of delimited text read to
//! spectra per second, for a typical 601-point two-column CSV and for a 100,000-point one, and
//! for a real multi-column export shape (one x column, 14 sample columns). The files are
//! synthetic (invented numbers written here) and held in memory, so the figure is parsing
//! alone, not the disk.
//! Run: `cargo bench --bench parse`.

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use cuvette::spectra::{ReadOptions, read_all, read_bytes};
use std::hint::black_box;

/// A CSV as a spectrometer writes it: a header, then x in nm with four decimals and an
/// absorbance with six.
fn csv(points: usize) -> Vec<u8> {
    let mut s = String::from("Wavelength (nm),Absorbance\n");
    for i in 0..points {
        let nm = 200.0 + 600.0 * i as f64 / (points - 1) as f64;
        let a = 0.05 + 0.8 * (-(nm - 350.0) / 90.0).exp() + 0.2 * (-((nm - 520.0) / 15.0).powi(2)).exp();
        s.push_str(&format!("{nm:.4},{a:.6}\n"));
    }
    s.into_bytes()
}

/// One x column and `samples` y columns, as a growth series is exported.
fn series(points: usize, samples: usize) -> Vec<u8> {
    let mut s = String::from("Wavelength (nm)");
    for k in 0..samples {
        s.push_str(&format!(",{} s", 20 * (k + 1)));
    }
    s.push('\n');
    for i in 0..points {
        let nm = 800.0 - 450.0 * i as f64 / (points - 1) as f64;
        s.push_str(&format!("{nm:.7}"));
        for k in 0..samples {
            let a = 0.01 * (k + 1) as f64 + 0.5 * (-(nm - 350.0) / 120.0).exp();
            s.push_str(&format!(",{a:.9}"));
        }
        s.push('\n');
    }
    s.into_bytes()
}

/// The shape of the files `analyze` is timed on (benches/perf.rs writes 10,000 of them): whole
/// nanometres and an absorbance with six decimals.
fn analyze_file(points: usize) -> Vec<u8> {
    let mut s = String::from("Wavelength (nm),Absorbance\n");
    for i in 0..points {
        let nm = 300 + i;
        let a = 0.05 + 0.8 * (-(nm as f64 - 350.0) / 90.0).exp();
        s.push_str(&format!("{nm},{a:.6}\n"));
    }
    s.into_bytes()
}

fn parse(c: &mut Criterion) {
    let opts = ReadOptions::default();
    let mut g = c.benchmark_group("parse");
    for (name, bytes) in [
        ("csv_601_points", csv(601)),
        ("csv_100k_points", csv(100_000)),
        ("analyze_shape_601_points", analyze_file(601)),
    ] {
        g.throughput(Throughput::Bytes(bytes.len() as u64));
        g.bench_function(name, |b| {
            b.iter(|| read_bytes("bench.csv", black_box(&bytes), &opts).expect("reads"))
        });
    }
    let wide = series(451, 14);
    g.throughput(Throughput::Bytes(wide.len() as u64));
    g.bench_function("csv_451_points_14_columns", |b| {
        b.iter(|| read_all("bench.csv", black_box(&wide), &opts).expect("reads"))
    });
    g.finish();
}

criterion_group!(benches, parse);
criterion_main!(benches);
