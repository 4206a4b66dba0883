//! Explicit rank-gain distributions a cluster may state per tier instead of
//! the default model: triangular or PERT, over positions gained or over the
//! final position.
//!
//! Draws go through the inverse CDF, `quantile(u)`, so one uniform `u` per
//! keyword (or per cluster) serves every tier: common random numbers, and a
//! tier with a distribution shifted up gains more in every future.
//!
//! - Triangular(min, mode, max): Kotz & van Dorp, *Beyond Beta*, World
//!   Scientific 2004, ch. 1; mean `(a+c+b)/3`, variance
//!   `(a²+b²+c²-ab-ac-bc)/18`.
//! - PERT(min, mode, max, λ): a Beta(α, β) scaled to [min, max] with
//!   `α = 1 + λ(mode-min)/(max-min)`, `β = 1 + λ(max-mode)/(max-min)`,
//!   λ = 4 by default (Malcolm, Roseboom, Clark & Fazar, "Application of a
//!   technique for research and development program evaluation", Operations
//!   Research 7, 1959; Vose, *Risk Analysis*, 3rd ed., Wiley 2008); mean
//!   `(min + λ mode + max)/(λ + 2)`.

use serde::{Deserialize, Serialize};

use super::sampling::{clamp_unit, uniform, BetaParams};
use super::{invalid, ClicksError};
use crate::rng::Stream;

/// The PERT shape parameter used when none is given.
pub const DEFAULT_PERT_LAMBDA: f64 = 4.0;

fn default_lambda() -> f64 {
    DEFAULT_PERT_LAMBDA
}

/// A bounded distribution stated directly by a cluster.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "lowercase")]
pub enum GainDistribution {
    Triangular {
        min: f64,
        mode: f64,
        max: f64,
    },
    Pert {
        min: f64,
        mode: f64,
        max: f64,
        #[serde(default = "default_lambda")]
        lambda: f64,
    },
}

impl GainDistribution {
    /// A checked triangular distribution.
    pub fn triangular(min: f64, mode: f64, max: f64) -> Result<GainDistribution, ClicksError> {
        let d = GainDistribution::Triangular { min, mode, max };
        d.validate("triangular distribution")?;
        Ok(d)
    }

    /// A checked PERT distribution (`lambda` None means 4).
    pub fn pert(
        min: f64,
        mode: f64,
        max: f64,
        lambda: Option<f64>,
    ) -> Result<GainDistribution, ClicksError> {
        let lambda = lambda.unwrap_or(DEFAULT_PERT_LAMBDA);
        let d = GainDistribution::Pert {
            min,
            mode,
            max,
            lambda,
        };
        d.validate("PERT distribution")?;
        Ok(d)
    }

    /// `(min, mode, max)`.
    pub fn bounds(&self) -> (f64, f64, f64) {
        match *self {
            GainDistribution::Triangular { min, mode, max } => (min, mode, max),
            GainDistribution::Pert { min, mode, max, .. } => (min, mode, max),
        }
    }

    /// Checks finiteness, `min <= mode <= max` and `lambda > 0`; call it
    /// after deserializing. Errors name `origin`.
    pub fn validate(&self, origin: &str) -> Result<(), ClicksError> {
        let (min, mode, max) = self.bounds();
        for (key, v) in [("min", min), ("mode", mode), ("max", max)] {
            if !v.is_finite() {
                return Err(invalid(origin, key, v, "a finite number"));
            }
        }
        if mode < min {
            return Err(invalid(
                origin,
                "mode",
                mode,
                &format!("at least min ({min})"),
            ));
        }
        if max < mode {
            return Err(invalid(
                origin,
                "max",
                max,
                &format!("at least mode ({mode})"),
            ));
        }
        if let GainDistribution::Pert { lambda, .. } = *self {
            super::check_range(origin, "lambda", lambda, 1e-9, 1e6, "PERT shape, usually 4")?;
        }
        Ok(())
    }

    /// The mean.
    pub fn mean(&self) -> f64 {
        match *self {
            GainDistribution::Triangular { min, mode, max } => (min + mode + max) / 3.0,
            GainDistribution::Pert {
                min,
                mode,
                max,
                lambda,
            } => (min + lambda * mode + max) / (lambda + 2.0),
        }
    }

