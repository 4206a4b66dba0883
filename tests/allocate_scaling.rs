//! The allocation at scale extremes (issue #24): money figures far from one
//! (net returns from keyword volumes of 1e8 and 1e12, costs of 1e12, costs
//! mixing 0.0001 and 1e12) solve with every method, all-zero futures under a
//! tail-loss limit of 0 fund nothing, and scaling all money by a factor
//! scales the money of the answer and keeps its fractions.
//!
//! Before the program was scaled these failed with "Singular matrix" or
//! "infeasible although they were validated" (or a bare solver message).

mod common;
mod report_support;

use common::{furrow, json, stderr};
use furrow::allocate::synthetic::{tiered_instance, SyntheticSpec};
use furrow::allocate::{solve, verify, Problem, SolveMethod, SolveOptions};
use proptest::prelude::*;
use serde_json::Value;
use std::path::Path;

const METHODS: [&str; 3] = ["auto", "full", "cuts"];

/// The demo with every keyword volume set to `volume`.
fn demo_with_volume(volume: &str) -> (tempfile::TempDir, std::path::PathBuf) {
    let (tmp, dir) = report_support::demo(false);
    let path = dir.join("keywords.csv");
    let text = std::fs::read_to_string(&path).expect("read keywords");
    let mut out = String::new();
    for (k, line) in text.lines().enumerate() {
        let mut cells: Vec<&str> = line.split(',').collect();
        if k > 0 {
            cells[2] = volume;
        } else {
            assert_eq!(cells[2], "volume", "the demo keyword list changed shape");
        }
        out += &cells.join(",");
        out.push('\n');
    }
    std::fs::write(&path, out).expect("write keywords");
    (tmp, dir)
}

/// The demo with each tier's cost replaced by `cost(k)` (k counts the
/// tiers from 0 in plan order) and the budget set to `budget`.
fn demo_with_costs(
    cost: impl Fn(usize) -> &'static str,
    budget: &str,
) -> (tempfile::TempDir, std::path::PathBuf) {
    let (tmp, dir) = report_support::demo(false);
    let path = dir.join("plan.toml");
    let text = std::fs::read_to_string(&path).expect("read the plan");
    let mut out = String::new();
    let mut k = 0;
    for line in text.lines() {
        let line = match (line.find("cost = "), line.find(", effort")) {
            (Some(a), Some(b)) => {
                let s = format!("{}cost = {}{}", &line[..a], cost(k), &line[b..]);
                k += 1;
                s
            }
            _ if line.starts_with("total = ") => format!("total = {budget}"),
            _ => line.to_string(),
        };
        out += &line;
        out.push('\n');
    }
    assert_eq!(k, 30, "the demo plan changed shape");
    std::fs::write(&path, out).expect("write the plan");
    (tmp, dir)
}

fn run_json(dir: &Path, args: &[&str]) -> Value {
    let mut all = args.to_vec();
    all.extend(["--scenarios", "300", "--format", "json"]);
    json(&furrow(dir, &all))
}

fn fractions(v: &Value) -> Vec<f64> {
    v["allocation"]
        .as_array()
        .expect("allocation")
        .iter()
        .map(|i| i["fraction"].as_f64().expect("fraction"))
        .collect()
}

fn f(v: &Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("{key} is a number in {v}"))
}

/// Spend within the budget, tail loss within the limit (relative to the
/// figures' own size).
fn assert_feasible(v: &Value, what: &str) {
    let (used, budget) = (f(v, "budget_used"), f(v, "budget"));
    assert!(
        used <= budget * (1.0 + 1e-9),
        "{what}: spend {used} > {budget}"
    );
    if let Some(limit) = v["max_tail_loss"].as_f64() {
        let t = f(v, "tail_loss");
        assert!(
            t <= limit + 1e-7 * limit.abs().max(t.abs()),
            "{what}: tail loss {t} > {limit}"
        );
    }
}

#[test]
fn keyword_volumes_of_1e8_trace_the_frontier_without_a_singular_matrix() {
    let (_t, dir) = demo_with_volume("100000000");
    let a = run_json(&dir, &["allocate", "plan.toml"]);
    assert_feasible(&a, "allocate");
    let fr = run_json(&dir, &["frontier", "plan.toml", "--points", "5"]);
    let pts = fr["points"].as_array().expect("points");
    assert!(!pts.is_empty());
    for p in pts {
        assert!(p.get("missing").is_none(), "a point failed: {p}");
        let (t, l) = (f(p, "tail_loss"), f(p, "max_tail_loss"));
        assert!(t <= l + 1e-7 * l.abs().max(1.0), "{t} > {l}");
    }
}

