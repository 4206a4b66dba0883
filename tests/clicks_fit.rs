//! Fitting a site's own CTR curve: pool-adjacent-violators against a
//! published example, a hand-worked weighted example and scikit-learn;
//! recovery of known curves from synthetic query exports; a cascade click
//! model; branded exclusion, fallback bins and errors.

use furrow::clicks::ctr::CtrCurve;
use furrow::clicks::ctr_fit::{
    brand_regex, fit, pava_non_increasing, CtrFit, FitKind, FitOptions, QueryRow,
};
use furrow::clicks::ClicksError;
use furrow::rng::{domain, stream, Stream};
use rand::RngExt;
use rand_distr::{Beta, Binomial, Distribution, LogNormal};

fn fallback() -> CtrCurve {
    CtrCurve::builtin_default().unwrap()
}

fn fixture() -> serde_json::Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/clicks/reference.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn floats(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
fn pava_matches_the_published_textbook_example() {
    // Robert & Casella, *Monte Carlo Statistical Methods*, 2nd ed., Springer
    // 2004, Exercise 1.18 (pool-adjacent-violators), unit weights, increasing
    // order: (23, 27, 25, 28) -> (23, 26, 26, 28). By hand: 27 > 25 violates,
    // pool to (27 + 25)/2 = 26; then 23 <= 26 <= 28 holds. Our routine fits a
    // non-increasing order, so the same example is run on the reversed data.
    let fitted = pava_non_increasing(&[28.0, 25.0, 27.0, 23.0], &[1.0; 4]);
    let expected = [28.0, 26.0, 26.0, 23.0];
    for (f, e) in fitted.iter().zip(expected) {
        assert!((f - e).abs() < 1e-12);
    }
}

#[test]
fn pava_matches_a_hand_worked_weighted_example() {
    // Worked by hand (no published source found with weights), scanning left
    // to right and pooling a block into its weighted mean while the block
    // before it is smaller:
    //   y = 0.30 0.10 0.20 0.15 0.18 0.05,  w = 100 50 150 100 100 200
    //   0.10 < 0.20: pool (0.10*50 + 0.20*150)/200 = 0.175; 0.30 >= 0.175 ok
    //   0.175 >= 0.15 ok; 0.15 < 0.18: pool (0.15*100 + 0.18*100)/200 = 0.165
    //   0.175 >= 0.165 ok; 0.165 >= 0.05 ok.
    //   fit = 0.30 0.175 0.175 0.165 0.165 0.05
    let y = [0.30, 0.10, 0.20, 0.15, 0.18, 0.05];
    let w = [100.0, 50.0, 150.0, 100.0, 100.0, 200.0];
    let expected = [0.30, 0.175, 0.175, 0.165, 0.165, 0.05];
    for (f, e) in pava_non_increasing(&y, &w).iter().zip(expected) {
        assert!((f - e).abs() < 1e-12, "{f} vs {e}");
    }
    // A cascade of pools ends at the overall weighted mean:
    // (0.1*1 + 0.2*1 + 0.3*2)/4 = 0.225.
    for f in pava_non_increasing(&[0.1, 0.2, 0.3], &[1.0, 1.0, 2.0]) {
        assert!((f - 0.225).abs() < 1e-12);
    }
}

#[test]
fn pava_matches_scikit_learn_isotonic_regression() {
    // Reference: scikit-learn IsotonicRegression(increasing=False) with sample
    // weights, via tests/reference/clicks_reference.py (version in fixture).
    let fx = fixture();
    for case in fx["isotonic"].as_array().unwrap() {
        let got = pava_non_increasing(&floats(&case["values"]), &floats(&case["weights"]));
        for (g, e) in got.iter().zip(floats(&case["fitted"])) {
            assert!((g - e).abs() < 1e-10, "{g} vs {e}");
        }
    }
}

/// A synthetic query export whose clicks are drawn from `truth`: average
/// positions log-uniform on [1, max_pos], impressions lognormal (median 300),
/// clicks binomial.
fn synthetic(
    truth: impl Fn(f64) -> f64,
    n: usize,
    max_pos: f64,
    rng: &mut Stream,
) -> Vec<QueryRow> {
    let impressions = LogNormal::new(300f64.ln(), 1.0).unwrap();
    (0..n)
        .map(|i| {
            let position = (rng.random::<f64>() * max_pos.ln()).exp();
            let shown = impressions.sample(rng).round().max(1.0);
            let clicks = Binomial::new(shown as u64, truth(position))
                .unwrap()
                .sample(rng) as f64;
            QueryRow {
                query: format!("query {i}"),
                clicks,
                impressions: shown,
                position,
            }
        })
        .collect()
}

/// Checks the fitted curve against the truth at whole positions 1 to 30:
/// within four binomial standard errors of the bin's observed CTR,
/// `4 sqrt(c (1 - c) / impressions)`, plus 5 % of the truth because a bin
/// averages CTR over a range of positions (half a position either side; the
/// default curve bends sharply at 2, where this averaging shifts the bin's
/// CTR by about 3 %).
fn assert_close_to_truth(f: &CtrFit, truth: impl Fn(f64) -> f64) {
    for r in 1..=30u32 {
        let bin = f.bins.iter().find(|b| b.first <= r && r <= b.last).unwrap();
        let c = truth(f64::from(r));
        let tolerance = 4.0 * (c * (1.0 - c) / bin.impressions).sqrt() + 0.05 * c;
        let got = f.curve.ctr(f64::from(r));
        assert!(
            (got - c).abs() <= tolerance,
            "position {r}: {got} vs {c} (tolerance {tolerance})"
        );
    }
}

#[test]
fn recovers_a_known_power_law_curve() {
    // Truth CTR(p) = 0.30 p^-1.1, 20000 queries on positions 1 to 40. Stated
    // tolerance: the power law's b within 0.03 and a within 3 %; the chosen
    // curve as in `assert_close_to_truth`; the isotonic points within 10 % of
    // the truth at their bin's mean position.
    let truth = |p: f64| 0.30 * p.powf(-1.1);
    let mut rng = stream(1, domain::TEST, 101);
    let rows = synthetic(truth, 20_000, 40.0, &mut rng);
    let f = fit(&rows, None, &fallback(), &FitOptions::default()).unwrap();
    let pl = f.power_law.as_ref().unwrap();
    assert!((pl.b - 1.1).abs() < 0.03, "b = {}", pl.b);
    assert!((pl.a / 0.30 - 1.0).abs() < 0.03, "a = {}", pl.a);
    assert_eq!(f.chosen, FitKind::PowerLaw, "{}", f.choice_reason);
    assert_close_to_truth(&f, truth);
    for [x, y] in &f.isotonic.points {
        assert!(
            (y / truth(*x) - 1.0).abs() < 0.10,
            "isotonic at {x}: {y} vs {}",
            truth(*x)
        );
    }
    assert!(
        pl.rmse >= f.isotonic.rmse - 1e-15,
        "isotonic is optimal in sample"
    );
}

#[test]
fn recovers_a_known_non_power_curve_with_the_isotonic_fit() {
    // Truth: the shipped default curve (not a power law). 20000 queries on
    // positions 1 to 40. Stated tolerance: the chosen (isotonic) curve as in
    // `assert_close_to_truth`; the power law, which cannot take this shape,
    // has the larger cross-validated error.
    let truth_curve = fallback();
    let truth = |p: f64| truth_curve.ctr(p);
    let mut rng = stream(2, domain::TEST, 102);
    let rows = synthetic(truth, 20_000, 40.0, &mut rng);
    let f = fit(&rows, None, &fallback(), &FitOptions::default()).unwrap();
    assert_eq!(f.chosen, FitKind::Isotonic, "{}", f.choice_reason);
    assert_close_to_truth(&f, truth);
    let iso_cv = f.isotonic.cv_rmse.unwrap();
    let pl_cv = f.power_law.as_ref().unwrap().cv_rmse.unwrap();
    assert!(iso_cv < pl_cv, "{iso_cv} vs {pl_cv}");
}

#[test]
fn curve_fitted_to_cascade_model_clicks_is_non_increasing() {
    // Cascade model (Craswell, Zoeter, Taylor & Ramsey, "An experimental
    // comparison of click position-bias models", WSDM 2008): the user scans
    // results top-down, clicks result j with probability r_j and stops at the
    // first click, so the site at position k is clicked with probability
    // r_site * prod_{j<k} (1 - r_j) (a case of the examination hypothesis:
    // click = examined * relevant). With independent relevances of mean m,
    // E[CTR(k)] = m (1 - m)^(k-1). Relevances here are Beta(2, 6), m = 0.25.
    let mut rng = stream(3, domain::TEST, 103);
    let relevance = Beta::new(2.0, 6.0).unwrap();
    let rows: Vec<QueryRow> = (0..30_000)
        .map(|i| {
            let k = rng.random_range(1..=20u32);
            let above: f64 = (1..k).map(|_| 1.0 - relevance.sample(&mut rng)).product();
            let p_click = relevance.sample(&mut rng) * above;
            let shown = rng.random_range(200..800u32);
            let clicks = Binomial::new(u64::from(shown), p_click)
                .unwrap()
                .sample(&mut rng);
            QueryRow {
                query: format!("q{i}"),
                clicks: clicks as f64,
                impressions: f64::from(shown),
                position: f64::from(k),
            }
        })
        .collect();
    let f = fit(&rows, None, &fallback(), &FitOptions::default()).unwrap();
    let c = &f.curve;
    for i in 0..990 {
        let p = 1.0 + f64::from(i) * 0.1;
        assert!(c.ctr(p + 0.1) <= c.ctr(p), "rises at {p}");
    }
    // The raw bins already fall, and the free power-law slope is negative.
    let observed: Vec<f64> = f.bins[..6]
        .iter()
        .map(|b| b.observed_ctr.unwrap())
        .collect();
    assert!(observed.windows(2).all(|w| w[1] < w[0]), "{observed:?}");
    assert!(!f.power_law.as_ref().unwrap().constrained);
    // And the curve matches the analytic cascade CTR within 15 % at 1 to 10
    // (about 1,500 queries per position; query-level relevance varies a lot,
    // so a bin's CTR has a relative standard error of about 3 %).
    for k in 1..=10 {
        let expected = 0.25 * 0.75f64.powi(k - 1);
        let got = c.ctr(f64::from(k));
        assert!(
            (got / expected - 1.0).abs() < 0.15,
            "k {k}: {got} vs {expected}"
        );
    }
}

fn row(query: &str, clicks: f64, impressions: f64, position: f64) -> QueryRow {
    QueryRow {
        query: query.to_string(),
        clicks,
        impressions,
        position,
    }
}

#[test]
fn branded_queries_are_excluded_case_insensitively_and_counted() {
    let brand = brand_regex("examplebrand").unwrap();
    let mut rows = vec![
        row("ExampleBrand login", 900.0, 1000.0, 1.0),
        row("examplebrand shoes", 500.0, 1000.0, 1.0),
    ];
    for p in 1..=10 {
        rows.push(row(
            &format!("generic query {p}"),
            300.0 / f64::from(p),
            1000.0,
            f64::from(p),
        ));
    }
    let f = fit(&rows, Some(&brand), &fallback(), &FitOptions::default()).unwrap();
    assert_eq!(f.branded_excluded, 2);
    assert_eq!(f.bins[0].queries, 1);
    assert!((f.bins[0].observed_ctr.unwrap() - 0.3).abs() < 1e-12);
    assert!(brand_regex("(unclosed").is_err());
}

#[test]
fn thin_bins_fall_back_to_the_default_shape() {
    // Data only at whole positions 3 to 8 (enough impressions), a thin bin at
    // 12. Before the fitted range (from 3 for the isotonic fit, from bin 3's
    // lower edge 2.5 for the power law) and after it (8, or 8.5), the curve
    // follows the default's shape scaled to meet the fit, so at the curve's
    // knots 1 and 2, and 40 and 70, its ratios equal the default's.
    let mut rows: Vec<QueryRow> = (3..=8)
        .map(|p| row("q", 1000.0 * 0.5 / f64::from(p), 1000.0, f64::from(p)))
        .collect();
    rows.push(row("thin", 1.0, 50.0, 12.0));
    let opts = FitOptions::default();
    let f = fit(&rows, None, &fallback(), &opts).unwrap();
    let d = fallback();
    let c = &f.curve;
    assert!((c.ctr(1.0) / c.ctr(2.0) - d.ctr(1.0) / d.ctr(2.0)).abs() < 1e-9);
    assert!((c.ctr(40.0) / c.ctr(70.0) - d.ctr(40.0) / d.ctr(70.0)).abs() < 1e-9);
    assert!(c.ctr(1.0) > c.ctr(3.0) && c.ctr(3.0) > c.ctr(8.0));
    let fallback_labels: Vec<&str> = f
        .bins
        .iter()
        .filter(|b| b.fallback)
        .map(|b| b.label.as_str())
        .collect();
    assert!(fallback_labels.contains(&"1") && fallback_labels.contains(&"12"));
    assert!(!fallback_labels.contains(&"5"));
    assert_eq!(f.bins[11].queries, 1);
    let json = serde_json::to_value(&f).unwrap();
    assert_eq!(json["chosen"], serde_json::json!(f.chosen));
    assert!(json["curve"]["ctr"].as_array().unwrap().len() == 20);
}

#[test]
fn errors_say_what_is_missing() {
    let fb = fallback();
    let o = FitOptions::default();
    let brand = brand_regex("examplebrand").unwrap();
    let only_brand = vec![row("examplebrand", 1.0, 10.0, 1.0)];
    let e = fit(&only_brand, Some(&brand), &fb, &o).unwrap_err();
    assert_eq!(
        e,
        ClicksError::NoNonBrandedRows {
            total: 1,
            branded: 1
        }
    );
    let e = fit(&[row("a", 0.0, 0.0, 0.0)], None, &fb, &o).unwrap_err();
    assert_eq!(e, ClicksError::NoImpressions { rows: 1 });
    let e = fit(&[row("a", 1.0, 20.0, 2.0)], None, &fb, &o).unwrap_err();
    assert!(e.to_string().contains("100 impressions"), "{e}");
    let e = fit(
        &[row("ok", 1.0, 200.0, 2.0), row("bad", 5.0, 2.0, 3.0)],
        None,
        &fb,
        &o,
    )
    .unwrap_err();
    let msg = e.to_string();
    assert!(
        msg.contains("row 2") && msg.contains("clicks") && msg.contains("\"bad\""),
        "{msg}"
    );
    let e = fit(&[row("a", 1.0, 200.0, 0.4)], None, &fb, &o).unwrap_err();
    assert!(e.to_string().contains("position"));
    let bad = FitOptions {
        min_impressions: 100.0,
        tail_edges: vec![30, 25],
    };
    assert!(fit(&[row("a", 1.0, 200.0, 2.0)], None, &fb, &bad).is_err());
    assert!(fit(&[], None, &fb, &o).is_err());
}
