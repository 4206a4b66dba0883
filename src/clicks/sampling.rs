//! Samplers the Monte Carlo draws from seeded streams: uniform, standard
//! normal, lognormal, Beta, and (through [`GainDistribution`]) triangular and
//! PERT.
//!
//! Where common random numbers matter, a distribution is evaluated from a
//! draw rather than from the stream: [`LogNormalParams::at`] from a standard
//! normal `z`, and the `quantile(u)` methods (inverse CDF) from a uniform `u`.
//! The same `z` or `u` then serves every tier of a cluster, and a larger
//! parameter gives a larger outcome in every future. Formulas: Johnson, Kotz
//! & Balakrishnan, *Continuous Univariate Distributions*, 2nd ed., Wiley,
//! vol. 1 ch. 14 (lognormal) and vol. 2 ch. 25 (Beta).
//!
//! [`GainDistribution`]: super::gain_distribution::GainDistribution

use rand::RngExt;
use rand_distr::{Distribution, StandardNormal};
use serde::Serialize;
use statrs::distribution::{Beta as StatrsBeta, ContinuousCDF, Normal as StatrsNormal};

use super::{invalid, ClicksError};
use crate::rng::Stream;

/// A uniform draw in [0, 1).
pub fn uniform(rng: &mut Stream) -> f64 {
    rng.random::<f64>()
}

/// A standard normal draw.
pub fn standard_normal(rng: &mut Stream) -> f64 {
    StandardNormal.sample(rng)
}

/// The standard normal quantile `Φ⁻¹(u)`, `u` clamped into [0, 1]
/// (NaN counts as the median).
pub fn normal_quantile(u: f64) -> f64 {
    let u = clamp_unit(u);
    StatrsNormal::standard().inverse_cdf(u)
}

/// `u` clamped into [0, 1]; NaN becomes 0.5 so a bad draw lands mid-range.
pub(crate) fn clamp_unit(u: f64) -> f64 {
    if u.is_nan() {
        0.5
    } else {
        u.clamp(0.0, 1.0)
    }
}

/// A lognormal distribution: `exp(mu + sigma * Z)` with `Z` standard normal.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LogNormalParams {
    pub mu: f64,
    pub sigma: f64,
    /// Its mean, kept so that `sigma = 0` returns exactly the value given.
    mean: f64,
}

impl LogNormalParams {
    /// From the log-scale location and scale.
    pub fn new(mu: f64, sigma: f64) -> Result<LogNormalParams, ClicksError> {
        if !mu.is_finite() {
            return Err(invalid("lognormal", "mu", mu, "a finite number"));
        }
        super::check_range("lognormal", "sigma", sigma, 0.0, 10.0, "log-scale spread")?;
        let mean = (mu + sigma * sigma / 2.0).exp();
        Ok(LogNormalParams { mu, sigma, mean })
    }

    /// The lognormal with mean `mean` > 0 and standard deviation `sd` >= 0:
    /// `sigma² = ln(1 + sd²/mean²)`, `mu = ln(mean) - sigma²/2`. With
    /// `sd = 0` every draw is exactly `mean`.
    pub fn from_mean_sd(mean: f64, sd: f64) -> Result<LogNormalParams, ClicksError> {
        if !(mean.is_finite() && mean > 0.0) {
            return Err(invalid("lognormal", "mean", mean, "a positive number"));
        }
        if !(sd.is_finite() && sd >= 0.0) {
            return Err(invalid(
                "lognormal",
                "sd",
                sd,
                "a standard deviation, 0 or more",
            ));
        }
        let s2 = (sd / mean).powi(2).ln_1p();
        Ok(LogNormalParams {
            mu: mean.ln() - s2 / 2.0,
            sigma: s2.sqrt(),
            mean,
        })
    }

    /// `exp(mu + sigma²/2)`.
    pub fn mean(&self) -> f64 {
        self.mean
    }

    /// `(exp(sigma²) - 1) * exp(2 mu + sigma²)`.
    pub fn variance(&self) -> f64 {
        let s2 = self.sigma * self.sigma;
        s2.exp_m1() * (2.0 * self.mu + s2).exp()
    }

