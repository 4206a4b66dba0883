//! Behaviour of the allocation API on worked cases: empty and infeasible
//! answers, duals of a hand-solvable problem, whole tiers against brute-force
//! enumeration, the frontier, time limits, verification and the JSON fields
//! of the command-line contract.

use furrow::allocate::synthetic::{tiered_instance, SyntheticSpec};
use furrow::allocate::{
    cvar_of_losses, frontier, min_tail_loss, solve, verify, AllocError, Backend, Problem,
    SolveMethod, SolveOptions,
};
use std::time::Duration;

fn ids(names: &[&str]) -> Vec<String> {
    names.iter().map(|s| s.to_string()).collect()
}

/// Two ids, two equally likely futures: `a` returns 4 or 6 (mean 5) for a cost
/// of 10, `b` returns 1 or 3 (mean 2) for a cost of 10. Without a risk limit
/// this is a fractional knapsack (Dantzig 1957): fund by return per unit of
/// cost, so `a` first (0.5 per unit), then `b` (0.2 per unit).
fn knapsack(budget: f64) -> Problem {
    Problem::new(
        ids(&["a", "b"]),
        vec![10.0, 10.0],
        2,
        vec![4.0, 1.0, 6.0, 3.0],
        budget,
    )
}

#[test]
fn fractional_knapsack_optimum_and_budget_duals() {
    let a = solve(&knapsack(15.0), &SolveOptions::default()).expect("solves");
    assert!(
        (a.allocation[0].fraction - 1.0).abs() < 1e-9
            && (a.allocation[1].fraction - 0.5).abs() < 1e-9
    );
    assert!((a.expected_net_return - 6.0).abs() < 1e-9);
    assert!((a.budget_dual - 0.2).abs() < 1e-6, "dual {}", a.budget_dual);
    assert!((a.budget_dual_below.expect("below") - 0.2).abs() < 1e-6);
    assert_eq!(
        a.expected_roi.map(|r| (r - 6.0 / 15.0).abs() < 1e-9),
        Some(true)
    );
    assert!(a.binding.iter().any(|b| b == "the budget is fully used"));
    // At budget 10 the value function has a kink: one more unit is worth 0.2,
    // one unit less costs 0.5.
    let k = solve(&knapsack(10.0), &SolveOptions::default()).expect("solves");
    assert!(
        (k.budget_dual - 0.2).abs() < 1e-6
            && (k.budget_dual_below.expect("below") - 0.5).abs() < 1e-6
    );
}

#[test]
fn zero_budget_funds_nothing_and_says_what_the_first_unit_is_worth() {
    let a = solve(&knapsack(0.0), &SolveOptions::default()).expect("solves");
    assert_eq!(a.status, "nothing-funded");
    assert!(a.allocation.iter().all(|i| i.fraction == 0.0));
    assert!(
        a.explanation[0].contains("budget is zero"),
        "{:?}",
        a.explanation
    );
    assert!(
        (a.budget_dual - 0.5).abs() < 1e-6,
        "first unit worth {}",
        a.budget_dual
    );
    assert_eq!(a.expected_roi, None);
    assert_eq!((a.tail_loss, a.chance_of_loss), (0.0, 0.0));
}

#[test]
fn negative_expected_returns_fund_nothing() {
    let p = Problem::new(
        ids(&["a", "b"]),
        vec![10.0, 10.0],
        2,
        vec![-4.0, 1.0, 2.0, -3.0],
        50.0,
    );
    let a = solve(&p, &SolveOptions::default()).expect("solves");
    assert_eq!(a.status, "nothing-funded");
    assert!(
        a.explanation[0].contains("No tier has a positive expected net return"),
        "{:?}",
        a.explanation
    );
}

