//! Tracking's re-forecast follows the data (issue 14, item 2): the baseline
//! method's states are updated with the observed months and the rest of the
//! horizon re-simulated from them, on the same random streams. Checks: the
//! state update against statsmodels (append without refit, a committed
//! fixture), the scenario on the demo (worse actuals never give a
//! rosier re-forecast), monotonicity over several seeds, median actuals
//! keeping the median, and the report naming how the update was made.

use furrow::allocate::{Allocation, SolveOptions};
use furrow::baseline::{forecast, BaselineOptions, Init, Method};
use furrow::output::{render, Format};
use furrow::pipeline::{self, SimOptions, Simulated};
use furrow::plan::Overrides;
use furrow::stats::{quantile_sorted, sort};
use furrow::track::TrackReport;
use serde_json::Value;
use std::path::Path;

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
fn baseline_state_update_matches_statsmodels_append_without_refit() {
    // Fixture: tests/reference/track_update_statsmodels.py (statsmodels'
    // ExponentialSmoothing, fixed parameters, known initial states, refit
    // on the history with the observed months appended, optimized=False).
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/fixtures/track/statsmodels_state_update.json"),
    )
    .unwrap();
    let fx: Value = serde_json::from_str(&text).unwrap();
    assert!(fx["statsmodels_version"].as_str().is_some());
    assert!(fx["numpy_version"].as_str().is_some());
    let y = floats(&fx["history"]);
    let m = fx["period"].as_u64().unwrap() as usize;
    let k = fx["observed_months"].as_u64().unwrap() as usize;
    let h = fx["horizon_after"].as_u64().unwrap() as usize;
    let cases = fx["cases"].as_array().unwrap();
    assert_eq!(cases.len(), 6);
    for case in cases {
        let name = case["name"].as_str().unwrap();
        let method = Method::parse(case["method"].as_str().unwrap()).unwrap();
        let opt = |key: &str| case[key].as_f64();
        let opts = BaselineOptions {
            method,
            horizon: k + h,
            period: m,
            alpha: opt("alpha"),
            beta: opt("beta"),
            gamma: opt("gamma"),
            phi: opt("phi"),
            init: Init::Simple,
            paths: 50,
            ..BaselineOptions::default()
        };
        let fc = forecast(&y, None, &opts).unwrap();
        // The forecast before the update agrees (the fit is the same), at
        // the steps below the season length (statsmodels 0.15.0 takes the
        // seasonal index of step m one season too early, upstream issue
        // 9538; see tests/reference/baseline_statsmodels.py).
        let before = floats(&case["forecast_before"]);
        for (got, want) in fc.mean.iter().zip(&before).take(m - 1) {
            assert!(
                (got - want).abs() <= 1e-9 * want.abs().max(1.0),
                "{name}: {got} vs {want}"
            );
        }
        let observed = floats(&case["observed"]);
        let updated = fc.fitted.updated_point_forecast(&observed);
        assert_eq!(&updated[..k], &observed[..], "{name}");
        let want = floats(&case["forecast_after_append"]);
        for (step, (got, want)) in updated[k..].iter().zip(&want).enumerate() {
            assert!(
                (got - want).abs() <= 1e-9 * want.abs().max(1.0),
                "{name} step {}: {got} vs statsmodels {want}",
                step + 1
            );
        }
        // The update moved the forecast (the check is not vacuous).
        let before = &fc.mean[k..];
        assert!(
            updated[k..]
                .iter()
                .zip(before)
                .any(|(a, b)| (a - b).abs() > 1e-6),
            "{name}"
        );
    }
}

/// The demo plan simulated with `n` futures and `seed`, and its chosen
/// allocation.
fn demo(n: usize, seed: u64) -> (Simulated, Allocation) {
    let plan = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/plan.toml");
    let o = Overrides {
        scenarios: Some(n),
        seed: Some(seed),
        ..Overrides::default()
    };
    let inputs = furrow::inputs::load::load(&plan, &o).unwrap();
    let s = pipeline::simulate(
        inputs,
        &SimOptions {
            max_memory: 2 << 30,
            progress: None,
        },
    )
    .unwrap();
    let chosen = s.allocate(&SolveOptions::default()).unwrap();
    (s, chosen)
}

