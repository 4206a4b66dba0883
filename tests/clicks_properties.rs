//! Invariants checked on random inputs (proptest): CTR curves are in [0, 1]
//! and non-increasing; positions after a non-negative gain stay in [1, p0];
//! the expected gain rises with effort with shrinking increments and falls
//! with difficulty; the ramp is in [0, 1] and non-decreasing; quantiles rise
//! with u; pool-adjacent-violators output is non-increasing and keeps the
//! weighted mean.

use furrow::clicks::ctr::{CtrCurve, CtrLookup};
use furrow::clicks::ctr_fit::pava_non_increasing;
use furrow::clicks::gain_distribution::GainDistribution;
use furrow::clicks::rank_gain::{position_after, RankGainModel};
use proptest::prelude::*;

/// A random valid curve: 1 to 20 head values and up to 3 tail points.
fn curve() -> impl Strategy<Value = CtrCurve> {
    (
        prop::collection::vec(0.0..1.0f64, 1..20),
        prop::collection::vec(21.0..99.0f64, 0..3),
        0.0..0.5f64,
    )
        .prop_map(|(mut head, mut tail_x, end)| {
            head.sort_by(|a, b| b.total_cmp(a));
            tail_x.sort_by(f64::total_cmp);
            tail_x.dedup();
            let last = *head.last().unwrap();
            let mut tail: Vec<[f64; 2]> = tail_x
                .iter()
                .enumerate()
                .map(|(i, &x)| [x, last * 0.8f64.powi(i as i32 + 1)])
                .collect();
            tail.push([100.0, last * end * 0.5]);
            CtrCurve::new("random", "proptest", head, tail, "proptest").unwrap()
        })
}

fn model(
    max_gain: f64,
    rate: f64,
    exponent: f64,
    easy: f64,
    extra: f64,
    smooth: bool,
) -> RankGainModel {
    let text = format!(
        "description = \"p\"\nsource = \"p\"\n[gain]\nmax_log_gain = {max_gain}\neffort_rate = {rate}\n\
         difficulty_exponent = {exponent}\nnoise_sigma = 0.5\n[no_gain]\nbase = 0.1\nper_difficulty = 0.3\n\
         [timing]\neasy_months = {easy}\nhard_months = {}\nnoise_sigma = 0.2\nramp = \"{}\"\n\
         [factors]\nexecution_sigma = 0.3\nshock_probability = 0.1\nshock_log_loss = 0.3\n\
         ctr_erosion_mean = 0.03\nctr_erosion_sd = 0.05\nvolume_drift_sd = 0.1\n\
         conversion_rate_cv = 0.15\norder_value_cv = 0.25\n",
        easy + extra,
        if smooth { "smooth" } else { "linear" }
    );
    RankGainModel::from_toml_str(&text, "proptest").unwrap()
}

fn any_model() -> impl Strategy<Value = RankGainModel> {
    (
        0.0..10.0f64,
        0.01..5.0f64,
        0.0..5.0f64,
        0.5..12.0f64,
        0.0..24.0f64,
        any::<bool>(),
    )
        .prop_map(|(g, r, c, e, x, s)| model(g, r, c, e, x, s))
}

