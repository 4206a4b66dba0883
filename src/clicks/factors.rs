//! Shared factors of the Monte Carlo: one execution factor per cluster and,
//! per future, site-wide factors (ranking shock, click-through erosion,
//! search-volume drift, conversion rate, order value). Sharing them makes
//! outcomes correlated, which is why a portfolio's downside is not the sum of
//! its parts. Their spreads are the `[factors]` table of the rank-gain model
//! file; all are rules of thumb (common practice, no source).
//!
//! Distributions:
//! - execution factor: lognormal with median 1, `exp(execution_sigma * z)`;
//! - ranking shock: with probability `shock_probability` per future, every
//!   keyword's log-position worsens by `shock_log_loss` from a month the
//!   caller picks with `shock_month_share` (uniform in [0, 1));
//! - CTR factor: lognormal with mean `1 - ctr_erosion_mean` and standard
//!   deviation `ctr_erosion_sd`; multiplies every CTR in the future;
//! - volume factor: lognormal with mean 1 and standard deviation
//!   `volume_drift_sd`; multiplies every search volume;
//! - conversion rate: the Beta posterior when the plan gives counts, else a
//!   Beta with the given mean and relative spread `conversion_rate_cv`;
//! - order value: lognormal with the plan's mean and spread, or relative
//!   spread `order_value_cv` when the plan gives none.
//!
//! With every spread at zero and `shock_probability = 0`, a
//! [`SiteSampler::draw`] equals
//! [`Factors::expected_site`] exactly in every field that enters a result
//! (`shock_month_share` is still drawn but only matters when a shock hits;
//! a conversion rate given as counts keeps its posterior spread, which is
//! data, not a setting).

use serde::{Deserialize, Serialize};

use super::economics::{Economics, RateDistribution};
use super::sampling::{standard_normal, uniform, LogNormalParams};
use super::{check_ranges, ClicksError, Range};
use crate::rng::Stream;

/// Spreads of the shared factors: `[factors]` in the model file.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Factors {
    /// Lognormal sigma of a cluster's execution factor (median 1).
    pub execution_sigma: f64,
    /// Probability of a site-wide ranking shock in one future.
    pub shock_probability: f64,
    /// Log-position worsening when the shock hits.
    pub shock_log_loss: f64,
    /// Mean relative fall in CTR at every position.
    pub ctr_erosion_mean: f64,
    /// Standard deviation of the CTR factor.
    pub ctr_erosion_sd: f64,
    /// Standard deviation of the site-wide search-volume factor (mean 1).
    pub volume_drift_sd: f64,
    /// Relative spread of a conversion rate given as a plain number.
    pub conversion_rate_cv: f64,
    /// Relative spread of the order value when the plan gives none.
    pub order_value_cv: f64,
}

/// The site-wide factors of one future.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SiteDraw {
    /// Whether the ranking shock hits in this future.
    pub shock: bool,
    /// Log-position loss if it hits (0 otherwise).
    pub shock_log_loss: f64,
    /// Uniform in [0, 1) placing the shock in the horizon.
    pub shock_month_share: f64,
    pub ctr_factor: f64,
    pub volume_factor: f64,
    pub conversion_rate: f64,
    pub order_value: f64,
}

impl Factors {
    /// Checks every spread's range.
    pub fn validate(&self, origin: &str) -> Result<(), ClicksError> {
        #[rustfmt::skip]
        let rows: [Range; 8] = [
            ("factors.execution_sigma", self.execution_sigma, 0.0, 3.0, "lognormal sigma"),
            ("factors.shock_probability", self.shock_probability, 0.0, 1.0, "probability"),
            ("factors.shock_log_loss", self.shock_log_loss, 0.0, 5.0, "log-position loss"),
            ("factors.ctr_erosion_mean", self.ctr_erosion_mean, -0.9, 0.9, "relative CTR fall"),
            ("factors.ctr_erosion_sd", self.ctr_erosion_sd, 0.0, 2.0, "standard deviation"),
            ("factors.volume_drift_sd", self.volume_drift_sd, 0.0, 2.0, "standard deviation"),
            ("factors.conversion_rate_cv", self.conversion_rate_cv, 0.0, 2.0, "relative spread"),
            ("factors.order_value_cv", self.order_value_cv, 0.0, 5.0, "relative spread"),
        ];
        check_ranges(origin, &rows)
    }

    /// A cluster's execution factor at standard-normal draw `z` (median 1).
    pub fn execution_factor(&self, z: f64) -> f64 {
        (self.execution_sigma * z).exp()
    }

    /// The CTR factor's distribution.
    pub fn ctr_factor(&self) -> Result<LogNormalParams, ClicksError> {
        LogNormalParams::from_mean_sd(1.0 - self.ctr_erosion_mean, self.ctr_erosion_sd)
    }