#[test]
fn a_limit_below_the_minimum_is_infeasible_with_the_minimum_in_the_message() {
    let mut p = tiered_instance(SyntheticSpec {
        clusters: 3,
        tiers: 3,
        scenarios: 80,
        seed: 5,
    });
    p.min_fraction[0] = 1.0;
    let lo = min_tail_loss(&p, &SolveOptions::default()).expect("min");
    p.max_tail_loss = Some(lo - 10.0);
    for method in [SolveMethod::Full, SolveMethod::Cuts] {
        let e = solve(
            &p,
            &SolveOptions {
                method,
                ..Default::default()
            },
        )
        .expect_err("infeasible");
        match &e {
            AllocError::Infeasible {
                min_tail_loss,
                limit,
            } => {
                assert!((min_tail_loss - lo).abs() < 1e-6 * lo.abs().max(1.0));
                assert_eq!(*limit, lo - 10.0);
            }
            other => panic!("expected Infeasible, got {other:?}"),
        }
        assert!(
            e.to_string()
                .contains("smallest tail loss achievable with this budget"),
            "{e}"
        );
    }
    // Without must-fund minimums funding nothing has CVaR 0: a negative
    // limit is infeasible and the minimum reported is at most 0.
    let mut q = tiered_instance(SyntheticSpec {
        clusters: 2,
        tiers: 3,
        scenarios: 50,
        seed: 6,
    });
    q.max_tail_loss = Some(-1e6);
    assert!(
        matches!(solve(&q, &SolveOptions::default()), Err(AllocError::Infeasible { min_tail_loss, .. }) if min_tail_loss <= 1e-9)
    );
}

/// Every method with every backend built in.
fn backends() -> Vec<(SolveMethod, Backend)> {
    let mut out = vec![
        (SolveMethod::Full, Backend::Microlp),
        (SolveMethod::Cuts, Backend::Microlp),
    ];
    if Backend::Highs.is_available() {
        out.extend([
            (SolveMethod::Full, Backend::Highs),
            (SolveMethod::Cuts, Backend::Highs),
        ]);
    }
    out
}

/// Whole tiers against brute force over every on/off pattern.
#[test]
fn whole_tiers_match_brute_force_enumeration() {
    let mut p = tiered_instance(SyntheticSpec {
        clusters: 3,
        tiers: 3,
        scenarios: 40,
        seed: 9,
    });
    p.budget *= 1.2;
    let free = solve(&p, &SolveOptions::default()).expect("solves");
    p.max_tail_loss = Some(0.6 * free.tail_loss);
    let means = p.mean_returns();
    let n = p.n();
    let mut best = 0.0f64;
    for mask in 0u32..(1 << n) {
        let x: Vec<f64> = (0..n).map(|i| f64::from((mask >> i) & 1)).collect();
        let order_ok = (0..n).all(|i| p.requires[i].is_none_or(|j| x[i] <= x[j]));
        let cost: f64 = x.iter().zip(&p.costs).map(|(a, c)| a * c).sum();
        let (_, cvar) = cvar_of_losses(&p.losses(&x), None, p.tail_level);
        if order_ok && cost <= p.budget && cvar <= p.max_tail_loss.expect("limit") {
            best = best.max(x.iter().zip(&means).map(|(a, m)| a * m).sum());
        }
    }
    for (method, backend) in backends() {
        let opts = SolveOptions {
            method,
            backend,
            whole_tiers: true,
            ..Default::default()
        };
        let a = solve(&p, &opts).expect("solves");
        assert!(
            (a.expected_net_return - best).abs() < 1e-6 * best.abs().max(1.0),
            "{method:?} {backend:?}: {} vs {best}",
            a.expected_net_return
        );
        assert!(a
            .allocation
            .iter()
            .all(|i| i.fraction == 0.0 || i.fraction == 1.0));
        let cont_opts = SolveOptions {
            whole_tiers: false,
            ..opts
        };
        let cont = solve(&p, &cont_opts).expect("solves");
        let gap = a.whole_tiers_gap.expect("gap");
        assert!((gap - (cont.expected_net_return - best)).abs() < 1e-6 * best.abs().max(1.0));
    }
}

#[test]
fn whole_tiers_refuse_large_instances_with_the_continuous_answer() {
    let p = tiered_instance(SyntheticSpec {
        clusters: 22,
        tiers: 3,
        scenarios: 30,
        seed: 2,
    });
    let cont = solve(&p, &SolveOptions::default()).expect("solves");
    let e = solve(
        &p,
        &SolveOptions {
            whole_tiers: true,
            ..Default::default()
        },
    )
    .expect_err("too large");
    let msg = e.to_string();
    assert!(msg.contains("66 tiers exceed the limit of 60"), "{msg}");
    assert!(
        msg.contains(&furrow::text::figure(cont.expected_net_return)),
        "{msg}"
    );
}

