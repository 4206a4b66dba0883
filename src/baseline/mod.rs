//! Baseline: the organic clicks a site gets if nothing new is done.
//!
//! Monthly history in, monthly forecast out: a point forecast (`mean`, the
//! method's own recursion) and p10/p50/p90 from simulating the fitted
//! model's error process, so the same paths can enter the Monte Carlo beside
//! the investments' outcomes. Methods, one file per family:
//!
//! | method | file | source |
//! | --- | --- | --- |
//! | linear trend (OLS on the month index) | `linear` | any regression text; NIST StRD check |
//! | seasonal naïve with drift | `seasonal_naive` | FPP3 §5.2 |
//! | Holt, Holt-Winters additive / multiplicative, damped | `ets`, `ets_fit` | FPP3 §8.1–8.3, §8.6 |
//! | index growth | `index_growth` | practitioner method, documented there |
//!
//! FPP3 = Hyndman & Athanasopoulos, *Forecasting: Principles and Practice*,
//! 3rd ed., OTexts 2021. `Method::Auto` selects as described in `select`.
//! The module takes plain slices; reading files and printing belong to the
//! caller.

pub mod backtest;
pub mod error;
pub mod ets;
pub mod ets_fit;
pub mod index_growth;
pub mod linear;
pub mod model;
pub mod nelder_mead;
pub mod options;
pub mod run;
pub mod seasonal_naive;
pub mod select;
pub mod simulate;

pub use error::BaselineError;
pub use linear::{ols, OlsFit};
pub use model::{FittedModel, ModelKind, ModelSpec};
pub use options::{BaselineOptions, Init, Method, MIN_MONTHS};

use serde::Serialize;

/// One candidate tried under `Method::Auto` (or the one method asked for).
#[derive(Debug, Clone, Serialize)]
pub struct Candidate {
    pub method: Method,
    pub damped: bool,
    /// Method name, with " (damped)" when damped.
    pub label: String,
    pub aicc: Option<f64>,
    /// Backtest MASE (seasonal scaling with 24+ months, lag 1 otherwise).
    pub mase: Option<f64>,
    /// Backtest sMAPE, percent.
    pub smape: Option<f64>,
    /// Backtest share of actuals inside the 80 % interval.
    pub coverage80: Option<f64>,
    pub chosen: bool,
    /// Why a candidate was not tried or not scored; empty otherwise.
    pub note: String,
}

/// A baseline forecast: point forecast, percentiles, how it was chosen.
#[derive(Debug, Clone, Serialize)]
pub struct BaselineForecast {
    /// The method used (never `Auto`).
    pub method: Method,
    /// True when the trend is damped (φ < 1).
    pub damped: bool,
    /// alpha, beta, gamma, phi, initial states (l0, b0, s0_1..s0_m), sigma;
    /// or intercept/slope/sigma, drift/sigma, index trend and ratios.
    pub parameters: Vec<(String, f64)>,
    /// Point forecast of the method's recursion, one per month.
    pub mean: Vec<f64>,
    pub p10: Vec<f64>,
    pub p50: Vec<f64>,
    pub p90: Vec<f64>,
    pub aicc: Option<f64>,
    pub selection: Vec<Candidate>,
    pub notes: Vec<String>,
    #[serde(skip)]
    pub fitted: FittedModel,
}

impl BaselineForecast {
    /// `n_paths` simulated futures, row-major (`n_paths × horizon`); path i
    /// uses `crate::rng::stream(seed, domain::BASELINE, i)`, so the result
    /// does not depend on the number of threads. Values are clamped at 0.
    pub fn simulate_paths(&self, n_paths: usize, seed: u64) -> Vec<f64> {
        simulate::paths(&self.fitted, n_paths, seed, crate::rng::domain::BASELINE)
    }

    /// Months forecast.
    pub fn horizon(&self) -> usize {
        self.mean.len()
    }
}

/// Forecasts `y` (monthly history, oldest first). `index` is the
/// search-interest index aligned month for month with `y`; index growth
/// requires it.
pub fn forecast(
    y: &[f64],
    index: Option<&[f64]>,
    opts: &BaselineOptions,
) -> Result<BaselineForecast, BaselineError> {
    opts.validate()?;
    validate_history(y)?;
    if let Some(idx) = index {
        index_growth::validate_index(idx, y.len())?;
    }
    let (spec, kind, aicc, selection, mut notes) = match opts.method {
        Method::Auto => {
            let s = select::auto(y, opts)?;
            (s.spec, s.kind, s.aicc, s.rows, s.notes)
        }
        m => explicit(y, index, m, opts)?,
    };
    notes.extend(parameter_notes(spec, opts));
    let fitted = FittedModel::new(kind, opts.horizon, opts.bootstrap);
    finish(spec, fitted, aicc, selection, notes, opts)
}

