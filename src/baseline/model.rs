//! The fitted model of any method, behind one type.
//!
//! `ModelKind` is the seam between methods: each variant wraps one method
//! family's fitted model, and this file dispatches point forecasts,
//! parameters, the likelihood used by AICc and the simulation of one future
//! path of the model's own error process. `FittedModel` adds what the
//! simulation needs (horizon, point forecast, bootstrap or Gaussian errors).

use super::error::BaselineError;
use super::ets::{self, EtsSpec, Season};
use super::ets_fit::{fit_ets, likelihood_floor, EtsFit, Fixed};
use super::index_growth::IndexGrowthModel;
use super::linear::LinearModel;
use super::options::{BaselineOptions, Method};
use super::seasonal_naive::SeasonalNaiveModel;
use crate::rng::Stream;
use rand::RngExt;
use rand_distr::{Distribution, StandardNormal};

/// A concrete method to fit: never `Method::Auto`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ModelSpec {
    pub method: Method,
    pub damped: bool,
}

impl ModelSpec {
    /// Name with a "(damped)" suffix when damped.
    pub fn label(&self) -> String {
        if self.damped {
            format!("{} (damped)", self.method.name())
        } else {
            self.method.name().to_string()
        }
    }

    fn season(&self) -> Option<Season> {
        match self.method {
            Method::Holt => Some(Season::None),
            Method::HoltWintersAdditive => Some(Season::Additive),
            Method::HoltWintersMultiplicative => Some(Season::Multiplicative),
            _ => None,
        }
    }
}

/// One method family's fitted model.
#[derive(Debug, Clone)]
pub enum ModelKind {
    Linear(LinearModel),
    SeasonalNaive(SeasonalNaiveModel),
    Ets(EtsFit),
    IndexGrowth(IndexGrowthModel),
}

/// Fits one concrete method to the history.
pub fn fit_model(
    y: &[f64],
    index: Option<&[f64]>,
    spec: ModelSpec,
    opts: &BaselineOptions,
) -> Result<ModelKind, BaselineError> {
    if let Some(season) = spec.season() {
        let ets_spec = EtsSpec {
            season,
            damped: spec.damped,
            period: opts.period,
        };
        let fixed = Fixed {
            alpha: opts.alpha,
            beta: opts.beta,
            gamma: opts.gamma,
            phi: opts.phi,
        };
        return fit_ets(y, ets_spec, fixed, opts.init).map(ModelKind::Ets);
    }
    match spec.method {
        Method::Linear => LinearModel::fit(y).map(ModelKind::Linear),
        Method::SeasonalNaive => {
            SeasonalNaiveModel::fit(y, opts.period).map(ModelKind::SeasonalNaive)
        }
        Method::IndexGrowth => {
            let idx = index.ok_or(BaselineError::IndexMissing)?;
            IndexGrowthModel::fit(y, idx, opts.period, opts.horizon).map(ModelKind::IndexGrowth)
        }
        _ => Err(BaselineError::UnknownMethod {
            given: spec.method.name().to_string(),
        }),
    }
}

impl ModelKind {
    /// Point forecasts for h = 1..=horizon.
    pub fn forecast(&self, horizon: usize) -> Vec<f64> {
        match self {
            ModelKind::Linear(m) => m.forecast(horizon),
            ModelKind::SeasonalNaive(m) => m.forecast(horizon),
            ModelKind::Ets(m) => m.forecast(horizon),
            ModelKind::IndexGrowth(m) => m.forecast(horizon),
        }
    }

    /// Named parameters for reports.
    pub fn parameters(&self) -> Vec<(String, f64)> {
        match self {
            ModelKind::Linear(m) => m.parameters(),
            ModelKind::SeasonalNaive(m) => m.parameters(),
            ModelKind::Ets(m) => m.parameters(),
            ModelKind::IndexGrowth(m) => m.parameters(),
        }
    }

    /// Residuals the bootstrap resamples (relative ones for multiplicative
    /// Holt-Winters).
    pub fn residuals(&self) -> &[f64] {
        match self {
            ModelKind::Linear(m) => &m.residuals,
            ModelKind::SeasonalNaive(m) => &m.residuals,
            ModelKind::Ets(m) => &m.residuals,
            ModelKind::IndexGrowth(m) => &m.residuals,
        }
    }

