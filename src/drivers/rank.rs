//! Ranks, Spearman's rank correlation and the decile swing.
//!
//! Ranks are 1 to n with ties given their average rank ("mid-ranks");
//! Spearman's coefficient is Pearson's correlation of the two rank vectors,
//! which is the definition with the tie correction (Kendall & Gibbons,
//! *Rank Correlation Methods*, 5th ed., 1990, ch. 3; the same as
//! `scipy.stats.spearmanr`). A constant series has no defined correlation:
//! it is reported as 0 and flagged.

use super::inputs::InputSeries;
use super::DriversError;
use crate::stats::{mean, quantile_sorted, sort};
use serde::Serialize;

/// One input's effect on the outcome.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Driver {
    /// The input's name.
    pub input: String,
    /// "site", "execution" or "baseline".
    pub group: String,
    /// Spearman rank correlation with the outcome (0 when undefined).
    pub spearman: f64,
    /// Its square: the rank variance of the outcome it explains.
    pub rank_r2: f64,
    /// `rank_r2` over the sum of all inputs' `rank_r2`.
    pub share: f64,
    /// True when the input (or the outcome) is the same in every future.
    pub constant: bool,
    /// The input's 10th percentile.
    pub input_p10: f64,
    /// The input's 90th percentile.
    pub input_p90: f64,
    /// Mean outcome in the futures where the input is in its bottom decile.
    pub outcome_low: f64,
    /// Mean outcome in the futures where the input is in its top decile.
    pub outcome_high: f64,
    /// `outcome_high − outcome_low`.
    pub swing: f64,
}

/// Mid-ranks (1-based, ties averaged) of `v`; `-0.0` ties with `0.0`.
pub fn average_ranks(v: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..v.len()).collect();
    order.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    let mut ranks = vec![0.0; v.len()];
    let mut i = 0;
    while i < order.len() {
        let mut j = i + 1;
        while j < order.len() && v[order[j]] == v[order[i]] {
            j += 1;
        }
        let r = (i + j + 1) as f64 / 2.0;
        for &k in &order[i..j] {
            ranks[k] = r;
        }
        i = j;
    }
    ranks
}

fn pearson(x: &[f64], y: &[f64]) -> Option<f64> {
    let (mx, my) = (mean(x), mean(y));
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (a, b) in x.iter().zip(y) {
        sxy += (a - mx) * (b - my);
        sxx += (a - mx) * (a - mx);
        syy += (b - my) * (b - my);
    }
    let d = (sxx * syy).sqrt();
    (d > 0.0 && d.is_finite()).then(|| (sxy / d).clamp(-1.0, 1.0))
}

/// Spearman's rank correlation; None when either series is constant or the
/// lengths differ.
pub fn spearman(x: &[f64], y: &[f64]) -> Option<f64> {
    if x.len() != y.len() || x.len() < 2 {
        return None;
    }
    pearson(&average_ranks(x), &average_ranks(y))
}

/// Mean outcome over the bottom and the top decile of the input (at least
/// one future each; ties are ordered by future index).
fn decile_means(x: &[f64], y: &[f64]) -> (f64, f64) {
    let mut order: Vec<usize> = (0..x.len()).collect();
    order.sort_by(|&a, &b| x[a].total_cmp(&x[b]).then(a.cmp(&b)));
    let d = (x.len() / 10).max(1);
    let avg = |idx: &[usize]| idx.iter().map(|&i| y[i]).sum::<f64>() / idx.len() as f64;
    (avg(&order[..d]), avg(&order[x.len() - d..]))
}

fn one(input: &InputSeries, y: &[f64]) -> Driver {
    let rho = spearman(&input.values, y);
    let mut sorted = input.values.clone();
    sort(&mut sorted);
    let (low, high) = decile_means(&input.values, y);
    let r = rho.unwrap_or(0.0);
    Driver {
        input: input.name.clone(),
        group: input.group.clone(),
        spearman: r,
        rank_r2: r * r,
        share: 0.0,
        constant: rho.is_none(),
        input_p10: quantile_sorted(&sorted, 0.1),
        input_p90: quantile_sorted(&sorted, 0.9),
        outcome_low: low,
        outcome_high: high,
        swing: high - low,
    }
}

/// Ranks `inputs` by their squared Spearman correlation with `outcome`,
/// largest first (ties by name).
pub fn rank_drivers(inputs: &[InputSeries], outcome: &[f64]) -> Result<Vec<Driver>, DriversError> {
    let n = outcome.len();
    if n < 2 {
        return Err(DriversError::Argument {
            what: "the outcome".into(),
            message: format!("has {n} futures; simulate at least 2 (hundreds for stable ranks)"),
        });
    }
    if let Some(i) = outcome.iter().position(|v| !v.is_finite()) {
        return Err(DriversError::Argument {
            what: "the outcome".into(),
            message: format!(
                "future {} is {}; expected a finite number",
                i + 1,
                outcome[i]
            ),
        });
    }
    for s in inputs {
        s.check(n)?;
    }
    let mut out: Vec<Driver> = inputs.iter().map(|s| one(s, outcome)).collect();
    let total: f64 = out.iter().map(|d| d.rank_r2).sum();
    for d in &mut out {
        d.share = if total > 0.0 { d.rank_r2 / total } else { 0.0 };
    }
    out.sort_by(|a, b| {
        b.rank_r2
            .total_cmp(&a.rank_r2)
            .then_with(|| a.input.cmp(&b.input))
    });
    Ok(out)
}
