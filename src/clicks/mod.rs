//! From a ranking to clicks to money, and how rankings may change.
//!
//! The pure model pieces the `estimate` and `simulate` drivers call:
//! click-through curves by position ([`ctr`]) and fitting a site's own curve
//! from a query export ([`ctr_fit`]); the default rank-gain model and its
//! shared-factor spreads ([`rank_gain`], [`factors`]); explicit triangular
//! and PERT gain distributions ([`gain_distribution`]); conversion, order
//! value, seasonality and the two money ratios ([`economics`]); and the
//! samplers the Monte Carlo draws from seeded streams ([`sampling`]).
//!
//! Nothing here reads files or prints: callers pass text or values in and get
//! typed results or a [`ClicksError`] back.

pub mod ctr;
pub mod ctr_fit;
pub mod economics;
pub mod factors;
pub mod fit_output;
pub mod gain_distribution;
pub mod rank_gain;
pub mod sampling;

pub use ctr::{CtrCurve, CtrLookup};
pub use ctr_fit::{fit, CtrFit, FitOptions, QueryRow};
pub use economics::{
    incremental_clicks, monthly_money, return_on_spend, roi, ConversionRate, Economics, Money,
    OrderValue, Seasonality, ValueBasis,
};
pub use factors::{Factors, Reuse, SiteDraw, SiteSampler};
pub use gain_distribution::{ExplicitGain, GainDistribution, GainScale};
pub use rank_gain::{position_after, KeywordDraws, RankGainModel};

/// Everything that can go wrong in the click and money models.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ClicksError {
    /// A model file is not valid TOML or has unknown or missing keys.
    #[error("{origin}: cannot read the model: {message}")]
    Parse { origin: String, message: String },

    /// A value in a model file or an argument is outside its allowed range.
    #[error("{origin}: `{key}` is {found}; expected {expected}")]
    Invalid {
        origin: String,
        key: String,
        found: String,
        expected: String,
    },

    /// A row of a query export cannot be used.
    #[error(
        "query export row {row} (query {query:?}): `{column}` is {found}; expected {expected}"
    )]
    QueryRow {
        row: usize,
        query: String,
        column: String,
        found: String,
        expected: String,
    },

    /// Nothing is left to fit once branded queries are removed.
    #[error(
        "query export: no non-branded rows to fit ({total} rows, {branded} matched the brand \
         pattern); check --brand or export more queries"
    )]
    NoNonBrandedRows { total: usize, branded: usize },

    /// Every non-branded row has zero impressions.
    #[error(
        "query export: all {rows} non-branded rows have zero impressions; export a longer \
         date range"
    )]
    NoImpressions { rows: usize },

    /// No position bin has enough impressions to be fitted.
    #[error(
        "query export: no position bin reaches {min} impressions (the largest has {best}); \
         export a longer date range or lower the minimum impressions per bin"
    )]
    TooFewImpressions { best: f64, min: f64 },

    /// The monthly history is too short for the requested estimate.
    #[error("{what}: {months} months given; need at least {needed}; {hint}")]
    TooShort {
        what: String,
        months: usize,
        needed: usize,
        hint: String,
    },
}

/// Shorthand for building [`ClicksError::Invalid`].
pub(crate) fn invalid(origin: &str, key: &str, found: f64, expected: &str) -> ClicksError {
    ClicksError::Invalid {
        origin: origin.to_string(),
        key: key.to_string(),
        found: format!("{found}"),
        expected: expected.to_string(),
    }
}

/// Checks that `value` is finite and within `[lo, hi]`.
pub(crate) fn check_range(
    origin: &str,
    key: &str,
    value: f64,
    lo: f64,
    hi: f64,
    meaning: &str,
) -> Result<(), ClicksError> {
    if value.is_finite() && value >= lo && value <= hi {
        Ok(())
    } else {
        Err(invalid(
            origin,
            key,
            value,
            &format!("a number from {lo} to {hi} ({meaning})"),
        ))
    }
}

/// Checks that `value` is finite and 0 or more.
pub(crate) fn check_non_negative(
    origin: &str,
    key: &str,
    value: f64,
    meaning: &str,
) -> Result<(), ClicksError> {
    if value.is_finite() && value >= 0.0 {
        Ok(())
    } else {
        Err(invalid(
            origin,
            key,
            value,
            &format!("{meaning}, 0 or more"),
        ))
    }
}

/// One row of a range table: key, value, lowest, highest, meaning.
pub(crate) type Range<'a> = (&'a str, f64, f64, f64, &'a str);

/// Checks a table of ranges in order, stopping at the first failure.
pub(crate) fn check_ranges(origin: &str, rows: &[Range]) -> Result<(), ClicksError> {
    rows.iter()
        .try_for_each(|&(key, v, lo, hi, meaning)| check_range(origin, key, v, lo, hi, meaning))
}
