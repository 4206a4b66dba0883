//! From clicks to money: the worked example, the two ratios, the Beta
//! posterior and lognormal parameters against closed forms, statrs and SciPy,
//! and seasonal indices against statsmodels.

use furrow::clicks::economics::{
    incremental_clicks, monthly_money, return_on_spend, roi, ConversionRate, Economics, OrderValue,
    RateDistribution, Seasonality, SeasonalityMethod,
};
use furrow::clicks::sampling::{BetaParams, LogNormalParams};
use furrow::clicks::ClicksError;
use statrs::distribution::{Beta, LogNormal};
use statrs::statistics::Distribution;

fn fixture() -> serde_json::Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/clicks/reference.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn f(v: &serde_json::Value) -> f64 {
    v.as_f64().unwrap()
}

#[test]
fn worked_example_from_clicks_to_gross_profit() {
    // By hand: volume 50,000 a month, CTR rising from 10 % to 20 %:
    //   incremental clicks = 50,000 * 1.0 * (0.20 - 0.10) = 5,000
    //   orders       = 5,000 * 2 %  = 100
    //   revenue      = 100 * 50     = 5,000
    //   gross profit = 5,000 * 40 % = 2,000
    let clicks = incremental_clicks(50_000.0, 1.0, 0.20, 0.10);
    assert!((clicks - 5_000.0).abs() < 1e-9);
    let m = monthly_money(clicks, 0.02, 50.0, 0.40);
    assert!((m.orders - 100.0).abs() < 1e-9);
    assert!((m.revenue - 5_000.0).abs() < 1e-9);
    assert!((m.gross_profit - 2_000.0).abs() < 1e-9);
    let e = Economics::new(
        ConversionRate::fixed(0.02).unwrap(),
        OrderValue::new(50.0, None).unwrap(),
        0.4,
    )
    .unwrap();
    assert_eq!(e.money_at_means(clicks), m);
    // With a cost of 1,000: return on spend = 5,000 / 1,000 = 5;
    // ROI = (2,000 - 1,000) / 1,000 = 1. Two different numbers, by design.
    assert_eq!(return_on_spend(m.revenue, 1_000.0), Some(5.0));
    assert_eq!(roi(m.gross_profit, 1_000.0), Some(1.0));
    assert_eq!(return_on_spend(m.revenue, 0.0), None);
    assert_eq!(roi(m.gross_profit, 0.0), None);
    assert_eq!(roi(f64::NAN, 10.0), None);
    // Season index 1.2 scales clicks; a fall in CTR gives negative clicks.
    assert!((incremental_clicks(50_000.0, 1.2, 0.20, 0.10) - 6_000.0).abs() < 1e-9);
    assert!(incremental_clicks(1_000.0, 1.0, 0.05, 0.10) < 0.0);
}

#[test]
fn beta_posterior_matches_closed_form_statrs_and_scipy() {
    // 40 conversions in 2,000 sessions, uniform prior: Beta(41, 1961)
    // (Gelman et al., Bayesian Data Analysis, 3rd ed., §2.4).
    // Closed form: mean 41/2002, variance 41*1961 / (2002² * 2003).
    let rate = ConversionRate::from_counts(40.0, 2_000.0).unwrap();
    let post = rate.posterior().unwrap();
    assert_eq!((post.alpha, post.beta), (41.0, 1961.0));
    let mean = 41.0 / 2002.0;
    let var = 41.0 * 1961.0 / (2002.0f64.powi(2) * 2003.0);
    assert!((rate.mean() - mean).abs() < 1e-15);
    assert!((post.variance() - var).abs() < 1e-18);
    let reference = Beta::new(41.0, 1961.0).unwrap();
    assert!((post.mean() - reference.mean().unwrap()).abs() < 1e-15);
    assert!((post.variance() - reference.variance().unwrap()).abs() < 1e-18);
    // SciPy stats.beta quantiles of the same posterior (fixture).
    let case = fixture()["beta"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| f(&c["alpha"]) == 41.0)
        .unwrap()
        .clone();
    assert!((post.mean() - f(&case["mean"])).abs() < 1e-15);
    for (p, q) in case["probs"]
        .as_array()
        .unwrap()
        .iter()
        .zip(case["quantiles"].as_array().unwrap())
    {
        assert!((post.quantile(f(p)) - f(q)).abs() < 1e-10);
    }
    // Zero conversions still gives a proper posterior with mean 1/(n+2).
    let none = ConversionRate::from_counts(0.0, 98.0).unwrap();
    assert!((none.mean() - 0.01).abs() < 1e-15);
    assert!(ConversionRate::from_counts(5.0, 3.0).is_err());
    assert!(ConversionRate::fixed(1.5).is_err());
}

#[test]
fn plain_rate_spread_is_a_beta_with_that_mean_and_spread() {
    let rate = ConversionRate::fixed(0.02).unwrap();
    let RateDistribution::Beta(b) = rate.distribution(0.15).unwrap() else {
        panic!("expected a Beta");
    };
    assert!((b.mean() - 0.02).abs() < 1e-15);
    assert!((b.variance().sqrt() - 0.003).abs() < 1e-12);
    assert_eq!(
        rate.distribution(0.0).unwrap(),
        RateDistribution::Point(0.02)
    );
    let e = ConversionRate::fixed(0.5)
        .unwrap()
        .distribution(1.5)
        .unwrap_err();
    assert!(e.to_string().contains("conversion_rate_cv"), "{e}");
}

