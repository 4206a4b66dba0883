//! Holt's linear method and Holt-Winters seasonal methods, optionally damped.
//!
//! Component form of Hyndman & Athanasopoulos, *Forecasting: Principles and
//! Practice*, 3rd ed. (FPP3), §8.2–8.3, with φ_h = φ + φ² + … + φ^h:
//!
//! ```text
//! Holt (damped if φ < 1)            ŷ_{t+h|t} = ℓ_t + φ_h b_t
//!   ℓ_t = α y_t + (1 − α)(ℓ_{t−1} + φ b_{t−1})
//!   b_t = β (ℓ_t − ℓ_{t−1}) + (1 − β) φ b_{t−1}
//! Holt-Winters additive             ŷ_{t+h|t} = ℓ_t + φ_h b_t + s_{t+h−m(k+1)}
//!   ℓ_t = α (y_t − s_{t−m}) + (1 − α)(ℓ_{t−1} + φ b_{t−1})
//!   s_t = γ (y_t − ℓ_{t−1} − φ b_{t−1}) + (1 − γ) s_{t−m}
//! Holt-Winters multiplicative       ŷ_{t+h|t} = (ℓ_t + φ_h b_t) s_{t+h−m(k+1)}
//!   ℓ_t = α (y_t / s_{t−m}) + (1 − α)(ℓ_{t−1} + φ b_{t−1})
//!   s_t = γ y_t / (ℓ_{t−1} + φ b_{t−1}) + (1 − γ) s_{t−m}
//! ```
//!
//! with k = ⌊(h − 1)/m⌋. β here is FPP3's β* (trend smoothing of the
//! component form). The initial states ℓ_0, b_0, s_{1−m}..s_0 are the states
//! *before* the first observation, and the recursion runs over every
//! observation, y_1 included (FPP3 notation; statsmodels' `known`
//! initialization means the same).
//!
//! Error models (Hyndman, Koehler, Ord & Snyder, *Forecasting with
//! Exponential Smoothing: The State Space Approach*, Springer 2008, ch. 2):
//! Holt and additive Holt-Winters are simulated and scored with additive
//! Gaussian errors, y_t = ŷ_t + ε_t (ETS(A,A,N), ETS(A,A,A) and their damped
//! forms); multiplicative Holt-Winters with multiplicative errors,
//! y_t = ŷ_t (1 + ε_t) (ETS(M,A,M), ETS(M,Ad,M)). The point recursions are the
//! same either way.

use super::error::BaselineError;

/// Seasonal component of a Holt / Holt-Winters model.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Season {
    None,
    Additive,
    Multiplicative,
}

/// Which model: seasonality, damping, season length.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct EtsSpec {
    pub season: Season,
    pub damped: bool,
    pub period: usize,
}

impl EtsSpec {
    /// Number of seasonal states (0 without seasonality).
    pub fn n_season(&self) -> usize {
        if self.season == Season::None {
            0
        } else {
            self.period
        }
    }

    /// True for multiplicative errors (multiplicative Holt-Winters).
    pub fn multiplicative_error(&self) -> bool {
        self.season == Season::Multiplicative
    }
}

/// Smoothing parameters. `phi` is 1 for an undamped trend; `gamma` is unused
/// without seasonality.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EtsParams {
    pub alpha: f64,
    pub beta: f64,
    pub gamma: f64,
    pub phi: f64,
}

/// Level, trend and seasonal states at one time. `season[phase]` is the
/// seasonal state the next observation uses; it is overwritten by that
/// observation's update and `phase` moves on by one (mod m).
#[derive(Debug, Clone, PartialEq)]
pub struct EtsStates {
    pub level: f64,
    pub trend: f64,
    pub season: Vec<f64>,
    pub phase: usize,
}