    /// `exp(mu)`.
    pub fn median(&self) -> f64 {
        self.mu.exp()
    }

    /// The value at standard-normal draw `z` (common random numbers).
    #[inline]
    pub fn at(&self, z: f64) -> f64 {
        if self.sigma == 0.0 {
            self.mean
        } else {
            (self.mu + self.sigma * z).exp()
        }
    }

    /// The `u` quantile, `exp(mu + sigma Φ⁻¹(u))`.
    pub fn quantile(&self, u: f64) -> f64 {
        self.at(normal_quantile(u))
    }

    /// One draw from `rng`.
    pub fn sample(&self, rng: &mut Stream) -> f64 {
        self.at(standard_normal(rng))
    }
}

/// A Beta(alpha, beta) distribution on [0, 1].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BetaParams {
    pub alpha: f64,
    pub beta: f64,
}

impl BetaParams {
    /// Both shapes positive and finite.
    pub fn new(alpha: f64, beta: f64) -> Result<BetaParams, ClicksError> {
        for (key, v) in [("alpha", alpha), ("beta", beta)] {
            if !(v.is_finite() && v > 0.0) {
                return Err(invalid("Beta distribution", key, v, "a positive shape"));
            }
        }
        Ok(BetaParams { alpha, beta })
    }

    /// The Beta with this mean and standard deviation (method of moments:
    /// `nu = m(1-m)/s² - 1`, `alpha = m nu`, `beta = (1-m) nu`); needs
    /// `0 < m < 1` and `0 < s² < m(1-m)`.
    pub fn from_mean_sd(mean: f64, sd: f64) -> Result<BetaParams, ClicksError> {
        if !(mean.is_finite() && mean > 0.0 && mean < 1.0) {
            return Err(invalid(
                "Beta distribution",
                "mean",
                mean,
                "a rate strictly between 0 and 1",
            ));
        }
        let limit = (mean * (1.0 - mean)).sqrt();
        if !(sd.is_finite() && sd > 0.0 && sd < limit) {
            let expected = format!("a spread above 0 and below {limit} (sqrt(m(1-m)))");
            return Err(invalid("Beta distribution", "sd", sd, &expected));
        }
        let nu = mean * (1.0 - mean) / (sd * sd) - 1.0;
        BetaParams::new(mean * nu, (1.0 - mean) * nu)
    }

    /// `alpha / (alpha + beta)`.
    pub fn mean(&self) -> f64 {
        self.alpha / (self.alpha + self.beta)
    }

    /// `alpha beta / ((alpha + beta)² (alpha + beta + 1))`.
    pub fn variance(&self) -> f64 {
        let s = self.alpha + self.beta;
        self.alpha * self.beta / (s * s * (s + 1.0))
    }

    /// The `u` quantile (inverse regularized incomplete beta function, from
    /// statrs); `u` clamped into [0, 1].
    pub fn quantile(&self, u: f64) -> f64 {
        match StatrsBeta::new(self.alpha, self.beta) {
            Ok(b) => b.inverse_cdf(clamp_unit(u)),
            Err(_) => self.mean(),
        }
    }

    /// One draw from `rng` (rand_distr's Beta sampler: fast, but it uses a
    /// variable number of draws; use [`BetaParams::quantile`] for common
    /// random numbers).
    pub fn sample(&self, rng: &mut Stream) -> f64 {
        match rand_distr::Beta::new(self.alpha, self.beta) {
            Ok(b) => b.sample(rng),
            Err(_) => self.mean(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn zero_spread_lognormal_is_exactly_its_mean() {
        let p = LogNormalParams::from_mean_sd(0.95, 0.0).unwrap();
        assert_eq!(p.at(2.5), 0.95);
        assert_eq!(p.quantile(0.9), 0.95);
    }

    #[test]
    fn beta_moment_match_round_trips() {
        let b = BetaParams::from_mean_sd(0.02, 0.003).unwrap();
        assert!((b.mean() - 0.02).abs() < 1e-12);
        assert!((b.variance().sqrt() - 0.003).abs() < 1e-12);
        assert!(BetaParams::from_mean_sd(0.5, 0.6).is_err());
    }
}