#[test]
fn keyword_volumes_of_1e12_allocate_instead_of_an_infeasible_validated_budget() {
    let (_t, big) = demo_with_volume("1000000000000");
    let (_u, small) = demo_with_volume("100000000");
    for m in METHODS {
        let a = run_json(&big, &["allocate", "plan.toml", "--method", m]);
        assert_feasible(&a, m);
        assert_eq!(a["status"], "optimal", "{m}");
        // With volumes this large every net return is the clicks' worth and
        // the costs are negligible either way: the budget decides, so both
        // volumes fund the same fractions.
        let b = run_json(&small, &["allocate", "plan.toml", "--method", m]);
        for (x, y) in fractions(&a).iter().zip(fractions(&b)) {
            assert!((x - y).abs() < 1e-4, "{m}: {x} vs {y}");
        }
    }
}

#[test]
fn costs_of_1e12_solve_with_every_method_and_fund_nothing() {
    let (_t, dir) = demo_with_costs(|_| "1e12", "24e12");
    for m in METHODS {
        let a = run_json(&dir, &["allocate", "plan.toml", "--method", m]);
        // Each tier costs far more than any click can earn: every expected
        // net return is negative, so nothing is worth funding.
        assert_eq!(a["status"], "nothing-funded", "{m}: {a}");
        assert_eq!(f(&a, "expected_net_return"), 0.0, "{m}");
        assert_eq!(f(&a, "budget_used"), 0.0, "{m}");
    }
}

#[test]
fn a_cost_mix_of_0_0001_and_1e12_solves_with_every_method() {
    // Tiers 1 and 3 of each cluster nearly free, tier 2 at 1e12.
    let (_t, dir) = demo_with_costs(|k| if k % 3 == 1 { "1e12" } else { "0.0001" }, "24e12");
    let mut answers = Vec::new();
    for m in METHODS {
        let a = run_json(&dir, &["allocate", "plan.toml", "--method", m]);
        assert_feasible(&a, m);
        let ids: Vec<String> = a["allocation"]
            .as_array()
            .expect("allocation")
            .iter()
            .map(|i| i["id"].as_str().unwrap_or_default().to_string())
            .collect();
        let x = fractions(&a);
        for (id, v) in ids.iter().zip(&x) {
            // A 1e12 tier loses money in every future; tier 3 requires it.
            if id.ends_with("/2") || id.ends_with("/3") {
                assert!(*v < 1e-9, "{m}: {id} funded {v}");
            }
        }
        assert!(f(&a, "expected_net_return") > 0.0, "{m}: a free tier pays");
        answers.push((f(&a, "expected_net_return"), x));
    }
    for (e, x) in &answers[1..] {
        let (e0, x0) = &answers[0];
        assert!((e - e0).abs() <= 1e-6 * e0.abs(), "{e} vs {e0}");
        for (a, b) in x.iter().zip(x0) {
            assert!((a - b).abs() < 1e-6, "{a} vs {b}");
        }
    }
}

#[test]
fn all_zero_futures_with_a_tail_loss_limit_of_0_fund_nothing() {
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let dir = tmp.path();
    // 3,000 futures × 3 ids is above the automatic full-LP limit, so `auto`
    // takes the cutting-plane path too.
    let mut returns = String::from("a,b,c\n");
    returns += &"0,0,0\n".repeat(3000);
    std::fs::write(dir.join("r.csv"), returns).expect("write returns");
    std::fs::write(dir.join("c.csv"), "id,cost\na,10\nb,20\nc,5\n").expect("write costs");
    for m in METHODS {
        let o = furrow(
            dir,
            &[
                "allocate",
                "--returns",
                "r.csv",
                "--costs",
                "c.csv",
                "--budget",
                "100",
                "--max-tail-loss",
                "0",
                "--method",
                m,
                "--format",
                "json",
            ],
        );
        assert!(o.status.success(), "{m}: {}", stderr(&o));
        let a: Value = serde_json::from_slice(&o.stdout).expect("JSON");
        assert_eq!(a["status"], "nothing-funded", "{m}");
        assert_eq!(f(&a, "expected_net_return"), 0.0, "{m}");
        assert_eq!(f(&a, "tail_loss"), 0.0, "{m}");
        assert!(fractions(&a).iter().all(|&x| x == 0.0), "{m}");
    }
}

/// A small tiered instance with a binding limit at 60 % of the unconstrained
/// optimum's tail loss and half the budget.
fn instance(seed: u64) -> Problem {
    let mut p = tiered_instance(SyntheticSpec {
        clusters: 3,
        tiers: 2,
        scenarios: 60,
        seed,
    });
    p.budget *= 0.5;
    let free = solve(&p, &SolveOptions::default()).expect("unconstrained solves");
    p.max_tail_loss = Some(0.6 * free.tail_loss.abs().max(1.0));
    p
}

