//! Checks of the target odds (issue 7): the chance of reaching the target
//! against a closed form, the shortfall and the extra volume needed against
//! normal quantiles, the growth target by hand, and the three-plan report
//! on an init project.

mod target_support;
use furrow::clicks::SiteDraw;
use furrow::output::{render, Format};
use furrow::rng::{domain, stream};
use furrow::simulate::Futures;
use furrow::target::{self, Metric, Target};
use rand_distr::{Distribution, Normal};
use statrs::distribution::{ContinuousCDF, Normal as StatNormal};
use target_support::*;

const S: usize = 4000;

fn site(conversion_rate: f64, order_value: f64) -> SiteDraw {
    SiteDraw {
        shock: false,
        shock_log_loss: 0.0,
        shock_month_share: 0.5,
        ctr_factor: 1.0,
        volume_factor: 1.0,
        conversion_rate,
        order_value,
    }
}

/// One cluster with one tier over 3 months: increment totals drawn
/// N(mu_i, sd_i), baseline totals N(mu_b, sd_b), each split evenly over the
/// months; revenue per click 2 (0.5 x 4).
fn normal_case(mu_i: f64, sd_i: f64, mu_b: f64, sd_b: f64) -> (Futures, Vec<f64>) {
    let h = 3;
    let inc = Normal::new(mu_i, sd_i).unwrap();
    let base = Normal::new(mu_b, sd_b).unwrap();
    let mut clicks = Vec::with_capacity(S * h);
    let mut paths = Vec::with_capacity(S * h);
    for s in 0..S {
        let mut rng = stream(5, domain::TEST, s as u64);
        let i: f64 = inc.sample(&mut rng);
        let b: f64 = base.sample(&mut rng);
        clicks.extend([(i / 3.0) as f32; 3]);
        paths.extend([b / 3.0; 3]);
    }
    let f = Futures {
        scenarios: S,
        horizon: h,
        slots: vec![(0, 0)],
        clicks,
        site: vec![site(0.5, 4.0); S],
        execution: vec![1.0; S],
        clusters: 1,
    };
    (f, paths)
}

#[test]
fn chance_matches_the_normal_closed_form() {
    // total = B + x I with B ~ N(100000, 8000²), I ~ N(20000, 6000²)
    // independent, x = 0.6: total ~ N(112000, 8000² + 0.36 · 6000²), so
    // P(total >= G) = Φ((μ − G)/σ). Φ from statrs' Normal cdf (its erfc
    // follows the Boost implementation; Abramowitz & Stegun 26.2.2).
    let (f, paths) = normal_case(20_000.0, 6_000.0, 100_000.0, 8_000.0);
    let x = [0.6];
    let mu = 100_000.0 + 0.6 * 20_000.0;
    let sd = (8_000.0f64.powi(2) + 0.36 * 6_000.0f64.powi(2)).sqrt();
    let phi = StatNormal::standard();
    for goal in [105_000.0, 112_000.0, 115_000.0, 125_000.0] {
        let totals = target::horizon_totals(&f, &paths, &x, Metric::Clicks).unwrap();
        let o = target::odds(&totals, goal, None);
        let expected = phi.cdf((mu - goal) / sd);
        let se = (expected * (1.0 - expected) / S as f64).sqrt();
        assert!(
            (o.chance - expected).abs() < 4.0 * se + 1e-3,
            "goal {goal}: chance {} vs Φ = {expected}",
            o.chance
        );
        // Median shortfall = max(0, G − median total) = max(0, G − μ); the
        // sample median's standard error is 1.2533 σ / √S (normal theory).
        let med_se = 1.2533 * sd / (S as f64).sqrt();
        assert!((o.shortfall_p50 - (goal - mu).max(0.0)).abs() < 4.0 * med_se);
        // Shortfall in the P10 future: G − (μ + σ Φ⁻¹(0.1)).
        let p10 = mu + sd * phi.inverse_cdf(0.1);
        let q_se = (0.09f64 / S as f64).sqrt() / 0.17550 * sd; // φ(Φ⁻¹(0.1)) = 0.17550
        assert!((o.shortfall_p10 - (goal - p10).max(0.0)).abs() < 4.0 * q_se);
    }
}

#[test]
fn revenue_odds_equal_click_odds_at_the_revenue_per_click() {
    // Revenue per click is 0.5 x 4 = 2 in every future, so reaching 2G in
    // revenue is the same event as reaching G in clicks (a definition).
    let (f, paths) = normal_case(20_000.0, 6_000.0, 100_000.0, 8_000.0);
    let x = [1.0];
    let clicks = target::horizon_totals(&f, &paths, &x, Metric::Clicks).unwrap();
    let revenue = target::horizon_totals(&f, &paths, &x, Metric::Revenue).unwrap();
    let a = target::odds(&clicks, 118_000.0, None);
    let b = target::odds(&revenue, 236_000.0, None);
    assert_eq!(a.chance, b.chance);
    assert!((2.0 * a.total.mean - b.total.mean).abs() < 1e-6 * b.total.mean);
}

