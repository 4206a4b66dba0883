//! The answers asked for in the budget meeting, for a chosen allocation:
//! the odds of reaching the target (beside doing nothing and the best
//! expected-return plan), the stress presets, what drives the variance, and
//! tracking against actuals. Composes the `target`, `stress`, `drivers` and
//! `track` modules on one simulation, so every command and the report agree.

use crate::allocate::{self, Allocation, Problem, SolveOptions};
use crate::clicks::{SiteDraw, SiteSampler};
use crate::drivers::{self, DriverReport};
use crate::error::Result;
use crate::inputs::load::Inputs;
use crate::model_files;
use crate::pipeline::Simulated;
use crate::plan::Plan;
use crate::simulate::budget::StressSizes;
use crate::simulate::Model;
use crate::simulate::{RunOptions, SiteSource};
use crate::stress::{self, Case, ReportHead, StressPreset, StressReport};
use crate::target::{self, Metric, Target, TargetReport};
use crate::track::{self, TrackInput, TrackOptions, TrackReport};

/// The plan's target, if it has one.
pub fn target(s: &Simulated) -> Result<Option<Target>> {
    Ok(Target::from_inputs(&s.inputs, &s.model)?)
}

/// The unconstrained best expected-return allocation of the plan's
/// problem `p` (`Simulated::problem`) without its tail-loss limit.
pub fn best_allocation(p: &Problem, opts: &SolveOptions) -> Result<Allocation> {
    let mut p = p.clone();
    p.max_tail_loss = None;
    Ok(allocate::solve(&p, opts)?)
}

/// Target odds of doing nothing, the chosen plan and the best plan.
pub fn target_report(
    s: &Simulated,
    chosen: &Allocation,
    best: &Allocation,
) -> Result<Option<TargetReport>> {
    let Some(t) = target(s)? else { return Ok(None) };
    let r = target::compare(
        &t,
        &s.model,
        &s.futures,
        &s.baseline_paths,
        &s.fractions(chosen),
        &s.fractions(best),
        &s.inputs.plan.currency,
    )?;
    Ok(Some(r))
}

/// The presets to run: the plan's list, or every built-in preset.
pub fn preset_names(s: &Simulated, asked: &[String]) -> Vec<String> {
    preset_names_of(&s.inputs, asked)
}

/// [`preset_names`] before the simulation.
pub fn preset_names_of(inputs: &Inputs, asked: &[String]) -> Vec<String> {
    if !asked.is_empty() {
        return asked.to_vec();
    }
    match &inputs.plan.file.models.stress {
        Some(list) => list.clone(),
        None => stress::PRESET_NAMES.iter().map(|n| n.to_string()).collect(),
    }
}

/// Loads a stress preset by name (or path) through the models folders.
pub fn load_preset(s: &Simulated, name: &str) -> Result<StressPreset> {
    load_preset_of(&s.inputs.plan, name)
}

/// [`load_preset`] before the simulation.
pub fn load_preset_of(plan: &Plan, name: &str) -> Result<StressPreset> {
    let text = model_files::find(plan, "stress", name)?;
    let mut p = StressPreset::from_toml_str(&text.text, &text.origin)?;
    if p.name.is_empty() {
        p.name = name.to_string();
    }
    Ok(p)
}

/// What [`stress_report`] will hold and re-simulate for presets `names`,
/// read from the presets before anything is simulated: it replays the
/// choice of runs kept for later presets as if the allocation funded every
/// tier (the most it can keep and re-simulate), so the counts are an upper
/// bound. `optimize_under` names the preset of `allocate_under`, whose
/// re-run is counted once more.
pub fn stress_sizes(
    inputs: &Inputs,
    model: &Model,
    names: &[String],
    optimize_under: Option<&str>,
) -> Result<StressSizes> {
    let n = model.clusters.len();
    let seed = inputs.plan.seed;
    let base_keys = stress::loop_keys(None, n, seed);
    let base_sampler = model.factors.site_sampler(&model.economics).ok();
    let cluster_keywords: Vec<f64> = model
        .clusters
        .iter()
        .map(|c| c.keywords.len() as f64)
        .collect();
    let all: f64 = cluster_keywords.iter().sum::<f64>().max(1.0);
    // Keys and volume scales of the runs a later preset may copy from.
    let mut done: Vec<(Vec<stress::LoopKey>, f64)> = vec![(base_keys.clone(), 1.0)];
    let mut samplers = Vec::new();
    let mut sizes = StressSizes {
        presets: names.len(),
        ..StressSizes::default()
    };
    let mut kept = 0usize;
    for name in names {
        let preset = load_preset_of(&inputs.plan, name)?;
        let keys = stress::loop_keys(Some(&preset), n, seed);
        let mut simulated = 0.0;
        for c in 0..n {
            let copied = done.iter().any(|(k, vs)| k[c] == keys[c] && *vs > 0.0);
            if !copied {
                simulated += cluster_keywords[c];
            }
        }
        sizes.resimulated += simulated / all;
        sizes.alive = sizes.alive.max(kept + 1);
        let stressed = stress::apply(&preset, model, seed);
        let sampler = stressed.factors.site_sampler(&stressed.economics).ok();
        if sampler != base_sampler && !samplers.contains(&sampler) {
            samplers.push(sampler);
        }
        let new = (0..n)
            .any(|c| keys[c] != base_keys[c] && done.iter().skip(1).all(|(k, _)| k[c] != keys[c]));
        if new {
            kept += 1;
            done.push((keys, preset.model.volume_scale));
        }
    }
    sizes.site_copies = samplers.len();
    if let Some(name) = optimize_under {
        let preset = load_preset_of(&inputs.plan, name)?;
        let keys = stress::loop_keys(Some(&preset), n, seed);
        let simulated: f64 = (0..n)
            .filter(|&c| keys[c] != base_keys[c])
            .map(|c| cluster_keywords[c])
            .sum();
        sizes.resimulated += simulated / all;
    }
    Ok(sizes)
}

