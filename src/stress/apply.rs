//! Applying a preset to the prepared model and to the baseline paths.
//!
//! - `ctr_scale` k: the click-through factor's mean `1 − e` becomes
//!   `k(1 − e)` (its standard deviation is kept), so with the same seed
//!   every future's factor is lower.
//! - `time_scale`: every keyword's central months to full effect.
//! - `gain_share`, `gain_scale`: `round(share × clusters)` clusters (at
//!   least one when the share is above 0), picked by a Fisher–Yates shuffle
//!   from the stream (seed, [`STRESS_DOMAIN`], 0), get their central
//!   log-position gains scaled; an explicit tier over positions gained has
//!   its min, mode and max scaled; an explicit tier over the final position
//!   is left as stated (a note says so).
//! - `volume_scale`: every keyword's monthly search volume.
//! - `conversion_scale`: a plain rate `r` becomes `min(1, k r)`; a rate
//!   from counts keeps its sessions and scales the conversions, so its
//!   posterior mean `(k c + 1)/(n + 2)` moves by the same share up to
//!   `(1 − k)/(n + 2)`. For a value per click ([`ValueBasis::PerClick`],
//!   never inferred from a rate of 1) the value is scaled instead.
//! - `order_value_scale`: the order value's mean and spread.
//! - `shock_probability`, `shock_log_loss`: replace the factors' values.
//! - Baseline paths: multiplied by `[baseline] scale`, by default
//!   `ctr_scale × volume_scale` (existing clicks also come from volume
//!   times click-through rate; slower gains, a ranking shock on new work
//!   and weaker conversion leave the baseline's clicks unchanged, though
//!   weaker conversion lowers its revenue through the revenue per click).

use super::{StressPreset, STRESS_DOMAIN};
use crate::clicks::{
    ConversionRate, Economics, ExplicitGain, GainDistribution, GainScale, OrderValue, ValueBasis,
};
use crate::rng::stream;
use crate::simulate::model::TierGain;
use crate::simulate::{Futures, Model, RunOptions, SiteSource};
use rand::RngExt;

/// The clusters (indices) a preset's ranking shock hits among `n`.
pub fn shocked_clusters(preset: &StressPreset, n: usize, seed: u64) -> Vec<usize> {
    let share = preset.model.gain_share;
    if share.is_nan() || share <= 0.0 || n == 0 || preset.model.gain_scale == 1.0 {
        return Vec::new();
    }
    let k = ((share * n as f64).round() as usize).clamp(1, n);
    let mut order: Vec<usize> = (0..n).collect();
    let mut rng = stream(seed, STRESS_DOMAIN, 0);
    for i in (1..n).rev() {
        let j = rng.random_range(0..=i);
        order.swap(i, j);
    }
    let mut hit = order[..k].to_vec();
    hit.sort_unstable();
    hit
}

fn scale_distribution(d: GainDistribution, k: f64) -> GainDistribution {
    match d {
        GainDistribution::Triangular { min, mode, max } => GainDistribution::Triangular {
            min: min * k,
            mode: mode * k,
            max: max * k,
        },
        GainDistribution::Pert {
            min,
            mode,
            max,
            lambda,
        } => GainDistribution::Pert {
            min: min * k,
            mode: mode * k,
            max: max * k,
            lambda,
        },
    }
}

fn scale_gains(model: &mut Model, c: usize, k: f64) {
    let cl = &mut model.clusters[c];
    for g in &mut cl.central {
        *g *= k;
    }
    for g in &mut cl.gains {
        if let TierGain::Explicit(e) = g {
            if e.over == GainScale::PositionsGained {
                *e = ExplicitGain {
                    over: e.over,
                    distribution: scale_distribution(e.distribution, k),
                };
            }
        }
    }
}

fn scale_economics(e: &Economics, conversion: f64, order_value: f64) -> Economics {
    let (conv, ov) = match e.basis {
        // A value per click has no rate to lower: the value carries both.
        ValueBasis::PerClick => (1.0, order_value * conversion),
        ValueBasis::Orders => (conversion, order_value),
    };
    let conversion_rate = match e.conversion_rate {
        ConversionRate::Fixed(r) => ConversionRate::Fixed((r * conv).clamp(0.0, 1.0)),
        ConversionRate::Counts {
            conversions,
            sessions,
        } => ConversionRate::Counts {
            conversions: (conversions * conv).min(sessions),
            sessions,
        },
    };
    Economics {
        conversion_rate,
        order_value: OrderValue {
            mean: e.order_value.mean * ov,
            sd: e.order_value.sd.map(|s| s * ov),
        },
        margin: e.margin,
        basis: e.basis,
    }
}

