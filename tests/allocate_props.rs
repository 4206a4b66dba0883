//! Invariants of the allocation (proptest, small instances): monotone in the
//! budget and the risk limit, every constraint met, the reported CVaR equal to
//! an independent tail average of the sorted losses, and the full LP and the
//! cutting-plane method agreeing.

use furrow::allocate::synthetic::{tiered_instance, SyntheticSpec};
use furrow::allocate::{solve, verify, Allocation, Problem, SolveMethod, SolveOptions};
use proptest::prelude::*;

/// A small random tiered instance with a limit between 20 % and 120 % of the
/// unconstrained optimum's tail loss, and a budget share.
fn instance(
    seed: u64,
    clusters: usize,
    scenarios: usize,
    limit_share: f64,
    budget_share: f64,
) -> Problem {
    let mut p = tiered_instance(SyntheticSpec {
        clusters,
        tiers: 3,
        scenarios,
        seed,
    });
    p.budget *= budget_share;
    let free = solve(&p, &SolveOptions::default()).expect("unconstrained solves");
    p.max_tail_loss = Some(limit_share * free.tail_loss.max(1.0));
    p
}

fn opts(method: SolveMethod) -> SolveOptions {
    SolveOptions {
        method,
        ..Default::default()
    }
}

/// CVaR as the average of the worst `(1 - q) S` losses with the boundary
/// future counted fractionally: the tail-mean form of expected shortfall of
/// Acerbi & Tasche, "On the coherence of expected shortfall", Journal of
/// Banking & Finance 26 (2002). Written here independently of the crate.
fn tail_average(losses: &mut [f64], q: f64) -> f64 {
    losses.sort_by(|a, b| b.total_cmp(a));
    let mass = (1.0 - q) * losses.len() as f64;
    let whole = mass.floor() as usize;
    let head: f64 = losses[..whole].iter().sum();
    let part = if whole < losses.len() {
        (mass - whole as f64) * losses[whole]
    } else {
        0.0
    };
    (head + part) / mass
}

fn x_of(a: &Allocation) -> Vec<f64> {
    a.allocation.iter().map(|i| i.fraction).collect()
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    #[test]
    fn more_budget_never_lowers_the_optimum(seed in 0u64..1000, k in 1usize..4, s in 20usize..60, share in 0.2f64..1.2, extra in 0.01f64..0.5) {
        let mut p = instance(seed, k, s, share, 0.5);
        let base = solve(&p, &SolveOptions::default()).expect("solves");
        p.budget *= 1.0 + extra;
        let more = solve(&p, &SolveOptions::default()).expect("solves");
        prop_assert!(more.expected_net_return >= base.expected_net_return - 1e-9 * base.expected_net_return.abs().max(1.0));
    }

    #[test]
    fn a_looser_limit_never_lowers_the_optimum(seed in 0u64..1000, k in 1usize..4, s in 20usize..60, share in 0.2f64..1.0, extra in 0.01f64..0.5) {
        let mut p = instance(seed, k, s, share, 0.8);
        let base = solve(&p, &SolveOptions::default()).expect("solves");
        p.max_tail_loss = p.max_tail_loss.map(|l| l * (1.0 + extra));
        let loose = solve(&p, &SolveOptions::default()).expect("solves");
        prop_assert!(loose.expected_net_return >= base.expected_net_return - 1e-9 * base.expected_net_return.abs().max(1.0));
    }

    #[test]
    fn every_constraint_holds_and_cvar_is_the_sorted_tail_average(seed in 0u64..1000, k in 1usize..4, s in 20usize..60, share in 0.2f64..1.2, b in 0.1f64..1.0, method in prop_oneof![Just(SolveMethod::Full), Just(SolveMethod::Cuts)]) {
        let p = instance(seed, k, s, share, b);
        let a = solve(&p, &opts(method)).expect("solves");
        prop_assert!(verify(&p, &a, 1e-9).is_ok(), "{:?}", verify(&p, &a, 1e-9));
        let x = x_of(&a);
        let spend: f64 = x.iter().zip(&p.costs).map(|(v, c)| v * c).sum();
        prop_assert!(spend <= p.budget * (1.0 + 1e-9));
        for (i, r) in p.requires.iter().enumerate() {
            if let Some(j) = *r { prop_assert!(x[i] <= x[j] + 1e-9); }
        }
        prop_assert!(x.iter().all(|&v| (-1e-9..=1.0 + 1e-9).contains(&v)));
        let mut losses = p.losses(&x);
        let cvar = tail_average(&mut losses, p.tail_level);
        prop_assert!((cvar - a.tail_loss).abs() <= 1e-9 * cvar.abs().max(1.0), "{} vs {}", cvar, a.tail_loss);
        let limit = p.max_tail_loss.expect("limit");
        prop_assert!(a.tail_loss <= limit + 1e-9 * limit.abs().max(1.0));
    }

    #[test]
    fn full_lp_and_cutting_planes_agree(seed in 0u64..1000, k in 1usize..4, s in 20usize..80, share in 0.2f64..1.2, b in 0.1f64..1.0) {
        let p = instance(seed, k, s, share, b);
        let full = solve(&p, &opts(SolveMethod::Full)).expect("full solves");
        let cuts = solve(&p, &opts(SolveMethod::Cuts)).expect("cuts solve");
        let scale = full.expected_net_return.abs().max(1.0);
        prop_assert!((full.expected_net_return - cuts.expected_net_return).abs() <= 1e-7 * scale,
            "full {} cuts {}", full.expected_net_return, cuts.expected_net_return);
    }
}