/// Runs every preset on the chosen allocation and tabulates it against the base case.
pub fn stress_report(
    s: &Simulated,
    chosen: &Allocation,
    names: &[String],
    max_memory: u64,
) -> Result<StressReport> {
    let fractions = s.fractions(chosen);
    let t = target(s)?;
    let level = s.inputs.plan.tail_level;
    let base_case = Case {
        name: "base",
        description: "the plan as simulated",
        model: &s.model,
        futures: &s.futures,
        baseline: Some(&s.baseline_paths),
        notes: &[],
    };
    let base = stress::evaluate(&base_case, &fractions, level, t.as_ref())?;
    let opts = RunOptions {
        scenarios: s.futures.scenarios,
        seed: s.inputs.plan.seed,
        max_memory,
        progress: None,
    };
    // Runs a later preset may take clusters from: the base case and every
    // preset whose keyword loop differed from all runs before it.
    let n = s.model.clusters.len();
    let base_keys: Vec<Option<stress::LoopKey>> = stress::loop_keys(None, n, opts.seed)
        .into_iter()
        .map(Some)
        .collect();
    // The rows read only the tiers the chosen allocation funds: the
    // stressed runs simulate each cluster up to its highest funded tier
    // and leave out the clusters it does not fund.
    let mut needed = vec![0usize; n];
    for (j, &(c, t)) in s.futures.slots.iter().enumerate() {
        if fractions.get(j).is_some_and(|&x| x > 0.0) {
            needed[c] = needed[c].max(t + 1);
        }
    }
    let all_tiers: Vec<usize> = s.model.clusters.iter().map(|c| c.n_tiers()).collect();
    type Kept = (
        Vec<Option<stress::LoopKey>>,
        Vec<usize>,
        f64,
        crate::simulate::Futures,
    );
    let mut kept: Vec<Kept> = Vec::new();
    // The site draws of each preset whose site sampler differs from all
    // before it: a later preset copies the factors it shares with one.
    let base_sampler = SiteSource::of(&s.model, &s.futures)?.sampler;
    let mut drawn: Vec<(SiteSampler, Vec<SiteDraw>)> = Vec::new();
    let mut rows = Vec::new();
    for name in names {
        let preset = load_preset(s, name)?;
        let case = {
            let mut done = vec![stress::Done {
                keys: base_keys.clone(),
                tiers: all_tiers.clone(),
                volume_scale: 1.0,
                futures: &s.futures,
            }];
            done.extend(kept.iter().map(|(keys, tiers, vs, f)| stress::Done {
                keys: keys.clone(),
                tiers: tiers.clone(),
                volume_scale: *vs,
                futures: f,
            }));
            stress::run_preset_from(
                &preset,
                &s.model,
                &done,
                Some(&s.baseline_paths),
                &opts,
                Some(&needed),
                &drawn
                    .iter()
                    .map(|(sampler, draws)| SiteSource {
                        sampler: *sampler,
                        draws,
                    })
                    .collect::<Vec<_>>(),
            )?
        };
        let sampler = SiteSource::of(&case.model, &case.futures)?.sampler;
        if sampler != base_sampler && drawn.iter().all(|d| d.0 != sampler) {
            drawn.push((sampler, case.futures.site.clone()));
        }
        let c = Case {
            name: &preset.name,
            description: &preset.description,
            model: &case.model,
            futures: &case.futures,
            baseline: case.baseline.as_deref(),
            notes: &case.notes,
        };
        rows.push(stress::evaluate(&c, &fractions, level, t.as_ref())?);
        let keys: Vec<Option<stress::LoopKey>> = stress::loop_keys(Some(&preset), n, opts.seed)
            .into_iter()
            .zip(&case.simulated)
            .map(|(k, &held)| (held > 0).then_some(k))
            .collect();
        let new = (0..n).any(|c| {
            keys[c].is_some() && keys[c] != base_keys[c] && kept.iter().all(|k| k.0[c] != keys[c])
        });
        if new {
            kept.push((
                keys,
                case.simulated,
                preset.model.volume_scale,
                case.futures,
            ));
        }
    }
    let head = ReportHead {
        currency: &s.inputs.plan.currency,
        tail_level: level,
        scenarios: s.futures.scenarios,
        spend: chosen.budget_used,
        target: t.as_ref(),
    };
    Ok(stress::report(&head, base, rows))
}

