//! Linear trend: ordinary least squares of the series on the month index.
//!
//! y_t = a + b·t + e_t for t = 0, 1, ..., T−1, forecast a + b·(T − 1 + h).
//! The fit centres x and y before forming the sums (the two-pass algorithm;
//! see Chan, Golub & LeVeque, "Algorithms for computing the sample variance",
//! Am. Stat. 37(3), 1983), which is what lets it reproduce the NIST StRD
//! certified values to about 1e-12. The residual standard deviation uses
//! T − 2 degrees of freedom, as NIST's certified "residual standard
//! deviation" does. Intervals simulate independent errors around the line;
//! the uncertainty of a and b themselves is not simulated.

use super::error::BaselineError;

/// Result of a simple linear regression y = intercept + slope·x.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OlsFit {
    pub intercept: f64,
    pub slope: f64,
    /// sqrt(SSE / (n − 2)).
    pub residual_sd: f64,
    /// Sum of squared residuals.
    pub sse: f64,
    pub n: usize,
}

/// Mean by two passes: the naive mean, then the mean of the deviations
/// added back (removes most of the rounding of the first pass).
fn accurate_mean(v: &[f64]) -> f64 {
    let n = v.len() as f64;
    let m = v.iter().sum::<f64>() / n;
    m + v.iter().map(|x| x - m).sum::<f64>() / n
}

/// Ordinary least squares of `y` on `x` with an intercept, centring both.
pub fn ols(x: &[f64], y: &[f64]) -> Result<OlsFit, BaselineError> {
    if x.len() != y.len() {
        return Err(BaselineError::Ols {
            reason: "x and y have different lengths",
        });
    }
    if x.len() < 3 {
        return Err(BaselineError::Ols {
            reason: "fewer than 3 points",
        });
    }
    if x.iter().chain(y).any(|v| !v.is_finite()) {
        return Err(BaselineError::Ols {
            reason: "a value is not finite",
        });
    }
    let (mx, my) = (accurate_mean(x), accurate_mean(y));
    let (mut sxx, mut sxy) = (0.0, 0.0);
    for (xi, yi) in x.iter().zip(y) {
        let dx = xi - mx;
        sxx += dx * dx;
        sxy += dx * (yi - my);
    }
    if sxx <= 0.0 {
        return Err(BaselineError::Ols {
            reason: "all x values are equal",
        });
    }
    let slope = sxy / sxx;
    let sse: f64 = x
        .iter()
        .zip(y)
        .map(|(xi, yi)| ((yi - my) - slope * (xi - mx)).powi(2))
        .sum();
    let n = x.len();
    Ok(OlsFit {
        intercept: my - slope * mx,
        slope,
        residual_sd: (sse / (n as f64 - 2.0)).sqrt(),
        sse,
        n,
    })
}

/// A fitted linear trend on the month index.
#[derive(Debug, Clone)]
pub struct LinearModel {
    pub fit: OlsFit,
    /// y_t − (a + b·t), t = 0..T−1.
    pub residuals: Vec<f64>,
    /// a + b·t, t = 0..T−1.
    pub fitted: Vec<f64>,
}

impl LinearModel {
    /// Fits the trend to the whole series.
    pub fn fit(y: &[f64]) -> Result<LinearModel, BaselineError> {
        let x: Vec<f64> = (0..y.len()).map(|t| t as f64).collect();
        let fit = ols(&x, y)?;
        let fitted: Vec<f64> = x.iter().map(|t| fit.intercept + fit.slope * t).collect();
        let residuals = y.iter().zip(&fitted).map(|(a, f)| a - f).collect();
        Ok(LinearModel {
            fit,
            residuals,
            fitted,
        })
    }

    /// Point forecast for h = 1..=horizon months after the last one.
    pub fn forecast(&self, horizon: usize) -> Vec<f64> {
        let last = self.fit.n as f64 - 1.0;
        (1..=horizon)
            .map(|h| self.fit.intercept + self.fit.slope * (last + h as f64))
            .collect()
    }

    /// Named parameters for reports.
    pub fn parameters(&self) -> Vec<(String, f64)> {
        vec![
            ("intercept".into(), self.fit.intercept),
            ("slope".into(), self.fit.slope),
            ("sigma".into(), self.fit.residual_sd),
        ]
    }

    /// −2 log-likelihood of the Gaussian regression at the MLE of σ², up to
    /// the constant T(1 + ln 2π) shared with the exponential smoothing models.
    pub fn neg2_loglik(&self, sse_floor: f64) -> f64 {
        let t = self.fit.n as f64;
        t * (self.fit.sse.max(sse_floor) / t).ln() + t * (1.0 + (2.0 * std::f64::consts::PI).ln())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_line_is_recovered_and_forecast() {
        let y: Vec<f64> = (0..12).map(|t| 100.0 + 2.5 * t as f64).collect();
        let m = LinearModel::fit(&y).unwrap();
        assert!((m.fit.intercept - 100.0).abs() < 1e-10);
        assert!((m.fit.slope - 2.5).abs() < 1e-12);
        assert!(m.fit.residual_sd < 1e-10);
        // Month 12 (h = 1) is 100 + 2.5·12 = 130.
        assert!((m.forecast(2)[0] - 130.0).abs() < 1e-9);
        assert!((m.forecast(2)[1] - 132.5).abs() < 1e-9);
    }

    #[test]
    fn hand_computed_three_point_fit() {
        // x = 0,1,2; y = 1,2,4: x̄ = 1, ȳ = 7/3, Sxx = 2, Sxy = (−1)(−4/3) + (1)(5/3) = 3,
        // slope 1.5, intercept 7/3 − 1.5 = 5/6; residuals −1/6, 1/3, −1/6,
        // SSE = 1/36 + 4/36 + 1/36 = 1/6, sd = sqrt(1/6 / 1).
        let f = ols(&[0.0, 1.0, 2.0], &[1.0, 2.0, 4.0]).unwrap();
        assert!((f.slope - 1.5).abs() < 1e-15);
        assert!((f.intercept - 5.0 / 6.0).abs() < 1e-15);
        assert!((f.sse - 1.0 / 6.0).abs() < 1e-15);
        assert!((f.residual_sd - (1.0f64 / 6.0).sqrt()).abs() < 1e-15);
    }

    #[test]
    fn degenerate_inputs_are_errors() {
        assert!(ols(&[1.0, 1.0, 1.0], &[1.0, 2.0, 3.0]).is_err());
        assert!(ols(&[1.0, 2.0], &[1.0, 2.0]).is_err());
        assert!(ols(&[1.0, 2.0, 3.0], &[1.0, f64::NAN, 3.0]).is_err());
        assert!(ols(&[1.0, 2.0, 3.0], &[1.0, 2.0]).is_err());
    }
}
