//! Estimation of Holt and Holt-Winters models.
//!
//! Smoothing parameters not fixed by the caller (and, under
//! `Init::Estimated`, the initial states) are chosen by Nelder–Mead
//! (`nelder_mead`) to maximize the Gaussian likelihood of the model's error
//! process: for additive errors that is the least sum of squared one-step
//! errors; for multiplicative errors it is the least
//! T·ln Σ ε_t² + 2 Σ ln|ŷ_t| (Hyndman et al. 2008, ch. 5).
//!
//! Parameter region (the "usual" region of Hyndman et al. 2008, ch. 5, with
//! FPP3 §8.2's limits on φ): α in [0.0001, 0.9999], β* in [0.0001, 0.9999],
//! γ in [0.0001·(1 − α), 0.9999·(1 − α)], φ in [0.8, 0.98]. A fixed value is
//! used as given (any value in [0, 1], φ in (0, 1]). Under `Init::Estimated`
//! the m seasonal states are normalized (sum 0, or sum m when
//! multiplicative), so m − 1 of them are free.
//!
//! AICc (FPP3 §8.6): AICc = AIC + 2k(k + 1)/(T − k − 1), AIC = −2 ln L + 2k,
//! where k is "the total number of parameters and initial states that have
//! been estimated (including the residual variance)": the smoothing
//! parameters the search moved, the residual variance, and under
//! `Init::Estimated` the initial states (level, trend, m − 1 seasonal).
//! Under `Init::Simple` the initial states are not estimated by the
//! likelihood but fixed beforehand by the heuristic, so the likelihood is
//! conditional on them and they are not counted (the classical
//! Holt-Winters practice of conditioning on start-up values; counting them
//! would charge 13 parameters for states the fit never moved). −2 ln L is
//! `ets::neg2_loglik`.

use super::error::BaselineError;
use super::ets::{self, EtsParams, EtsSpec, EtsStates, Season};
use super::nelder_mead::{minimize_bounded, NmOptions};
use super::options::Init;

const SMOOTH_LO: f64 = 1e-4;
const SMOOTH_HI: f64 = 0.9999;
const PHI_LO: f64 = 0.8;
const PHI_HI: f64 = 0.98;

/// Parameters the caller fixed (None = estimate).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Fixed {
    pub alpha: Option<f64>,
    pub beta: Option<f64>,
    pub gamma: Option<f64>,
    /// Used only by damped specs; undamped specs always use φ = 1.
    pub phi: Option<f64>,
}

/// A fitted Holt / Holt-Winters model.
#[derive(Debug, Clone)]
pub struct EtsFit {
    pub spec: EtsSpec,
    pub params: EtsParams,
    pub init_kind: Init,
    /// States before the first observation.
    pub init: EtsStates,
    /// States after the last observation.
    pub last: EtsStates,
    /// One-step forecasts ŷ_t over the history.
    pub fitted: Vec<f64>,
    /// y_t − ŷ_t (additive errors) or (y_t − ŷ_t)/ŷ_t (multiplicative).
    pub residuals: Vec<f64>,
    /// Residual standard deviation, sqrt(Σ e² / (T − estimated count)).
    pub sigma: f64,
    pub neg2_loglik: f64,
    /// Parameters counted by AICc.
    pub k: usize,
}

impl EtsFit {
    /// AICc, or None when T − k − 1 ≤ 0 (too few months for this model).
    pub fn aicc(&self) -> Option<f64> {
        let (t, k) = (self.fitted.len() as f64, self.k as f64);
        let denom = t - k - 1.0;
        (denom > 0.0).then(|| self.neg2_loglik + 2.0 * k + 2.0 * k * (k + 1.0) / denom)
    }

    /// Point forecasts for h = 1..=horizon.
    pub fn forecast(&self, horizon: usize) -> Vec<f64> {
        ets::point_forecast(&self.spec, &self.params, &self.last, horizon)
    }

    /// Named parameters and initial states for reports.
    pub fn parameters(&self) -> Vec<(String, f64)> {
        let mut out = vec![
            ("alpha".to_string(), self.params.alpha),
            ("beta".into(), self.params.beta),
        ];
        if self.spec.season != Season::None {
            out.push(("gamma".into(), self.params.gamma));
        }
        if self.spec.damped {
            out.push(("phi".into(), self.params.phi));
        }
        out.push(("l0".into(), self.init.level));
        out.push(("b0".into(), self.init.trend));
        for (i, s) in self.init.season.iter().enumerate() {
            out.push((format!("s0_{}", i + 1), *s));
        }
        out.push(("sigma".into(), self.sigma));
        out
    }
}