/// The model under `preset`; `seed` picks the clusters a ranking shock hits.
pub fn apply(preset: &StressPreset, model: &Model, seed: u64) -> Model {
    let c = &preset.model;
    let mut m = model.clone();
    let f = &mut m.factors;
    f.ctr_erosion_mean = 1.0 - c.ctr_scale * (1.0 - f.ctr_erosion_mean);
    if let Some(p) = c.shock_probability {
        f.shock_probability = p;
    }
    if let Some(l) = c.shock_log_loss {
        f.shock_log_loss = l;
    }
    m.rank.factors = m.factors;
    for cl in &mut m.clusters {
        for k in &mut cl.keywords {
            k.volume *= c.volume_scale;
            k.months_to_full *= c.time_scale;
        }
    }
    for i in shocked_clusters(preset, m.clusters.len(), seed) {
        scale_gains(&mut m, i, c.gain_scale);
    }
    m.economics = scale_economics(&m.economics, c.conversion_scale, c.order_value_scale);
    m
}

/// The multiplier of the baseline paths under `preset`.
pub fn baseline_scale(preset: &StressPreset) -> f64 {
    preset
        .baseline
        .scale
        .unwrap_or(preset.model.ctr_scale * preset.model.volume_scale)
}

/// Lowers (or raises) baseline paths in place under `preset`.
pub fn stress_baseline(preset: &StressPreset, paths: &mut [f64]) {
    let k = baseline_scale(preset);
    for p in paths {
        *p *= k;
    }
}

/// A copy of baseline paths under `preset`.
fn stressed_copy(preset: &StressPreset, paths: &[f64]) -> Vec<f64> {
    let mut v = paths.to_vec();
    stress_baseline(preset, &mut v);
    v
}

/// What a preset did that the numbers alone do not show.
pub fn notes(preset: &StressPreset, model: &Model, seed: u64) -> Vec<String> {
    let hit = shocked_clusters(preset, model.clusters.len(), seed);
    let mut out = Vec::new();
    if !hit.is_empty() {
        let names: Vec<&str> = hit
            .iter()
            .map(|&c| model.clusters[c].name.as_str())
            .collect();
        out.push(format!(
            "gains x {} for {} of {} clusters: {}",
            preset.model.gain_scale,
            hit.len(),
            model.clusters.len(),
            names.join(", ")
        ));
        let fixed = hit.iter().any(|&c| {
            model.clusters[c]
                .gains
                .iter()
                .any(|g| matches!(g, TierGain::Explicit(e) if e.over == GainScale::FinalPosition))
        });
        if fixed {
            out.push("explicit gains over the final position are left as stated".into());
        }
    }
    let k = baseline_scale(preset);
    if k != 1.0 {
        out.push(format!("baseline paths x {k:.3}"));
    }
    out
}

/// A preset's stressed model, its futures (same seed as `opts`), its
/// baseline paths and notes.
#[derive(Debug, Clone)]
pub struct StressedCase {
    pub model: Model,
    pub futures: Futures,
    pub baseline: Option<Vec<f64>>,
    pub notes: Vec<String>,
    /// Per cluster: how many of its tiers (from the first) the futures
    /// hold stressed clicks for; the rows above are zeros (0: left out).
    pub simulated: Vec<usize>,
}

/// Applies `preset`, re-runs the Monte Carlo with `opts` (use the base
/// run's seed and scenario count) and stresses a copy of `baseline`.
pub fn run_preset(
    preset: &StressPreset,
    model: &Model,
    baseline: Option<&[f64]>,
    opts: &RunOptions,
) -> crate::Result<StressedCase> {
    let stressed = apply(preset, model, opts.seed);
    let futures = crate::simulate::run(&stressed, opts)?;
    let baseline = baseline.map(|b| stressed_copy(preset, b));
    Ok(StressedCase {
        notes: notes(preset, model, opts.seed),
        simulated: model.clusters.iter().map(|c| c.n_tiers()).collect(),
        model: stressed,
        futures,
        baseline,
    })
}

/// What a cluster's keyword loop depends on under a preset, beside the
/// search volumes: the time scale, the gain scale (1 unless the cluster is
/// shocked) and the site-wide shock's overrides, as bits. Two presets with
/// the same key for a cluster give it the same keyword sums up to volume.
pub type LoopKey = [u64; 4];

/// The key of every cluster under `preset` (`None`: the base case).
pub fn loop_keys(preset: Option<&StressPreset>, n: usize, seed: u64) -> Vec<LoopKey> {
    let Some(p) = preset else {
        return vec![[1f64.to_bits(), 1f64.to_bits(), u64::MAX, u64::MAX]; n];
    };
    let c = &p.model;
    let opt = |v: Option<f64>| v.map(f64::to_bits).unwrap_or(u64::MAX);
    let mut keys = vec![
        [
            c.time_scale.to_bits(),
            1f64.to_bits(),
            opt(c.shock_probability),
            opt(c.shock_log_loss),
        ];
        n
    ];
    for i in shocked_clusters(p, n, seed) {
        keys[i][1] = c.gain_scale.to_bits();
    }
    keys
}

