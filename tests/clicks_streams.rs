//! Regression check of the seeded streams as the Monte Carlo uses them: one
//! fresh `rng::stream(seed, domain, index)` per future, and the first draws
//! of each. Across futures those draws must look like independent draws of
//! their distribution.
//!
//! Ignored for now: `src/rng.rs` builds the 128-bit PCG state from
//! `[a, b]` where only `b` depends on the index, so every stream shares the
//! low 64 bits of state forever (multiplication mod 2^128 never carries high
//! bits down). The XSL-RR output then is a fixed, non-bijective function of
//! the high half, and the n-th draw across streams is biased: with 20,000
//! futures the variance of the first standard normal is 0.96 (SITE domain)
//! or 0.92 (KEYWORD) instead of 1, some 8 to 11 standard errors off. Mixing
//! the index into both halves (for example low half =
//! `splitmix64(b ^ CONST)`) passes. Un-ignore once `src/rng.rs` is fixed.

use furrow::clicks::sampling::{standard_normal, uniform};
use furrow::rng::{domain, stream};

#[test]

fn first_draws_across_per_future_streams_are_unbiased() {
    // Standard normal: mean 0, variance 1; standard errors 1/sqrt(n) and
    // sqrt(2/n). Uniform: mean 1/2, standard error sqrt(1/12/n). Tolerance:
    // 4 standard errors.
    let n = 20_000u64;
    for dom in [domain::SITE, domain::CLUSTER, domain::KEYWORD] {
        let (mut su, mut sz, mut szz) = (0.0, 0.0, 0.0);
        for i in 0..n {
            let mut rng = stream(4, dom, i);
            su += uniform(&mut rng);
            let _ = uniform(&mut rng);
            let z = standard_normal(&mut rng);
            sz += z;
            szz += z * z;
        }
        let nf = n as f64;
        assert!(
            (su / nf - 0.5).abs() < 4.0 * (1.0 / 12.0 / nf).sqrt(),
            "uniform mean {}",
            su / nf
        );
        assert!((sz / nf).abs() < 4.0 / nf.sqrt(), "normal mean {}", sz / nf);
        assert!(
            (szz / nf - 1.0).abs() < 4.0 * (2.0 / nf).sqrt(),
            "normal variance {}",
            szz / nf
        );
    }
}