    /// Standard deviation of the Gaussian errors.
    pub fn sigma(&self) -> f64 {
        match self {
            ModelKind::Linear(m) => m.fit.residual_sd,
            ModelKind::SeasonalNaive(m) => m.sigma,
            ModelKind::Ets(m) => m.sigma,
            ModelKind::IndexGrowth(m) => m.sigma,
        }
    }

    /// AICc for the likelihood-based models (ETS, linear), with the number of
    /// parameters it counted; None for the others or with too few months.
    pub fn aicc(&self, y: &[f64]) -> Option<(f64, usize)> {
        match self {
            ModelKind::Ets(m) => m.aicc().map(|a| (a, m.k)),
            ModelKind::Linear(m) => {
                // Intercept, slope and σ²: k = 3; same AICc formula (FPP3 §8.6).
                let (t, k) = (y.len() as f64, 3.0);
                let neg2 = m.neg2_loglik(likelihood_floor(y, false));
                (t - k - 1.0 > 0.0)
                    .then(|| (neg2 + 2.0 * k + 2.0 * k * (k + 1.0) / (t - k - 1.0), 3))
            }
            _ => None,
        }
    }

    /// First history month with an in-sample one-step forecast, and those
    /// forecasts (None for index growth, which has no such recursion).
    pub fn in_sample(&self) -> Option<(usize, &[f64])> {
        match self {
            ModelKind::Linear(m) => Some((0, &m.fitted)),
            ModelKind::SeasonalNaive(m) => Some((m.period, &m.fitted)),
            ModelKind::Ets(m) => Some((0, &m.fitted)),
            ModelKind::IndexGrowth(_) => None,
        }
    }

    /// Simulates one path into `out` (one value per month, not clamped).
    fn simulate_into(
        &self,
        point: &[f64],
        errors: &mut ErrorDraw<'_>,
        rng: &mut Stream,
        out: &mut [f64],
    ) {
        match self {
            ModelKind::Linear(_) => {
                for (o, p) in out.iter_mut().zip(point) {
                    *o = p + errors.draw(rng);
                }
            }
            ModelKind::SeasonalNaive(m) => {
                seasonal_walk(&m.last_season, |_| 1.0, m.drift, errors, rng, out)
            }
            ModelKind::IndexGrowth(m) => {
                seasonal_walk(&m.last_season, |k| m.step_ratio(k), 0.0, errors, rng, out)
            }
            ModelKind::Ets(m) => simulate_ets(m, errors, rng, out),
        }
    }
}

impl ModelKind {
    /// Simulates one path into `out` like [`ModelKind::simulate_into`], but
    /// months `from..from + observed.len()` take the observed values and
    /// update the method's states with them (the tracking update). An error
    /// is drawn for every month, observed or not, so the remaining months use
    /// the same draws as the unconditioned path (common random numbers):
    /// observing a path's own values gives back that path.
    ///
    /// - Exponential smoothing: exact filtering, the recursion `ets::step`
    ///   run over the observed values with the fitted parameters (no refit).
    /// - Seasonal naïve and index growth: the observed month replaces the
    ///   same month of the last season, the state of their seasonal walk.
    /// - Linear trend (no state): the observed months (and any simulated gap
    ///   before them) are appended to the history and the line is refit by
    ///   OLS; later months follow the refit line with the fitted error spread.
    fn simulate_observed_into(
        &self,
        point: &[f64],
        errors: &mut ErrorDraw<'_>,
        rng: &mut Stream,
        from: usize,
        observed: &[f64],
        out: &mut [f64],
    ) {
        let seen = |j: usize| (j >= from && j - from < observed.len()).then(|| observed[j - from]);
        match self {
            ModelKind::Linear(m) => {
                let end = from + observed.len();
                for (j, o) in out.iter_mut().enumerate().take(end) {
                    let e = errors.draw(rng);
                    *o = seen(j).unwrap_or(point[j] + e);
                }
                let mut y: Vec<f64> = m
                    .fitted
                    .iter()
                    .zip(&m.residuals)
                    .map(|(f, r)| f + r)
                    .collect();
                y.extend_from_slice(&out[..end.min(out.len())]);
                let x: Vec<f64> = (0..y.len()).map(|t| t as f64).collect();
                let (a, b) = match super::linear::ols(&x, &y) {
                    Ok(f) => (f.intercept, f.slope),
                    Err(_) => (m.fit.intercept, m.fit.slope),
                };
                let n = m.fitted.len();
                for (j, o) in out.iter_mut().enumerate().skip(end) {
                    *o = a + b * (n + j) as f64 + errors.draw(rng);
                }
            }
            ModelKind::SeasonalNaive(m) => seasonal_walk_observed(
                &m.last_season,
                |_| 1.0,
                Some((m.drift, m.residuals.len())),
                errors,
                rng,
                &seen,
                out,
            ),
            ModelKind::IndexGrowth(m) => seasonal_walk_observed(
                &m.last_season,
                |k| m.step_ratio(k),
                None,
                errors,
                rng,
                &seen,
                out,
            ),
            ModelKind::Ets(m) => {
                let mut st = m.last.clone();
                for (j, o) in out.iter_mut().enumerate() {
                    let e = errors.draw(rng);
                    *o = match seen(j) {
                        Some(y) => {
                            ets::step(&m.spec, &m.params, &mut st, y);
                            y
                        }
                        None if m.spec.multiplicative_error() => {
                            ets::step_multiplicative_error(&m.params, &mut st, e)
                        }
                        None => {
                            let y = ets::one_step(&m.spec, &m.params, &st) + e;
                            ets::step(&m.spec, &m.params, &mut st, y);
                            y
                        }
                    };
                }
            }
        }
    }
}

