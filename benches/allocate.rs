//! Benchmarks of `allocate::solve` on random tiered instances (clusters of
//! three tiers, diminishing, correlated, skewed returns, budget 40 % of the
//! total cost, CVaR limit halfway between the smallest achievable tail loss
//! and the unconstrained optimum's, so it binds).
//!
//! Each instance is also written to `FURROW_BENCH_DIR` (default: the system
//! temp dir + `furrow-allocate-bench`) as `<name>.json` (metadata, and the
//! optimum found here) and `<name>.returns.f32` (little-endian, scenario-major),
//! so that tests/reference/allocate_bench_scipy.py times scipy's HiGHS on the
//! identical data.

use criterion::{criterion_group, criterion_main, Criterion};
use furrow::allocate::synthetic::{binding_limit, tiered_instance, SyntheticSpec};
use furrow::allocate::{solve, Problem, SolveOptions};
use std::hint::black_box;
use std::path::PathBuf;
use std::time::Duration;

const CASES: [(&str, usize, usize); 3] = [
    ("t30_s10000", 10, 10_000),
    ("t300_s5000", 100, 5_000),
    ("t30_s100000", 10, 100_000),
];

fn bench_dir() -> PathBuf {
    std::env::var_os("FURROW_BENCH_DIR")
        .map(PathBuf::from)
        .unwrap_or_else(|| std::env::temp_dir().join("furrow-allocate-bench"))
}

fn build(clusters: usize, scenarios: usize) -> Problem {
    let mut p = tiered_instance(SyntheticSpec {
        clusters,
        tiers: 3,
        scenarios,
        seed: 20_240_601,
    });
    let limit = binding_limit(&p, 0.5, &SolveOptions::default()).expect("limit");
    p.max_tail_loss = Some(limit);
    p
}

fn write(name: &str, p: &Problem, optimum: f64) -> std::io::Result<()> {
    let dir = bench_dir();
    std::fs::create_dir_all(&dir)?;
    let bytes: Vec<u8> = p.returns.iter().flat_map(|r| r.to_le_bytes()).collect();
    std::fs::write(dir.join(format!("{name}.returns.f32")), bytes)?;
    let meta = serde_json::json!({
        "ids": p.ids, "costs": p.costs, "requires": p.requires,
        "min_fraction": p.min_fraction, "max_fraction": p.max_fraction,
        "scenarios": p.scenarios, "budget": p.budget, "tail_level": p.tail_level,
        "max_tail_loss": p.max_tail_loss, "furrow_optimum": optimum,
    });
    std::fs::write(dir.join(format!("{name}.json")), meta.to_string())
}

fn allocate(c: &mut Criterion) {
    let mut group = c.benchmark_group("allocate");
    group
        .sample_size(10)
        .measurement_time(Duration::from_secs(8));
    for (name, clusters, scenarios) in CASES {
        let p = build(clusters, scenarios);
        let a = solve(&p, &SolveOptions::default()).expect("solves");
        if let Err(e) = write(name, &p, a.expected_net_return) {
            eprintln!("could not write the instance for the scipy comparison: {e}");
        }
        group.bench_function(name, |b| {
            b.iter(|| solve(black_box(&p), &SolveOptions::default()))
        });
    }
    group.finish();
}

criterion_group!(benches, allocate);
criterion_main!(benches);
