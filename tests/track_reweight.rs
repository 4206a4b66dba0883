//! Checks of tracking (issue 7, reworked by issue 14): a re-forecast that
//! moves towards the future the actuals came from (and gives that future
//! back exactly, the update running on common random numbers), odds for
//! median actuals, the effective sample size (Kish 1965), percentiles, flags
//! and bad input. The importance weighting these tests once checked (its
//! conjugate posterior and the widening of σ) was replaced by the baseline
//! state update of issue 14; its checks are in `tests/track_update.rs`.

mod target_support;
use furrow::month::Month;
use furrow::output::{render, Format};
use furrow::target::{self, Metric};
use furrow::track::{self, TrackInput, TrackOptions, Update};
use target_support::*;

fn months(h: usize) -> Vec<Month> {
    (0..h)
        .map(|i| Month::new(2027, 1).unwrap().plus(i as i32))
        .collect()
}

/// The `init` project's baseline (fitted on its history) over the plan's
/// horizon, synthetic futures' increments from a Monte Carlo run, and the
/// prior monthly totals: baseline paths plus the first tiers' increments.
struct PlanSims {
    baseline: furrow::baseline::run::PlanBaseline,
    seed: u64,
    increments: Vec<f64>,
    per_click: Vec<f64>,
    sims: Vec<f64>,
    months: Vec<Month>,
    h: usize,
}

fn plan_sims(n: usize) -> PlanSims {
    let (_t, inputs, model) = project();
    let f = run(&model, n, 31);
    let baseline = furrow::pipeline::baseline(&inputs).unwrap();
    let seed = 41;
    let paths = baseline.paths(n, seed);
    let increments = target::funded_monthly(&f, &first_tiers(&f)).unwrap();
    let sims = target::monthly_totals(&f, &paths, &first_tiers(&f), Metric::Clicks).unwrap();
    PlanSims {
        baseline,
        seed,
        increments,
        per_click: vec![1.0; n],
        sims,
        months: model.months.clone(),
        h: f.horizon,
    }
}

impl PlanSims {
    fn input<'a>(&'a self, actuals: &'a [f64], target: Option<f64>) -> TrackInput<'a> {
        TrackInput {
            actuals,
            sims: &self.sims,
            months: &self.months,
            metric: Metric::Clicks,
            target,
            update: Update {
                baseline: &self.baseline,
                seed: self.seed,
                increments: &self.increments,
                per_click: &self.per_click,
            },
        }
    }
}

fn column(sims: &[f64], h: usize, m: usize) -> Vec<f64> {
    sims.chunks(h).map(|r| r[m]).collect()
}

#[test]
fn actuals_from_one_future_pull_the_reforecast_towards_it() {
    let n = 1500;
    let p = plan_sims(n);
    let (sims, h) = (&p.sims, p.h);
    let totals = target::totals::row_sums(sims, h);
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| totals[a].total_cmp(&totals[b]));
    for pick in [order[n * 9 / 10], order[n / 8]] {
        let truth = &sims[pick * h..(pick + 1) * h];
        let input = p.input(&truth[..4], None);
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
            post < 0.8 * prior,
            "future {pick}: re-forecast error {post} vs prior {prior}"
        );
        // Common random numbers: the future the actuals came from gets its
        // own months back (its baseline states are updated with its own
        // simulated values), up to rounding.
        let post_rows = track::reforecast_totals(&input).unwrap();
        let own = &post_rows[pick * h..(pick + 1) * h];
        for (m, (a, b)) in own.iter().zip(truth).enumerate() {
            assert!(
                (a - b).abs() <= 1e-6 * b.abs().max(1.0),
                "future {pick} month {m}: {a} vs {b}"
            );
        }
    }
}

#[test]
fn actuals_at_the_prior_median_leave_the_odds_nearly_unchanged() {
    let n = 1500;
    let p = plan_sims(n);
    let (sims, h) = (&p.sims, p.h);
    let medians: Vec<f64> = (0..4)
        .map(|m| {
            let mut c = column(sims, h, m);
            furrow::stats::sort(&mut c);
            furrow::stats::quantile_sorted(&c, 0.5)
        })
        .collect();
    let mut totals = target::totals::row_sums(sims, h);
    furrow::stats::sort(&mut totals);
    for q in [0.3, 0.5, 0.7] {
        let goal = furrow::stats::quantile_sorted(&totals, q);
        let input = p.input(&medians, Some(goal));
        let r = track::track(&input, &TrackOptions::default()).unwrap();
        let t = r.target.unwrap();
        assert!((t.prior_chance - (1.0 - q)).abs() < 0.01);
        // A target at the prior median keeps odds near 50 %: a median start
        // predicts a median year. A target below (above) the median gets
        // more (less) likely, since a median start rules out the worst
        // (best) years.
        let (u, pr) = (t.updated_chance, t.prior_chance);
        match q {
            0.5 => assert!((u - pr).abs() < 0.1, "{u} vs {pr}"),
            0.3 => assert!(u > pr, "{u} vs {pr}"),
            _ => assert!(u < pr, "{u} vs {pr}"),
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
    assert_eq!(track::ess_threshold(10_000), 200.0);
    assert_eq!(track::ess_threshold(1_000), 100.0);
    assert_eq!(track::ess_threshold(100), 50.0);
}

#[test]
fn percentiles_flags_and_bad_input() {
    // Synthetic futures 100..199 over a 3-month plan (the `init` project's
    // baseline with the horizon set to 3), no increments.
    let (n, h) = (100, 3);
    let (_t, inputs, _model) = project_edited(&|dir| {
        let plan = dir.join("plan.toml");
        let text = std::fs::read_to_string(&plan).unwrap();
        let text = text.replace("horizon = 12", "horizon = 3");
        std::fs::write(&plan, text).unwrap();
    });
    assert_eq!(inputs.plan.horizon, h);
    let baseline = furrow::pipeline::baseline(&inputs).unwrap();
    let sims: Vec<f64> = (0..n)
        .flat_map(|s| std::iter::repeat_n(100.0 + s as f64, h))
        .collect();
    let increments = vec![0.0; n * h];
    let per_click = vec![1.0; n];
    let ms = months(h);
    let input = |actuals: &'static [f64]| TrackInput {
        actuals,
        sims: &sims,
        months: &ms,
        metric: Metric::Clicks,
        target: Some(300.0),
        update: Update {
            baseline: &baseline,
            seed: 1,
            increments: &increments,
            per_click: &per_click,
        },
    };
    let r = track::track(&input(&[50.0, 149.5, 500.0]), &TrackOptions::default()).unwrap();
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

    let bad = |a: &'static [f64]| track::track(&input(a), &TrackOptions::default());
    assert!(bad(&[1.0, 2.0, 3.0, 4.0]).is_err());
    assert!(bad(&[]).is_err());
    assert!(bad(&[-1.0]).unwrap_err().to_string().contains("actuals"));
    // Increments of the wrong shape are refused, not read out of bounds.
    let short = vec![0.0; 5];
    let mut i = input(&[1.0]);
    i.update.increments = &short;
    assert!(track::track(&i, &TrackOptions::default())
        .unwrap_err()
        .to_string()
        .contains("increments"));
}
