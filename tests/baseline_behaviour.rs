//! Behaviour of `furrow baseline`'s library part: refusals with clear
//! messages, notes, selection, determinism and the simulated paths.

use furrow::baseline::{forecast, BaselineError, BaselineOptions, Init, Method};

fn opts(method: Method) -> BaselineOptions {
    BaselineOptions {
        method,
        paths: 300,
        ..BaselineOptions::default()
    }
}

/// 36 months of clicks with trend and a strong yearly season (×0.7 to ×1.3).
fn seasonal(t_len: usize) -> Vec<f64> {
    (0..t_len)
        .map(|t| {
            let tf = t as f64;
            let season = 1.0 + 0.3 * (2.0 * std::f64::consts::PI * tf / 12.0).sin();
            (2000.0 + 15.0 * tf) * season + 40.0 * (tf * 2.3).sin()
        })
        .collect()
}

#[test]
fn fewer_than_twelve_months_are_refused() {
    let err = forecast(&[10.0; 11], None, &opts(Method::Auto)).unwrap_err();
    assert_eq!(
        err,
        BaselineError::TooShort {
            months: 11,
            need: 12
        }
    );
    assert!(err.to_string().contains("at least 12"));
}

#[test]
fn a_non_finite_month_is_named() {
    let mut y = seasonal(24);
    y[5] = f64::NAN;
    let err = forecast(&y, None, &opts(Method::Auto)).unwrap_err();
    assert!(matches!(err, BaselineError::NonFinite { index: 5, .. }));
    assert!(err.to_string().contains("month index 5"), "{err}");
    y[5] = f64::INFINITY;
    assert!(forecast(&y, None, &opts(Method::Linear)).is_err());
}

#[test]
fn multiplicative_seasonality_refuses_zero_and_says_so() {
    let mut y = seasonal(36);
    y[9] = 0.0;
    let err = forecast(&y, None, &opts(Method::HoltWintersMultiplicative)).unwrap_err();
    assert!(matches!(err, BaselineError::NotPositive { index: 9, .. }));
    assert!(err.to_string().contains("above 0"));
    // Under Auto the multiplicative candidates are listed as not tried.
    let fc = forecast(&y, None, &opts(Method::Auto)).unwrap();
    let mult: Vec<_> = fc
        .selection
        .iter()
        .filter(|c| c.method == Method::HoltWintersMultiplicative)
        .collect();
    assert_eq!(mult.len(), 2);
    assert!(mult
        .iter()
        .all(|c| !c.chosen && c.aicc.is_none() && c.note.contains("above 0")));
}

#[test]
fn seasonal_methods_need_two_seasons() {
    let err = forecast(&seasonal(20), None, &opts(Method::HoltWintersAdditive)).unwrap_err();
    assert!(err.to_string().contains("24 months"), "{err}");
}

#[test]
fn short_history_auto_is_non_seasonal_with_a_note() {
    let fc = forecast(&seasonal(18), None, &opts(Method::Auto)).unwrap();
    let labels: Vec<&str> = fc.selection.iter().map(|c| c.label.as_str()).collect();
    assert_eq!(labels, ["linear", "holt", "holt (damped)"]);
    assert!(fc.notes.iter().any(|n| n.contains(
        "only 18 months: seasonal models need 24 (two full seasons); seasonality not modelled"
    )));
    // Chosen by the backtest: the lowest MASE.
    let chosen = fc.selection.iter().find(|c| c.chosen).unwrap();
    let best = fc
        .selection
        .iter()
        .filter_map(|c| c.mase)
        .fold(f64::INFINITY, f64::min);
    assert_eq!(chosen.mase, Some(best));
}

#[test]
fn auto_with_three_years_picks_the_lowest_aicc_and_shows_the_backtest() {
    let fc = forecast(&seasonal(36), None, &opts(Method::Auto)).unwrap();
    assert_eq!(fc.selection.len(), 6);
    let chosen = fc.selection.iter().find(|c| c.chosen).unwrap();
    let min = fc
        .selection
        .iter()
        .filter_map(|c| c.aicc)
        .fold(f64::INFINITY, f64::min);
    assert_eq!(chosen.aicc, Some(min));
    assert_eq!(fc.aicc, Some(min));
    assert!(
        matches!(
            fc.method,
            Method::HoltWintersAdditive | Method::HoltWintersMultiplicative
        ),
        "{:?}",
        fc.method
    );
    for c in &fc.selection {
        assert!(
            c.mase.is_some() && c.smape.is_some() && c.coverage80.is_some(),
            "{c:?}"
        );
    }
}

#[test]
fn fixed_parameters_are_held_and_the_others_estimated() {
    let o = BaselineOptions {
        alpha: Some(0.25),
        ..opts(Method::HoltWintersAdditive)
    };
    let fc = forecast(&seasonal(36), None, &o).unwrap();
    let get = |k: &str| {
        fc.parameters
            .iter()
            .find(|(n, _)| n == k)
            .map(|p| p.1)
            .unwrap()
    };
    assert_eq!(get("alpha"), 0.25);
    assert!(
        get("gamma") > 0.0 && get("gamma") <= 0.75,
        "γ stays below 1 − α"
    );
    // gamma on a non-seasonal method is reported as ignored.
    let o = BaselineOptions {
        gamma: Some(0.3),
        ..opts(Method::Holt)
    };
    let fc = forecast(&seasonal(36), None, &o).unwrap();
    assert!(fc.notes.iter().any(|n| n.contains("gamma ignored")));
}