#[test]
fn volume_needed_matches_normal_quantiles() {
    // Constant increments c = 15000 from a cluster of monthly volume 1000,
    // funded at x = 0.6: uplift u = x c / (x V) = 15 clicks per unit of
    // monthly volume. With B ~ N(100000, 8000²), a chance p needs
    // ΔV = (G − x c − q_{1−p}(B)) / u, q from the normal quantile (statrs
    // inverse cdf). Sample-quantile standard error:
    // sqrt(p(1−p)/S) / φ(z) · σ (normal theory).
    let (f, paths) = normal_case(15_000.0, 0.0, 100_000.0, 8_000.0);
    let x = [0.6];
    let goal = 130_000.0;
    let totals = target::horizon_totals(&f, &paths, &x, Metric::Clicks).unwrap();
    let (u, vf) = target::uplift(&f, &x, &[1000.0], Metric::Clicks)
        .unwrap()
        .unwrap();
    assert!((vf - 600.0).abs() < 1e-9);
    assert!(u.iter().all(|v| (v - 15.0).abs() < 1e-3));
    let o = target::odds(&totals, goal, Some(&u));
    let phi = StatNormal::standard();
    for (p, got) in [(0.5, o.volume_for_50), (0.8, o.volume_for_80)] {
        let z = phi.inverse_cdf(1.0 - p);
        let q = 100_000.0 + 8_000.0 * z;
        let expected = (goal - 9_000.0 - q) / 15.0;
        let density = (-z * z / 2.0).exp() / (2.0 * std::f64::consts::PI).sqrt();
        let se = (p * (1.0 - p) / S as f64).sqrt() / density * 8_000.0 / 15.0;
        let got = got.expect("reachable by volume");
        assert!(
            (got - expected).abs() < 4.0 * se,
            "p {p}: {got} vs {expected}"
        );
    }
    // Already reached: no volume needed; no uplift: unreachable (None).
    assert_eq!(target::volume_needed(&totals, &u, 0.0, 0.8), Some(0.0));
    let zero = vec![0.0; S];
    assert_eq!(target::volume_needed(&totals, &zero, goal, 0.5), None);
}

#[test]
fn growth_target_takes_the_same_calendar_months_of_the_last_year() {
    // Computed by hand: 24 months from 2025-01 with value 1000 + 10 i.
    use furrow::month::Month;
    let start = Month::new(2025, 1).unwrap();
    let months: Vec<Month> = (0..24).map(|i| start.plus(i)).collect();
    let values: Vec<f64> = (0..24).map(|i| 1000.0 + 10.0 * i as f64).collect();
    let year: Vec<Month> = (0..12)
        .map(|i| Month::new(2027, 1).unwrap().plus(i))
        .collect();
    let last12: f64 = values[12..].iter().sum();
    let g = target::growth_target(&months, &values, &year, 0.2).unwrap();
    assert!((g - 1.2 * last12).abs() < 1e-9);
    // April to September 2027 take April to September 2026 (indices 15..21).
    let half: Vec<Month> = (0..6)
        .map(|i| Month::new(2027, 4).unwrap().plus(i))
        .collect();
    let g = target::growth_target(&months, &values, &half, 0.1).unwrap();
    let expected: f64 = values[15..21].iter().sum::<f64>() * 1.1;
    assert!((g - expected).abs() < 1e-9);
    assert!(target::growth_target(&months, &values, &year, -1.0).is_err());
    assert!(target::growth_target(&months[..11], &values[..11], &year, 0.1).is_err());
}

#[test]
fn init_project_target_and_three_plans_side_by_side() {
    let (_t, inputs, model) = project();
    let t = Target::from_inputs(&inputs, &model)
        .unwrap()
        .expect("the template sets a target");
    // The template asks for 20 % more clicks than the last 12 months.
    let clicks = inputs.history.get("clicks").unwrap();
    let last12: f64 = clicks[clicks.len() - 12..].iter().sum();
    assert_eq!(t.metric, Metric::Clicks);
    assert!((t.amount - 1.2 * last12).abs() < 1e-6 * t.amount);

    let f = run(&model, 400, 3);
    let paths = baseline(&inputs, &model, 400, 0.08, 0.04);
    let chosen = first_tiers(&f);
    let best = all_tiers(&f);
    let r = target::compare(&t, &model, &f, &paths, &chosen, &best, "EUR").unwrap();
    // Increments of first tiers are never negative (gains only improve
    // positions), so funding them cannot lower the chance.
    assert!(r.do_nothing.odds.chance <= r.chosen.odds.chance);
    assert!(r.chosen.odds.total.mean > r.do_nothing.odds.total.mean);
    assert_eq!(r.do_nothing.spend, 0.0);
    assert!(r.do_nothing.uplift_basis.contains("first tier"));
    let expected_spend: f64 = model.clusters.iter().map(|c| c.tiers[0].cost).sum();
    assert!((r.chosen.spend - expected_spend).abs() < 1e-9);
    for c in [&r.do_nothing, &r.chosen, &r.best] {
        if let (Some(a), Some(b)) = (c.odds.volume_for_50, c.odds.volume_for_80) {
            assert!(a <= b, "{}: 80 % needs at least the volume of 50 %", c.plan);
        }
    }
    let json: serde_json::Value = serde_json::from_str(&render(&r, Format::Json).unwrap()).unwrap();
    assert!(json["chosen"]["chance"].is_number());
    assert!(json["best"]["volume_for_80"].is_number() || json["best"]["volume_for_80"].is_null());
    let csv = render(&r, Format::Csv).unwrap();
    assert_eq!(csv.lines().count(), 4);
    assert!(render(&r, Format::Table)
        .unwrap()
        .contains("chance of reaching the target"));
}

