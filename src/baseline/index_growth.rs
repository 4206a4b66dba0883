//! Index growth: last year's months scaled by the year-on-year growth of the
//! search-interest index, with the index's own trend projected.
//!
//! A practitioner method (no published source; common practice). Exactly:
//!
//! 1. Fit a straight line to the index by least squares on the month index,
//!    Î_t = a + b·t over t = 0..T−1 (`linear::ols`), and project it forward,
//!    clamped at 0 (an index cannot be negative).
//! 2. S_0 = the observed index summed over the last m months (m = 12);
//!    S_k = the projected index summed over future year k (months
//!    T + m(k−1) .. T + mk − 1, 0-based).
//! 3. Forecast month T − 1 + h (h = 1..H, future year k = ⌈h/m⌉) as the same
//!    month of the last observed year times S_k / S_0:
//!    ŷ_{T−1+h} = y_{T−1+h−mk} · S_k / S_0.
//!
//! So the seasonal shape is last year's, and the level moves with the
//! year-on-year ratio of the index (projected next year over observed last
//! year; projected year k over observed last year for later years).
//!
//! Error process for intervals: the same rule one year back within the
//! history, e_t = y_t − y_{t−m}·Î_t/Î_{t−m} (t = m..T−1, fitted index line),
//! σ = sqrt(Σe²/n). With fewer than two such months (T < m + 2) the spread of
//! month-to-month changes of y stands in, and a note says so. Paths:
//! y*_{T−1+h} = y*_{T−1+h−m}·S_k/S_{k−1} + ε, with y* the history for past
//! months.

use super::error::BaselineError;
use super::linear::{ols, OlsFit};

/// A fitted index-growth model.
#[derive(Debug, Clone)]
pub struct IndexGrowthModel {
    pub period: usize,
    /// The last m history months, oldest first.
    pub last_season: Vec<f64>,
    pub index_trend: OlsFit,
    /// S_0, the observed index over the last m months.
    pub last_year_index: f64,
    /// S_k for k = 1.. (enough years for the horizon).
    pub year_totals: Vec<f64>,
    pub residuals: Vec<f64>,
    pub sigma: f64,
    /// True when σ came from month-to-month changes (too few months).
    pub sigma_from_changes: bool,
}

/// Checks that the index is aligned, finite and non-negative.
pub fn validate_index(index: &[f64], history_len: usize) -> Result<(), BaselineError> {
    if index.len() != history_len {
        return Err(BaselineError::IndexLength {
            index_len: index.len(),
            history_len,
        });
    }
    match index.iter().position(|v| !(v.is_finite() && *v >= 0.0)) {
        Some(i) => Err(BaselineError::BadIndexValue {
            index: i,
            value: index[i],
        }),
        None => Ok(()),
    }
}

fn trend_at(fit: &OlsFit, t: f64) -> f64 {
    (fit.intercept + fit.slope * t).max(0.0)
}

impl IndexGrowthModel {
    /// Fits the index trend, the yearly totals and the error spread.
    pub fn fit(
        y: &[f64],
        index: &[f64],
        period: usize,
        horizon: usize,
    ) -> Result<Self, BaselineError> {
        validate_index(index, y.len())?;
        let t_len = y.len();
        if t_len < period.max(3) {
            return Err(BaselineError::NotEnoughForMethod {
                method: "index-growth",
                months: t_len,
                need: period.max(3),
                why: "one full season to scale",
                suggest: "linear",
            });
        }
        let x: Vec<f64> = (0..t_len).map(|t| t as f64).collect();
        let index_trend = ols(&x, index)?;
        let last_year_index: f64 = index[t_len - period..].iter().sum();
        if last_year_index <= 0.0 {
            return Err(BaselineError::IndexZeroYear { period });
        }
        let year_totals = project_years(&index_trend, t_len, period, horizon);
        let residuals = in_sample_errors(y, &index_trend, period);
        let (sigma, sigma_from_changes) = error_spread(y, &residuals);
        let last_season = y[t_len - period..].to_vec();
        Ok(IndexGrowthModel {
            period,
            last_season,
            index_trend,
            last_year_index,
            year_totals,
            residuals,
            sigma,
            sigma_from_changes,
        })
    }

    /// Ratio that carries future year k − 1 to year k (k ≥ 1; year 0 is the
    /// last observed one).
    pub fn step_ratio(&self, k: usize) -> f64 {
        let prev = if k <= 1 {
            self.last_year_index
        } else {
            self.year_totals[k - 2]
        };
        let next = self.year_totals.get(k - 1).copied().unwrap_or(0.0);
        if prev > 0.0 {
            next / prev
        } else {
            0.0
        }
    }

    /// Point forecasts for h = 1..=horizon.
    pub fn forecast(&self, horizon: usize) -> Vec<f64> {
        let mut buf = self.last_season.clone();
        (0..horizon)
            .map(|j| {
                let i = j % self.period;
                buf[i] *= self.step_ratio(j / self.period + 1);
                buf[i]
            })
            .collect()
    }