/// Refuses non-finite months (naming the first) and short histories.
pub fn validate_history(y: &[f64]) -> Result<(), BaselineError> {
    if let Some(i) = y.iter().position(|v| !v.is_finite()) {
        return Err(BaselineError::NonFinite {
            index: i,
            value: y[i],
        });
    }
    if y.len() < MIN_MONTHS {
        return Err(BaselineError::TooShort {
            months: y.len(),
            need: MIN_MONTHS,
        });
    }
    Ok(())
}

type Chosen = (
    ModelSpec,
    ModelKind,
    Option<f64>,
    Vec<Candidate>,
    Vec<String>,
);

fn explicit(
    y: &[f64],
    index: Option<&[f64]>,
    method: Method,
    opts: &BaselineOptions,
) -> Result<Chosen, BaselineError> {
    let damped = matches!(
        method,
        Method::Holt | Method::HoltWintersAdditive | Method::HoltWintersMultiplicative
    ) && opts.phi.is_some_and(|p| p < 1.0);
    let spec = ModelSpec { method, damped };
    let kind = model::fit_model(y, index, spec, opts)?;
    let aicc = kind.aicc(y).map(|a| a.0);
    let mut notes = Vec::new();
    if let ModelKind::IndexGrowth(m) = &kind {
        if m.sigma_from_changes {
            notes.push(format!(
                "only {} months: too few year-on-year pairs for the index-growth error spread; \
                 intervals use the spread of month-to-month changes",
                y.len()
            ));
        }
    }
    let row = Candidate {
        method,
        damped,
        label: spec.label(),
        aicc,
        mase: None,
        smape: None,
        coverage80: None,
        chosen: true,
        note: "method given by the caller; no backtest".into(),
    };
    Ok((spec, kind, aicc, vec![row], notes))
}

/// Notes for fixed parameters the chosen method does not use.
fn parameter_notes(spec: ModelSpec, opts: &BaselineOptions) -> Vec<String> {
    let smoothing = matches!(
        spec.method,
        Method::Holt | Method::HoltWintersAdditive | Method::HoltWintersMultiplicative
    );
    let seasonal = matches!(
        spec.method,
        Method::HoltWintersAdditive | Method::HoltWintersMultiplicative
    );
    let mut unused = Vec::new();
    for (name, given, used) in [
        ("alpha", opts.alpha.is_some(), smoothing),
        ("beta", opts.beta.is_some(), smoothing),
        ("gamma", opts.gamma.is_some(), seasonal),
        ("phi", opts.phi.is_some(), smoothing),
    ] {
        if given && !used {
            unused.push(name);
        }
    }
    if unused.is_empty() {
        return Vec::new();
    }
    vec![format!(
        "{} ignored: {} has no such parameter",
        unused.join(", "),
        spec.method.name()
    )]
}

fn finish(
    spec: ModelSpec,
    fitted: FittedModel,
    aicc: Option<f64>,
    selection: Vec<Candidate>,
    mut notes: Vec<String>,
    opts: &BaselineOptions,
) -> Result<BaselineForecast, BaselineError> {
    let mean = fitted.point_forecast().to_vec();
    if let Some(step) = mean.iter().position(|v| !v.is_finite()) {
        return Err(BaselineError::NonFiniteForecast {
            method: spec.method.name(),
            step: step + 1,
        });
    }
    if let Some(step) = mean.iter().position(|v| *v < 0.0) {
        notes.push(format!(
            "the point forecast falls below 0 from month {} of the horizon; simulated paths (and so \
             p10/p50/p90) are clamped at 0, the point forecast is not",
            step + 1
        ));
    }
    let paths = simulate::paths(&fitted, opts.paths, opts.seed, crate::rng::domain::BASELINE);
    let mut q = simulate::percentiles(&paths, opts.horizon, &[0.1, 0.5, 0.9]).into_iter();
    let (p10, p50, p90) = (
        q.next().unwrap_or_default(),
        q.next().unwrap_or_default(),
        q.next().unwrap_or_default(),
    );
    let parameters = fitted.kind().parameters();
    Ok(BaselineForecast {
        method: spec.method,
        damped: spec.damped,
        parameters,
        mean,
        p10,
        p50,
        p90,
        aicc,
        selection,
        notes,
        fitted,
    })
}
