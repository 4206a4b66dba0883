//! Importance weights of the simulated futures given the observed months.
//!
//! Future `s` gets weight
//! `w_s ∝ exp(−Σ_m d_{s,m}² / (2σ²))`, `d_{s,m} = ln((a_m + 1)/(max(0, x_{s,m}) + 1))`,
//! over the observed months `m`, with `a_m` the actual and `x_{s,m}` the
//! future's simulated total: a Gaussian likelihood of the actuals on the log
//! scale around each future (Smith & Gelfand 1992). The `+ 1` keeps a month
//! with zero clicks finite and changes nothing at the scale of real sites.
//!
//! σ is the relative error allowed between a future that is "right" and the
//! numbers reported for it. The default, 0.05, is the disagreement of a few
//! per cent usual between click counts of a search-performance export and
//! web analytics, or between a month's first and revised figures (rule of
//! thumb, common practice, no source). A smaller σ trusts each month more
//! and concentrates the weight on fewer futures.
//!
//! The effective sample size is `ESS = (Σw)² / Σw²` (Kish, *Survey
//! Sampling*, Wiley 1965; the degeneracy measure of Gordon et al. 1993's
//! bootstrap filter literature). When it falls below the threshold — 2 % of
//! the futures, at least 100, and never more than half of them — σ is
//! doubled until it is reached (as σ grows the weights tend to equal and ESS
//! to S, so this ends), and the report gives the final σ.

use super::TrackError;

/// The default σ on the log scale (see the module documentation).
pub const DEFAULT_SIGMA: f64 = 0.05;

/// Options of the reweighting.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrackOptions {
    /// Starting σ on the log scale.
    pub sigma: f64,
    /// ESS below which σ is widened (None: [`ess_threshold`]).
    pub min_ess: Option<f64>,
    /// Most doublings of σ.
    pub max_doublings: u32,
}

impl Default for TrackOptions {
    fn default() -> Self {
        TrackOptions {
            sigma: DEFAULT_SIGMA,
            min_ess: None,
            max_doublings: 40,
        }
    }
}

/// The default ESS threshold for `s` futures: `max(100, 0.02 s)`, at most
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

/// `Σ_m d_{s,m}²` of every future over the `actuals.len()` first months.
pub fn squared_log_errors(actuals: &[f64], sims: &[f64], horizon: usize) -> Vec<f64> {
    sims.chunks(horizon.max(1))
        .map(|row| {
            actuals
                .iter()
                .zip(row)
                .map(|(a, x)| {
                    let d = ((a + 1.0) / (x.max(0.0) + 1.0)).ln();
                    d * d
                })
                .sum()
        })
        .collect()
}

/// Normalised weights `exp(−e_s / (2σ²))` (computed relative to the best
/// future, so none underflows to an all-zero set).
pub fn weights_at(sq_errors: &[f64], sigma: f64) -> Vec<f64> {
    let best = sq_errors.iter().copied().fold(f64::INFINITY, f64::min);
    let w: Vec<f64> = sq_errors
        .iter()
        .map(|e| (-(e - best) / (2.0 * sigma * sigma)).exp())
        .collect();
    let total: f64 = w.iter().sum();
    w.iter().map(|x| x / total).collect()
}

/// The weights, the final σ and how they were reached.
#[derive(Debug, Clone, PartialEq)]
pub struct Weighting {
    /// Normalised weight of each future.
    pub weights: Vec<f64>,
    /// σ used in the end.
    pub sigma: f64,
    /// σ asked for.
    pub sigma_initial: f64,
    /// Effective sample size of `weights`.
    pub ess: f64,
    /// The threshold it was held to.
    pub threshold: f64,
    /// How many times σ was doubled.
    pub doublings: u32,
}

fn check_sigma(opts: &TrackOptions) -> Result<(), TrackError> {
    if opts.sigma.is_finite() && opts.sigma > 0.0 {
        return Ok(());
    }
    Err(TrackError::Argument {
        what: "sigma".into(),
        message: format!(
            "is {}; give a positive tolerance on the log scale (0.05 = 5 %)",
            opts.sigma
        ),
    })
}

/// Weights of `S` futures (`sims`, `S × horizon`) given the first
/// `actuals.len()` months, widening σ until the ESS reaches the threshold.
pub fn reweight(
    actuals: &[f64],
    sims: &[f64],
    horizon: usize,
    opts: &TrackOptions,
) -> Result<Weighting, TrackError> {
    check_sigma(opts)?;
    let sq = squared_log_errors(actuals, sims, horizon);
    let threshold = opts.min_ess.unwrap_or_else(|| ess_threshold(sq.len()));
    let mut sigma = opts.sigma;
    let mut doublings = 0;
    loop {
        let w = weights_at(&sq, sigma);
        let e = ess(&w);
        if e >= threshold || doublings >= opts.max_doublings {
            return Ok(Weighting {
                weights: w,
                sigma,
                sigma_initial: opts.sigma,
                ess: e,
                threshold,
                doublings,
            });
        }
        sigma *= 2.0;
        doublings += 1;
    }
}