    /// Named parameters for reports.
    pub fn parameters(&self) -> Vec<(String, f64)> {
        let mut out = vec![
            ("index_intercept".to_string(), self.index_trend.intercept),
            ("index_slope".into(), self.index_trend.slope),
            ("index_last_year_total".into(), self.last_year_index),
        ];
        for (k, s) in self.year_totals.iter().enumerate() {
            out.push((
                format!("yoy_ratio_year_{}", k + 1),
                s / self.last_year_index,
            ));
        }
        out.push(("sigma".into(), self.sigma));
        out
    }
}

/// S_k for future years k = 1..⌈horizon/m⌉: the projected index summed over
/// months t_len + m(k − 1) .. t_len + mk − 1.
fn project_years(trend: &OlsFit, t_len: usize, period: usize, horizon: usize) -> Vec<f64> {
    (1..=horizon.div_ceil(period))
        .map(|k| {
            let start = t_len + period * (k - 1);
            (start..start + period)
                .map(|t| trend_at(trend, t as f64))
                .sum()
        })
        .collect()
}

/// σ from the in-sample errors (root mean square), or from month-to-month
/// changes when there are fewer than two errors (flagged by `true`).
fn error_spread(y: &[f64], residuals: &[f64]) -> (f64, bool) {
    if residuals.len() >= 2 {
        (
            (residuals.iter().map(|e| e * e).sum::<f64>() / residuals.len() as f64).sqrt(),
            false,
        )
    } else {
        (change_spread(y), true)
    }
}

/// e_t = y_t − y_{t−m}·Î_t/Î_{t−m}, skipping months whose fitted index is 0.
fn in_sample_errors(y: &[f64], trend: &OlsFit, period: usize) -> Vec<f64> {
    (period..y.len())
        .filter_map(|t| {
            let base = trend_at(trend, (t - period) as f64);
            (base > 0.0).then(|| y[t] - y[t - period] * trend_at(trend, t as f64) / base)
        })
        .collect()
}

/// Standard deviation of y_t − y_{t−1} (a random walk's error spread).
fn change_spread(y: &[f64]) -> f64 {
    let d: Vec<f64> = y.windows(2).map(|w| w[1] - w[0]).collect();
    let n = d.len() as f64;
    let mean = d.iter().sum::<f64>() / n;
    (d.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0).max(1.0)).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hand_computed_two_season_example() {
        // m = 2, T = 4, y = 10, 20, 12, 24; index 10, 10, 20, 20.
        // OLS on t = 0..3: x̄ = 1.5, ȳ = 15, Sxx = 5, Sxy = (−1.5)(−5) + (−0.5)(−5)
        // + (0.5)(5) + (1.5)(5) = 20, slope 4, intercept 9.
        // S_0 = 20 + 20 = 40. Year 1 = t 4, 5: 25 + 29 = 54; year 2 = t 6, 7: 33 + 37 = 70.
        // Forecast: 12·54/40 = 16.2, 24·54/40 = 32.4, then ·70/54: 21, 42.
        let m = IndexGrowthModel::fit(&[10.0, 20.0, 12.0, 24.0], &[10.0, 10.0, 20.0, 20.0], 2, 4)
            .unwrap();
        assert!((m.index_trend.slope - 4.0).abs() < 1e-12);
        assert_eq!(m.last_year_index, 40.0);
        let f = m.forecast(4);
        let want = [16.2, 32.4, 21.0, 42.0];
        assert!(
            f.iter().zip(want).all(|(a, b)| (a - b).abs() < 1e-9),
            "{f:?}"
        );
        // In-sample: t = 2: 12 − 10·17/9; t = 3: 24 − 20·21/13.
        let e = [12.0 - 10.0 * 17.0 / 9.0, 24.0 - 20.0 * 21.0 / 13.0];
        assert!(m
            .residuals
            .iter()
            .zip(e)
            .all(|(a, b)| (a - b).abs() < 1e-12));
    }

    #[test]
    fn a_zero_last_year_and_misaligned_index_are_refused() {
        let y = [1.0; 14];
        let mut idx = [5.0; 14];
        idx[2..].fill(0.0);
        assert_eq!(
            IndexGrowthModel::fit(&y, &idx, 12, 12).unwrap_err(),
            BaselineError::IndexZeroYear { period: 12 }
        );
        assert!(matches!(
            validate_index(&idx[..13], 14),
            Err(BaselineError::IndexLength { .. })
        ));
        let mut bad = [5.0; 14];
        bad[4] = -1.0;
        assert_eq!(
            validate_index(&bad, 14),
            Err(BaselineError::BadIndexValue {
                index: 4,
                value: -1.0
            })
        );
        // A season longer than the history cannot be scaled.
        assert!(matches!(
            IndexGrowthModel::fit(&[1.0; 12], &[1.0; 12], 24, 12),
            Err(BaselineError::NotEnoughForMethod { need: 24, .. })
        ));
    }
}
