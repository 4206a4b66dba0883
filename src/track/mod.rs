//! Tracking: where the months observed so far fall in the forecast, and a
//! re-forecast of the rest of the horizon that weights the simulated
//! futures by how well they match what has been seen.
//!
//! [`weights`] computes importance weights (the sampling–resampling view of
//! Bayes' rule, Smith & Gelfand, "Bayesian statistics without tears: a
//! sampling–resampling perspective", The American Statistician 46(2), 1992;
//! the same weighting as the bootstrap filter of Gordon, Salmond & Smith,
//! "Novel approach to nonlinear/non-Gaussian Bayesian state estimation",
//! IEE Proceedings F 140(2), 1993), their effective sample size, and widens
//! the tolerance when too few futures carry the weight. [`report`] turns
//! them into the tracking table and the updated target odds.

pub mod report;
pub mod weights;

pub use report::{
    actual_values, track, ObservedMonth, ReforecastMonth, TargetUpdate, TrackInput, TrackReport,
};
pub use weights::{
    ess, ess_threshold, reweight, weights_at, TrackOptions, Weighting, DEFAULT_SIGMA,
};

/// Everything that can go wrong in tracking.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TrackError {
    /// The actuals cannot be used.
    #[error("actuals: {0}")]
    Actuals(String),

    /// The simulated monthly totals or an option cannot be used.
    #[error("{what}: {message}")]
    Argument { what: String, message: String },
}
