//! Tracking: where the months observed so far fall in the forecast, and a
//! re-forecast of the rest of the horizon that follows the data: the
//! baseline method's own states are updated with the observed months (less
//! each future's funded increments) and the remaining months re-simulated
//! from them ([`report`]; exact filtering for exponential smoothing,
//! Hyndman, Koehler, Ord & Snyder, *Forecasting with Exponential Smoothing:
//! The State Space Approach*, Springer 2008, ch. 2). [`weights`] keeps the
//! options type and the effective sample size of the earlier weighting.

pub mod report;
pub mod weights;

pub use report::{
    actual_values, reforecast_totals, track, ObservedMonth, ReforecastMonth, TargetUpdate,
    TrackInput, TrackReport, Update, UPDATE,
};
pub use weights::{ess, ess_threshold, TrackOptions, DEFAULT_SIGMA};

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
