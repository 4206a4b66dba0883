//! The odds of one plan against the target, from its per-future totals.
//!
//! - Chance of reaching the target: the share of futures whose total is at
//!   least the target.
//! - Shortfall of a future: `max(0, target − total)`. The report gives its
//!   mean, its median, and the shortfall in the P10 future (the total's 10th
//!   percentile, a bad but not extreme year), which is the shortfall's 90th
//!   percentile. Quantiles are type 7 of Hyndman & Fan (1996).
//! - Extra monthly search volume for a chance `p`: a future `s` with total
//!   `T_s` below the target `G` and uplift `u_s > 0` per unit of monthly
//!   volume (see [`super::totals`]) reaches it with `ΔV_s = (G − T_s) / u_s`
//!   more volume worked at the same uplift (0 when it already does; never
//!   when `u_s ≤ 0`). A plan with `ΔV` more volume reaches the target in the
//!   futures with `ΔV_s ≤ ΔV`, so the volume for chance `p` is the smallest
//!   `ΔV` with that share at least `p`: the `⌈p·S⌉`-th smallest `ΔV_s`.
//!   The extra clusters are assumed to live through the same future (same
//!   site-wide factors) and to convert volume into clicks like the plan's
//!   own keywords on average.

use crate::stats::{mean, quantile_sorted, quantiles, sort, Stats};
use serde::Serialize;

/// One plan's figures against the target.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Odds {
    /// Share of futures whose total reaches the target.
    pub chance: f64,
    /// The total over the horizon: mean, P10, P50, P90.
    pub total: Stats,
    /// Mean shortfall.
    pub shortfall_mean: f64,
    /// Median shortfall.
    pub shortfall_p50: f64,
    /// Shortfall in the P10 future: `max(0, target − P10 of the total)`.
    pub shortfall_p10: f64,
    /// Mean uplift per unit of monthly search volume (None: no volume
    /// funded).
    pub uplift_per_volume: Option<f64>,
    /// More monthly search volume needed for a 50 % chance (None: no uplift,
    /// or unreachable by volume at this uplift).
    pub volume_for_50: Option<f64>,
    /// The same for an 80 % chance.
    pub volume_for_80: Option<f64>,
}

/// The figures of a plan with per-future `totals` against `target`, with the
/// per-future `uplift` per unit of monthly volume when known. An empty
/// sample gives NaN-free zeros and a chance of 0.
pub fn odds(totals: &[f64], target: f64, uplift: Option<&[f64]>) -> Odds {
    let n = totals.len();
    let reached = totals.iter().filter(|&&t| t >= target).count();
    let mut short: Vec<f64> = totals.iter().map(|t| (target - t).max(0.0)).collect();
    // Summed in ascending order, as it always was.
    sort(&mut short);
    let shortfall_mean = mean(&short);
    let mut values = totals.to_vec();
    let total_mean = mean(&values);
    // Quantiles by selection (the sorted sample's values); 0 when empty.
    let zero_if_empty = |v: f64| if n == 0 { 0.0 } else { v };
    let [p10, p50, p90] = quantiles(&mut values, [0.1, 0.5, 0.9]).map(zero_if_empty);
    let short_p50 = if n == 0 {
        0.0
    } else {
        quantile_sorted(&short, 0.5)
    };
    Odds {
        chance: if n == 0 {
            0.0
        } else {
            reached as f64 / n as f64
        },
        total: Stats {
            mean: total_mean,
            p10,
            p50,
            p90,
        },
        shortfall_mean,
        shortfall_p50: short_p50,
        shortfall_p10: if n == 0 { 0.0 } else { (target - p10).max(0.0) },
        uplift_per_volume: uplift.map(mean),
        volume_for_50: uplift.and_then(|u| volume_needed(totals, u, target, 0.5)),
        volume_for_80: uplift.and_then(|u| volume_needed(totals, u, target, 0.8)),
    }
}

/// The smallest extra monthly search volume that gives at least `chance`
/// of reaching `target` (see the module documentation); None when it is
/// unreachable by volume or the inputs do not match.
pub fn volume_needed(totals: &[f64], uplift: &[f64], target: f64, chance: f64) -> Option<f64> {
    if totals.is_empty() || totals.len() != uplift.len() || !(0.0..=1.0).contains(&chance) {
        return None;
    }
    let mut need: Vec<f64> = totals
        .iter()
        .zip(uplift)
        .map(|(&t, &u)| {
            if t >= target {
                0.0
            } else if u > 0.0 && u.is_finite() {
                (target - t) / u
            } else {
                f64::INFINITY
            }
        })
        .collect();
    sort(&mut need);
    let v = need[order_index(need.len(), chance)];
    v.is_finite().then_some(v)
}

pub use crate::stats::order_index;
