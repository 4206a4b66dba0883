//! The whole report on the demo plan at its 10,000 futures: load, baseline,
//! simulate, allocate, target odds, the six stress presets, drivers,
//! tracking, frontier and every file written to a temporary folder. The
//! process start (a few milliseconds) is the only part of
//! `furrow report demo-data/plan.toml` it leaves out; `benches/compare.sh`
//! times the command itself against another build.
//! Run with `cargo bench --bench report`.

use criterion::{criterion_group, criterion_main, Criterion};
use furrow::plan::Overrides;
use std::time::Duration;

mod support;

fn bench(c: &mut Criterion) {
    let tmp = tempfile::tempdir().expect("temporary folder");
    let plan_path = support::demo_plan(tmp.path());
    let out = tmp.path().join("report");
    let mut g = c.benchmark_group("report");
    g.sample_size(10).measurement_time(Duration::from_secs(20));
    g.bench_function("demo_10000_futures", |b| {
        b.iter(|| {
            let inputs =
                furrow::inputs::load::load(&plan_path, &Overrides::default()).expect("inputs");
            let opts = furrow::report::ReportOptions {
                out: Some(&out),
                max_memory: 1 << 34,
                progress: None,
                ..Default::default()
            };
            furrow::report::run(inputs, &opts).expect("report")
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