/// Prior medians of the first `k` months of the chosen allocation's clicks.
fn prior_medians(s: &Simulated, chosen: &Allocation, k: usize) -> Vec<f64> {
    let sims = furrow::target::monthly_totals(
        &s.futures,
        &s.baseline_paths,
        &s.fractions(chosen),
        furrow::target::Metric::Clicks,
    )
    .unwrap();
    let h = s.futures.horizon;
    (0..k)
        .map(|m| {
            let mut c: Vec<f64> = sims.chunks(h).map(|r| r[m]).collect();
            sort(&mut c);
            quantile_sorted(&c, 0.5)
        })
        .collect()
}

fn track(s: &Simulated, chosen: &Allocation, actuals: &[f64]) -> TrackReport {
    furrow::analysis::track_values(s, chosen, actuals).unwrap()
}

#[test]
fn worse_actuals_never_give_a_rosier_reforecast() {
    // The scenario: actuals 11 to 16 % below the prior median from
    // January to April, against actuals 33 % below. The earlier reweighting
    // gave the worse actuals the higher May median (2,000 futures, seed
    // 2027: May 67,194 against 67,153 for the milder actuals).
    let (s, chosen) = demo(2000, 2027);
    let med = prior_medians(&s, &chosen, 4);
    let mild: Vec<f64> = med
        .iter()
        .zip([0.89, 0.87, 0.85, 0.84])
        .map(|(m, f)| m * f)
        .collect();
    let bad: Vec<f64> = med.iter().map(|m| m * 0.67).collect();
    let a = track(&s, &chosen, &mild);
    let b = track(&s, &chosen, &bad);
    assert_eq!(a.reforecast[0].month, "2027-05");
    for (x, y) in a.reforecast.iter().zip(&b.reforecast) {
        assert!(
            y.p50 < x.p50,
            "{}: 33 % below gives {} against {}",
            x.month,
            y.p50,
            x.p50
        );
        assert!(y.p10 <= x.p10 && y.p90 <= x.p90, "{}", x.month);
        // Both follow the data: below the prior median.
        assert!(x.p50 < x.prior_p50 && y.p50 < y.prior_p50, "{}", x.month);
    }
    let (ta, tb) = (a.target.unwrap(), b.target.unwrap());
    assert!(tb.updated_chance <= ta.updated_chance);
    assert!(ta.updated_chance <= ta.prior_chance);
    assert_eq!(b.update, furrow::track::UPDATE);
}

#[test]
fn lowering_the_actuals_lowers_every_later_month_and_the_odds() {
    // Several seeds; every actual lowered together, step by step, from 20 %
    // above the prior median to 50 % below. The update runs on common random
    // numbers, so the re-forecast is exactly non-increasing (1e-9 relative
    // slack for rounding only).
    for seed in [3u64, 11, 2027] {
        let (s, chosen) = demo(300, seed);
        let med = prior_medians(&s, &chosen, 4);
        for k in [1usize, 4] {
            let mut last: Option<TrackReport> = None;
            for step in 0..=14 {
                let f = 1.2 - 0.05 * step as f64;
                let actuals: Vec<f64> = med[..k].iter().map(|m| m * f).collect();
                let r = track(&s, &chosen, &actuals);
                if let Some(p) = &last {
                    for (now, before) in r.reforecast.iter().zip(&p.reforecast) {
                        for (x, y) in [
                            (now.p10, before.p10),
                            (now.p50, before.p50),
                            (now.p90, before.p90),
                        ] {
                            assert!(
                                x <= y + 1e-9 * y.abs(),
                                "seed {seed}, {k} months, factor {f:.2}, {}: {x} > {y}",
                                now.month
                            );
                        }
                    }
                    let (a, b) = (r.target.as_ref().unwrap(), p.target.as_ref().unwrap());
                    assert!(
                        a.updated_chance <= b.updated_chance,
                        "seed {seed} factor {f:.2}"
                    );
                }
                last = Some(r);
            }
        }
    }
}