/// A run a later preset may take clusters from: its keys (`None` for a
/// cluster it skipped), the number of tiers it holds per cluster, the
/// volume scale it ran with, and its futures. The first is the base case
/// (the site factors a preset leaves alone are copied from its draws).
pub struct Done<'a> {
    pub keys: Vec<Option<LoopKey>>,
    pub tiers: Vec<usize>,
    pub volume_scale: f64,
    pub futures: &'a Futures,
}

/// [`run_preset`], re-simulating only the clusters whose keyword loop no
/// earlier run in `done` shares ([`loop_keys`]) and rescaling the rest
/// (see [`crate::simulate::rerun`]). Same futures as [`run_preset`] up to
/// the rounding of the stored f32 values; volume, click-through,
/// conversion and order-value presets re-simulate nothing.
///
/// With `needed`, cluster `c` gets only its first `needed[c]` tiers (0:
/// left out, [`ClusterRun::Skip`]); the rows above are zeros and
/// `simulated` says how many tiers each cluster holds. For a caller that
/// reads only those, such as the stress test of an allocation that funds
/// no tier above them (tier t does not depend on the tiers above it).
///
/// The site factors the preset leaves alone are copied from the base run
/// (`done[0]`) or from `sites`, the site draws of other earlier runs.
pub fn run_preset_from(
    preset: &StressPreset,
    model: &Model,
    done: &[Done],
    baseline: Option<&[f64]>,
    opts: &RunOptions,
    needed: Option<&[usize]>,
    sites: &[SiteSource],
) -> crate::Result<StressedCase> {
    use crate::simulate::{ClusterRun, Source};
    let stressed = apply(preset, model, opts.seed);
    let n = model.clusters.len();
    let keys = loop_keys(Some(preset), n, opts.seed);
    let vs = preset.model.volume_scale;
    let want: Vec<usize> = (0..n)
        .map(|c| {
            let all = model.clusters[c].n_tiers();
            needed.map_or(all, |w| w.get(c).copied().unwrap_or(all).min(all))
        })
        .collect();
    let plan: Vec<ClusterRun> = (0..n)
        .map(|c| {
            if want[c] == 0 {
                return ClusterRun::Skip;
            }
            done.iter()
                .find(|d| {
                    d.keys.get(c) == Some(&Some(keys[c]))
                        && d.tiers.get(c).is_some_and(|&t| t >= want[c])
                        && d.volume_scale > 0.0
                })
                .map_or(ClusterRun::Simulate { tiers: want[c] }, |d| {
                    ClusterRun::Copy(Source {
                        futures: d.futures,
                        volume_ratio: vs / d.volume_scale,
                    })
                })
        })
        .collect();
    // A copy holds at least the tiers wanted (counted as just those).
    let simulated = (0..n)
        .map(|c| match plan[c] {
            ClusterRun::Skip => 0,
            ClusterRun::Simulate { tiers } => tiers,
            ClusterRun::Copy(_) => want[c],
        })
        .collect();
    let mut earlier = match done.first() {
        Some(d) => vec![SiteSource::of(model, d.futures)?],
        None => Vec::new(),
    };
    earlier.extend_from_slice(sites);
    let futures = crate::simulate::rerun(&stressed, opts, &plan, &earlier)?;
    let baseline = baseline.map(|b| stressed_copy(preset, b));
    Ok(StressedCase {
        notes: notes(preset, model, opts.seed),
        model: stressed,
        futures,
        baseline,
        simulated,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn orders(rate: f64) -> Economics {
        Economics::new(
            ConversionRate::fixed(rate).unwrap(),
            OrderValue::new(100.0, Some(10.0)).unwrap(),
            0.5,
        )
        .unwrap()
    }

    #[test]
    fn a_conversion_rate_of_100_percent_is_a_rate_not_a_value_per_click() {
        // Weaker conversion (k = 0.8) lowers a 100 % rate to 80 %, as it
        // lowers any rate, and leaves the order value alone.
        let e = scale_economics(&orders(1.0), 0.8, 1.0);
        assert_eq!(e.basis, ValueBasis::Orders);
        match e.conversion_rate {
            ConversionRate::Fixed(r) => assert!((r - 0.8).abs() < 1e-12, "rate {r}"),
            other => panic!("{other:?}"),
        }
        assert!((e.order_value.mean - 100.0).abs() < 1e-12);
        assert_eq!(e.order_value.sd, Some(10.0));
        // The same as for a rate of 50 %: both lose 20 % of their rate.
        let half = scale_economics(&orders(0.5), 0.8, 1.0);
        assert!((half.conversion_rate.mean() - 0.4).abs() < 1e-12);
    }

    #[test]
    fn a_value_per_click_scales_the_value_under_weaker_conversion() {
        let v = Economics::value_per_click(2.0, 0.5).unwrap();
        assert_eq!(v.basis, ValueBasis::PerClick);
        let e = scale_economics(&v, 0.8, 1.0);
        assert_eq!(e.basis, ValueBasis::PerClick);
        assert!((e.conversion_rate.mean() - 1.0).abs() < 1e-12);
        assert!((e.order_value.mean - 1.6).abs() < 1e-12);
    }
}
