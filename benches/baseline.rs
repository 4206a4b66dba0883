//! Speed of the baseline: automatic selection on 36 months (every candidate
//! plus the rolling-origin backtest) and the simulation of 10,000 paths of
//! 12 months. Targets (release): under 20 ms and under 50 ms.

use criterion::{criterion_group, criterion_main, Criterion};
use furrow::baseline::{forecast, select, BaselineOptions, Init};
use std::hint::black_box;

/// 36 months with trend, yearly season and a deterministic wobble.
fn series() -> Vec<f64> {
    (0..36)
        .map(|t| {
            let tf = t as f64;
            let season = 1.0 + 0.25 * (2.0 * std::f64::consts::PI * tf / 12.0).sin();
            (1000.0 + 12.0 * tf) * season + 30.0 * (tf * 1.7).sin()
        })
        .collect()
}

fn bench_auto(c: &mut Criterion) {
    let y = series();
    let opts = BaselineOptions::default();
    c.bench_function("auto_select_36_months", |b| {
        b.iter(|| select::auto(black_box(&y), &opts))
    });
    let est = BaselineOptions {
        init: Init::Estimated,
        ..BaselineOptions::default()
    };
    c.bench_function("auto_select_36_months_estimated_init", |b| {
        b.iter(|| select::auto(black_box(&y), &est))
    });
}

fn bench_paths(c: &mut Criterion) {
    let y = series();
    let fc = forecast(
        &y,
        None,
        &BaselineOptions {
            paths: 100,
            ..BaselineOptions::default()
        },
    )
    .expect("fit");
    c.bench_function("simulate_10000_paths_12_months", |b| {
        b.iter(|| fc.simulate_paths(black_box(10_000), 7))
    });
    let opts = BaselineOptions::default();
    c.bench_function("forecast_auto_36_months_with_10000_paths", |b| {
        b.iter(|| forecast(black_box(&y), None, &opts))
    });
}

criterion_group!(benches, bench_auto, bench_paths);
criterion_main!(benches);
