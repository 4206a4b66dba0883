//! Rolling-origin backtest: refit on the first o months, forecast the next
//! ones, score, move the origin.
//!
//! Tashman, "Out-of-sample tests of forecasting accuracy: an analysis and
//! review", Int. J. Forecasting 16, 2000 (rolling origin with
//! recalibration); FPP3 §5.10 (time series cross-validation). Scores pooled
//! over every (origin, step) pair:
//! - MASE (Hyndman & Koehler, "Another look at measures of forecast
//!   accuracy", Int. J. Forecasting 22, 2006; FPP3 §5.8): |error| divided by
//!   the in-sample mean absolute change at lag `scale_lag` of that origin's
//!   training months (lag 12 gives the seasonal scaling);
//! - sMAPE, 200·|y − ŷ| / (|y| + |ŷ|) in percent, 0 when both are 0;
//! - coverage of the 80 % interval: share of actuals within [p10, p90] of
//!   the model's simulated paths at that origin.

use super::model::{fit_model, FittedModel, ModelSpec};
use super::options::BaselineOptions;
use super::simulate::{paths_with, percentiles};
use crate::rng::{splitmix64, stream};

/// Paths simulated per origin for the coverage score.
pub const BACKTEST_PATHS: usize = 400;
/// Domain tag of the backtest's streams (kept apart from report paths).
pub const BACKTEST_DOMAIN: u64 = 0x6261_636b;

/// Pooled scores of one candidate; None where undefined.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Score {
    pub mase: Option<f64>,
    pub smape: Option<f64>,
    pub coverage80: Option<f64>,
    /// Number of (origin, step) pairs scored.
    pub points: usize,
    /// Why an origin could not be scored, if one could not.
    pub failure: Option<String>,
}

/// Training lengths to use as origins: from `first` to `t − 1`, at most
/// `max` of them, evenly spaced and always including both ends.
pub fn origins(t: usize, first: usize, max: usize) -> Vec<usize> {
    if first >= t || max == 0 {
        return Vec::new();
    }
    let n = t - first;
    if n <= max {
        return (first..t).collect();
    }
    if max == 1 {
        return vec![first];
    }
    let mut v: Vec<usize> = (0..max)
        .map(|j| first + (j * (n - 1) + (max - 1) / 2) / (max - 1))
        .collect();
    v.dedup();
    v
}

/// Mean absolute change at lag `lag` over `train` (None if 0 or undefined).
pub fn mase_scale(train: &[f64], lag: usize) -> Option<f64> {
    if train.len() <= lag {
        return None;
    }
    let d: f64 = (lag..train.len())
        .map(|t| (train[t] - train[t - lag]).abs())
        .sum();
    let s = d / (train.len() - lag) as f64;
    (s > 0.0).then_some(s)
}

/// sMAPE term in percent; 0 when actual and forecast are both 0.
pub fn smape_term(actual: f64, forecast: f64) -> f64 {
    let denom = actual.abs() + forecast.abs();
    if denom == 0.0 {
        0.0
    } else {
        200.0 * (actual - forecast).abs() / denom
    }
}

#[derive(Debug, Clone, Default)]
struct Sums {
    scaled: f64,
    n_scaled: usize,
    smape: f64,
    hits: usize,
    n: usize,
}

/// Backtests one candidate over the given origins.
pub fn backtest(
    y: &[f64],
    index: Option<&[f64]>,
    spec: ModelSpec,
    opts: &BaselineOptions,
    origins: &[usize],
    scale_lag: usize,
) -> Score {
    let mut sums = Sums::default();
    for (j, &o) in origins.iter().enumerate() {
        if let Err(failure) = score_origin(y, index, spec, opts, (j, o), scale_lag, &mut sums) {
            return Score {
                failure: Some(failure),
                ..Score::default()
            };
        }
    }
    finish(sums)
}

/// Refits on the first `o` months (origin number `j`) and adds the scores
/// of the following months to `sums`.
fn score_origin(
    y: &[f64],
    index: Option<&[f64]>,
    spec: ModelSpec,
    opts: &BaselineOptions,
    (j, o): (usize, usize),
    scale_lag: usize,
    sums: &mut Sums,
) -> Result<(), String> {
    let steps = opts.horizon.min(opts.period).min(y.len() - o);
    let bt_opts = BaselineOptions {
        horizon: steps,
        ..opts.clone()
    };
    let kind = fit_model(&y[..o], index.map(|i| &i[..o]), spec, &bt_opts)
        .map_err(|e| format!("origin {o}: {e}"))?;
    let model = FittedModel::new(kind, steps, opts.bootstrap);
    let point = model.point_forecast();
    if let Some(h) = point.iter().position(|v| !v.is_finite()) {
        return Err(format!("origin {o}: non-finite forecast at step {}", h + 1));
    }
    let seed = splitmix64(opts.seed ^ (j as u64).wrapping_mul(0x9E37_79B9));
    let sims = paths_with(&model, BACKTEST_PATHS, |i| stream(seed, BACKTEST_DOMAIN, i));
    let q = percentiles(&sims, steps, &[0.1, 0.9]);
    let scale = mase_scale(&y[..o], scale_lag);
    for (h, &f) in point.iter().enumerate() {
        let a = y[o + h];
        if let Some(s) = scale {
            sums.scaled += (a - f).abs() / s;
            sums.n_scaled += 1;
        }
        sums.smape += smape_term(a, f);
        sums.hits += usize::from(a >= q[0][h] && a <= q[1][h]);
        sums.n += 1;
    }
    Ok(())
}

fn finish(s: Sums) -> Score {
    let n = s.n as f64;
    Score {
        mase: (s.n_scaled > 0).then(|| s.scaled / s.n_scaled as f64),
        smape: (s.n > 0).then(|| s.smape / n),
        coverage80: (s.n > 0).then(|| s.hits as f64 / n),
        points: s.n,
        failure: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn origins_are_evenly_spaced_and_include_both_ends() {
        assert_eq!(origins(30, 24, 10), vec![24, 25, 26, 27, 28, 29]);
        let o = origins(36, 24, 4);
        assert_eq!((o[0], o[o.len() - 1], o.len()), (24, 35, 4));
        assert!(origins(24, 24, 4).is_empty());
    }

    #[test]
    fn scores_by_hand() {
        // Scale at lag 1 of 1, 3, 2: (2 + 1)/2 = 1.5.
        assert_eq!(mase_scale(&[1.0, 3.0, 2.0], 1), Some(1.5));
        assert_eq!(mase_scale(&[2.0, 2.0, 2.0], 1), None);
        // sMAPE of 100 vs 50: 200·50/150 = 66.67 %.
        assert!((smape_term(100.0, 50.0) - 200.0 / 3.0).abs() < 1e-12);
        assert_eq!(smape_term(0.0, 0.0), 0.0);
    }
}
