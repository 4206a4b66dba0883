//! Checks of tracking (issue 7): the importance weights against the normal
//! conjugate posterior (a closed form), a re-forecast that moves towards the
//! future the actuals came from, unchanged odds for median actuals, the
//! effective sample size (Kish 1965), the widening of σ, percentiles and
//! flags.

mod target_support;
use furrow::month::Month;
use furrow::output::{render, Format};
use furrow::rng::{domain, stream};
use furrow::target::{self, Metric};
use furrow::track::{self, TrackInput, TrackOptions};
use rand_distr::{Distribution, Normal};
use statrs::distribution::{ContinuousCDF, Normal as StatNormal};
use target_support::*;

fn months(h: usize) -> Vec<Month> {
    (0..h)
        .map(|i| Month::new(2027, 1).unwrap().plus(i as i32))
        .collect()
}

#[test]
fn weights_reproduce_the_normal_conjugate_posterior() {
    // Prior: log-level L ~ N(0, τ²), τ = 0.2; every month of future s is
    // 1000 e^{L_s}. Three months observed at 1000 e^{0.1} with log-scale
    // error σ = 0.1. Normal-normal conjugacy (Gelman et al., Bayesian Data
    // Analysis, 3rd ed., §2.5): posterior precision 1/τ² + k/σ² = 325, mean
    // (k ȳ / σ²) / 325 = 30/325. Weighted quantiles of a remaining month
    // must match 1000 exp(mean + z sd) (z from statrs' normal quantile).
    let (s_n, h, tau, sigma) = (4000, 6, 0.2, 0.1);
    let prior = Normal::new(0.0, tau).unwrap();
    let mut sims = Vec::with_capacity(s_n * h);
    for s in 0..s_n {
        let l: f64 = prior.sample(&mut stream(8, domain::TEST, s as u64));
        sims.extend(std::iter::repeat_n(1000.0 * l.exp(), h));
    }
    let a = 1000.0 * 0.1f64.exp();
    let actuals = [a; 3];
    let post_mean = 30.0 / 325.0;
    let post_sd = (1.0f64 / 325.0).sqrt();
    let goal = 3.0 * a + 3000.0 * 0.09f64.exp();
    let ms = months(h);
    let input = TrackInput {
        actuals: &actuals,
        sims: &sims,
        months: &ms,
        metric: Metric::Clicks,
        target: Some(goal),
    };
    let opts = TrackOptions {
        sigma,
        min_ess: Some(1.0),
        max_doublings: 0,
    };
    let r = track::track(&input, &opts).unwrap();
    assert!(!r.widened && (r.sigma - sigma).abs() < 1e-15);
    let phi = StatNormal::standard();
    // Monte Carlo error of an importance-weighted quantile: about
    // 1.25 · 1.3 sd / √ESS on the log scale (normal theory); 4 such errors.
    let tol = 4.0 * 1.3 * 1.25 * post_sd / r.ess.sqrt();
    for m in &r.reforecast {
        for (got, q) in [(m.p10, 0.1), (m.p50, 0.5), (m.p90, 0.9)] {
            let expected = post_mean + post_sd * phi.inverse_cdf(q);
            assert!(((got / 1000.0).ln() - expected).abs() < tol, "q {q}: {got}");
        }
    }
    let t = r.target.unwrap();
    let chance = 1.0 - phi.cdf((0.09 - post_mean) / post_sd);
    assert!(
        (t.updated_chance - chance).abs() < 0.05,
        "{} vs {chance}",
        t.updated_chance
    );
    let prior_chance = 1.0 - phi.cdf((goal / 6000.0f64).ln() / tau);
    assert!(
        (t.prior_chance - prior_chance).abs() < 0.03,
        "{} vs {prior_chance}",
        t.prior_chance
    );
}