    /// The volume factor's distribution.
    pub fn volume_factor(&self) -> Result<LogNormalParams, ClicksError> {
        LogNormalParams::from_mean_sd(1.0, self.volume_drift_sd)
    }

    /// The values `estimate` uses: no shock, factor means, economic means.
    pub fn expected_site(&self, economics: &Economics) -> SiteDraw {
        SiteDraw {
            shock: false,
            shock_log_loss: 0.0,
            shock_month_share: 0.5,
            ctr_factor: 1.0 - self.ctr_erosion_mean,
            volume_factor: 1.0,
            conversion_rate: economics.conversion_rate.mean(),
            order_value: economics.order_value.mean,
        }
    }

    /// Builds the per-future sampler for these spreads and `economics`,
    /// checking once that every distribution can be formed (a conversion
    /// rate's relative spread can be too wide for a Beta).
    pub fn site_sampler(&self, economics: &Economics) -> Result<SiteSampler, ClicksError> {
        Ok(SiteSampler {
            shock_probability: self.shock_probability,
            shock_log_loss: self.shock_log_loss,
            ctr: self.ctr_factor()?,
            volume: self.volume_factor()?,
            conversion: economics
                .conversion_rate
                .distribution(self.conversion_rate_cv)?,
            order_value: economics.order_value.distribution(self.order_value_cv)?,
            expected: self.expected_site(economics),
        })
    }
}

/// Where [`SiteSampler::draw_reusing`] copies each costly factor from:
/// the index of an earlier sampler with the same distribution, or None to
/// draw it.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Reuse {
    pub ctr: Option<usize>,
    pub volume: Option<usize>,
    pub conversion: Option<usize>,
    pub order_value: Option<usize>,
}

/// Draws the site-wide factors of one future; built by
/// [`Factors::site_sampler`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SiteSampler {
    shock_probability: f64,
    shock_log_loss: f64,
    ctr: LogNormalParams,
    volume: LogNormalParams,
    conversion: RateDistribution,
    order_value: LogNormalParams,
    expected: SiteDraw,
}

impl SiteSampler {
    /// The values `estimate` uses (see [`Factors::expected_site`]).
    pub fn expected(&self) -> SiteDraw {
        self.expected
    }

    /// For each factor, the first of `earlier` samplers that draws it from
    /// the same distribution (so its draws can be copied).
    pub fn reuse_from(&self, earlier: &[SiteSampler]) -> Reuse {
        let find = |same: &dyn Fn(&SiteSampler) -> bool| earlier.iter().position(same);
        Reuse {
            ctr: find(&|e| e.ctr == self.ctr),
            volume: find(&|e| e.volume == self.volume),
            conversion: find(&|e| e.conversion == self.conversion),
            order_value: find(&|e| e.order_value == self.order_value),
        }
    }

    /// [`SiteSampler::draw`] of the same stream, copying each factor that
    /// `reuse` finds in an earlier sampler from `before(i)`, earlier sampler
    /// `i`'s draw of the same stream (the stream is read in full all the
    /// same, so the result has the same bits as `draw`). A stress preset
    /// that changes only the click-through factor then does not invert the
    /// conversion rate's Beta CDF again.
    pub fn draw_reusing<'a>(
        &self,
        rng: &mut Stream,
        reuse: &Reuse,
        before: impl Fn(usize) -> &'a SiteDraw,
    ) -> SiteDraw {
        let shock = uniform(rng) < self.shock_probability;
        let shock_month_share = uniform(rng);
        let (z_ctr, z_volume) = (standard_normal(rng), standard_normal(rng));
        let u_conversion = uniform(rng);
        let z_order = standard_normal(rng);
        SiteDraw {
            shock,
            shock_log_loss: if shock { self.shock_log_loss } else { 0.0 },
            shock_month_share,
            ctr_factor: reuse
                .ctr
                .map_or_else(|| self.ctr.at(z_ctr), |i| before(i).ctr_factor),
            volume_factor: reuse
                .volume
                .map_or_else(|| self.volume.at(z_volume), |i| before(i).volume_factor),
            conversion_rate: reuse.conversion.map_or_else(
                || self.conversion.quantile(u_conversion),
                |i| before(i).conversion_rate,
            ),
            order_value: reuse
                .order_value
                .map_or_else(|| self.order_value.at(z_order), |i| before(i).order_value),
        }
    }

    /// Draws one future's factors, always six draws in this order: shock,
    /// shock month, CTR, volume, conversion rate (by inverse CDF), order
    /// value.
    pub fn draw(&self, rng: &mut Stream) -> SiteDraw {
        // Nothing to copy: every factor is drawn (`before` is never read).
        self.draw_reusing(rng, &Reuse::default(), |_| &self.expected)
    }
}