/// [`seasonal_walk`] where observed months replace the walk's value.
/// `drift` is the seasonal naïve drift and the number of year-on-year
/// differences it averages (None: no drift, index growth): the observed
/// months' year-on-year differences are appended to that average (the
/// method re-run on the appended months), and the months after the last
/// observed one use the updated drift.
fn seasonal_walk_observed(
    last: &[f64],
    ratio: impl Fn(usize) -> f64,
    drift: Option<(f64, usize)>,
    errors: &mut ErrorDraw<'_>,
    rng: &mut Stream,
    seen: &dyn Fn(usize) -> Option<f64>,
    out: &mut [f64],
) {
    let m = last.len();
    let mut buf = last.to_vec();
    let (mut c, mut count) = drift.unwrap_or((0.0, 0));
    let mut sum = c * count as f64;
    for (j, o) in out.iter_mut().enumerate() {
        let i = j % m;
        let e = errors.draw(rng);
        buf[i] = match seen(j) {
            Some(y) => {
                if drift.is_some() {
                    sum += y - buf[i];
                    count += 1;
                }
                y
            }
            None => {
                if count > 0 {
                    c = sum / count as f64;
                }
                buf[i] * ratio(j / m + 1) + c + e
            }
        };
        *o = buf[i];
    }
}

/// y*_{j} = y*_{j−m}·ratio(year) + drift + ε, starting from the last season.
fn seasonal_walk(
    last: &[f64],
    ratio: impl Fn(usize) -> f64,
    drift: f64,
    errors: &mut ErrorDraw<'_>,
    rng: &mut Stream,
    out: &mut [f64],
) {
    let m = last.len();
    let mut buf = last.to_vec();
    for (j, o) in out.iter_mut().enumerate() {
        let i = j % m;
        buf[i] = buf[i] * ratio(j / m + 1) + drift + errors.draw(rng);
        *o = buf[i];
    }
}

/// Runs the state-space model forward with simulated errors.
fn simulate_ets(m: &EtsFit, errors: &mut ErrorDraw<'_>, rng: &mut Stream, out: &mut [f64]) {
    let mut st = m.last.clone();
    for o in out.iter_mut() {
        let e = errors.draw(rng);
        *o = if m.spec.multiplicative_error() {
            ets::step_multiplicative_error(&m.params, &mut st, e)
        } else {
            let y = ets::one_step(&m.spec, &m.params, &st) + e;
            ets::step(&m.spec, &m.params, &mut st, y);
            y
        };
    }
}

/// Source of simulated errors: Gaussian N(0, σ²) or resampled residuals.
#[derive(Debug, Clone)]
pub struct ErrorDraw<'a> {
    pub sigma: f64,
    pub residuals: Option<&'a [f64]>,
}

