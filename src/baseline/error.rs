//! Errors of the baseline forecaster.
//!
//! One enum for everything the baseline can refuse. Each message names the
//! input or the option (with its command-line flag) and says how to fix it,
//! so the command-line layer can print it as it is.

use thiserror::Error;

/// Everything the baseline can refuse.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum BaselineError {
    /// Fewer months than any method needs.
    #[error(
        "the history has {months} months; the baseline needs at least {need} (one full year): \
         add earlier months to the history file"
    )]
    TooShort { months: usize, need: usize },

    /// A history value is NaN or infinite.
    #[error(
        "history value at month index {index} (month {} of the series) is {value}: every month \
         needs a finite number; fix or fill that row",
        index + 1
    )]
    NonFinite { index: usize, value: f64 },

    /// A search-interest index value is NaN, infinite or negative.
    #[error(
        "search-interest index value at month index {index} (month {} of the series) is {value}: \
         the index must be a finite number of at least 0",
        index + 1
    )]
    BadIndexValue { index: usize, value: f64 },

    /// The index is not aligned with the history.
    #[error(
        "the search-interest index has {index_len} months but the history has {history_len}: \
         give one index value per history month, aligned month for month"
    )]
    IndexLength {
        index_len: usize,
        history_len: usize,
    },

    /// Index growth was asked for without an index.
    #[error(
        "index-growth needs the search-interest index aligned with the history: supply it, or \
         choose another method (--method auto)"
    )]
    IndexMissing,

    /// The last year of the index is all zero.
    #[error(
        "the search-interest index sums to 0 over the last {period} months, so its \
         year-on-year ratio is undefined: use another method (--method auto)"
    )]
    IndexZeroYear { period: usize },

    /// Multiplicative seasonality on a series with a zero or negative month.
    #[error(
        "{method} needs every month above 0 (multiplicative seasonality divides by the series); \
         month index {index} is {value}: use --method holt-winters-additive"
    )]
    NotPositive {
        method: &'static str,
        index: usize,
        value: f64,
    },

    /// The chosen method needs more months than the history has.
    #[error(
        "{method} needs at least {need} months ({why}); the history has {months}: use \
         --method {suggest} or add earlier months"
    )]
    NotEnoughForMethod {
        method: &'static str,
        months: usize,
        need: usize,
        why: &'static str,
        suggest: &'static str,
    },

    /// A smoothing parameter or other numeric option is out of range.
    #[error("{name} = {value} is out of range: {expected}")]
    BadParameter {
        name: &'static str,
        value: f64,
        expected: &'static str,
    },

    /// An integer option is out of range.
    #[error("{name} = {value} is out of range: {expected}")]
    BadCount {
        name: &'static str,
        value: usize,
        expected: &'static str,
    },

    /// A method name that is not one of the known ones.
    #[error(
        "unknown baseline method '{given}': expected one of auto, linear, seasonal-naive, holt, \
         holt-winters-additive, holt-winters-multiplicative, index-growth"
    )]
    UnknownMethod { given: String },

    /// Ordinary least squares could not be computed.
    #[error("least squares fit impossible: {reason}")]
    Ols { reason: &'static str },

    /// No candidate could be fitted under automatic selection.
    #[error("automatic selection found no usable model: {reasons}")]
    NoCandidate { reasons: String },

    /// Estimation never reached a usable parameter value.
    #[error(
        "{method} could not be fitted: every parameter value tried gave an unusable forecast \
         (for example a level at or below 0 with multiplicative seasonality); try --method \
         holt-winters-additive or --method linear"
    )]
    FitFailed { method: &'static str },

    /// A fitted model produced a non-finite number.
    #[error(
        "{method} produced a non-finite forecast at step {step} (the fitted parameters are \
         unstable on this series): try --method linear or --method seasonal-naive"
    )]
    NonFiniteForecast { method: &'static str, step: usize },
}