proptest! {
    #[test]
    fn ctr_is_a_share_and_never_rises(c in curve(), a in -5.0..110.0f64, b in -5.0..110.0f64) {
        let (lo, hi) = if a <= b { (a, b) } else { (b, a) };
        for curve_ctr in [c.ctr(lo), c.ctr(hi)] {
            prop_assert!((0.0..=1.0).contains(&curve_ctr));
        }
        prop_assert!(c.ctr(hi) <= c.ctr(lo));
        let l = CtrLookup::new(&c);
        prop_assert!((0.0..=1.0).contains(&l.ctr(lo)));
        prop_assert!(l.ctr(hi) <= l.ctr(lo) + 1e-15);
    }

    #[test]
    fn shipped_curves_never_rise(a in 0.0..101.0f64, b in 0.0..101.0f64) {
        let (lo, hi) = if a <= b { (a, b) } else { (b, a) };
        for c in [CtrCurve::builtin_default().unwrap(), CtrCurve::builtin_branded().unwrap()] {
            prop_assert!(c.ctr(hi) <= c.ctr(lo));
            prop_assert!((0.0..=1.0).contains(&c.ctr(lo)));
        }
    }

    #[test]
    fn position_after_a_gain_stays_between_one_and_the_start(p0 in 1.0..100.0f64, gain in 0.0..20.0f64) {
        let p = position_after(p0, gain);
        prop_assert!(p >= 1.0);
        prop_assert!(p <= p0);
    }

    #[test]
    fn gain_rises_with_effort_with_shrinking_steps_and_falls_with_difficulty(
        m in any_model(),
        effort in 0.0..10.0f64,
        step in 0.01..3.0f64,
        d1 in 0.0..100.0f64,
        d2 in 0.0..100.0f64,
    ) {
        let d = d1.min(d2);
        let g0 = m.expected_log_gain(effort, d);
        let g1 = m.expected_log_gain(effort + step, d);
        let g2 = m.expected_log_gain(effort + 2.0 * step, d);
        prop_assert!(g1 >= g0);
        prop_assert!(g2 - g1 <= g1 - g0 + 1e-12);
        prop_assert!(m.expected_log_gain(effort, d1.max(d2)) <= g0);
        prop_assert!(m.no_gain_probability(d1.max(d2)) >= m.no_gain_probability(d));
        prop_assert!(m.months_to_full_effect(d1.max(d2)) >= m.months_to_full_effect(d));
    }

    #[test]
    fn ramp_is_a_share_and_never_falls(m in any_model(), a in -5.0..30.0f64, b in -5.0..30.0f64, full in 0.0..15.0f64) {
        let (lo, hi) = if a <= b { (a, b) } else { (b, a) };
        let (r_lo, r_hi) = (m.ramp(lo, full), m.ramp(hi, full));
        prop_assert!((0.0..=1.0).contains(&r_lo) && (0.0..=1.0).contains(&r_hi));
        prop_assert!(r_hi >= r_lo);
    }

    #[test]
    fn quantiles_rise_with_u_and_stay_in_range(
        a in -10.0..10.0f64, w1 in 0.0..10.0f64, w2 in 0.0..10.0f64,
        u in 0.0..1.0f64, v in 0.0..1.0f64, pert in any::<bool>(),
    ) {
        let (mode, max) = (a + w1, a + w1 + w2);
        let d = if pert {
            GainDistribution::pert(a, mode, max, None).unwrap()
        } else {
            GainDistribution::triangular(a, mode, max).unwrap()
        };
        let (lo, hi) = if u <= v { (u, v) } else { (v, u) };
        prop_assert!(d.quantile(hi) >= d.quantile(lo) - 1e-9);
        prop_assert!(d.quantile(lo) >= a - 1e-9 && d.quantile(hi) <= max + 1e-9);
    }

    #[test]
    fn pava_is_non_increasing_and_keeps_the_weighted_mean(
        pairs in prop::collection::vec((0.0..1.0f64, 0.1..1000.0f64), 1..40)
    ) {
        let (ys, ws): (Vec<f64>, Vec<f64>) = pairs.into_iter().unzip();
        let fit = pava_non_increasing(&ys, &ws);
        prop_assert!(fit.windows(2).all(|w| w[1] <= w[0] + 1e-12));
        let total: f64 = ws.iter().sum();
        let before: f64 = ys.iter().zip(&ws).map(|(y, w)| y * w).sum::<f64>() / total;
        let after: f64 = fit.iter().zip(&ws).map(|(y, w)| y * w).sum::<f64>() / total;
        prop_assert!((before - after).abs() < 1e-9);
    }
}
