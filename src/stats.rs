//! Small statistics used across the crate: means, quantiles of samples
//! (linear interpolation between order statistics, "type 7" of Hyndman &
//! Fan, "Sample quantiles in statistical packages", The American
//! Statistician 50(4), 1996), and the mean/P10/P50/P90 summary every output
//! reports.

use serde::Serialize;

/// Mean, P10, P50 and P90 of a sample.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub struct Stats {
    pub mean: f64,
    pub p10: f64,
    pub p50: f64,
    pub p90: f64,
}

/// Quantile `q` of an ascending sample (type 7). NaN for an empty sample.
pub fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let h = (sorted.len() - 1) as f64 * q.clamp(0.0, 1.0);
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(sorted.len() - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// Sorts a sample in place with `total_cmp`.
pub fn sort(v: &mut [f64]) {
    v.sort_unstable_by(f64::total_cmp);
}

/// Mean of a sample (0 for an empty one).
pub fn mean(v: &[f64]) -> f64 {
    if v.is_empty() {
        0.0
    } else {
        v.iter().sum::<f64>() / v.len() as f64
    }
}

/// Mean, P10, P50, P90 (sorts `v`).
pub fn summarise(v: &mut [f64]) -> Stats {
    let m = mean(v);
    sort(v);
    Stats {
        mean: m,
        p10: quantile_sorted(v, 0.1),
        p50: quantile_sorted(v, 0.5),
        p90: quantile_sorted(v, 0.9),
    }
}

/// Share of a sample below zero.
pub fn share_negative(v: &[f64]) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    v.iter().filter(|x| **x < 0.0).count() as f64 / v.len() as f64
}

/// Weighted quantile of `(value, weight)` pairs sorted by value: the value
/// where the cumulative weight first reaches `q` of the total.
pub fn weighted_quantile_sorted(pairs: &[(f64, f64)], q: f64) -> f64 {
    let total: f64 = pairs.iter().map(|p| p.1).sum();
    if pairs.is_empty() || total <= 0.0 {
        return f64::NAN;
    }
    let target = q.clamp(0.0, 1.0) * total;
    let mut acc = 0.0;
    for &(v, w) in pairs {
        acc += w;
        if acc >= target {
            return v;
        }
    }
    pairs[pairs.len() - 1].0
}

/// Index (0-based) of the `⌈p·n⌉`-th smallest of `n` values, robust to the
/// rounding of `p·n` (a product within `1e-9·n` of a whole number counts as
/// that number); 0 when `n` is 0. The order statistic of the value at risk
/// and of the quantile-based chances.
pub fn order_index(n: usize, p: f64) -> usize {
    let t = p * n as f64;
    let k = if (t - t.round()).abs() <= 1e-9 * n as f64 {
        t.round()
    } else {
        t.ceil()
    };
    (k as usize).clamp(1, n.max(1)) - 1
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn type7_quantiles_match_the_definition() {
        // Hyndman & Fan (1996) type 7 on 1..=10: Q(0.1) = 1 + 0.9 * 1 = 1.9,
        // Q(0.5) = 5.5, Q(0.9) = 9.1 (h = (n-1)q + 1 in 1-based terms).
        let mut v: Vec<f64> = (1..=10).map(f64::from).collect();
        let s = summarise(&mut v);
        assert!((s.p10 - 1.9).abs() < 1e-12);
        assert!((s.p50 - 5.5).abs() < 1e-12);
        assert!((s.p90 - 9.1).abs() < 1e-12);
        assert!((s.mean - 5.5).abs() < 1e-12);
        assert!(quantile_sorted(&[], 0.5).is_nan());
    }

    #[test]
    fn weighted_quantile_with_equal_weights_is_an_order_statistic() {
        let pairs: Vec<(f64, f64)> = (1..=4).map(|i| (i as f64, 1.0)).collect();
        assert_eq!(weighted_quantile_sorted(&pairs, 0.5), 2.0);
        assert_eq!(weighted_quantile_sorted(&pairs, 0.51), 3.0);
    }
}