#[test]
fn frontier_runs_from_the_minimum_to_the_unconstrained_tail_loss() {
    let p = tiered_instance(SyntheticSpec {
        clusters: 4,
        tiers: 3,
        scenarios: 300,
        seed: 4,
    });
    let opts = SolveOptions::default();
    let pts = frontier(&p, 6, &opts).expect("frontier");
    assert_eq!(pts.len(), 6);
    assert!(pts.iter().all(|pt| pt.is_solved()), "every point solves");
    let figure = |v: Option<f64>| v.expect("a solved point has its figures");
    let lo = min_tail_loss(&p, &opts).expect("min");
    let free = solve(&p, &opts).expect("free");
    assert!((figure(pts[0].tail_loss) - lo).abs() < 1e-6 * free.tail_loss.abs().max(1.0));
    assert!(
        (figure(pts[5].expected_net_return) - free.expected_net_return).abs()
            < 1e-6 * free.expected_net_return.abs()
    );
    for w in pts.windows(2) {
        assert!(w[1].max_tail_loss > w[0].max_tail_loss);
        assert!(
            figure(w[1].expected_net_return)
                >= figure(w[0].expected_net_return) - 1e-9 * free.expected_net_return.abs()
        );
    }
    for pt in &pts {
        assert!(figure(pt.tail_loss) <= pt.max_tail_loss + 1e-7 * free.tail_loss.abs());
        let mut q = p.clone();
        q.max_tail_loss = Some(pt.max_tail_loss);
        let direct = solve(&q, &opts).expect("solves");
        assert!(
            (direct.expected_net_return - figure(pt.expected_net_return)).abs()
                < 1e-6 * free.expected_net_return.abs()
        );
    }
    assert!(matches!(
        frontier(&p, 1, &opts),
        Err(AllocError::Invalid { .. })
    ));
}

#[test]
fn a_time_limit_is_an_error_never_an_empty_answer() {
    let mut p = tiered_instance(SyntheticSpec {
        clusters: 5,
        tiers: 3,
        scenarios: 500,
        seed: 3,
    });
    p.max_tail_loss = Some(1000.0);
    for method in [SolveMethod::Full, SolveMethod::Cuts] {
        let opts = SolveOptions {
            method,
            time_limit: Some(Duration::ZERO),
            ..Default::default()
        };
        let e = solve(&p, &opts).expect_err("time limit");
        assert!(matches!(e, AllocError::NotOptimal { .. }), "{e:?}");
        assert!(e.to_string().contains("stopped before proving optimality"));
    }
}

#[test]
fn verify_rejects_a_tampered_answer() {
    let mut p = tiered_instance(SyntheticSpec {
        clusters: 3,
        tiers: 3,
        scenarios: 60,
        seed: 8,
    });
    let free = solve(&p, &SolveOptions::default()).expect("solves");
    p.max_tail_loss = Some(0.5 * free.tail_loss);
    let a = solve(&p, &SolveOptions::default()).expect("solves");
    assert_eq!(a.status, "optimal");
    assert_eq!(verify(&p, &a, 1e-9), Ok(()));
    let mut over = a.clone();
    over.allocation.iter_mut().for_each(|i| {
        i.fraction = 1.0;
        i.spend = 0.0;
    });
    assert!(matches!(
        verify(&p, &over, 1e-9),
        Err(AllocError::Verification { .. })
    ));
    let mut lie = a.clone();
    lie.tail_loss *= 0.5;
    let msg = verify(&p, &lie, 1e-9).expect_err("caught").to_string();
    assert!(msg.contains("tail loss"), "{msg}");
}