#[test]
fn actuals_at_the_prior_median_keep_the_reforecast_median_within_1_percent() {
    // Stated tolerance: a start at the prior median keeps the median of
    // every later month within 1 % of the prior median (measured on the demo: at most 0.2 %). (It is not exact:
    // each future's increments are taken out of the same actuals, so the
    // updated baselines are those of a median start, and the re-forecast
    // narrows on the whole, month by month within Monte Carlo error.)
    for seed in [5u64, 2027] {
        let (s, chosen) = demo(1000, seed);
        let med = prior_medians(&s, &chosen, 4);
        let r = track(&s, &chosen, &med);
        for m in &r.reforecast {
            let gap = (m.p50 - m.prior_p50).abs() / m.prior_p50;
            assert!(
                gap < 0.01,
                "seed {seed} {}: {} vs prior {} ({gap})",
                m.month,
                m.p50,
                m.prior_p50
            );
            // No month's band widens beyond the Monte Carlo error of a
            // P10 or P90 of 1,000 futures (about 1 to 2 %).
            assert!(
                m.p90 - m.p10 <= 1.03 * (m.prior_p90 - m.prior_p10),
                "{} widens: {} .. {} against the prior {} .. {}",
                m.month,
                m.p10,
                m.p90,
                m.prior_p10,
                m.prior_p90
            );
        }
        // Over the remaining months the band narrows: the months seen are
        // no longer uncertain.
        let width: f64 = r.reforecast.iter().map(|m| m.p90 - m.p10).sum();
        let prior: f64 = r.reforecast.iter().map(|m| m.prior_p90 - m.prior_p10).sum();
        assert!(
            width <= prior,
            "seed {seed}: total width {width} against the prior {prior}"
        );
        assert!(r.observed.iter().all(|o| (o.percentile - 0.5).abs() < 0.02));
    }
}

#[test]
fn the_report_says_how_the_update_was_made() {
    let (s, chosen) = demo(200, 2027);
    let med = prior_medians(&s, &chosen, 3);
    let r = track(&s, &chosen, &med);
    let json: Value = serde_json::from_str(&render(&r, Format::Json).unwrap()).unwrap();
    assert_eq!(json["update"], "baseline-state-update");
    assert!(json["baseline_update"].as_str().unwrap().len() > 20);
    assert!(json["baseline_method"].as_str().is_some());
    // Fields scripts read are kept.
    for key in [
        "sigma",
        "sigma_initial",
        "widened",
        "ess",
        "ess_threshold",
        "method",
    ] {
        assert!(json.get(key).is_some(), "{key}");
    }
    assert!(!r.widened);
    let table = render(&r, Format::Table).unwrap();
    assert!(table.contains("How the re-forecast was made"), "{table}");
    assert!(table.contains(&r.baseline_method));
}

