//! Simulated futures of a fitted baseline and their percentiles.
//!
//! Path i draws only from its own seeded stream, so the paths do not depend
//! on how many threads run them. Values are clamped at 0 after each path is
//! simulated (clicks cannot be negative); the model's recursion itself runs
//! on the unclamped values, so clamping only cuts off the impossible part of
//! the distribution. Percentiles use the linear interpolation of Hyndman &
//! Fan, "Sample quantiles in statistical packages", Am. Stat. 50(4), 1996,
//! definition 7.

use super::model::FittedModel;
use crate::rng::{stream, Stream};
use rayon::prelude::*;

/// Simulates `n_paths` paths, row-major (path i at [i·H, (i+1)·H)), path i
/// drawing from `make_stream(i)`.
pub fn paths_with(
    model: &FittedModel,
    n_paths: usize,
    make_stream: impl Fn(u64) -> Stream + Sync,
) -> Vec<f64> {
    let h = model.horizon();
    let mut out = vec![0.0; n_paths * h];
    if h == 0 {
        return out;
    }
    out.par_chunks_mut(h)
        .with_min_len(64)
        .enumerate()
        .for_each(|(i, row)| {
            let mut rng = make_stream(i as u64);
            model.simulate_one(&mut rng, row);
        });
    out
}

/// Paths for the report: path i uses stream(seed, domain, i).
pub fn paths(model: &FittedModel, n_paths: usize, seed: u64, domain: u64) -> Vec<f64> {
    paths_with(model, n_paths, |i| stream(seed, domain, i))
}

/// Definition-7 sample quantile of sorted data (Hyndman & Fan 1996): the
/// one in [`crate::stats`], kept under this name for the baseline's callers.
pub use crate::stats::quantile_sorted;

/// Per-month percentiles of row-major paths: one Vec per requested level.
pub fn percentiles(paths: &[f64], horizon: usize, levels: &[f64]) -> Vec<Vec<f64>> {
    let n = paths.len().checked_div(horizon).unwrap_or(0);
    let mut out = vec![Vec::with_capacity(horizon); levels.len()];
    let mut col = Vec::with_capacity(n);
    for j in 0..horizon {
        col.clear();
        col.extend((0..n).map(|i| paths[i * horizon + j]));
        col.sort_unstable_by(|a, b| a.total_cmp(b));
        for (o, p) in out.iter_mut().zip(levels) {
            o.push(quantile_sorted(&col, *p));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn definition_seven_by_hand() {
        // n = 5 sorted 1, 2, 4, 8, 16: p = 0.1 → h = 0.4 → 1 + 0.4·1 = 1.4;
        // p = 0.5 → 4; p = 0.9 → h = 3.6 → 8 + 0.6·8 = 12.8.
        let s = [1.0, 2.0, 4.0, 8.0, 16.0];
        assert!((quantile_sorted(&s, 0.1) - 1.4).abs() < 1e-12);
        assert_eq!(quantile_sorted(&s, 0.5), 4.0);
        assert!((quantile_sorted(&s, 0.9) - 12.8).abs() < 1e-12);
        assert_eq!(quantile_sorted(&[3.0], 0.9), 3.0);
    }

    #[test]
    fn percentiles_read_columns_of_row_major_paths() {
        // Three paths of two months: month 0 = 3, 1, 2; month 1 = 30, 10, 20.
        let p = [3.0, 30.0, 1.0, 10.0, 2.0, 20.0];
        let q = percentiles(&p, 2, &[0.5]);
        assert_eq!(q[0], vec![2.0, 20.0]);
    }
}
