//! What is left of the importance weighting tracking used before issue 14,
//! kept for callers: the options type and the effective sample size.
//!
//! The earlier re-forecast weighted the prior futures by how well they
//! matched the actuals and doubled the tolerance σ until enough futures
//! matched; when the actuals left the simulated range, the doubling flattened
//! the weights back to the prior, so worse actuals could give a rosier
//! re-forecast. The re-forecast now updates the baseline's states instead
//! (`report`), and reweights nothing; the report still carries the effective
//! sample size (Kish, *Survey Sampling*, Wiley 1965: `(Σw)² / Σw²`), which
//! is the number of futures.

/// The σ the earlier weighting started from; unused by the update.
pub const DEFAULT_SIGMA: f64 = 0.05;

/// Options of tracking. The state update has no tolerance to set; the
/// fields are kept so existing callers compile.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrackOptions {
    pub sigma: f64,
    pub min_ess: Option<f64>,
    pub max_doublings: u32,
}

impl Default for TrackOptions {
    fn default() -> Self {
        TrackOptions {
            sigma: DEFAULT_SIGMA,
            min_ess: None,
            max_doublings: 0,
        }
    }
}

/// The ESS threshold reported for `s` futures: `max(100, 0.02 s)`, at most
/// `s / 2`.
pub fn ess_threshold(s: usize) -> f64 {
    (0.02 * s as f64).max(100.0).min(s as f64 / 2.0)
}

/// `(Σw)² / Σw²`; 0 for no weight.
pub fn ess(w: &[f64]) -> f64 {
    let s: f64 = w.iter().sum();
    let s2: f64 = w.iter().map(|x| x * x).sum();
    if s2 > 0.0 {
        s * s / s2
    } else {
        0.0
    }
}
