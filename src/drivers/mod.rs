//! Variance drivers: which uncertain inputs move the plan's outcome most.
//!
//! For an allocation, every simulated future records its uncertain inputs
//! (the site-wide factors, each funded cluster's execution factor, and the
//! baseline path's deviation from its mean) beside its outcome (the
//! portfolio's net return, and the target metric's total when baseline
//! paths are given). Each input is ranked by the square of its Spearman
//! rank correlation with the outcome: the share of the outcome's rank
//! variance a monotone relation with that input alone explains. This is
//! the rank-based screening measure of Iman & Conover, "Small sample
//! sensitivity analysis techniques for computer models, with an application
//! to risk assessment", Communications in Statistics – Theory and Methods
//! 9(17), 1980, and of Saltelli et al., *Global Sensitivity Analysis: The
//! Primer*, Wiley 2008, ch. 1 (the inputs here are drawn independently, so
//! the squares add up to at most about 1 when the model is near additive
//! in ranks). The swing, for a tornado chart, is the mean outcome in the
//! futures where the input is in its top decile minus that in its bottom
//! decile.

pub mod inputs;
pub mod rank;
pub mod report;

pub use inputs::{input_series, InputSeries};
pub use rank::{average_ranks, rank_drivers, spearman, Driver};
pub use report::{drivers, DriverReport, DriverTable};

use crate::target::TargetError;

/// Everything that can go wrong when ranking variance drivers.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DriversError {
    /// An input or outcome series has the wrong length or bad values.
    #[error("{what}: {message}")]
    Argument { what: String, message: String },

    /// Computing the outcome failed.
    #[error(transparent)]
    Target(#[from] TargetError),
}