#[test]
fn bad_arguments_are_refused_with_the_parameter_named() {
    let (f, paths) = normal_case(1.0, 0.0, 10.0, 0.0);
    let e = target::horizon_totals(&f, &paths, &[0.5, 0.5], Metric::Clicks).unwrap_err();
    assert!(e.to_string().contains("funded fractions"), "{e}");
    let e = target::horizon_totals(&f, &paths, &[1.5], Metric::Clicks).unwrap_err();
    assert!(e.to_string().contains("funded fraction"), "{e}");
    let e = target::horizon_totals(&f, &paths[1..], &[0.5], Metric::Clicks).unwrap_err();
    assert!(e.to_string().contains("baseline paths"), "{e}");
    assert!(Metric::parse("sessions").is_err());
    assert!(Target::new(Metric::Clicks, f64::NAN, "x").is_err());
}

fn edit_plan(dir: &std::path::Path, from: &str, to: &str) {
    let p = dir.join("plan.toml");
    let text = std::fs::read_to_string(&p).unwrap();
    assert!(text.contains(from), "the template has {from:?}");
    std::fs::write(&p, text.replace(from, to)).unwrap();
}

#[test]
fn revenue_growth_targets_use_the_history_revenue_or_clicks_times_value() {
    let (_t, inputs, model) =
        project_edited(&|d| edit_plan(d, "metric = \"clicks\"", "metric = \"revenue\""));
    let t = Target::from_inputs(&inputs, &model).unwrap().unwrap();
    let rev = inputs.history.get("revenue").unwrap();
    let last12: f64 = rev[rev.len() - 12..].iter().sum();
    assert_eq!(t.metric, Metric::Revenue);
    assert!((t.amount - 1.2 * last12).abs() < 1e-6 * t.amount);

    // Without a revenue column: clicks x mean conversion rate x mean order
    // value (the posterior mean (c + 1)/(n + 2) of the template's counts,
    // Gelman et al. BDA3 §2.4, times the template's order value 110).
    let drop_revenue = |d: &std::path::Path| {
        edit_plan(d, "metric = \"clicks\"", "metric = \"revenue\"");
        let p = d.join("history.csv");
        let text = std::fs::read_to_string(&p).unwrap();
        let cut: Vec<String> = text
            .lines()
            .map(|l| {
                l.rsplit_once(',')
                    .map(|(a, _)| a.to_string())
                    .unwrap_or_default()
            })
            .collect();
        assert!(cut[0].ends_with("conversions"));
        std::fs::write(&p, cut.join("\n") + "\n").unwrap();
    };
    let (_t, inputs, model) = project_edited(&drop_revenue);
    assert!(inputs.history.get("revenue").is_none());
    let t = Target::from_inputs(&inputs, &model).unwrap().unwrap();
    let clicks = inputs.history.get("clicks").unwrap();
    let last12: f64 = clicks[clicks.len() - 12..].iter().sum();
    let rpc = (2150.0 + 1.0) / (98400.0 + 2.0) * 110.0;
    assert!((t.amount - 1.2 * last12 * rpc).abs() < 1e-6 * t.amount);
    assert!(t.basis.contains("no revenue column"));
}

#[test]
fn actuals_columns_are_picked_by_metric() {
    let (_t, inputs, _model) = project_edited(&|d| {
        edit_plan(
            d,
            "# actuals = \"actuals.csv\"",
            "actuals = \"actuals.csv\"",
        )
    });
    let a = inputs
        .actuals
        .as_ref()
        .expect("the template's actuals load");
    let clicks = furrow::track::actual_values(a, Metric::Clicks).unwrap();
    assert_eq!(clicks.len(), a.len());
    assert_eq!(
        furrow::track::actual_values(a, Metric::Revenue)
            .unwrap()
            .len(),
        a.len()
    );
    let mut no_rev = a.clone();
    no_rev.columns.remove("revenue");
    let e = furrow::track::actual_values(&no_rev, Metric::Revenue).unwrap_err();
    assert!(e.to_string().contains("revenue"), "{e}");
}
