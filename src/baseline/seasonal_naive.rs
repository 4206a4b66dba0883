//! Seasonal naïve with drift: next year repeats the same month of the last
//! year, plus the average year-on-year change.
//!
//! FPP3 §5.2 defines the seasonal naïve method (ŷ_{T+h} = y_{T+h−m(k+1)})
//! and the drift method (a random walk whose drift is the average change).
//! Combined, the model is a seasonal random walk with drift,
//! y_t = y_{t−m} + c + ε_t, with c = mean of the year-on-year differences
//! y_t − y_{t−m} (t = m+1..T), so
//! ŷ_{T+h} = y_{T+h−m(k+1)} + (k + 1)·c, k = ⌊(h − 1)/m⌋.
//! Residuals are ε_t = y_t − y_{t−m} − c; σ uses T − m − 1 degrees of freedom
//! (one estimated drift). It needs m + 2 months (two year-on-year
//! differences) and is exact on a linear series.

use super::error::BaselineError;

/// A fitted seasonal random walk with drift.
#[derive(Debug, Clone)]
pub struct SeasonalNaiveModel {
    pub period: usize,
    /// The last m observations, oldest first.
    pub last_season: Vec<f64>,
    /// Average year-on-year change c.
    pub drift: f64,
    /// ε_t for t = m+1..T.
    pub residuals: Vec<f64>,
    pub sigma: f64,
    /// In-sample forecasts y_{t−m} + c for t = m+1..T.
    pub fitted: Vec<f64>,
}

impl SeasonalNaiveModel {
    /// Fits the drift to the year-on-year differences.
    pub fn fit(y: &[f64], period: usize) -> Result<SeasonalNaiveModel, BaselineError> {
        let need = period + 2;
        if y.len() < need {
            return Err(BaselineError::NotEnoughForMethod {
                method: "seasonal-naive",
                months: y.len(),
                need,
                why: "two year-on-year differences for the drift and its spread",
                suggest: "linear",
            });
        }
        let diffs: Vec<f64> = (period..y.len()).map(|t| y[t] - y[t - period]).collect();
        let drift = diffs.iter().sum::<f64>() / diffs.len() as f64;
        let residuals: Vec<f64> = diffs.iter().map(|d| d - drift).collect();
        let dof = (residuals.len() - 1) as f64;
        let sigma = (residuals.iter().map(|e| e * e).sum::<f64>() / dof).sqrt();
        let fitted = (period..y.len()).map(|t| y[t - period] + drift).collect();
        let last_season = y[y.len() - period..].to_vec();
        Ok(SeasonalNaiveModel {
            period,
            last_season,
            drift,
            residuals,
            sigma,
            fitted,
        })
    }

    /// Point forecasts: the same month a year earlier plus the drift.
    pub fn forecast(&self, horizon: usize) -> Vec<f64> {
        let mut buf = self.last_season.clone();
        (0..horizon)
            .map(|j| {
                let i = j % self.period;
                buf[i] += self.drift;
                buf[i]
            })
            .collect()
    }

    /// Named parameters for reports.
    pub fn parameters(&self) -> Vec<(String, f64)> {
        vec![("drift".into(), self.drift), ("sigma".into(), self.sigma)]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hand_computed_drift_and_forecast() {
        // m = 2, y = 1, 5, 3, 8, 4: differences 2, 3, 1, drift 2,
        // residuals 0, 1, −1, σ = sqrt(2 / 2) = 1.
        // Forecast: last season (8, 4) → 10, 6, then 12, 8.
        let m = SeasonalNaiveModel::fit(&[1.0, 5.0, 3.0, 8.0, 4.0], 2).unwrap();
        assert_eq!(m.drift, 2.0);
        assert_eq!(m.residuals, vec![0.0, 1.0, -1.0]);
        assert_eq!(m.sigma, 1.0);
        assert_eq!(m.forecast(4), vec![10.0, 6.0, 12.0, 8.0]);
    }

    #[test]
    fn too_short_names_what_is_needed() {
        let err = SeasonalNaiveModel::fit(&[1.0; 13], 12).unwrap_err();
        assert!(err.to_string().contains("at least 14 months"));
    }
}