impl ErrorDraw<'_> {
    #[inline]
    fn draw(&mut self, rng: &mut Stream) -> f64 {
        match self.residuals {
            Some(r) if !r.is_empty() => r[rng.random_range(0..r.len())],
            _ => {
                let z: f64 = StandardNormal.sample(rng);
                self.sigma * z
            }
        }
    }
}

/// Everything needed to simulate future paths of a fitted baseline model.
#[derive(Debug, Clone)]
pub struct FittedModel {
    pub(crate) kind: ModelKind,
    pub(crate) point: Vec<f64>,
    pub(crate) bootstrap: bool,
}

impl FittedModel {
    pub(crate) fn new(kind: ModelKind, horizon: usize, bootstrap: bool) -> FittedModel {
        let point = kind.forecast(horizon);
        FittedModel {
            kind,
            point,
            bootstrap,
        }
    }

    /// Months simulated per path.
    pub fn horizon(&self) -> usize {
        self.point.len()
    }

    /// The fitted model of the chosen method.
    pub fn kind(&self) -> &ModelKind {
        &self.kind
    }

    /// Point forecast (the method's recursion), one value per month.
    pub fn point_forecast(&self) -> &[f64] {
        &self.point
    }

    /// Residual standard deviation of the error process.
    pub fn sigma(&self) -> f64 {
        self.kind.sigma()
    }

    /// One path, simulated from `rng`, clamped at 0 after the recursion.
    pub fn simulate_one(&self, rng: &mut Stream, out: &mut [f64]) {
        let residuals = self.bootstrap.then(|| self.kind.residuals());
        let mut errors = ErrorDraw {
            sigma: self.kind.sigma(),
            residuals,
        };
        self.kind.simulate_into(&self.point, &mut errors, rng, out);
        for v in out.iter_mut() {
            *v = v.max(0.0);
        }
    }

    /// One path like [`FittedModel::simulate_one`] (same stream, same
    /// draws), with months `from..from + observed.len()` observed: the
    /// method's states are updated with them and the later months simulated
    /// from the updated states (see `ModelKind::simulate_observed_into`).
    /// The observed months are written to `out` as given; all months are
    /// clamped at 0 after the recursion.
    pub fn simulate_observed(
        &self,
        rng: &mut Stream,
        from: usize,
        observed: &[f64],
        out: &mut [f64],
    ) {
        let residuals = self.bootstrap.then(|| self.kind.residuals());
        let mut errors = ErrorDraw {
            sigma: self.kind.sigma(),
            residuals,
        };
        self.kind
            .simulate_observed_into(&self.point, &mut errors, rng, from, observed, out);
        for v in out.iter_mut() {
            *v = v.max(0.0);
        }
    }

    /// The point forecast after the first `observed.len()` months of the
    /// horizon are observed: the same update as
    /// [`FittedModel::simulate_observed`] with every error set to 0, so the
    /// later months follow the method's recursion from the updated states
    /// (not clamped). For exponential smoothing this is the forecast made by
    /// appending the observations without refitting.
    pub fn updated_point_forecast(&self, observed: &[f64]) -> Vec<f64> {
        let mut errors = ErrorDraw {
            sigma: 0.0,
            residuals: None,
        };
        let mut rng = crate::rng::stream(0, crate::rng::domain::BASELINE, 0);
        let mut out = vec![0.0; self.horizon()];
        self.kind
            .simulate_observed_into(&self.point, &mut errors, &mut rng, 0, observed, &mut out);
        out
    }

    /// How [`FittedModel::simulate_observed`] updates this method.
    pub fn update_rule(&self) -> &'static str {
        match self.kind {
            ModelKind::Ets(_) => "exact filtering: the fitted exponential smoothing recursion run over the observed months with the fitted parameters (no refit)",
            ModelKind::SeasonalNaive(_) => "the observed months replace the same months of the last season (the state of the seasonal naive walk) and their year-on-year changes are appended to the drift's average",
            ModelKind::IndexGrowth(_) => "the observed months replace the same months of the last season, the state of the index-growth walk; the growth comes from the search-interest index, which the actuals do not inform, so months within a year of the observed ones keep their forecast",
            ModelKind::Linear(_) => "the linear trend has no state: the observed months are appended to the history and the line refit by least squares (error spread kept)",
        }
    }
}
