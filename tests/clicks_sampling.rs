//! Samplers against closed forms: sample mean, variance and the 10 % and
//! 90 % quantiles of lognormal, Beta, triangular and PERT draws, each within
//! four Monte Carlo standard errors:
//! - mean: `sd / sqrt(n)`;
//! - variance: `sqrt((m4 - s⁴) / n)` with `m4` the sample fourth central
//!   moment (the asymptotic variance of the sample variance);
//! - p-quantile: `sqrt(p (1 - p) / n) / f(x_p)` with `f` the density at the
//!   true quantile (asymptotic normality of sample quantiles; David &
//!   Nagaraja, *Order Statistics*, 3rd ed., Wiley 2003, §10.2).
//!
//! With n = 100,000 and seeded streams the runs are deterministic; a
//! four-standard-error band would be crossed by chance about once in 16,000
//! checks.

use furrow::clicks::gain_distribution::GainDistribution;
use furrow::clicks::sampling::{normal_quantile, uniform, BetaParams, LogNormalParams};
use furrow::rng::{domain, stream, Stream};
use statrs::distribution::{Beta, Continuous};

const N: usize = 100_000;

/// Closed-form facts about one distribution.
struct Truth {
    mean: f64,
    variance: f64,
    /// (p, quantile, density at the quantile) for p = 0.1 and 0.9.
    quantiles: [(f64, f64, f64); 2],
}

fn check(name: &str, mut xs: Vec<f64>, t: &Truth) {
    let n = xs.len() as f64;
    let mean = xs.iter().sum::<f64>() / n;
    let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0);
    let m4 = xs.iter().map(|x| (x - mean).powi(4)).sum::<f64>() / n;
    let se_mean = (t.variance / n).sqrt();
    assert!(
        (mean - t.mean).abs() < 4.0 * se_mean,
        "{name}: mean {mean} vs {}",
        t.mean
    );
    let se_var = ((m4 - var * var) / n).sqrt();
    assert!(
        (var - t.variance).abs() < 4.0 * se_var,
        "{name}: variance {var} vs {}",
        t.variance
    );
    xs.sort_by(f64::total_cmp);
    for (p, q, density) in t.quantiles {
        let got = xs[(p * n) as usize];
        let se = (p * (1.0 - p) / n).sqrt() / density;
        assert!(
            (got - q).abs() < 4.0 * se,
            "{name}: {p} quantile {got} vs {q}"
        );
    }
}

fn draws(n: usize, seed: u64, mut draw: impl FnMut(&mut Stream) -> f64) -> Vec<f64> {
    let mut rng = stream(seed, domain::TEST, 500);
    (0..n).map(|_| draw(&mut rng)).collect()
}

#[test]
fn lognormal_sampler() {
    // Mean 50, sd 20 (an order value): mean 50, variance 400; quantiles
    // exp(mu + sigma z_p) with z_0.9 = 1.2815515655446004 (standard normal
    // table, NIST/SEMATECH e-Handbook §1.3.6.7.1); density
    // exp(-(ln x - mu)² / (2 sigma²)) / (x sigma sqrt(2 pi)) (JKB vol. 1 ch. 14).
    let p = LogNormalParams::from_mean_sd(50.0, 20.0).unwrap();
    let z90 = 1.2815515655446004;
    assert!((normal_quantile(0.9) - z90).abs() < 1e-9);
    let density = |x: f64| {
        (-(x.ln() - p.mu).powi(2) / (2.0 * p.sigma * p.sigma)).exp()
            / (x * p.sigma * (2.0 * std::f64::consts::PI).sqrt())
    };
    let q10 = (p.mu - p.sigma * z90).exp();
    let q90 = (p.mu + p.sigma * z90).exp();
    let truth = Truth {
        mean: 50.0,
        variance: 400.0,
        quantiles: [(0.1, q10, density(q10)), (0.9, q90, density(q90))],
    };
    check("lognormal", draws(N, 1, |r| p.sample(r)), &truth);
}

#[test]
fn beta_samplers_both_ways() {
    // Beta(2, 5): mean 2/7, variance 2*5 / (7² * 8) = 10/392; density
    // 30 x (1 - x)^4 since B(2, 5) = 1/30 (JKB vol. 2 ch. 25; NIST/SEMATECH
    // e-Handbook §1.3.6.6.17). Quantiles from SciPy stats.beta (fixture).
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/clicks/reference.json"
    );
    let fx: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let case = fx["beta"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["alpha"] == 2.0)
        .unwrap();
    let q = |i: usize| case["quantiles"][i].as_f64().unwrap();
    let (q10, q90) = (q(1), q(5));
    let density = |x: f64| 30.0 * x * (1.0 - x).powi(4);
    let truth = Truth {
        mean: 2.0 / 7.0,
        variance: 10.0 / 392.0,
        quantiles: [(0.1, q10, density(q10)), (0.9, q90, density(q90))],
    };
    let b = BetaParams::new(2.0, 5.0).unwrap();
    check("Beta (rand_distr)", draws(N, 2, |r| b.sample(r)), &truth);
    check(
        "Beta (inverse CDF)",
        draws(N, 3, |r| b.quantile(uniform(r))),
        &truth,
    );
}

#[test]
fn triangular_sampler() {
    // Triangular(0, 3, 10) (Kotz & van Dorp, Beyond Beta, 2004, ch. 1):
    // mean 13/3, variance 79/18; F(3) = 0.3, so
    // x_0.1 = sqrt(0.1 * 10 * 3) = sqrt 3, density 2x/30 there;
    // x_0.9 = 10 - sqrt(0.1 * 10 * 7) = 10 - sqrt 7, density 2(10 - x)/70.
    let d = GainDistribution::triangular(0.0, 3.0, 10.0).unwrap();
    let (q10, q90) = (3f64.sqrt(), 10.0 - 7f64.sqrt());
    let truth = Truth {
        mean: 13.0 / 3.0,
        variance: 79.0 / 18.0,
        quantiles: [
            (0.1, q10, 2.0 * q10 / 30.0),
            (0.9, q90, 2.0 * (10.0 - q90) / 70.0),
        ],
    };
    check("triangular", draws(N, 4, |r| d.sample(r)), &truth);
}

#[test]
fn pert_sampler() {
    // PERT(0, 3, 10, 4) = 10 * Beta(2.2, 3.8) (Malcolm et al. 1959; Vose
    // 2008): mean 22/6, variance 100 * 2.2 * 3.8 / (36 * 7) = 836/252.
    // Quantiles from SciPy (fixture); density = Beta density / 10 (statrs).
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/clicks/reference.json"
    );
    let fx: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let case = &fx["pert"][0];
    assert_eq!(case["mode"], 3.0);
    let q = |i: usize| case["quantiles"][i].as_f64().unwrap();
    let (q10, q90) = (q(1), q(5));
    let beta = Beta::new(2.2, 3.8).unwrap();
    let density = |x: f64| beta.pdf(x / 10.0) / 10.0;
    let truth = Truth {
        mean: 22.0 / 6.0,
        variance: 836.0 / 252.0,
        quantiles: [(0.1, q10, density(q10)), (0.9, q90, density(q90))],
    };
    let d = GainDistribution::pert(0.0, 3.0, 10.0, None).unwrap();
    check("PERT", draws(N, 5, |r| d.sample(r)), &truth);
}
