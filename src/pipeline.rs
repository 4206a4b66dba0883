//! The work most commands share, done once and in one way: load the plan,
//! prepare the model, forecast the baseline, simulate the futures, build the
//! allocation problem from the plan's tiers and budget. `allocate`,
//! `frontier`, `stress`, `track` and `report` all start here, so they agree.
//! Before anything is simulated, the whole command's peak memory and run
//! time are estimated ([`crate::simulate::budget`]) for the work it will do
//! after the simulation ([`Work`]), and a run above the limits is refused.

use crate::allocate::{self, Allocation, Problem, SolveOptions};
use crate::baseline::run::PlanBaseline;
use crate::baseline::{BaselineOptions, Method};
use crate::error::Result;
use crate::inputs::load::Inputs;
use crate::simulate::budget::{self, Costs, Job, Sizes};
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

/// What a command does with the futures after simulating them: sizes the
/// memory and time estimates of the whole command.
#[derive(Debug, Clone, PartialEq, Default)]
pub enum Work {
    /// `simulate` (with `--dump-scenarios` when `dump`).
    Simulate { dump: bool },
    /// `allocate` on a plan.
    #[default]
    Allocate,
    /// `frontier` with this many points.
    Frontier { points: usize },
    /// `track`.
    Track,
    /// `stress` with these presets (empty: the plan's list or all), and
    /// the preset of `--optimize-under`.
    Stress {
        presets: Vec<String>,
        optimize_under: Option<String>,
    },
    /// `report`.
    Report,
}

/// The limits a command runs under and who hears of its costs.
#[derive(Default)]
pub struct Limits<'a> {
    /// What the command does after the simulation.
    pub work: Work,
    /// Longest estimated run accepted, in seconds (`None`: any).
    pub max_seconds: Option<f64>,
    /// Told the estimates once they are within the limits, before the
    /// simulation starts (the command line prints a note for long runs).
    pub on_costs: Option<&'a (dyn Fn(&Costs) + Sync)>,
}

/// The sizes of a loaded plan's job at its scenario count.
pub fn sizes(inputs: &Inputs, model: &Model) -> Sizes {
    let words = &inputs.keywords.keywords;
    Sizes {
        input_keywords: words.len(),
        input_text_bytes: words.iter().map(|k| k.text.len() as u64).sum(),
        ..Sizes::of(model, inputs.plan.scenarios)
    }
}

/// The estimate inputs of `work`: its job (with the stress presets read).
pub fn job(inputs: &Inputs, model: &Model, work: &Work) -> Result<Job> {
    use crate::analysis::{preset_names_of, stress_sizes};
    Ok(match work {
        Work::Simulate { dump } => Job::Simulate { dump: *dump },
        Work::Allocate => Job::Allocate,
        Work::Frontier { points } => Job::Frontier { points: *points },
        Work::Track => Job::Track,
        Work::Stress {
            presets,
            optimize_under,
        } => {
            let names = preset_names_of(inputs, presets);
            Job::Stress {
                stress: stress_sizes(inputs, model, &names, optimize_under.as_deref())?,
                optimize_under: optimize_under.is_some(),
            }
        }
        Work::Report => {
            let names = preset_names_of(inputs, &[]);
            Job::Report {
                stress: stress_sizes(inputs, model, &names, None)?,
            }
        }
    })
}

/// Estimates the command's memory and run time, refuses it above
/// `max_memory` or `limits.max_seconds`, and tells `limits.on_costs`.
pub fn guard(inputs: &Inputs, model: &Model, max_memory: u64, limits: &Limits) -> Result<Costs> {
    let job = job(inputs, model, &limits.work)?;
    let z = sizes(inputs, model);
    budget::check_memory(&job, &z, max_memory)?;
    let costs = Costs::of(&job, &z);
    budget::check_run_time(&costs.time, limits.max_seconds)?;
    if let Some(tell) = limits.on_costs {
        tell(&costs);
    }
    Ok(costs)
}

/// Prepares, forecasts and simulates a loaded plan (guarded as `allocate`,
/// with no time limit).
pub fn simulate(inputs: Inputs, opts: &SimOptions) -> Result<Simulated> {
    simulate_with(inputs, opts, &Limits::default())
}

/// Prepares a loaded plan, checks the whole command against `limits` and
/// the memory limit, then forecasts and simulates it.
pub fn simulate_with(inputs: Inputs, opts: &SimOptions, limits: &Limits) -> Result<Simulated> {
    let model = simulate::prepare(&inputs)?;
    guard(&inputs, &model, opts.max_memory, limits)?;
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
