//! Shared helpers of the target, stress, drivers and tracking tests: a
//! project made by `furrow init` (loaded through the library), a seeded
//! Monte Carlo run, and synthetic baseline paths (the baseline module is
//! separate; these paths only need the right shape and a persistent level).
#![allow(dead_code)]

use furrow::inputs::load::Inputs;
use furrow::plan::Overrides;
use furrow::rng::{domain, stream};
use furrow::simulate::{Futures, Model, RunOptions};
use rand_distr::{Distribution, StandardNormal};
use std::path::Path;

/// A temporary `furrow init` project, its inputs and prepared model.
pub fn project() -> (tempfile::TempDir, Inputs, Model) {
    project_edited(&|_| {})
}

/// The same after `edit` changed files in the project folder.
pub fn project_edited(edit: &dyn Fn(&Path)) -> (tempfile::TempDir, Inputs, Model) {
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let dir = tmp.path().join("p");
    furrow::init::init(&dir).expect("init writes a project");
    edit(&dir);
    let inputs = furrow::inputs::load::load(&dir.join("plan.toml"), &Overrides::default())
        .expect("the init project loads");
    let model = furrow::simulate::prepare(&inputs).expect("the model prepares");
    (tmp, inputs, model)
}

/// `n` futures of `model` with `seed`.
pub fn run(model: &Model, n: usize, seed: u64) -> Futures {
    let opts = RunOptions {
        scenarios: n,
        seed,
        max_memory: 1 << 30,
        progress: None,
    };
    furrow::simulate::run(model, &opts).expect("the Monte Carlo runs")
}

/// Run options for `n` futures with `seed`.
pub fn options(n: usize, seed: u64) -> RunOptions<'static> {
    RunOptions {
        scenarios: n,
        seed,
        max_memory: 1 << 30,
        progress: None,
    }
}

/// Baseline paths `S × horizon`: last year's clicks of the same calendar
/// month, times a per-path level `exp(level_sd · z)` and a monthly noise
/// `exp(noise_sd · z_m)`.
pub fn baseline(
    inputs: &Inputs,
    model: &Model,
    s: usize,
    level_sd: f64,
    noise_sd: f64,
) -> Vec<f64> {
    let clicks = inputs.history.get("clicks").expect("history clicks");
    let months = &inputs.history.months;
    let n = clicks.len();
    let mut by_month = [0.0; 12];
    for i in n - 12..n {
        by_month[months[i].month0()] = clicks[i];
    }
    let mut out = Vec::with_capacity(s * model.horizon());
    for p in 0..s {
        let mut rng = stream(77, domain::TEST, p as u64);
        let z: f64 = StandardNormal.sample(&mut rng);
        let level = (level_sd * z).exp();
        for m in &model.months {
            let e: f64 = StandardNormal.sample(&mut rng);
            out.push(by_month[m.month0()] * level * (noise_sd * e).exp());
        }
    }
    out
}

/// Every tier of every cluster funded.
pub fn all_tiers(f: &Futures) -> Vec<f64> {
    vec![1.0; f.slots.len()]
}

/// Every cluster's first tier funded.
pub fn first_tiers(f: &Futures) -> Vec<f64> {
    f.slots
        .iter()
        .map(|&(_, t)| if t == 0 { 1.0 } else { 0.0 })
        .collect()
}