/// Which coordinates the search moves, and their bounds.
#[derive(Debug, Clone)]
struct Layout {
    spec: EtsSpec,
    fixed: Fixed,
    states: bool,
    template: EtsStates,
}

impl Layout {
    fn free_alpha(&self) -> bool {
        self.fixed.alpha.is_none()
    }
    fn free_beta(&self) -> bool {
        self.fixed.beta.is_none()
    }
    fn free_gamma(&self) -> bool {
        self.spec.season != Season::None && self.fixed.gamma.is_none()
    }
    fn free_phi(&self) -> bool {
        self.spec.damped && self.fixed.phi.is_none()
    }
    fn n_smoothing(&self) -> usize {
        [
            self.free_alpha(),
            self.free_beta(),
            self.free_gamma(),
            self.free_phi(),
        ]
        .iter()
        .filter(|b| **b)
        .count()
    }
    /// Level, trend and m − 1 free seasonal states.
    fn n_states(&self) -> usize {
        2 + self.spec.n_season().saturating_sub(1)
    }

    /// Decodes a search point (in bounded space) into parameters and states.
    fn decode(&self, x: &[f64], st: &mut EtsStates) -> EtsParams {
        let mut it = x.iter().copied();
        let alpha = if self.free_alpha() {
            it.next().unwrap_or(0.5)
        } else {
            self.fixed.alpha.unwrap_or(0.5)
        };
        let beta = self.fixed.beta.or_else(|| it.next()).unwrap_or(0.1);
        let gamma = match (self.spec.season, self.fixed.gamma) {
            (Season::None, _) => 0.0,
            (_, Some(g)) => g,
            (_, None) => it.next().unwrap_or(0.1) * (1.0 - alpha),
        };
        let phi = if !self.spec.damped {
            1.0
        } else {
            self.fixed.phi.or_else(|| it.next()).unwrap_or(0.9)
        };
        if self.states {
            self.decode_states(&mut it, st);
        } else {
            st.level = self.template.level;
            st.trend = self.template.trend;
            st.season.copy_from_slice(&self.template.season);
            st.phase = self.template.phase;
        }
        EtsParams {
            alpha,
            beta,
            gamma,
            phi,
        }
    }

    fn decode_states(&self, it: &mut impl Iterator<Item = f64>, st: &mut EtsStates) {
        st.level = it.next().unwrap_or(self.template.level);
        st.trend = it.next().unwrap_or(self.template.trend);
        st.phase = 0;
        let m = st.season.len();
        if m == 0 {
            return;
        }
        let mut sum = 0.0;
        for s in st.season.iter_mut().take(m - 1) {
            *s = it.next().unwrap_or(0.0);
            sum += *s;
        }
        let total = if self.spec.season == Season::Multiplicative {
            m as f64
        } else {
            0.0
        };
        st.season[m - 1] = total - sum;
    }

    /// Start point, steps (search space) and bounds of every coordinate.
    fn start(&self, y: &[f64]) -> Coords {
        let mut c = Coords::default();
        if self.free_alpha() {
            let cap = self
                .fixed
                .gamma
                .map_or(SMOOTH_HI, |g| (1.0 - g).clamp(SMOOTH_LO, SMOOTH_HI));
            c.push(0.3_f64.min(cap), 1.0, SMOOTH_LO, cap);
        }
        if self.free_beta() {
            c.push(0.1, 1.0, SMOOTH_LO, SMOOTH_HI);
        }
        if self.free_gamma() {
            c.push(0.1, 1.0, SMOOTH_LO, SMOOTH_HI);
        }
        if self.free_phi() {
            c.push(0.9, 1.0, PHI_LO, PHI_HI);
        }
        if self.states {
            self.start_states(y, &mut c);
        }
        c
    }

    /// Unbounded state coordinates, started at the simple initialization,
    /// with steps scaled by the series' spread.
    fn start_states(&self, y: &[f64], c: &mut Coords) {
        let sd = spread(y);
        let t = &self.template;
        let inf = f64::INFINITY;
        c.push(
            t.level,
            (0.2 * sd).max(1e-3 * t.level.abs()).max(1e-8),
            -inf,
            inf,
        );
        c.push(
            t.trend,
            (0.2 * sd / self.spec.period as f64).max(1e-8),
            -inf,
            inf,
        );
        let s_step = if self.spec.season == Season::Multiplicative {
            0.05
        } else {
            (0.2 * sd).max(1e-8)
        };
        for s in t.season.iter().take(t.season.len().saturating_sub(1)) {
            c.push(*s, s_step, -inf, inf);
        }
    }
}