/// What drives the variance of the chosen allocation's net return (and of
/// the target metric's total, with the baseline error).
pub fn drivers_report(s: &Simulated, chosen: &Allocation) -> Result<DriverReport> {
    let metric = target(s)?.map(|t| t.metric).unwrap_or(Metric::Clicks);
    Ok(drivers::drivers(
        &s.model,
        &s.futures,
        &s.fractions(chosen),
        Some((&s.baseline_paths, metric)),
        &s.inputs.plan.currency,
    )?)
}

/// Tracking of the actuals against the chosen allocation's forecast: the
/// baseline's states are updated with the actuals less each future's funded
/// increments, and the rest of the horizon re-simulated (`track::report`).
pub fn track_report(
    s: &Simulated,
    chosen: &Allocation,
    actuals: &crate::inputs::monthly::MonthlySeries,
) -> Result<TrackReport> {
    let metric = target(s)?.map(|t| t.metric).unwrap_or(Metric::Clicks);
    let values = track::actual_values(actuals, metric)?;
    track_values(s, chosen, &values)
}

/// [`track_report`] from the actuals' values in the target's metric (clicks
/// without a target), first month at the forecast start.
pub fn track_values(s: &Simulated, chosen: &Allocation, values: &[f64]) -> Result<TrackReport> {
    let t = target(s)?;
    let metric = t.as_ref().map(|t| t.metric).unwrap_or(Metric::Clicks);
    let fractions = s.fractions(chosen);
    let increments = target::totals::funded_monthly(&s.futures, &fractions)?;
    let sims =
        target::totals::with_baseline(&s.futures, increments.clone(), &s.baseline_paths, metric)?;
    let per_click: Vec<f64> = s
        .futures
        .site
        .iter()
        .take(s.futures.scenarios)
        .map(|site| match metric {
            Metric::Revenue => crate::simulate::summary::revenue_per_click(site),
            _ => 1.0,
        })
        .collect();
    let months: Vec<crate::month::Month> = s.model.months.clone();
    let input = TrackInput {
        actuals: values,
        sims: &sims,
        months: &months,
        metric,
        target: t.map(|t| t.amount),
        update: track::Update {
            baseline: &s.baseline,
            seed: s.inputs.plan.seed,
            increments: &increments,
            per_click: &per_click,
        },
    };
    Ok(track::track(&input, &TrackOptions::default())?)
}

/// Allocates against a mix of the base futures and the futures of preset
/// `name`, with probability `stress_weight` on the stressed ones.
pub fn allocate_under(
    s: &Simulated,
    name: &str,
    stress_weight: f64,
    opts: &SolveOptions,
    max_memory: u64,
) -> Result<Allocation> {
    let preset = load_preset(s, name)?;
    let run = RunOptions {
        scenarios: s.futures.scenarios,
        seed: s.inputs.plan.seed,
        max_memory,
        progress: None,
    };
    let done = [stress::Done {
        keys: stress::loop_keys(None, s.model.clusters.len(), s.inputs.plan.seed)
            .into_iter()
            .map(Some)
            .collect(),
        tiers: s.model.clusters.iter().map(|c| c.n_tiers()).collect(),
        volume_scale: 1.0,
        futures: &s.futures,
    }];
    let case = stress::run_preset_from(&preset, &s.model, &done, None, &run, None, &[])?;
    let base = crate::simulate::net_returns(&s.model, &s.futures);
    let stressed = crate::simulate::net_returns(&case.model, &case.futures);
    let mix = stress::mix_returns(&base, &stressed, s.futures.slots.len(), stress_weight)?;
    let mut p = s.problem();
    p.scenarios = mix.scenarios;
    p.returns = mix.returns;
    p.weights = Some(mix.weights);
    Ok(allocate::solve(&p, opts)?)
}
