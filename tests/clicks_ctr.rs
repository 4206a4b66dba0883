//! Click-through curves: the shipped model files, the file format's rules and
//! error messages, interpolation, and the lookup table's error bound.

use furrow::clicks::ctr::{CtrCurve, CtrLookup, BRANDED_CTR_TOML, DEFAULT_CTR_TOML};
use furrow::clicks::ClicksError;
use furrow::rng::{domain, stream};
use rand::RngExt;

fn default_curve() -> CtrCurve {
    CtrCurve::from_toml_str(DEFAULT_CTR_TOML, "models/ctr/default.toml").unwrap()
}

#[test]
fn default_curve_has_the_shape_the_domain_brief_states() {
    // domain.md: "roughly 25 to 30 % at position 1, falling to about 2 % at
    // position 10 and under 1 % past position 20" (from memory, common practice).
    let c = default_curve();
    assert!((0.25..=0.30).contains(&c.ctr(1.0)));
    assert!((0.015..=0.025).contains(&c.ctr(10.0)));
    for p in [20.5, 21.0, 30.0, 60.0, 100.0] {
        assert!(c.ctr(p) < 0.01, "position {p}: {}", c.ctr(p));
    }
    assert!(c.source().contains("from memory"));
}

#[test]
fn branded_curve_is_above_the_default_everywhere() {
    let d = default_curve();
    let b = CtrCurve::from_toml_str(BRANDED_CTR_TOML, "models/ctr/branded.toml").unwrap();
    assert!(b.source().contains("from memory"));
    for i in 0..=990 {
        let p = 1.0 + i as f64 * 0.1;
        assert!(b.ctr(p) > d.ctr(p), "position {p}");
    }
}

#[test]
fn shipped_files_are_the_builtin_curves() {
    assert_eq!(CtrCurve::builtin_default().unwrap(), default_curve());
    assert!(CtrCurve::builtin_branded().unwrap().ctr(1.0) > 0.4);
}

#[test]
fn to_toml_round_trips_exactly() {
    let c = default_curve();
    let text = c.to_toml_string();
    assert!(text.starts_with("# Click-through rate"));
    let back = CtrCurve::from_toml_str(&text, "round trip").unwrap();
    assert_eq!(back, c);
}

#[test]
fn interpolation_is_linear_in_log_ctr_between_whole_positions() {
    // By the stated rule: at p = 2 + t, ln CTR = (1-t) ln CTR(2) + t ln CTR(3).
    let c = default_curve();
    let (c2, c3) = (c.ctr(2.0), c.ctr(3.0));
    for t in [0.1, 0.25, 0.5, 0.9] {
        let expected = ((1.0 - t) * c2.ln() + t * c3.ln()).exp();
        assert!((c.ctr(2.0 + t) - expected).abs() < 1e-14);
    }
    // Tail: between [50, 0.002] and [70, 0.001], halfway is sqrt(0.002 * 0.001).
    assert!((c.ctr(60.0) - (0.002f64 * 0.001).sqrt()).abs() < 1e-15);
}

#[test]
fn below_one_past_hundred_and_nan() {
    let c = default_curve();
    assert_eq!(c.ctr(0.3), c.ctr(1.0));
    assert_eq!(c.ctr(-5.0), c.ctr(1.0));
    assert_eq!(c.ctr(100.0), 0.0005);
    assert_eq!(c.ctr(100.01), 0.0);
    assert_eq!(c.ctr(f64::NAN), 0.0);
    assert_eq!(c.ctr(f64::INFINITY), 0.0);
}

fn error_of(text: &str) -> String {
    CtrCurve::from_toml_str(text, "my-curve.toml")
        .unwrap_err()
        .to_string()
}