/// Every money figure of `p` times `k` (returns rounded to f32 as stored).
fn times(p: &Problem, k: f64) -> Problem {
    let mut q = p.clone();
    q.returns = p
        .returns
        .iter()
        .map(|&r| (f64::from(r) * k) as f32)
        .collect();
    q.costs = p.costs.iter().map(|c| c * k).collect();
    q.budget = p.budget * k;
    q.max_tail_loss = p.max_tail_loss.map(|l| l * k);
    q
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 16, ..ProptestConfig::default() })]

    /// Money in another unit is the same decision: fractions equal (within
    /// the f32 rounding of the returns) and every money figure times k.
    #[test]
    fn scaling_all_money_by_k_keeps_fractions_and_scales_money(
        seed in 0u64..500,
        log_k in -4.0f64..8.0,
        method in prop_oneof![Just(SolveMethod::Full), Just(SolveMethod::Cuts)],
    ) {
        let k = 10f64.powf(log_k);
        let opts = SolveOptions { method, ..Default::default() };
        let p = instance(seed);
        let q = times(&p, k);
        let a = solve(&p, &opts).expect("solves");
        let b = solve(&q, &opts).expect("scaled solves");
        prop_assert!(verify(&q, &b, 1e-7).is_ok());
        let scale = a.expected_net_return.abs().max(a.tail_loss.abs()).max(1.0);
        let close = |u: f64, v: f64| (u * k - v).abs() <= 1e-5 * scale * k;
        prop_assert!(close(a.expected_net_return, b.expected_net_return),
            "expected {} × {k} vs {}", a.expected_net_return, b.expected_net_return);
        prop_assert!(close(a.tail_loss, b.tail_loss), "tail {} × {k} vs {}", a.tail_loss, b.tail_loss);
        prop_assert!((a.budget_used * k - b.budget_used).abs() <= 1e-5 * p.budget * k);
        for (x, y) in a.allocation.iter().zip(&b.allocation) {
            prop_assert!((x.fraction - y.fraction).abs() <= 1e-4, "{}: {} vs {}", x.id, x.fraction, y.fraction);
            prop_assert!((x.spend * k - y.spend).abs() <= 1e-4 * p.budget * k);
        }
        // The duals are money per money: the same in any unit.
        prop_assert!((a.risk_dual - b.risk_dual).abs() <= 1e-4 * a.risk_dual.abs().max(1.0),
            "risk dual {} vs {}", a.risk_dual, b.risk_dual);
    }
}

/// Regression: with net returns and costs of about 1e15 the old program
/// answered "nothing funded" (expected net return 0) without any error, and
/// with about 1e-9 it failed with "Singular matrix". In any unit the answer
/// is the same decision.
#[test]
fn money_of_1e15_and_1e_9_gives_the_same_decision_as_money_of_1() {
    for seed in [2u64, 5] {
        let p = instance(seed);
        let a = solve(&p, &SolveOptions::default()).expect("solves");
        assert!(a.expected_net_return > 0.0);
        for k in [1e15, 1e-9] {
            for method in [SolveMethod::Full, SolveMethod::Cuts] {
                let opts = SolveOptions {
                    method,
                    ..Default::default()
                };
                let q = times(&p, k);
                let b = solve(&q, &opts).unwrap_or_else(|e| panic!("k {k}: {e}"));
                let rel = (b.expected_net_return / k - a.expected_net_return).abs()
                    / a.expected_net_return.abs();
                assert!(
                    rel < 1e-5,
                    "k {k} {method:?}: {} vs {}",
                    b.expected_net_return,
                    a.expected_net_return
                );
                for (x, y) in a.allocation.iter().zip(&b.allocation) {
                    assert!(
                        (x.fraction - y.fraction).abs() < 1e-4,
                        "k {k}: {} {} vs {}",
                        x.id,
                        x.fraction,
                        y.fraction
                    );
                }
            }
        }
    }
}

/// Ids whose money differs by 18 orders of magnitude (1e-6 to 1e12 per
/// id, costs alike) under a binding limit: solved (the old program failed
/// with "Singular matrix" by every method) and verified against the
/// scenarios. The full LP and the cutting planes agree to what double
/// precision can tell apart at the size of the largest id's money: the
/// smallest ids are below it, so their funding is not determined.
#[test]
fn ids_whose_money_spans_18_orders_of_magnitude_solve_by_every_method() {
    let p0 = instance(7);
    let n = p0.n();
    let size = |i: usize| 10f64.powi(-6 + (18 * i / (n - 1)) as i32);
    let mut p = p0.clone();
    for (k, r) in p.returns.iter_mut().enumerate() {
        *r = (f64::from(*r) * size(k % n)) as f32;
    }
    for (i, c) in p.costs.iter_mut().enumerate() {
        *c *= size(i);
    }
    p.budget = 0.5 * p.costs.iter().sum::<f64>();
    let free = solve(&p, &SolveOptions::default()).expect("unconstrained");
    p.max_tail_loss = Some(0.5 * free.tail_loss.abs());
    let mut answers = Vec::new();
    for method in [SolveMethod::Full, SolveMethod::Cuts] {
        let opts = SolveOptions {
            method,
            ..Default::default()
        };
        let a = solve(&p, &opts).unwrap_or_else(|e| panic!("{method:?}: {e}"));
        assert!(verify(&p, &a, 1e-7).is_ok());
        answers.push(a.expected_net_return);
    }
    let largest = p.mean_returns().iter().fold(0.0f64, |m, v| m.max(v.abs()));
    assert!(
        (answers[0] - answers[1]).abs() <= 1e-12 * largest,
        "{answers:?} at a scale of {largest}"
    );
}
