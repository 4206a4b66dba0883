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

/// Type-7 quantiles of an unsorted sample: the same values (to the bit) as
/// [`quantile_sorted`] of the sorted sample, found by selection
/// (`select_nth_unstable_by`, a quickselect: Hoare, "Algorithm 65: Find",
/// Communications of the ACM 4(7), 1961) in linear expected time per
/// quantile instead of a full sort. Reorders `v`. NaN for an empty sample.
pub fn quantiles<const N: usize>(v: &mut [f64], qs: [f64; N]) -> [f64; N] {
    let n = v.len();
    let mut out = [f64::NAN; N];
    if n == 0 {
        return out;
    }
    // `v[..from]` holds no value above any of `v[from..]` (the partition
    // the previous selection left), so a later, higher quantile is selected
    // in `v[from..]` alone.
    let mut from = 0;
    for (o, q) in out.iter_mut().zip(qs) {
        let h = (n - 1) as f64 * q.clamp(0.0, 1.0);
        let lo = h.floor() as usize;
        let lo_v = if lo >= from {
            *v[from..]
                .select_nth_unstable_by(lo - from, f64::total_cmp)
                .1
        } else {
            *v.select_nth_unstable_by(lo, f64::total_cmp).1
        };
        from = lo;
        // The next order statistic is the smallest value after `lo`.
        let hi_v = v[lo + 1..]
            .iter()
            .copied()
            .min_by(f64::total_cmp)
            .unwrap_or(lo_v);
        *o = lo_v + (h - lo as f64) * (hi_v - lo_v);
    }
    out
}

/// Mean, P10, P50, P90 (reorders `v`).
pub fn summarise(v: &mut [f64]) -> Stats {
    let m = mean(v);
    let [p10, p50, p90] = quantiles(v, [0.1, 0.5, 0.9]);
    Stats {
        mean: m,
        p10,
        p50,
        p90,
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

    /// Selection gives the sorted sample's quantiles to the bit, with ties,
    /// signed zeros, infinities and NaN (ordered by `total_cmp`), for every
    /// length up to 40 and quantiles in any order.
    #[test]
    fn selected_quantiles_equal_the_sorted_ones() {
        use rand::RngExt;
        let mut rng = crate::rng::stream(3, crate::rng::domain::TEST, 0);
        let special = [0.0, -0.0, 1.0, f64::INFINITY, f64::NEG_INFINITY, f64::NAN];
        for case in 0..3_000 {
            let n = case % 41;
            let v: Vec<f64> = (0..n)
                .map(|_| match rng.random_range(0..8) {
                    0 => special[rng.random_range(0..special.len())],
                    1 => f64::from(rng.random_range(0..3)),
                    _ => rng.random::<f64>() * 200.0 - 100.0,
                })
                .collect();
            let qs = [
                rng.random::<f64>(),
                0.1,
                0.5,
                0.9,
                rng.random::<f64>(),
                0.0,
                1.0,
            ];
            let mut sorted = v.clone();
            sort(&mut sorted);
            let mut work = v.clone();
            let got = quantiles(&mut work, qs);
            for (q, g) in qs.iter().zip(got) {
                let want = quantile_sorted(&sorted, *q);
                assert_eq!(
                    g.to_bits(),
                    want.to_bits(),
                    "case {case}, q {q}: {g} against {want}, sample {v:?}"
                );
            }
            sort(&mut work);
            let bits = |x: &[f64]| x.iter().map(|v| v.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&work), bits(&sorted), "case {case}: a value was lost");
        }
    }

    #[test]
    fn weighted_quantile_with_equal_weights_is_an_order_statistic() {
        let pairs: Vec<(f64, f64)> = (1..=4).map(|i| (i as f64, 1.0)).collect();
        assert_eq!(weighted_quantile_sorted(&pairs, 0.5), 2.0);
        assert_eq!(weighted_quantile_sorted(&pairs, 0.51), 3.0);
    }
}