#[test]
fn lognormal_from_mean_and_spread_matches_closed_form_statrs_and_scipy() {
    // Mean 50, sd 20: sigma² = ln(1 + 400/2500) = ln 1.16 = 0.1484200,
    // mu = ln 50 - 0.0742100 = 3.9120230 - 0.0742100 = 3.8378130 (JKB vol. 1 ch. 14; NIST/SEMATECH
    // e-Handbook §1.3.6.6.9).
    let p = LogNormalParams::from_mean_sd(50.0, 20.0).unwrap();
    assert!((p.sigma * p.sigma - 1.16f64.ln()).abs() < 1e-15);
    assert!((p.mu - (50f64.ln() - 1.16f64.ln() / 2.0)).abs() < 1e-15);
    assert!((p.mu - 3.8378130).abs() < 1e-6);
    for case in fixture()["lognormal"].as_array().unwrap() {
        let p = LogNormalParams::from_mean_sd(f(&case["mean"]), f(&case["sd"])).unwrap();
        let reference = LogNormal::new(p.mu, p.sigma).unwrap();
        let (m, v) = (f(&case["mean"]), f(&case["sd"]).powi(2));
        assert!((p.mean() - m).abs() < 1e-12 * m);
        assert!((p.variance() - v).abs() < 1e-9 * v);
        assert!((reference.mean().unwrap() - m).abs() < 1e-9 * m);
        assert!((reference.variance().unwrap() - v).abs() < 1e-9 * v);
        assert!(
            (p.mu - f(&case["mu"])).abs() < 1e-12 && (p.sigma - f(&case["sigma"])).abs() < 1e-12
        );
        for (u, q) in case["probs"]
            .as_array()
            .unwrap()
            .iter()
            .zip(case["quantiles"].as_array().unwrap())
        {
            assert!((p.quantile(f(u)) / f(q) - 1.0).abs() < 1e-9, "u {u}");
        }
    }
    let ov = OrderValue::new(50.0, None)
        .unwrap()
        .distribution(0.4)
        .unwrap();
    assert!((ov.variance().sqrt() - 20.0).abs() < 1e-9);
    assert!(OrderValue::new(-3.0, None).is_err());
}

#[test]
fn seasonal_indices_match_statsmodels_classical_decomposition() {
    // Reference: statsmodels seasonal_decompose(model="multiplicative",
    // period=12) on 36 months starting in April (fixture); the method is
    // FPP3 §3.4 classical decomposition.
    let fx = fixture();
    let case = &fx["seasonal"];
    let values: Vec<f64> = case["values"].as_array().unwrap().iter().map(f).collect();
    let first = case["first_month"].as_u64().unwrap() as u32;
    let s = Seasonality::from_history(&values, first).unwrap();
    assert_eq!(s.method(), SeasonalityMethod::Classical);
    let expected: Vec<f64> = case["indices_jan_first"]
        .as_array()
        .unwrap()
        .iter()
        .map(f)
        .collect();
    for (m, e) in expected.iter().enumerate() {
        assert!((s.index(m as u32 + 1) - e).abs() < 1e-12, "month {}", m + 1);
    }
    let mean: f64 = s.indices().iter().sum::<f64>() / 12.0;
    assert!((mean - 1.0).abs() < 1e-12);
}

#[test]
fn short_history_and_given_indices() {
    // 12 months, January first, 100 each except December 200: the mean of the
    // last 12 is 1300/12, so December's index is 200 / (1300/12) = 24/13.
    let mut y = vec![100.0; 12];
    y[11] = 200.0;
    let s = Seasonality::from_history(&y, 1).unwrap();
    assert_eq!(s.method(), SeasonalityMethod::RatioToMean);
    assert!((s.index(12) - 24.0 / 13.0).abs() < 1e-12);
    assert!((s.index(1) - 12.0 / 13.0).abs() < 1e-12);
    let e = Seasonality::from_history(&[1.0; 11], 1).unwrap_err();
    assert!(matches!(e, ClicksError::TooShort { needed: 12, .. }));
    // Given indices are scaled to mean 1: all 2 except one 14 -> mean 3.
    let mut given = [2.0; 12];
    given[6] = 14.0;
    let g = Seasonality::from_indices(&given).unwrap();
    assert!((g.index(7) - 14.0 / 3.0).abs() < 1e-12);
    assert!(Seasonality::from_indices(&[1.0; 11]).is_err());
    assert!(Seasonality::from_indices(&[0.0; 12]).is_err());
    assert_eq!(Seasonality::flat().index(5), 1.0);
}

#[test]
fn beta_from_mean_and_spread_matches_statrs() {
    let b = BetaParams::from_mean_sd(0.3, 0.1).unwrap();
    let reference = Beta::new(b.alpha, b.beta).unwrap();
    assert!((reference.mean().unwrap() - 0.3).abs() < 1e-12);
    assert!((reference.variance().unwrap() - 0.01).abs() < 1e-12);
}