/// Initial states of `Init::Simple`.
///
/// Holt (no season): ℓ_0 = y_1, b_0 = y_2 − y_1 (first two observations,
/// as the issue specifies citing FPP3 §8.2). Holt-Winters: ℓ_0 = mean of
/// the first season, b_0 = (mean of the second season − mean of the first)
/// / m, s_{i−m} = y_i − ℓ_0 (additive) or y_i / ℓ_0 (multiplicative),
/// i = 1..m (y 1-based here; `y[0]` in code).
///
/// These are states at time 0, before y_1, and the recursion then runs
/// over every observation from y_1 on (the same as statsmodels' `known`
/// initialization on the whole series). The NIST/SEMATECH e-Handbook
/// §6.4.3.3 uses the same Holt values as the states *after* y_1 and starts
/// at y_2; that variant is `filter` from these states on `y[1..]`. A
/// consequence of the time-0 reading: on a trending series the first
/// one-step forecasts lag the data by about one step of trend (Holt) or
/// (m + 1)/2 steps (Holt-Winters), which the smoothing then absorbs.
pub fn simple_init(spec: &EtsSpec, y: &[f64]) -> Result<EtsStates, BaselineError> {
    let m = spec.period;
    if spec.season == Season::None {
        if y.len() < 2 {
            return Err(too_short(
                "holt",
                y.len(),
                2,
                "two observations to start the trend",
            ));
        }
        return Ok(EtsStates {
            level: y[0],
            trend: y[1] - y[0],
            season: Vec::new(),
            phase: 0,
        });
    }
    if y.len() < 2 * m {
        return Err(too_short(
            season_name(spec),
            y.len(),
            2 * m,
            "two full seasons",
        ));
    }
    let mean1 = y[..m].iter().sum::<f64>() / m as f64;
    let mean2 = y[m..2 * m].iter().sum::<f64>() / m as f64;
    let season = match spec.season {
        Season::Multiplicative if mean1 <= 0.0 => {
            let (index, value) = first_non_positive(y).unwrap_or((0, mean1));
            return Err(BaselineError::NotPositive {
                method: season_name(spec),
                index,
                value,
            });
        }
        Season::Multiplicative => y[..m].iter().map(|v| v / mean1).collect(),
        _ => y[..m].iter().map(|v| v - mean1).collect(),
    };
    Ok(EtsStates {
        level: mean1,
        trend: (mean2 - mean1) / m as f64,
        season,
        phase: 0,
    })
}

fn too_short(method: &'static str, months: usize, need: usize, why: &'static str) -> BaselineError {
    BaselineError::NotEnoughForMethod {
        method,
        months,
        need,
        why,
        suggest: "holt",
    }
}

/// The method's command-line name for a seasonal spec.
pub fn season_name(spec: &EtsSpec) -> &'static str {
    match spec.season {
        Season::None => "holt",
        Season::Additive => "holt-winters-additive",
        Season::Multiplicative => "holt-winters-multiplicative",
    }
}

/// First month that is zero or negative, with its value.
pub fn first_non_positive(y: &[f64]) -> Option<(usize, f64)> {
    y.iter().position(|v| *v <= 0.0).map(|i| (i, y[i]))
}

/// One observation: returns the one-step forecast ŷ_t made before seeing
/// `y`, then updates the states with `y` (FPP3 component form).
#[inline]
pub fn step(spec: &EtsSpec, p: &EtsParams, st: &mut EtsStates, y: f64) -> f64 {
    let damped = p.phi * st.trend;
    let base = st.level + damped;
    let (pred, level) = match spec.season {
        Season::None => (base, p.alpha * y + (1.0 - p.alpha) * base),
        Season::Additive => {
            let s = st.season[st.phase];
            st.season[st.phase] = p.gamma * (y - base) + (1.0 - p.gamma) * s;
            (base + s, p.alpha * (y - s) + (1.0 - p.alpha) * base)
        }
        Season::Multiplicative => {
            let s = st.season[st.phase];
            st.season[st.phase] = p.gamma * y / base + (1.0 - p.gamma) * s;
            (base * s, p.alpha * y / s + (1.0 - p.alpha) * base)
        }
    };
    st.trend = p.beta * (level - st.level) + (1.0 - p.beta) * damped;
    st.level = level;
    if !st.season.is_empty() {
        st.phase = (st.phase + 1) % st.season.len();
    }
    pred
}

/// The one-step forecast from the current states, without updating them.
#[inline]
pub fn one_step(spec: &EtsSpec, p: &EtsParams, st: &EtsStates) -> f64 {
    let base = st.level + p.phi * st.trend;
    match spec.season {
        Season::None => base,
        Season::Additive => base + st.season[st.phase],
        Season::Multiplicative => base * st.season[st.phase],
    }
}

/// One simulated month of the multiplicative-error model, in error form
/// (Hyndman et al. 2008, ch. 2, ETS(M,Ad,M) with their β = α·β*; the
/// algebra is checked by a unit test below):
/// y = (ℓ + φb) s (1 + ε), ℓ' = (ℓ + φb)(1 + αε), b' = φb + αβ(ℓ + φb)ε,
/// s' = s(1 + γε). Algebraically equal to `step(y)` but never divides.
#[inline]
pub fn step_multiplicative_error(p: &EtsParams, st: &mut EtsStates, eps: f64) -> f64 {
    let damped = p.phi * st.trend;
    let base = st.level + damped;
    let s = st.season[st.phase];
    let y = base * s * (1.0 + eps);
    st.level = base * (1.0 + p.alpha * eps);
    st.trend = damped + p.alpha * p.beta * base * eps;
    st.season[st.phase] = s * (1.0 + p.gamma * eps);
    st.phase = (st.phase + 1) % st.season.len();
    y
}