#[test]
fn equal_weights_match_no_weights_and_weights_move_the_answer() {
    let mut p = tiered_instance(SyntheticSpec {
        clusters: 3,
        tiers: 3,
        scenarios: 100,
        seed: 12,
    });
    let free = solve(&p, &SolveOptions::default()).expect("solves");
    p.max_tail_loss = Some(0.5 * free.tail_loss);
    let plain = solve(&p, &SolveOptions::default()).expect("solves");
    assert!(plain.expected_net_return > 0.0);
    p.weights = Some(vec![0.01; 100]);
    let eq = solve(&p, &SolveOptions::default()).expect("solves");
    let diff = (plain.expected_net_return - eq.expected_net_return).abs();
    assert!(diff < 1e-7 * plain.expected_net_return.abs(), "{diff}");
    let mut w: Vec<f64> = (0..100)
        .map(|s| if s < 50 { 0.015 } else { 0.005 })
        .collect();
    w[0] += 1.0 - w.iter().sum::<f64>();
    p.weights = Some(w);
    let tilted = solve(&p, &SolveOptions::default()).expect("solves");
    assert!(verify(&p, &tilted, 1e-9).is_ok());
    assert!((tilted.expected_net_return - plain.expected_net_return).abs() > 1e-6);
}

#[test]
fn invalid_problems_and_options_are_named() {
    let mut p = knapsack(10.0);
    p.costs.pop();
    assert!(solve(&p, &SolveOptions::default())
        .expect_err("invalid")
        .to_string()
        .contains("costs"));
    let mut p = knapsack(10.0);
    p.tail_level = 1.0;
    assert!(solve(&p, &SolveOptions::default())
        .expect_err("invalid")
        .to_string()
        .contains("tail_level"));
    let opts = SolveOptions {
        tolerance: 0.0,
        ..Default::default()
    };
    assert!(solve(&knapsack(10.0), &opts)
        .expect_err("invalid")
        .to_string()
        .contains("tolerance"));
}