#[test]
fn lowering_the_observed_months_lowers_the_update_of_every_method() {
    // The state update of each method family on the statsmodels fixture's
    // history (48 months): observed months scaled down step by step never
    // raise the updated point forecast of a later month. Exponential
    // smoothing with the fixture's parameters (α 0.4, β 0.15, γ 0.3, φ 0.9);
    // the others fitted.
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/fixtures/track/statsmodels_state_update.json"),
    )
    .unwrap();
    let fx: Value = serde_json::from_str(&text).unwrap();
    let y = floats(&fx["history"]);
    let smoothing = |method, phi| BaselineOptions {
        method,
        horizon: 12,
        alpha: Some(0.4),
        beta: Some(0.15),
        gamma: Some(0.3),
        phi,
        paths: 50,
        ..BaselineOptions::default()
    };
    let cases = [
        smoothing(Method::Holt, None),
        smoothing(Method::Holt, Some(0.9)),
        smoothing(Method::HoltWintersAdditive, None),
        smoothing(Method::HoltWintersAdditive, Some(0.9)),
        smoothing(Method::HoltWintersMultiplicative, None),
        smoothing(Method::HoltWintersMultiplicative, Some(0.9)),
        BaselineOptions {
            method: Method::SeasonalNaive,
            horizon: 12,
            paths: 50,
            ..BaselineOptions::default()
        },
        BaselineOptions {
            method: Method::Linear,
            horizon: 12,
            paths: 50,
            ..BaselineOptions::default()
        },
    ];
    for opts in &cases {
        let fc = forecast(&y, None, opts).unwrap();
        let name = format!("{} phi {:?}", fc.method.name(), opts.phi);
        for k in [1usize, 4, 8] {
            let mut last: Option<Vec<f64>> = None;
            for step in 0..=10 {
                let f = 1.2 - 0.06 * step as f64;
                let observed: Vec<f64> = fc.mean[..k].iter().map(|v| v * f).collect();
                let now = fc.fitted.updated_point_forecast(&observed);
                if let Some(before) = &last {
                    for j in k..now.len() {
                        assert!(
                            now[j] <= before[j] + 1e-9 * before[j].abs(),
                            "{name}, {k} months, factor {f:.2}, month {j}: {} > {}",
                            now[j],
                            before[j]
                        );
                    }
                    assert!(
                        now[k..].iter().zip(&before[k..]).any(|(a, b)| a < b),
                        "{name} moved"
                    );
                }
                last = Some(now);
            }
        }
    }
}

#[test]
fn revenue_tracking_follows_the_data_too() {
    // The demo with a revenue target: the actuals are divided by each
    // future's revenue per click before its increments are taken out, so
    // lower revenue still lowers every later month and the odds.
    let tmp = tempfile::tempdir().unwrap();
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    for f in ["history.csv", "interest.csv", "keywords.csv", "queries.csv"] {
        std::fs::copy(root.join("demo-data").join(f), tmp.path().join(f)).unwrap();
    }
    let plan = std::fs::read_to_string(root.join("demo-data/plan.toml"))
        .unwrap()
        .replace("metric = \"clicks\"", "metric = \"revenue\"")
        .replace(
            "dir = \"../models\"",
            &format!("dir = {:?}", root.join("models").display().to_string()),
        );
    assert!(plan.contains("metric = \"revenue\""));
    std::fs::write(tmp.path().join("plan.toml"), plan).unwrap();
    let o = Overrides {
        scenarios: Some(300),
        ..Overrides::default()
    };
    let inputs = furrow::inputs::load::load(&tmp.path().join("plan.toml"), &o).unwrap();
    let s = pipeline::simulate(
        inputs,
        &SimOptions {
            max_memory: 2 << 30,
            progress: None,
        },
    )
    .unwrap();
    let chosen = s.allocate(&SolveOptions::default()).unwrap();
    let probe = track(&s, &chosen, &[1.0, 1.0, 1.0]);
    assert_eq!(probe.metric, furrow::target::Metric::Revenue);
    let med: Vec<f64> = probe.observed.iter().map(|o| o.p50).collect();
    let mut last: Option<TrackReport> = None;
    for step in 0..=8 {
        let f = 1.2 - 0.08 * step as f64;
        let actuals: Vec<f64> = med.iter().map(|m| m * f).collect();
        let r = track(&s, &chosen, &actuals);
        if let Some(p) = &last {
            for (now, before) in r.reforecast.iter().zip(&p.reforecast) {
                assert!(now.p50 <= before.p50 + 1e-9 * before.p50, "{}", now.month);
            }
            let (a, b) = (r.target.as_ref().unwrap(), p.target.as_ref().unwrap());
            assert!(a.updated_chance <= b.updated_chance);
        }
        last = Some(r);
    }
    let low = last.unwrap();
    assert!(low.reforecast.iter().all(|m| m.p50 < m.prior_p50));
}