fn plan_sims(n: usize) -> (Vec<f64>, Vec<Month>, usize) {
    let (_t, inputs, model) = project();
    let f = run(&model, n, 31);
    let paths = baseline(&inputs, &model, n, 0.15, 0.03);
    let sims = target::monthly_totals(&f, &paths, &first_tiers(&f), Metric::Clicks).unwrap();
    (sims, model.months.clone(), f.horizon)
}

fn column(sims: &[f64], h: usize, m: usize) -> Vec<f64> {
    sims.chunks(h).map(|r| r[m]).collect()
}

#[test]
fn actuals_from_one_future_pull_the_reforecast_towards_it() {
    let n = 1500;
    let (sims, ms, h) = plan_sims(n);
    let totals = target::totals::row_sums(&sims, h);
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| totals[a].total_cmp(&totals[b]));
    for pick in [order[n * 9 / 10], order[n / 8]] {
        let truth = &sims[pick * h..(pick + 1) * h];
        let input = TrackInput {
            actuals: &truth[..4],
            sims: &sims,
            months: &ms,
            metric: Metric::Clicks,
            target: None,
        };
        let r = track::track(&input, &TrackOptions::default()).unwrap();
        let prior: f64 = r
            .reforecast
            .iter()
            .zip(&truth[4..])
            .map(|(m, t)| (m.prior_p50 - t).abs())
            .sum();
        let post: f64 = r
            .reforecast
            .iter()
            .zip(&truth[4..])
            .map(|(m, t)| (m.p50 - t).abs())
            .sum();
        assert!(
            post < 0.6 * prior,
            "future {pick}: re-forecast error {post} vs prior {prior}"
        );
        assert!(r.ess >= r.ess_threshold && r.ess <= n as f64 + 1e-9);
    }
}

#[test]
fn actuals_at_the_prior_median_leave_the_odds_nearly_unchanged() {
    let n = 1500;
    let (sims, ms, h) = plan_sims(n);
    let medians: Vec<f64> = (0..4)
        .map(|m| {
            let mut c = column(&sims, h, m);
            furrow::stats::sort(&mut c);
            furrow::stats::quantile_sorted(&c, 0.5)
        })
        .collect();
    let mut totals = target::totals::row_sums(&sims, h);
    furrow::stats::sort(&mut totals);
    for q in [0.3, 0.5, 0.7] {
        let goal = furrow::stats::quantile_sorted(&totals, q);
        let input = TrackInput {
            actuals: &medians,
            sims: &sims,
            months: &ms,
            metric: Metric::Clicks,
            target: Some(goal),
        };
        let r = track::track(&input, &TrackOptions::default()).unwrap();
        let t = r.target.unwrap();
        assert!((t.prior_chance - (1.0 - q)).abs() < 0.01);
        // A target at the prior median keeps odds near 50 %: a median start
        // predicts a median year. A target below (above) the median gets
        // more (less) likely, since a median start rules out the worst
        // (best) years.
        let (u, p) = (t.updated_chance, t.prior_chance);
        match q {
            0.5 => assert!((u - p).abs() < 0.1, "{u} vs {p}"),
            0.3 => assert!(u > p, "{u} vs {p}"),
            _ => assert!(u < p, "{u} vs {p}"),
        }
        assert!(r
            .observed
            .iter()
            .all(|o| o.flag.is_empty() && (o.percentile - 0.5).abs() < 0.02));
    }
}

#[test]
fn effective_sample_size_follows_kish() {
    // Kish (1965): ESS = (Σw)² / Σw².
    assert!((track::ess(&[1.0, 1.0, 1.0, 1.0]) - 4.0).abs() < 1e-12);
    assert!((track::ess(&[1.0, 0.0, 0.0, 0.0]) - 1.0).abs() < 1e-12);
    assert!((track::ess(&[2.0, 1.0, 1.0]) - 16.0 / 6.0).abs() < 1e-12);
    assert_eq!(track::ess(&[]), 0.0);
    // Two futures with squared log errors 0 and 2σ²: weights 1 : e^{-1}.
    let w = track::weights_at(&[0.0, 2.0 * 0.01], 0.1);
    assert!((w[1] / w[0] - (-1.0f64).exp()).abs() < 1e-12);
    assert!((w[0] + w[1] - 1.0).abs() < 1e-12);
    assert_eq!(track::ess_threshold(10_000), 200.0);
    assert_eq!(track::ess_threshold(1_000), 100.0);
    assert_eq!(track::ess_threshold(100), 50.0);
}