/// Point forecasts for h = 1..=horizon from the given (final) states.
pub fn point_forecast(spec: &EtsSpec, p: &EtsParams, st: &EtsStates, horizon: usize) -> Vec<f64> {
    let (mut acc, mut pow) = (0.0, 1.0);
    (1..=horizon)
        .map(|h| {
            pow *= p.phi;
            acc += pow;
            let trended = st.level + acc * st.trend;
            let m = st.season.len();
            match spec.season {
                Season::None => trended,
                Season::Additive => trended + st.season[(st.phase + h - 1) % m],
                Season::Multiplicative => trended * st.season[(st.phase + h - 1) % m],
            }
        })
        .collect()
}

/// In-sample results of running the recursion over a series.
#[derive(Debug, Clone)]
pub struct Filtered {
    /// One-step forecasts ŷ_t, t = 1..T.
    pub fitted: Vec<f64>,
    /// States after the last observation.
    pub last: EtsStates,
}

/// Runs the recursion over `y` from `init` and keeps the one-step forecasts.
pub fn filter(spec: &EtsSpec, p: &EtsParams, init: &EtsStates, y: &[f64]) -> Filtered {
    let mut st = init.clone();
    let fitted = y.iter().map(|&v| step(spec, p, &mut st, v)).collect();
    Filtered { fitted, last: st }
}

/// Sum of squared one-step errors (additive errors) or of squared relative
/// errors plus Σ ln|ŷ_t| (multiplicative errors). Returns (Σ e², Σ ln|ŷ|),
/// or None when a state or forecast is not usable.
pub fn error_sums(
    spec: &EtsSpec,
    p: &EtsParams,
    init: &EtsStates,
    y: &[f64],
) -> Option<(f64, f64)> {
    error_sums_in_place(spec, p, &mut init.clone(), y)
}

/// `error_sums` that runs on (and leaves behind) the caller's states, so the
/// optimizer does not allocate per evaluation.
pub fn error_sums_in_place(
    spec: &EtsSpec,
    p: &EtsParams,
    st: &mut EtsStates,
    y: &[f64],
) -> Option<(f64, f64)> {
    let (mut sse, mut sum_log) = (0.0, 0.0);
    let mult = spec.multiplicative_error();
    for &v in y {
        let pred = step(spec, p, st, v);
        if mult {
            if pred.is_nan() || pred <= 0.0 {
                return None;
            }
            let e = (v - pred) / pred;
            sse += e * e;
            sum_log += pred.ln();
        } else {
            sse += (v - pred) * (v - pred);
        }
    }
    (sse.is_finite() && st.level.is_finite()).then_some((sse, sum_log))
}

/// −2 log-likelihood at the MLE of σ² (Hyndman et al. 2008, ch. 5; section
/// number from memory, formula re-derived from the Gaussian density):
/// additive errors  T ln(SSE/T) + T(1 + ln 2π);
/// multiplicative   T ln(Σε²/T) + T(1 + ln 2π) + 2 Σ ln|ŷ_t|,
/// with ε_t = (y_t − ŷ_t)/ŷ_t. `floor` keeps a perfect fit finite.
pub fn neg2_loglik(t: usize, sum_sq: f64, sum_log: f64, floor: f64) -> f64 {
    let tf = t as f64;
    tf * (sum_sq.max(floor) / tf).ln()
        + tf * (1.0 + (2.0 * std::f64::consts::PI).ln())
        + 2.0 * sum_log
}

#[cfg(test)]
mod tests {
    use super::*;

    const HOLT: EtsSpec = EtsSpec {
        season: Season::None,
        damped: false,
        period: 12,
    };

    #[test]
    fn holt_recursion_by_hand() {
        // ℓ0 = 10, b0 = 1, α = 0.5, β = 0.5, φ = 1, y1 = 12:
        // ŷ1 = 11; ℓ1 = 0.5·12 + 0.5·11 = 11.5; b1 = 0.5·(11.5 − 10) + 0.5·1 = 1.25.
        // y2 = 12: ŷ2 = 12.75; ℓ2 = 0.5·12 + 0.5·12.75 = 12.375;
        // b2 = 0.5·(12.375 − 11.5) + 0.5·1.25 = 1.0625. ŷ(h=1) = 13.4375, ŷ(h=2) = 14.5.
        let p = EtsParams {
            alpha: 0.5,
            beta: 0.5,
            gamma: 0.0,
            phi: 1.0,
        };
        let init = EtsStates {
            level: 10.0,
            trend: 1.0,
            season: vec![],
            phase: 0,
        };
        let f = filter(&HOLT, &p, &init, &[12.0, 12.0]);
        assert_eq!(f.fitted, vec![11.0, 12.75]);
        assert_eq!((f.last.level, f.last.trend), (12.375, 1.0625));
        assert_eq!(point_forecast(&HOLT, &p, &f.last, 2), vec![13.4375, 14.5]);
    }

