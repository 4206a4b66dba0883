//! Mathematical properties of the baseline: exact linear series, constant
//! series, ordered percentiles, and interval coverage on series simulated
//! from a known model.

use furrow::baseline::{forecast, BaselineForecast, BaselineOptions, Init, Method};
use proptest::prelude::*;
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};

fn opts(method: Method) -> BaselineOptions {
    BaselineOptions {
        method,
        paths: 200,
        ..BaselineOptions::default()
    }
}

fn assert_exact(fc: &BaselineForecast, want: impl Fn(usize) -> f64, what: &str) {
    for (h, v) in fc.mean.iter().enumerate() {
        let w = want(h + 1);
        assert!(
            (v - w).abs() <= 1e-8 * (1.0 + w.abs()),
            "{what} h={} {v} vs {w}",
            h + 1
        );
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    /// y_t = a + c·t is forecast exactly as a + c·(T − 1 + h) by every trend
    /// method with parameters that make its recursion exact under
    /// Init::Simple. Linear and seasonal naïve with drift need none. Holt's
    /// simple start (ℓ₀ = y₁ placed before y₁) is off by one step, which
    /// α = 1 with β = 0 or β = 1 absorbs. Additive Holt-Winters' simple
    /// start puts the first season's mean at time 0 (an offset of
    /// c·(m + 1)/2) that only a fully adaptive season (α = 0, β = 0, γ = 1)
    /// absorbs within one season. Damped trends bend by design, and
    /// multiplicative seasonality is not linear, so neither is included.
    #[test]
    fn linear_series_is_forecast_exactly(a in 10.0f64..5000.0, c in -5.0f64..40.0, t_len in 24usize..40) {
        let y: Vec<f64> = (0..t_len).map(|t| a + c * t as f64).collect();
        let want = |h: usize| a + c * (t_len - 1 + h) as f64;
        for method in [Method::Linear, Method::SeasonalNaive] {
            let fc = forecast(&y, None, &opts(method)).unwrap();
            assert_exact(&fc, want, method.name());
        }
        for beta in [0.0, 1.0] {
            let o = BaselineOptions { alpha: Some(1.0), beta: Some(beta), ..opts(Method::Holt) };
            assert_exact(&forecast(&y, None, &o).unwrap(), want, "holt");
        }
        let o = BaselineOptions { alpha: Some(0.0), beta: Some(0.0), gamma: Some(1.0), ..opts(Method::HoltWintersAdditive) };
        assert_exact(&forecast(&y, None, &o).unwrap(), want, "holt-winters-additive");
    }

    /// P10 ≤ P50 ≤ P90, all finite and at least 0, for any method on any
    /// positive history, with Gaussian or bootstrapped errors.
    #[test]
    fn percentiles_are_ordered_finite_and_non_negative(
        y in proptest::collection::vec(1.0f64..1000.0, 12..40),
        which in 0usize..6,
        bootstrap in any::<bool>(),
        seed in any::<u64>(),
    ) {
        let method = [Method::Auto, Method::Linear, Method::SeasonalNaive, Method::Holt,
                      Method::HoltWintersAdditive, Method::HoltWintersMultiplicative][which];
        let o = BaselineOptions { bootstrap, seed, ..opts(method) };
        match forecast(&y, None, &o) {
            Ok(fc) => {
                for h in 0..fc.horizon() {
                    prop_assert!(fc.p10[h].is_finite() && fc.p90[h].is_finite());
                    prop_assert!(0.0 <= fc.p10[h] && fc.p10[h] <= fc.p50[h] && fc.p50[h] <= fc.p90[h]);
                }
            }
            // Only the documented refusals: seasonal models with fewer than
            // 24 months, and a multiplicative model that no parameter value
            // can fit (a clear error naming the alternatives).
            Err(e) => prop_assert!(
                (y.len() < 24 && which >= 2)
                    || (which == 5 && matches!(e, furrow::baseline::BaselineError::FitFailed { .. })),
                "unexpected refusal: {e}"
            ),
        }
    }
}

/// Exactly linear series: Holt with estimated smoothing parameters and
/// initial states finds the line (its one-step errors can all be zero).
#[test]
fn estimated_init_holt_recovers_a_line() {
    let y: Vec<f64> = (0..24).map(|t| 500.0 + 7.0 * t as f64).collect();
    let o = BaselineOptions {
        init: Init::Estimated,
        ..opts(Method::Holt)
    };
    let fc = forecast(&y, None, &o).unwrap();
    for (h, v) in fc.mean.iter().enumerate() {
        let w = 500.0 + 7.0 * (23 + h + 1) as f64;
        assert!((v - w).abs() < 1e-3 * w, "h={} {v} vs {w}", h + 1);
    }
}

/// A constant series gives that constant everywhere, with no NaN, for every
/// method and history length where the method applies.
#[test]
fn constant_series_gives_a_constant_forecast_without_nan() {
    for t_len in [12usize, 18, 24, 36] {
        let y = vec![250.0; t_len];
        let index = vec![40.0; t_len];
        for method in Method::ALL {
            for init in [Init::Simple, Init::Estimated] {
                let o = BaselineOptions {
                    init,
                    ..opts(method)
                };
                let Ok(fc) = forecast(&y, Some(&index), &o) else {
                    assert!(t_len < 24 && method != Method::Auto, "{method} {t_len}");
                    continue;
                };
                for v in fc.mean.iter().chain(&fc.p10).chain(&fc.p50).chain(&fc.p90) {
                    assert!((v - 250.0).abs() < 1e-6, "{method} {init:?} T={t_len}: {v}");
                }
                assert!(
                    fc.parameters.iter().all(|(_, v)| v.is_finite()),
                    "{method}: {:?}",
                    fc.parameters
                );
                assert!(fc.aicc.is_none_or(f64::is_finite));
                let json = serde_json::to_string(&fc).unwrap();
                assert!(!json.contains("NaN"));
            }
        }
    }
}

/// Share of next-month actuals inside [p10, p90] over `reps` series drawn
/// from `simulate`, forecast with `o`.
fn coverage(
    reps: usize,
    o: &BaselineOptions,
    simulate: impl Fn(&mut rand_pcg::Pcg64Mcg) -> (Vec<f64>, f64),
) -> f64 {
    let mut rng = rand_pcg::Pcg64Mcg::seed_from_u64(20_240_601);
    let mut hits = 0;
    for r in 0..reps {
        let (y, next) = simulate(&mut rng);
        let fc = forecast(
            &y,
            None,
            &BaselineOptions {
                seed: r as u64,
                ..o.clone()
            },
        )
        .unwrap();
        hits += usize::from(next >= fc.p10[0] && next <= fc.p90[0]);
    }
    hits as f64 / reps as f64
}

/// Linear trend plus Gaussian noise (σ = 10), 240 months so that the
/// parameter uncertainty the simulation leaves out is small (it lowers the
/// exact coverage to about 0.795). 800 replications: Monte Carlo standard
/// error sqrt(0.8·0.2/800) = 0.014; the bound is three of those.
#[test]
fn coverage_of_the_80_interval_on_a_simulated_linear_model() {
    let simulate = |rng: &mut rand_pcg::Pcg64Mcg| {
        let mut v: Vec<f64> = (0..241)
            .map(|t| {
                let z: f64 = StandardNormal.sample(rng);
                300.0 + 2.0 * t as f64 + 10.0 * z
            })
            .collect();
        let next = v.pop().unwrap_or_default();
        (v, next)
    };
    for bootstrap in [false, true] {
        let o = BaselineOptions {
            horizon: 1,
            paths: 1000,
            bootstrap,
            ..opts(Method::Linear)
        };
        let cov = coverage(800, &o, simulate);
        assert!(
            (cov - 0.8).abs() < 0.042,
            "bootstrap={bootstrap}: coverage {cov}"
        );
    }
}

/// Series simulated from ETS(A,A,N) (Holt's method with additive Gaussian
/// errors, α = 0.5, β = 0.2, σ = 5; Hyndman et al. 2008 error form
/// ℓ_t = ℓ_{t−1} + b_{t−1} + αε_t, b_t = b_{t−1} + αβε_t) and forecast by
/// Holt with those α and β fixed: the 80 % interval should cover about 80 %
/// of next months. The level starts far from 0 so that clamping at 0 never
/// matters (the trend is a random walk and wanders).
#[test]
fn coverage_of_the_80_interval_on_a_simulated_holt_model() {
    let simulate = |rng: &mut rand_pcg::Pcg64Mcg| {
        let (mut level, mut trend) = (100_000.0, 1.5);
        let mut v = Vec::with_capacity(241);
        for _ in 0..241 {
            let e: f64 = 5.0 * <StandardNormal as Distribution<f64>>::sample(&StandardNormal, rng);
            v.push(level + trend + e);
            let new_level = level + trend + 0.5 * e;
            trend += 0.5 * 0.2 * e;
            level = new_level;
        }
        let next = v.pop().unwrap_or_default();
        (v, next)
    };
    let o = BaselineOptions {
        horizon: 1,
        paths: 1000,
        alpha: Some(0.5),
        beta: Some(0.2),
        ..opts(Method::Holt)
    };
    let cov = coverage(800, &o, simulate);
    assert!((cov - 0.8).abs() < 0.042, "coverage {cov}");
}

/// Regression: a series of long runs of 1.0 between spikes, found by the
/// property above in CI, makes multiplicative Holt-Winters unfittable; the
/// answer is a clear refusal that names the alternatives, not a panic.
#[test]
fn multiplicative_holt_winters_on_spiky_ones_is_refused_clearly() {
    let y = [
        677.2248900065802,
        1.0,
        1.0,
        1.0,
        553.9085136950009,
        299.3595622528517,
        479.13198074549246,
        202.92492812499592,
        85.59689362885563,
        294.2777248282589,
        233.88585442042606,
        605.4326653782167,
        1.0,
        949.9203408442896,
        1.0,
        1.0,
        1.0,
        1.0,
        1.0,
        1.0,
        1.0,
        1.0,
        156.80284164787335,
        921.748374330535,
        481.75005642896735,
        935.8719116129763,
    ];
    let o = BaselineOptions {
        bootstrap: true,
        seed: 1426552904566802939,
        ..opts(Method::HoltWintersMultiplicative)
    };
    match forecast(&y, None, &o) {
        Ok(fc) => assert!(fc
            .p10
            .iter()
            .zip(&fc.p90)
            .all(|(a, b)| a.is_finite() && a <= b)),
        Err(e) => assert!(e.to_string().contains("holt-winters-additive"), "{e}"),
    }
}