#[test]
fn too_few_matching_futures_widen_sigma_until_the_threshold() {
    // Futures 50 % apart from each other: with σ = 0.05 one future takes
    // all the weight, so σ must double.
    let (n, h) = (200, 4);
    let sims: Vec<f64> = (0..n)
        .flat_map(|s| std::iter::repeat_n(1000.0 * (0.01 * s as f64).exp(), h))
        .collect();
    let actuals = [sims[100 * h], sims[100 * h]];
    let ms = months(h);
    let input = TrackInput {
        actuals: &actuals,
        sims: &sims,
        months: &ms,
        metric: Metric::Clicks,
        target: None,
    };
    let r = track::track(&input, &TrackOptions::default()).unwrap();
    assert!(r.widened);
    assert!(r.ess >= r.ess_threshold, "{} < {}", r.ess, r.ess_threshold);
    let doublings = (r.sigma / r.sigma_initial).log2();
    assert!((doublings - doublings.round()).abs() < 1e-9 && doublings >= 1.0);
    // One doubling fewer would not have been enough.
    let w = track::weights_at(
        &track::weights::squared_log_errors(&actuals, &sims, h),
        r.sigma / 2.0,
    );
    assert!(track::ess(&w) < r.ess_threshold);
    assert!(render(&r, Format::Table).unwrap().contains("widened"));
}

#[test]
fn percentiles_flags_and_bad_input() {
    let (n, h) = (100, 3);
    let sims: Vec<f64> = (0..n)
        .flat_map(|s| std::iter::repeat_n(100.0 + s as f64, h))
        .collect();
    let ms = months(h);
    let input = TrackInput {
        actuals: &[50.0, 149.5, 500.0],
        sims: &sims,
        months: &ms,
        metric: Metric::Clicks,
        target: Some(300.0),
    };
    let r = track::track(&input, &TrackOptions::default()).unwrap();
    assert_eq!(r.observed[0].flag, "below P10");
    assert_eq!(r.observed[0].percentile, 0.0);
    // 149.5: 50 of the 100 futures (100..=149) lie below it.
    assert!((r.observed[1].percentile - 0.5).abs() < 1e-12);
    assert_eq!(r.observed[1].flag, "");
    assert_eq!(r.observed[2].flag, "above P90");
    assert!(r.reforecast.is_empty());
    assert_eq!(
        r.target.as_ref().unwrap().updated_chance,
        1.0,
        "699.5 seen already beats 300"
    );
    let csv = render(&r, Format::Csv).unwrap();
    assert_eq!(csv.lines().count(), 4);
    let json: serde_json::Value = serde_json::from_str(&render(&r, Format::Json).unwrap()).unwrap();
    assert_eq!(json["observed"][2]["flag"], "above P90");

    let bad = |a: &[f64]| {
        track::track(
            &TrackInput {
                actuals: a,
                sims: &sims,
                months: &ms,
                metric: Metric::Clicks,
                target: None,
            },
            &TrackOptions::default(),
        )
    };
    assert!(bad(&[1.0, 2.0, 3.0, 4.0]).is_err());
    assert!(bad(&[]).is_err());
    assert!(bad(&[-1.0]).unwrap_err().to_string().contains("actuals"));
    let opts = TrackOptions {
        sigma: 0.0,
        ..TrackOptions::default()
    };
    let input = TrackInput {
        actuals: &[1.0],
        sims: &sims,
        months: &ms,
        metric: Metric::Clicks,
        target: None,
    };
    assert!(track::track(&input, &opts)
        .unwrap_err()
        .to_string()
        .contains("sigma"));
}