#[test]
fn errors_name_origin_key_and_what_was_expected() {
    let base = "description = \"d\"\nsource = \"s\"\n";
    let e = error_of(&format!("{base}ctr = [0.3, 1.2]\ntail = [[100, 0.0]]\n"));
    assert!(
        e.contains("my-curve.toml") && e.contains("position 2") && e.contains("0 to 1"),
        "{e}"
    );
    let e = error_of(&format!(
        "{base}ctr = [0.3, 0.1, 0.2]\ntail = [[100, 0.0]]\n"
    ));
    assert!(
        e.contains("position 3") && e.contains("must not increase"),
        "{e}"
    );
    let e = error_of(&format!(
        "{base}ctr = [0.3, 0.1]\ntail = [[50, 0.01], [40, 0.005], [100, 0]]\n"
    ));
    assert!(
        e.contains("tail point 2") && e.contains("positions increase"),
        "{e}"
    );
    let e = error_of(&format!("{base}ctr = [0.3, 0.1]\ntail = [[50, 0.01]]\n"));
    assert!(e.contains("position 100"), "{e}");
    let e = error_of(&format!(
        "{base}ctr = [0.3]\ntail = [[100, 0.0]]\nextra = 1\n"
    ));
    assert!(e.contains("my-curve.toml") && e.contains("extra"), "{e}");
    let e = error_of("ctr = [0.3]\n");
    assert!(e.contains("description"), "{e}");
    let err = CtrCurve::from_toml_str("ctr = [", "x.toml").unwrap_err();
    assert!(matches!(err, ClicksError::Parse { .. }));
}

#[test]
fn lookup_stays_within_its_error_bound_of_the_exact_curve() {
    // The exact curve and the table interpolation both lie between the two
    // grid values around a point (the curve is monotone), so the error is at
    // most the largest adjacent table difference; with 4096 steps in
    // log-position that is under 1e-3 for the default curve, and the observed
    // error is far smaller (below 1e-4).
    let c = default_curve();
    let lookup = CtrLookup::new(&c);
    let bound = lookup.error_bound();
    assert!(bound < 1e-3, "bound {bound}");
    let mut rng = stream(11, domain::TEST, 0);
    let mut worst = 0.0f64;
    for _ in 0..200_000 {
        let p = 1.0 + 99.0 * rng.random::<f64>();
        let err = (lookup.ctr(p) - c.ctr(p)).abs();
        worst = worst.max(err);
        assert!(err <= bound + 1e-15);
        assert!((lookup.ctr_ln(p.ln()) - lookup.ctr(p)).abs() < 1e-15);
    }
    assert!(worst < 1e-4, "worst {worst}");
    for p in [1.0, 2.0, 10.0, 100.0] {
        assert!((lookup.ctr(p) - c.ctr(p)).abs() < 1e-4);
    }
    assert_eq!(lookup.ctr(0.5), c.ctr(1.0));
    assert_eq!(lookup.ctr(100.5), 0.0);
    assert_eq!(lookup.ctr(f64::NAN), 0.0);
    assert_eq!(lookup.ctr_ln(f64::NAN), 0.0);
}

/// The kernel's inner loop gives the same bits four months at a time
/// (AVX2, where the processor has it) as one month at a time, for months
/// inside and outside the table, at its edges, past position 100 and NaN,
/// and for every remainder length. On a processor without AVX2 both calls
/// take the same path and the check holds trivially.
#[test]
fn four_months_at_a_time_equals_one_at_a_time() {
    let curve = CtrCurve::from_toml_str(DEFAULT_CTR_TOML, "default").unwrap();
    let fast = CtrLookup::new(&curve);
    let slow = fast.clone().without_simd();
    let mut rng = stream(99, domain::SITE, 1);
    let ln_max = 100f64.ln();
    let special = [f64::NAN, -0.0, 0.0, ln_max, ln_max + 1e-12, -3.0, 9.0];
    for case in 0..2_000 {
        let n = case % 17;
        let pick = |rng: &mut furrow::rng::Stream| {
            if rng.random_range(0..10) == 0 {
                special[rng.random_range(0..special.len())]
            } else {
                rng.random::<f64>() * 5.5 - 0.5
            }
        };
        let ramp: Vec<f64> = (0..n).map(|_| rng.random::<f64>()).collect();
        let base: Vec<f64> = (0..n).map(|_| pick(&mut rng)).collect();
        let old: Vec<f64> = (0..n).map(|_| rng.random::<f64>() * 0.3).collect();
        let weight: Vec<f64> = (0..n).map(|_| rng.random::<f64>() * 1e4).collect();
        let d = pick(&mut rng) * 2.0;
        let start: Vec<f64> = (0..n).map(|_| rng.random::<f64>()).collect();
        let (mut a, mut b) = (start.clone(), start);
        fast.add_months(&mut a, &ramp, &base, &old, &weight, d);
        slow.add_months(&mut b, &ramp, &base, &old, &weight, d);
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(
            bits(&a),
            bits(&b),
            "case {case}: n {n}, d {d}, base {base:?}"
        );
    }
}