#[test]
fn json_has_the_fields_of_the_command_line_contract() {
    let mut p = tiered_instance(SyntheticSpec {
        clusters: 2,
        tiers: 3,
        scenarios: 50,
        seed: 1,
    });
    let free = solve(&p, &SolveOptions::default()).expect("solves");
    p.max_tail_loss = Some(0.5 * free.tail_loss);
    let a = solve(&p, &SolveOptions::default()).expect("solves");
    let v = serde_json::to_value(&a).expect("serialises");
    for key in [
        "status",
        "expected_net_return",
        "tail_level",
        "tail_loss",
        "value_at_risk",
        "budget_used",
        "budget_dual",
        "risk_dual",
        "allocation",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    let item = &v["allocation"][0];
    for key in ["id", "fraction", "spend"] {
        assert!(item.get(key).is_some(), "missing allocation.{key}");
    }
    assert!(!serde_json::to_string(&a).expect("text").contains("NaN"));
}

#[test]
fn binding_constraints_are_named_in_plain_words() {
    let mut p = tiered_instance(SyntheticSpec {
        clusters: 3,
        tiers: 3,
        scenarios: 120,
        seed: 10,
    });
    p.max_fraction[0] = 0.5;
    let free = solve(&p, &SolveOptions::default()).expect("solves");
    p.max_tail_loss = Some(0.5 * free.tail_loss);
    let a = solve(&p, &SolveOptions::default()).expect("solves");
    assert!(
        a.binding.iter().any(|b| b == "the tail-loss limit binds"),
        "{:?}",
        a.binding
    );
    assert!(a.risk_dual > 0.0);
    let capped = free
        .binding
        .iter()
        .any(|b| b.contains("cluster-1/tier-1 is capped at 50 %"));
    assert_eq!(
        capped,
        (free.allocation[0].fraction - 0.5).abs() < 1e-7,
        "{:?}",
        free.binding
    );
}

fn with_method(method: SolveMethod) -> SolveOptions {
    SolveOptions {
        method,
        ..Default::default()
    }
}

/// Solves `p` at `limit` with the full LP and with cutting planes; both must
/// answer, meet the limit, and agree on the optimum to 1e-7 relative (the
/// two are formulations of the same LP: Künzi-Bay & Mayer 2006, §3).
fn full_and_cuts_agree(p: &Problem, limit: f64, scale: f64, what: &str) {
    let mut q = p.clone();
    q.max_tail_loss = Some(limit);
    let full = solve(&q, &with_method(SolveMethod::Full))
        .unwrap_or_else(|e| panic!("{what}: full LP at limit {limit}: {e:?}"));
    let cuts = solve(&q, &with_method(SolveMethod::Cuts))
        .unwrap_or_else(|e| panic!("{what}: cuts at limit {limit}: {e:?}"));
    assert_eq!(cuts.method_used, "cuts", "{what}");
    for a in [&full, &cuts] {
        assert!(
            a.tail_loss <= limit + 1e-7 * scale,
            "{what}: {}",
            a.tail_loss
        );
    }
    assert!(
        (full.expected_net_return - cuts.expected_net_return).abs() <= 1e-7 * scale,
        "{what} limit {limit}: full {} cuts {}",
        full.expected_net_return,
        cuts.expected_net_return
    );
}

/// Regression: after the seeded streams changed, a direct solve at the last
/// frontier limit (the unconstrained optimum's tail loss) of this instance
/// failed with `CutsDidNotConverge { rounds: 0, .. }`. The last cutting-plane
/// round at that limit met the tolerance without adding its tail set's cut,
/// yet the tail set was recorded as seen; the next re-solve (a moved budget,
/// for the duals) met the same tail set with a real violation and took it for
/// a cut already in the master.
#[test]
fn cuts_never_stop_on_a_tail_set_whose_cut_was_never_added() {
    let p = tiered_instance(SyntheticSpec {
        clusters: 4,
        tiers: 3,
        scenarios: 300,
        seed: 4,
    });
    let pts = frontier(&p, 6, &with_method(SolveMethod::Full)).expect("frontier");
    let scale = pts[5].expected_net_return.expect("solved").abs().max(1.0);
    for pt in &pts {
        full_and_cuts_agree(&p, pt.max_tail_loss, scale, "seed 4");
    }
}

/// Seeds × limits from the smallest achievable tail loss to beyond the
/// unconstrained optimum's: the cutting-plane method never errors and agrees
/// with the full LP.
#[test]
fn cuts_and_full_lp_agree_over_seeds_and_tail_loss_limits() {
    for seed in [1u64, 2, 4, 7, 11] {
        let p = tiered_instance(SyntheticSpec {
            clusters: 4,
            tiers: 3,
            scenarios: 200,
            seed,
        });
        let full = with_method(SolveMethod::Full);
        let lo = min_tail_loss(&p, &full).expect("min");
        let free = solve(&p, &full).expect("free");
        let scale = free.expected_net_return.abs().max(1.0);
        for share in [0.05, 0.3, 0.6, 0.9, 1.0, 1.4] {
            let limit = lo + share * (free.tail_loss - lo);
            full_and_cuts_agree(&p, limit, scale, &format!("seed {seed} share {share}"));
        }
    }
}

/// When the cutting-plane method cannot converge (here: a round limit of one
/// cut), `auto` answers with the full LP and says so, and a forced
/// `--method cuts` fails with a message naming the cause and the way out.
#[test]
fn auto_falls_back_to_the_full_lp_when_cuts_cannot_converge() {
    let mut p = tiered_instance(SyntheticSpec {
        clusters: 4,
        tiers: 3,
        scenarios: 300,
        seed: 4,
    });
    assert!(p.scenarios * p.n() > furrow::allocate::AUTO_FULL_LIMIT);
    let lo = min_tail_loss(&p, &SolveOptions::default()).expect("min");
    let hi = solve(&p, &SolveOptions::default()).expect("free").tail_loss;
    p.max_tail_loss = Some(0.5 * (lo + hi));
    let reference = solve(&p, &with_method(SolveMethod::Full)).expect("full");
    let few = SolveOptions {
        max_cut_rounds: 1,
        ..Default::default()
    };
    let auto = solve(&p, &few).expect("auto falls back");
    assert_eq!(auto.method_used, "full");
    assert_eq!(auto.cuts_rounds, None);
    assert!(
        auto.explanation
            .iter()
            .any(|l| l.contains("cutting-plane method") && l.contains("full LP")),
        "{:?}",
        auto.explanation
    );
    let scale = reference.expected_net_return.abs().max(1.0);
    assert!((auto.expected_net_return - reference.expected_net_return).abs() <= 1e-7 * scale);
    let forced = SolveOptions {
        method: SolveMethod::Cuts,
        ..few
    };
    let e = solve(&p, &forced).expect_err("forced cuts cannot converge in one cut");
    assert!(
        matches!(e, AllocError::CutsDidNotConverge { rounds: 1, .. }),
        "{e:?}"
    );
    let msg = e.to_string();
    assert!(
        msg.contains("max_cut_rounds") && msg.contains("--method full"),
        "{msg}"
    );
}