/// Search coordinates: start, step (search space) and bounds.
#[derive(Debug, Clone, Default)]
struct Coords {
    x: Vec<f64>,
    step: Vec<f64>,
    lo: Vec<f64>,
    hi: Vec<f64>,
}

impl Coords {
    fn push(&mut self, x: f64, step: f64, lo: f64, hi: f64) {
        self.x.push(x);
        self.step.push(step);
        self.lo.push(lo);
        self.hi.push(hi);
    }
}

/// Standard deviation of the series (0 for a constant one).
fn spread(y: &[f64]) -> f64 {
    let n = y.len() as f64;
    let m = y.iter().sum::<f64>() / n;
    (y.iter().map(|v| (v - m).powi(2)).sum::<f64>() / n).sqrt()
}

/// Objective minimized by the search: SSE, or T ln Σε² + 2 Σ ln|ŷ|.
/// Runs on `st` (the decoded initial states), leaving it changed.
fn objective(spec: &EtsSpec, p: &EtsParams, st: &mut EtsStates, y: &[f64]) -> f64 {
    match ets::error_sums_in_place(spec, p, st, y) {
        None => f64::INFINITY,
        Some((sse, _)) if !spec.multiplicative_error() => sse,
        Some((ss, sl)) => y.len() as f64 * ss.max(f64::MIN_POSITIVE).ln() + 2.0 * sl,
    }
}

/// Fits `spec` to `y`: checks, initial states, search, in-sample results.
pub fn fit_ets(
    y: &[f64],
    spec: EtsSpec,
    fixed: Fixed,
    init: Init,
) -> Result<EtsFit, BaselineError> {
    let name = ets::season_name(&spec);
    if spec.season == Season::Multiplicative {
        if let Some((index, value)) = ets::first_non_positive(y) {
            return Err(BaselineError::NotPositive {
                method: name,
                index,
                value,
            });
        }
    }
    let template = ets::simple_init(&spec, y)?;
    let layout = Layout {
        spec,
        fixed,
        states: init == Init::Estimated,
        template,
    };
    let (params, states) = search(&layout, y);
    finish(&layout, y, params, states, init).ok_or(BaselineError::FitFailed { method: name })
}

/// Runs Nelder–Mead twice: a restart from the first optimum with a fresh,
/// smaller simplex guards against a collapsed simplex stalling away from the
/// minimum (common practice with Nelder–Mead, no source).
fn search(layout: &Layout, y: &[f64]) -> (EtsParams, EtsStates) {
    let Coords {
        x: x0,
        step,
        lo,
        hi,
    } = layout.start(y);
    let mut scratch = layout.template.clone();
    let mut f = |x: &[f64]| {
        let p = layout.decode(x, &mut scratch);
        objective(&layout.spec, &p, &mut scratch, y)
    };
    let mut best = x0.clone();
    if !x0.is_empty() {
        let opts = NmOptions {
            max_evals: 150 * (x0.len() + 1),
            f_tol: 1e-9,
            x_tol: 1e-5,
        };
        let first = minimize_bounded(&mut f, &x0, &step, &lo, &hi, &opts);
        let half: Vec<f64> = step.iter().map(|s| s * 0.5).collect();
        let second = minimize_bounded(&mut f, &first.x, &half, &lo, &hi, &opts);
        best = if second.f <= first.f {
            second.x
        } else {
            first.x
        };
    }
    let mut states = layout.template.clone();
    let params = layout.decode(&best, &mut states);
    (params, states)
}

/// In-sample fit, σ, likelihood and k for the chosen parameters.
fn finish(layout: &Layout, y: &[f64], p: EtsParams, init: EtsStates, kind: Init) -> Option<EtsFit> {
    let spec = layout.spec;
    let (sum_sq, sum_log) = ets::error_sums(&spec, &p, &init, y)?;
    let run = ets::filter(&spec, &p, &init, y);
    let residuals = residuals_of(&spec, y, &run.fitted);
    let n_states = layout.n_states();
    let n_est = layout.n_smoothing() + if layout.states { n_states } else { 0 };
    let t = y.len();
    let sigma = (sum_sq / (t.saturating_sub(n_est)).max(1) as f64).sqrt();
    let floor = likelihood_floor(y, spec.multiplicative_error());
    let neg2 = ets::neg2_loglik(t, sum_sq, sum_log, floor);
    let k = n_est + 1;
    let fit = EtsFit {
        spec,
        params: p,
        init_kind: kind,
        init,
        last: run.last,
        fitted: run.fitted,
        residuals,
        sigma,
        neg2_loglik: neg2,
        k,
    };
    fit.forecast(1).iter().all(|v| v.is_finite()).then_some(fit)
}

