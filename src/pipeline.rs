//! The work most commands share, done once and in one way: load the plan,
//! prepare the model, forecast the baseline, simulate the futures, build the
//! allocation problem from the plan's tiers and budget. `allocate`,
//! `frontier`, `stress`, `track` and `report` all start here, so they agree.

use crate::allocate::{self, Allocation, Problem, SolveOptions};
use crate::baseline::run::PlanBaseline;
use crate::baseline::{BaselineOptions, Method};
use crate::error::Result;
use crate::inputs::load::Inputs;
use crate::simulate::{self, Futures, Model, RunOptions};

/// Everything simulated for one plan.
pub struct Simulated {
    /// The loaded plan and inputs.
    pub inputs: Inputs,
    /// The prepared model.
    pub model: Model,
    /// The baseline forecast over the plan's months.
    pub baseline: PlanBaseline,
    /// Baseline clicks paths, one per future (`S x horizon`).
    pub baseline_paths: Vec<f64>,
    /// The futures.
    pub futures: Futures,
}

/// Options of a simulation run.
pub struct SimOptions<'a> {
    /// Memory limit in bytes.
    pub max_memory: u64,
    /// Progress callback (futures done).
    pub progress: Option<&'a (dyn Fn(usize) + Sync)>,
}

/// The baseline options the plan asks for, over its horizon.
pub fn baseline_options(inputs: &Inputs) -> Result<BaselineOptions> {
    let cfg = &inputs.plan.file.baseline;
    Ok(BaselineOptions {
        method: Method::parse(cfg.method.as_deref().unwrap_or("auto"))?,
        horizon: inputs.plan.horizon,
        bootstrap: cfg.bootstrap.unwrap_or(false),
        seed: inputs.plan.seed,
        paths: 2_000,
        ..BaselineOptions::default()
    })
}

/// Forecasts the baseline of clicks for the plan.
pub fn baseline(inputs: &Inputs) -> Result<PlanBaseline> {
    let opts = baseline_options(inputs)?;
    crate::baseline::run::run(
        &inputs.history,
        inputs.interest.as_ref(),
        "clicks",
        inputs.start,
        &opts,
    )
}

/// Prepares, forecasts and simulates a loaded plan.
pub fn simulate(inputs: Inputs, opts: &SimOptions) -> Result<Simulated> {
    let model = simulate::prepare(&inputs)?;
    let run = RunOptions {
        scenarios: inputs.plan.scenarios,
        seed: inputs.plan.seed,
        max_memory: opts.max_memory,
        progress: opts.progress,
    };
    // The baseline (one thread) is forecast beside the Monte Carlo.
    let (base, futures) = rayon::join(
        || -> Result<_> {
            let b = baseline(&inputs)?;
            let paths = b.paths(inputs.plan.scenarios, inputs.plan.seed);
            Ok((b, paths))
        },
        || simulate::run(&model, &run),
    );
    let futures = futures?;
    let (baseline, baseline_paths) = base?;
    Ok(Simulated {
        inputs,
        model,
        baseline,
        baseline_paths,
        futures,
    })
}

impl Simulated {
    /// The allocation problem of the plan: its tiers (each requiring the
    /// tier below), bounds, budget, tail level and limit.
    pub fn problem(&self) -> Problem {
        let m = &self.model;
        let f = &self.futures;
        let ids: Vec<String> = f.slots.iter().map(|&(c, t)| m.slot_id(c, t)).collect();
        let costs = f
            .slots
            .iter()
            .map(|&(c, t)| m.clusters[c].tiers[t].cost)
            .collect();
        let mut p = Problem::new(
            ids,
            costs,
            f.scenarios,
            simulate::net_returns(m, f),
            self.inputs.plan.budget,
        );
        p.min_fraction = f
            .slots
            .iter()
            .map(|&(c, t)| m.clusters[c].tiers[t].min_fraction)
            .collect();
        p.max_fraction = f
            .slots
            .iter()
            .map(|&(c, t)| m.clusters[c].tiers[t].max_fraction)
            .collect();
        p.requires = f
            .slots
            .iter()
            .enumerate()
            .map(|(j, &(_, t))| (t > 0).then(|| j - 1))
            .collect();
        p.tail_level = self.inputs.plan.tail_level;
        p.max_tail_loss = self.inputs.plan.max_tail_loss;
        p
    }

    /// Solves the plan's allocation.
    pub fn allocate(&self, opts: &SolveOptions) -> Result<Allocation> {
        Ok(allocate::solve(&self.problem(), opts)?)
    }

    /// Funded fractions of an allocation in slot order.
    pub fn fractions(&self, a: &Allocation) -> Vec<f64> {
        a.allocation.iter().map(|i| i.fraction).collect()
    }
}