#[test]
fn phi_below_one_damps_and_is_reported() {
    let o = BaselineOptions {
        phi: Some(0.85),
        ..opts(Method::Holt)
    };
    let fc = forecast(&seasonal(24), None, &o).unwrap();
    assert!(fc.damped);
    assert!(fc.parameters.iter().any(|(n, v)| n == "phi" && *v == 0.85));
}

#[test]
fn index_growth_needs_an_aligned_index() {
    let y = seasonal(24);
    assert_eq!(
        forecast(&y, None, &opts(Method::IndexGrowth)).unwrap_err(),
        BaselineError::IndexMissing
    );
    let short = vec![50.0; 23];
    assert!(matches!(
        forecast(&y, Some(&short), &opts(Method::IndexGrowth)),
        Err(BaselineError::IndexLength { .. })
    ));
    // An index growing 10 % a year from a flat start moves the forecast with it.
    let index: Vec<f64> = (0..24).map(|t| 50.0 + 0.5 * t as f64).collect();
    let fc = forecast(&y, Some(&index), &opts(Method::IndexGrowth)).unwrap();
    assert_eq!(fc.method, Method::IndexGrowth);
    let ratio = fc
        .parameters
        .iter()
        .find(|(n, _)| n == "yoy_ratio_year_1")
        .unwrap()
        .1;
    // Last year 50 + 0.5·(12..23): sum 600 + 0.5·210 = 705; next year 0.5·(24..35): 600 + 0.5·354 = 777.
    assert!((ratio - 777.0 / 705.0).abs() < 1e-9, "{ratio}");
    for h in 0..12 {
        assert!((fc.mean[h] - y[12 + h] * ratio).abs() < 1e-6 * y[12 + h]);
    }
}

#[test]
fn paths_are_the_same_for_any_number_of_threads() {
    let fc = forecast(
        &seasonal(36),
        None,
        &opts(Method::HoltWintersMultiplicative),
    )
    .unwrap();
    let run = |threads| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| fc.simulate_paths(3000, 11))
    };
    let one = run(1);
    assert_eq!(one.len(), 3000 * 12);
    assert_eq!(one, run(4));
    assert_ne!(one, fc.simulate_paths(3000, 12));
}

#[test]
fn the_same_inputs_give_the_same_forecast() {
    let o = BaselineOptions {
        init: Init::Estimated,
        bootstrap: true,
        ..opts(Method::Auto)
    };
    let a = forecast(&seasonal(30), None, &o).unwrap();
    let b = forecast(&seasonal(30), None, &o).unwrap();
    assert_eq!(
        serde_json::to_string(&a).unwrap(),
        serde_json::to_string(&b).unwrap()
    );
}

#[test]
fn paths_are_clamped_at_zero_and_a_note_says_so() {
    // Falling 100 a month from 1500: the line crosses 0 within a year.
    let y: Vec<f64> = (0..14)
        .map(|t| 1500.0 - 100.0 * t as f64 + if t % 2 == 0 { 5.0 } else { -5.0 })
        .collect();
    let fc = forecast(&y, None, &opts(Method::Linear)).unwrap();
    assert!(fc.mean[11] < 0.0);
    assert!(fc.p10.iter().all(|v| *v >= 0.0));
    assert!(fc.simulate_paths(200, 3).iter().all(|v| *v >= 0.0));
    assert!(fc.notes.iter().any(|n| n.contains("clamped at 0")));
}

#[test]
fn json_names_the_method_and_leaves_out_the_fitted_model() {
    let fc = forecast(&seasonal(24), None, &opts(Method::SeasonalNaive)).unwrap();
    let v: serde_json::Value = serde_json::to_value(&fc).unwrap();
    assert_eq!(v["method"], "seasonal-naive");
    assert_eq!(v["mean"].as_array().unwrap().len(), 12);
    assert!(v.get("fitted").is_none());
    assert_eq!(v["selection"][0]["method"], "seasonal-naive");
}

#[test]
fn bootstrap_resamples_residuals() {
    let y = seasonal(36);
    let gauss = forecast(&y, None, &opts(Method::SeasonalNaive)).unwrap();
    let boot = forecast(
        &y,
        None,
        &BaselineOptions {
            bootstrap: true,
            ..opts(Method::SeasonalNaive)
        },
    )
    .unwrap();
    assert_eq!(gauss.mean, boot.mean);
    assert_ne!(gauss.p10, boot.p10);
    // Month 1 of a bootstrapped path is the point forecast plus one of the residuals.
    let residuals = boot.fitted.kind().residuals().to_vec();
    for path in boot.simulate_paths(20, 5).chunks(12) {
        let e = path[0] - boot.mean[0];
        assert!(residuals.iter().any(|r| (r - e).abs() < 1e-9), "{e}");
    }
}