/// y_t − ŷ_t, or (y_t − ŷ_t)/ŷ_t for multiplicative errors.
fn residuals_of(spec: &EtsSpec, y: &[f64], fitted: &[f64]) -> Vec<f64> {
    let rel = spec.multiplicative_error();
    y.iter()
        .zip(fitted)
        .map(|(v, f)| if rel { (v - f) / f } else { v - f })
        .collect()
}

/// Smallest sum of squares the likelihood uses, so that a perfect fit
/// (a constant or exactly linear series) gives a finite AICc. Additive:
/// T·(1e-9·mean|y|)²; multiplicative (relative errors): T·(1e-9)². The two
/// agree when ŷ ≈ mean|y|, so perfect fits tie and the simpler model wins.
pub fn likelihood_floor(y: &[f64], multiplicative: bool) -> f64 {
    let t = y.len() as f64;
    let scale = if multiplicative {
        1.0
    } else {
        y.iter().map(|v| v.abs()).sum::<f64>() / t
    };
    t * (1e-9 * scale.max(1e-150)).powi(2)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn holt(damped: bool) -> EtsSpec {
        EtsSpec {
            season: Season::None,
            damped,
            period: 12,
        }
    }

    #[test]
    fn all_fixed_with_simple_init_is_the_plain_recursion() {
        let y = [10.0, 12.0, 13.0, 15.0, 14.0, 18.0];
        let fixed = Fixed {
            alpha: Some(0.4),
            beta: Some(0.2),
            gamma: None,
            phi: None,
        };
        let fit = fit_ets(&y, holt(false), fixed, Init::Simple).unwrap();
        let p = EtsParams {
            alpha: 0.4,
            beta: 0.2,
            gamma: 0.0,
            phi: 1.0,
        };
        let init = EtsStates {
            level: 10.0,
            trend: 2.0,
            season: vec![],
            phase: 0,
        };
        let run = ets::filter(&fit.spec, &p, &init, &y);
        assert_eq!(
            fit.forecast(3),
            ets::point_forecast(&fit.spec, &p, &run.last, 3)
        );
        // Nothing estimated: k = σ² only.
        assert_eq!(fit.k, 1);
    }

    #[test]
    fn estimation_lowers_the_error_and_respects_bounds() {
        let y: Vec<f64> = (0..30)
            .map(|t| 100.0 + 3.0 * t as f64 + [4.0, -3.0, 1.0, -2.0][t % 4])
            .collect();
        let fixed_fit = fit_ets(
            &y,
            holt(true),
            Fixed {
                alpha: Some(0.5),
                beta: Some(0.5),
                gamma: None,
                phi: Some(0.9),
            },
            Init::Simple,
        )
        .unwrap();
        let est = fit_ets(&y, holt(true), Fixed::default(), Init::Simple).unwrap();
        let sse = |f: &EtsFit| f.residuals.iter().map(|e| e * e).sum::<f64>();
        assert!(sse(&est) < sse(&fixed_fit));
        assert!(est.params.phi >= PHI_LO && est.params.phi <= PHI_HI);
        assert!(est.params.alpha > 0.0 && est.params.alpha < 1.0);
    }

    #[test]
    fn estimated_init_normalizes_seasons() {
        let y: Vec<f64> = (0..36)
            .map(|t| 50.0 + t as f64 + 10.0 * ((t % 12) as f64 / 2.0).sin())
            .collect();
        let spec = EtsSpec {
            season: Season::Additive,
            damped: false,
            period: 12,
        };
        let fit = fit_ets(&y, spec, Fixed::default(), Init::Estimated).unwrap();
        assert!(fit.init.season.iter().sum::<f64>().abs() < 1e-8);
        assert!(fit.aicc().is_some());
    }

    #[test]
    fn multiplicative_refuses_zero_months() {
        let mut y = vec![5.0; 30];
        y[7] = 0.0;
        let spec = EtsSpec {
            season: Season::Multiplicative,
            damped: false,
            period: 12,
        };
        let err = fit_ets(&y, spec, Fixed::default(), Init::Simple).unwrap_err();
        assert_eq!(
            err,
            BaselineError::NotPositive {
                method: "holt-winters-multiplicative",
                index: 7,
                value: 0.0
            }
        );
    }
}
