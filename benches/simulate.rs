//! The Monte Carlo on the demo plan (600 keywords, 10 clusters x 3 tiers,
//! 12 months): 10,000 futures, and the central estimate. The demo is
//! regenerated from its seeded generator into a temporary folder, so the
//! bench does not depend on the checkout's demo-data/ being current.
//! Run with `cargo bench --bench simulate`.

use criterion::{criterion_group, criterion_main, Criterion};
use furrow::plan::Overrides;
use std::time::Duration;

mod support;

fn bench(c: &mut Criterion) {
    let tmp = tempfile::tempdir().expect("temporary folder");
    let plan = support::demo_plan(tmp.path());
    let inputs = furrow::inputs::load::load(&plan, &Overrides::default()).expect("inputs");
    let model = furrow::simulate::prepare(&inputs).expect("model");
    let mut g = c.benchmark_group("simulate");
    g.sample_size(10).measurement_time(Duration::from_secs(15));
    g.bench_function("demo_10000_futures", |b| {
        b.iter(|| {
            let opts = furrow::simulate::RunOptions {
                scenarios: 10_000,
                seed: 1,
                max_memory: 1 << 34,
                progress: None,
            };
            furrow::simulate::run(&model, &opts).expect("runs")
        })
    });
    g.bench_function("demo_estimate", |b| {
        b.iter(|| furrow::estimate::estimate(&model, "EUR"))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
