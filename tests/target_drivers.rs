//! Checks of the variance drivers (issue 7): mid-ranks and Spearman's rho
//! against scipy (fixture written by tests/reference/drivers_spearman.py),
//! the bivariate-normal closed form of Spearman's rho, and recovery of the
//! dominant input in a constructed case and in a simulated plan.

mod target_support;
use furrow::drivers::{self, InputSeries};
use furrow::output::{render, Format};
use furrow::rng::{domain, stream};
use furrow::target::Metric;
use rand_distr::{Distribution, StandardNormal};
use target_support::*;

#[test]
fn ranks_and_spearman_match_scipy() {
    // Reference: scipy.stats.rankdata(method="average") and
    // scipy.stats.spearmanr; the fixture records the scipy version.
    let text = include_str!("fixtures/drivers/spearman.json");
    let fx: serde_json::Value = serde_json::from_str(text).unwrap();
    assert!(fx["scipy_version"].is_string());
    let v = |x: &serde_json::Value| -> Vec<f64> {
        x.as_array()
            .unwrap()
            .iter()
            .map(|a| a.as_f64().unwrap())
            .collect()
    };
    for case in fx["cases"].as_array().unwrap() {
        let (x, y) = (v(&case["x"]), v(&case["y"]));
        let ranks = drivers::average_ranks(&x);
        for (a, b) in ranks.iter().zip(v(&case["ranks_x"])) {
            assert!((a - b).abs() < 1e-12, "{}: rank {a} vs {b}", case["name"]);
        }
        let rho = drivers::spearman(&x, &y).unwrap();
        let expected = case["rho"].as_f64().unwrap();
        assert!(
            (rho - expected).abs() < 1e-12,
            "{}: {rho} vs {expected}",
            case["name"]
        );
    }
    assert!(drivers::spearman(&[1.0, 1.0, 1.0], &[1.0, 2.0, 3.0]).is_none());
}

fn normals(n: usize, k: usize, seed: u64) -> Vec<Vec<f64>> {
    let mut out = vec![Vec::with_capacity(n); k];
    for s in 0..n {
        let mut rng = stream(seed, domain::TEST, s as u64);
        for col in out.iter_mut() {
            col.push(StandardNormal.sample(&mut rng));
        }
    }
    out
}

#[test]
fn spearman_of_a_bivariate_normal_matches_the_arcsine_formula() {
    // For a bivariate normal with correlation r, Spearman's rho is
    // (6/π) arcsin(r/2) (Pearson 1907; Kruskal, "Ordinal measures of
    // association", JASA 53, 1958). Standard error about (1 − ρ²)/√n.
    let n = 20_000;
    let z = normals(n, 2, 9);
    let r: f64 = 0.7;
    let y: Vec<f64> = z[0]
        .iter()
        .zip(&z[1])
        .map(|(a, b)| r * a + (1.0 - r * r).sqrt() * b)
        .collect();
    let rho = drivers::spearman(&z[0], &y).unwrap();
    let expected = 6.0 / std::f64::consts::PI * (r / 2.0).asin();
    assert!(
        (rho - expected).abs() < 4.0 * (1.0 - expected * expected) / (n as f64).sqrt(),
        "{rho} vs {expected}"
    );
}

#[test]
fn a_constructed_dominant_input_is_ranked_first() {
    // Y = 3 X1 − 0.3 X2 + 0.3 (X3 + X4) + 0.3 ε: X1 carries 9 / 9.36 of the
    // variance; X2 pulls the other way.
    let n = 2_000;
    let z = normals(n, 5, 4);
    let y: Vec<f64> = (0..n)
        .map(|s| 3.0 * z[0][s] - 0.3 * z[1][s] + 0.3 * (z[2][s] + z[3][s]) + 0.3 * z[4][s])
        .collect();
    let inputs: Vec<InputSeries> = ["x1", "x2", "x3", "x4"]
        .iter()
        .enumerate()
        .map(|(i, name)| InputSeries::new(name, "site", z[i].clone()))
        .collect();
    let ranked = drivers::rank_drivers(&inputs, &y).unwrap();
    assert_eq!(ranked[0].input, "x1");
    assert!(ranked[0].share > 0.9, "share {}", ranked[0].share);
    assert!(ranked[0].swing > 0.0 && ranked[0].outcome_high > ranked[0].outcome_low);
    let x2 = ranked.iter().find(|d| d.input == "x2").unwrap();
    assert!(x2.spearman < 0.0 && x2.swing < 0.0);
    // Theory: the top-decile mean of 3 X1 is 3 · φ(1.2816)/0.1 = 5.265, so
    // the swing of X1 alone is about 10.5 (normal tail mean, Johnson, Kotz &
    // Balakrishnan vol. 1, truncated normal); allow Monte Carlo error.
    assert!(
        (ranked[0].swing - 10.53).abs() < 1.0,
        "swing {}",
        ranked[0].swing
    );
    assert!(drivers::rank_drivers(&inputs, &y[..10]).is_err());
}

#[test]
fn a_simulated_plan_with_a_wide_volume_factor_is_driven_by_volume() {
    let (_t, inputs, mut model) = project();
    model.factors.volume_drift_sd = 0.6;
    model.factors.execution_sigma = 0.02;
    model.factors.ctr_erosion_sd = 0.005;
    model.factors.shock_probability = 0.0;
    let f = run(&model, 600, 21);
    let x = first_tiers(&f);
    let paths = baseline(&inputs, &model, 600, 0.3, 0.02);
    let r = drivers::drivers(&model, &f, &x, Some((&paths, Metric::Clicks)), "EUR").unwrap();
    let net = &r.tables[0];
    assert_eq!(net.drivers[0].input, "search-volume factor");
    assert!(net.drivers[0].spearman > 0.8);
    assert!(net
        .drivers
        .iter()
        .any(|d| d.input == "ranking shock (share of horizon)" && d.constant));
    assert_eq!(
        net.drivers
            .iter()
            .filter(|d| d.group == "execution")
            .count(),
        4
    );
    // With a baseline whose level varies by 30 %, the baseline error drives
    // the total clicks (the baseline is most of the total).
    let total = &r.tables[1];
    assert_eq!(total.outcome, "total clicks");
    assert_eq!(total.drivers[0].input, "baseline error");
    let json: serde_json::Value = serde_json::from_str(&render(&r, Format::Json).unwrap()).unwrap();
    assert!(json["tables"][0]["drivers"][0]["swing"].is_number());
    let csv = render(&r, Format::Csv).unwrap();
    assert_eq!(
        csv.lines().count(),
        1 + net.drivers.len() + total.drivers.len()
    );
    assert!(render(&r, Format::Table)
        .unwrap()
        .contains("search-volume factor"));
}

#[test]
fn an_allocation_that_funds_nothing_says_so() {
    let (_t, _inputs, model) = project();
    let f = run(&model, 50, 2);
    let r = drivers::drivers(&model, &f, &vec![0.0; f.slots.len()], None, "EUR").unwrap();
    assert!(r.tables[0].note.is_some());
    assert!(r.tables[0]
        .drivers
        .iter()
        .all(|d| d.rank_r2 == 0.0 && d.spearman.is_finite()));
}