    #[test]
    fn damped_forecast_sums_powers_of_phi() {
        // φ = 0.5, ℓ = 100, b = 8: φ_1 = 0.5, φ_2 = 0.75, φ_3 = 0.875.
        let spec = EtsSpec {
            damped: true,
            ..HOLT
        };
        let p = EtsParams {
            alpha: 0.5,
            beta: 0.5,
            gamma: 0.0,
            phi: 0.5,
        };
        let st = EtsStates {
            level: 100.0,
            trend: 8.0,
            season: vec![],
            phase: 0,
        };
        assert_eq!(point_forecast(&spec, &p, &st, 3), vec![104.0, 106.0, 107.0]);
    }

    #[test]
    fn additive_seasonal_recursion_by_hand() {
        // m = 2, ℓ0 = 10, b0 = 0, s = [−1, 1], α = 0.5, β = 0, γ = 0.5, y1 = 10:
        // ŷ1 = 10 − 1 = 9; ℓ1 = 0.5·(10 + 1) + 0.5·10 = 10.5;
        // s_new = 0.5·(10 − 10) + 0.5·(−1) = −0.5. Next uses s = 1: ŷ(h=1) = 11.5,
        // ŷ(h=2) = 10.5 − 0.5 = 10.
        let spec = EtsSpec {
            season: Season::Additive,
            damped: false,
            period: 2,
        };
        let p = EtsParams {
            alpha: 0.5,
            beta: 0.0,
            gamma: 0.5,
            phi: 1.0,
        };
        let init = EtsStates {
            level: 10.0,
            trend: 0.0,
            season: vec![-1.0, 1.0],
            phase: 0,
        };
        let f = filter(&spec, &p, &init, &[10.0]);
        assert_eq!(f.fitted, vec![9.0]);
        assert_eq!(f.last.season, vec![-0.5, 1.0]);
        assert_eq!(point_forecast(&spec, &p, &f.last, 2), vec![11.5, 10.0]);
    }

    #[test]
    fn multiplicative_error_form_equals_the_recursion() {
        let spec = EtsSpec {
            season: Season::Multiplicative,
            damped: true,
            period: 3,
        };
        let p = EtsParams {
            alpha: 0.3,
            beta: 0.2,
            gamma: 0.4,
            phi: 0.9,
        };
        let init = EtsStates {
            level: 50.0,
            trend: 2.0,
            season: vec![0.8, 1.0, 1.2],
            phase: 1,
        };
        let (mut a, mut b) = (init.clone(), init);
        for eps in [0.1, -0.05, 0.2, 0.0, -0.3] {
            let y = step_multiplicative_error(&p, &mut a, eps);
            let pred = step(&spec, &p, &mut b, y);
            assert!((y - pred * (1.0 + eps)).abs() < 1e-10);
            assert!((a.level - b.level).abs() < 1e-10 && (a.trend - b.trend).abs() < 1e-10);
            assert!(a
                .season
                .iter()
                .zip(&b.season)
                .all(|(u, v)| (u - v).abs() < 1e-12));
        }
    }

    #[test]
    fn simple_init_formulas() {
        // m = 2, y = 1, 3, 5, 7: ℓ0 = 2, b0 = (6 − 2)/2 = 2, s = [−1, 1] or [0.5, 1.5].
        let y = [1.0, 3.0, 5.0, 7.0];
        let add = EtsSpec {
            season: Season::Additive,
            damped: false,
            period: 2,
        };
        let st = simple_init(&add, &y).unwrap();
        assert_eq!(
            (st.level, st.trend, st.season.clone()),
            (2.0, 2.0, vec![-1.0, 1.0])
        );
        let mul = EtsSpec {
            season: Season::Multiplicative,
            ..add
        };
        assert_eq!(simple_init(&mul, &y).unwrap().season, vec![0.5, 1.5]);
        let holt = simple_init(&HOLT, &y).unwrap();
        assert_eq!((holt.level, holt.trend), (1.0, 2.0));
        assert!(simple_init(&add, &y[..3]).is_err());
    }
}