    /// The variance.
    pub fn variance(&self) -> f64 {
        match *self {
            GainDistribution::Triangular {
                min: a,
                mode: c,
                max: b,
            } => (a * a + b * b + c * c - a * b - a * c - b * c) / 18.0,
            GainDistribution::Pert { min, max, .. } => match self.pert_beta() {
                Some(beta) => (max - min).powi(2) * beta.variance(),
                None => 0.0,
            },
        }
    }

    /// The Beta shapes of a PERT (None for other kinds or zero width).
    pub fn pert_beta(&self) -> Option<BetaParams> {
        let GainDistribution::Pert {
            min,
            mode,
            max,
            lambda,
        } = *self
        else {
            return None;
        };
        let width = max - min;
        if width.is_nan() || width <= 0.0 {
            return None;
        }
        let alpha = 1.0 + lambda * (mode - min) / width;
        let beta = 1.0 + lambda * (max - mode) / width;
        BetaParams::new(alpha, beta).ok()
    }

    /// The inverse CDF at `u` (clamped into [0, 1]); non-decreasing in `u`.
    pub fn quantile(&self, u: f64) -> f64 {
        let u = clamp_unit(u);
        match *self {
            GainDistribution::Triangular { min, mode, max } => {
                triangular_quantile(min, mode, max, u)
            }
            GainDistribution::Pert { min, max, .. } => match self.pert_beta() {
                Some(beta) => min + (max - min) * beta.quantile(u),
                None => min,
            },
        }
    }

    /// One draw by inverse transform of a uniform from `rng`.
    pub fn sample(&self, rng: &mut Stream) -> f64 {
        self.quantile(uniform(rng))
    }
}

/// Inverse CDF of the triangular distribution:
/// `a + sqrt(u (b-a)(c-a))` for `u < (c-a)/(b-a)`, else
/// `b - sqrt((1-u)(b-a)(b-c))`.
fn triangular_quantile(a: f64, c: f64, b: f64, u: f64) -> f64 {
    let width = b - a;
    if width.is_nan() || width <= 0.0 {
        return a;
    }
    let fc = (c - a) / width;
    if u < fc {
        a + (u * width * (c - a)).sqrt()
    } else {
        b - ((1.0 - u) * width * (b - c)).sqrt()
    }
}

/// What an explicit distribution is over.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum GainScale {
    /// Positions gained: `p_new = max(1, p0 - value)`.
    PositionsGained,
    /// The final position itself: `p_new = max(1, value)`.
    FinalPosition,
}

/// An explicit distribution together with what it is over.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ExplicitGain {
    pub over: GainScale,
    pub distribution: GainDistribution,
}

impl ExplicitGain {
    /// Checks the distribution; a final position must be at least 1.
    pub fn validate(&self, origin: &str) -> Result<(), ClicksError> {
        self.distribution.validate(origin)?;
        let (min, _, _) = self.distribution.bounds();
        if self.over == GainScale::FinalPosition && min < 1.0 {
            return Err(invalid(origin, "min", min, "a final position of 1 or more"));
        }
        Ok(())
    }

    /// The position after the gain at uniform draw `u`, from position `p0`
    /// (100 when not ranking).
    pub fn position_at(&self, p0: f64, u: f64) -> f64 {
        let value = self.distribution.quantile(u);
        match self.over {
            GainScale::PositionsGained => (p0 - value).max(1.0),
            GainScale::FinalPosition => value.max(1.0),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_out_of_order_bounds() {
        assert!(GainDistribution::triangular(5.0, 2.0, 9.0).is_err());
        assert!(GainDistribution::pert(1.0, 2.0, 1.5, None).is_err());
        assert!(GainDistribution::pert(1.0, 2.0, 3.0, Some(0.0)).is_err());
    }

    #[test]
    fn degenerate_width_is_a_point() {
        let d = GainDistribution::pert(4.0, 4.0, 4.0, None).unwrap();
        assert_eq!(d.quantile(0.3), 4.0);
        assert_eq!(d.variance(), 0.0);
        assert_eq!(d.mean(), 4.0);
    }
}
