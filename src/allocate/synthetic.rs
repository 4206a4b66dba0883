//! Random tiered allocation problems for tests and benchmarks.
//!
//! Clusters of tiers whose returns diminish tier by tier, are correlated
//! (one site-wide factor per future, one execution factor per cluster and
//! future shared by all of its tiers, as in the domain brief's common random
//! numbers) and skewed (a cluster gains nothing at all with some probability,
//! a lognormal gain otherwise). Costs are lognormal; the budget is 40 % of the
//! total cost. The shape is a rule of thumb for a realistic test instance
//! (common practice, no source), not a model of any real site.

use super::error::AllocError;
use super::problem::Problem;
use super::solve::{min_tail_loss, solve, SolveOptions};
use crate::rng::{stream, substream};
use rand::RngExt;
use rand_distr::{Distribution, StandardNormal};

/// Domain tag of the synthetic-instance streams.
pub const SYNTHETIC_DOMAIN: u64 = 0x616c_6c6f_6373_796e;

/// Size and seed of a synthetic instance.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SyntheticSpec {
    /// Number of clusters.
    pub clusters: usize,
    /// Tiers per cluster.
    pub tiers: usize,
    /// Number of futures.
    pub scenarios: usize,
    /// Seed.
    pub seed: u64,
}

/// Per-cluster constants.
struct Cluster {
    cost: f64,
    multiplier: f64,
    failure: f64,
}

const SIGMA: f64 = 0.6;
const RHO: f64 = 0.5;

fn cluster(seed: u64, c: usize) -> Cluster {
    let mut rng = substream(seed, SYNTHETIC_DOMAIN, u64::MAX, c as u64);
    let z: f64 = StandardNormal.sample(&mut rng);
    Cluster {
        cost: 1000.0 * (0.5 * z).exp(),
        multiplier: 1.1 + 1.1 * rng.random::<f64>(),
        failure: 0.1 + 0.25 * rng.random::<f64>(),
    }
}

/// A tiered instance without a tail-loss limit (tail level 0.90).
pub fn tiered_instance(spec: SyntheticSpec) -> Problem {
    let (k, t) = (spec.clusters, spec.tiers);
    let n = k * t;
    let cl: Vec<Cluster> = (0..k).map(|c| cluster(spec.seed, c)).collect();
    let cost = |c: usize, j: usize| cl[c].cost * 0.8f64.powi(j as i32);
    let mut returns = vec![0f32; spec.scenarios * n];
    for (s, row) in returns.chunks_exact_mut(n).enumerate() {
        let site: f64 = StandardNormal.sample(&mut stream(spec.seed, SYNTHETIC_DOMAIN, s as u64));
        for (c, cluster) in cl.iter().enumerate() {
            let mut rng = substream(spec.seed, SYNTHETIC_DOMAIN, s as u64, c as u64);
            let e: f64 = StandardNormal.sample(&mut rng);
            let works = rng.random::<f64>() >= cluster.failure;
            let shock =
                (SIGMA * (RHO * site + (1.0 - RHO * RHO).sqrt() * e) - SIGMA * SIGMA / 2.0).exp();
            for j in 0..t {
                let mean_gain = cost(c, j) * cluster.multiplier * 0.8f64.powi(j as i32)
                    / (1.0 - cluster.failure);
                let gain = if works { mean_gain * shock } else { 0.0 };
                row[c * t + j] = (gain - cost(c, j)) as f32;
            }
        }
    }
    let ids = (0..n)
        .map(|i| format!("cluster-{}/tier-{}", i / t + 1, i % t + 1))
        .collect();
    let costs: Vec<f64> = (0..n).map(|i| cost(i / t, i % t)).collect();
    let budget = 0.4 * costs.iter().sum::<f64>();
    let mut p = Problem::new(ids, costs, spec.scenarios, returns, budget);
    p.requires = (0..n).map(|i| (i % t > 0).then(|| i - 1)).collect();
    p
}

/// A tail-loss limit a share of the way from the smallest achievable tail
/// loss to the unconstrained optimum's (so it binds for `share < 1`).
pub fn binding_limit(p: &Problem, share: f64, opts: &SolveOptions) -> Result<f64, AllocError> {
    let mut free = p.clone();
    free.max_tail_loss = None;
    let hi = solve(&free, opts)?.tail_loss;
    let lo = min_tail_loss(&free, opts)?;
    Ok(lo + share * (hi - lo))
}
