//! An independent re-check of an allocation against the problem: bounds, tier
//! order, budget, and the CVaR recomputed from the sorted scenario losses
//! (by its own definition, not the solver's formula),
//! which must match the reported value and respect the limit. Run after every
//! solve; any violation is an error, never a silent answer.

use super::cvar::cvar_of_losses;
use super::error::AllocError;
use super::problem::Problem;
use super::result::Allocation;

/// Checks `a` against `p` with relative tolerance `tol`.
pub fn verify(p: &Problem, a: &Allocation, tol: f64) -> Result<(), AllocError> {
    p.validate()?;
    let x = fractions(p, a)?;
    check_bounds(p, &x, tol, a.whole_tiers_gap.is_some())?;
    check_order(p, &x, tol)?;
    check_budget(p, &x, a, tol)?;
    check_risk(p, &x, a, tol)
}

fn fail(what: String) -> AllocError {
    AllocError::Verification { what }
}

fn fractions(p: &Problem, a: &Allocation) -> Result<Vec<f64>, AllocError> {
    if a.allocation.len() != p.n() || a.allocation.iter().zip(&p.ids).any(|(it, id)| &it.id != id) {
        return Err(fail(
            "the allocation does not list the problem's ids in order".into(),
        ));
    }
    let x: Vec<f64> = a.allocation.iter().map(|it| it.fraction).collect();
    match x.iter().position(|v| !v.is_finite()) {
        Some(i) => Err(fail(format!("the fraction of {} is not finite", p.ids[i]))),
        None => Ok(x),
    }
}

fn check_bounds(p: &Problem, x: &[f64], tol: f64, whole: bool) -> Result<(), AllocError> {
    for (i, id) in p.ids.iter().enumerate() {
        let (lo, hi) = (p.min_fraction[i], p.max_fraction[i]);
        if x[i] < lo - tol || x[i] > hi + tol {
            return Err(fail(format!(
                "{id} is funded {} outside its bounds [{lo}, {hi}]",
                x[i]
            )));
        }
        if whole && x[i].abs() > tol && (x[i] - hi).abs() > tol {
            return Err(fail(format!(
                "{id} is funded {} with whole tiers only",
                x[i]
            )));
        }
    }
    Ok(())
}

fn check_order(p: &Problem, x: &[f64], tol: f64) -> Result<(), AllocError> {
    for (i, req) in p.requires.iter().enumerate() {
        if let Some(j) = *req {
            if x[i] > x[j] + tol {
                return Err(fail(format!(
                    "{} is funded {} above the tier below it, {} at {}",
                    p.ids[i], x[i], p.ids[j], x[j]
                )));
            }
        }
    }
    Ok(())
}

fn check_budget(p: &Problem, x: &[f64], a: &Allocation, tol: f64) -> Result<(), AllocError> {
    let used: f64 = x.iter().zip(&p.costs).map(|(v, c)| v * c).sum();
    let scale = p.budget.max(used).max(1e-12);
    if used > p.budget + tol * scale {
        return Err(fail(format!(
            "the spend {used} exceeds the budget {}",
            p.budget
        )));
    }
    if (used - a.budget_used).abs() > tol * scale {
        return Err(fail(format!(
            "the reported spend {} differs from the recomputed {used}",
            a.budget_used
        )));
    }
    let spend_ok = a
        .allocation
        .iter()
        .zip(&p.costs)
        .all(|(it, c)| (it.spend - it.fraction * c).abs() <= tol * scale);
    if !spend_ok {
        return Err(fail(
            "an item's spend is not its fraction times its cost".into(),
        ));
    }
    Ok(())
}

/// CVaR straight from its definition on the sorted losses: the average
/// loss over the worst `1 − level` share of the probability mass, the
/// future at the boundary counted in part (Acerbi & Tasche, "On the
/// coherence of expected shortfall", J. Banking & Finance 26, 2002, eq. 3.3;
/// equal to Rockafellar & Uryasev's minimisation formula for scenario
/// models). Written apart from [`cvar_of_losses`], which the solver's
/// report uses, so the two check each other.
fn tail_average(losses: &[f64], w: Option<&[f64]>, level: f64) -> f64 {
    let weight = |i: usize| w.map_or(1.0, |w| w[i]);
    let total: f64 = (0..losses.len()).map(weight).sum();
    let mass = (1.0 - level) * total;
    let mut worst_first: Vec<usize> = (0..losses.len()).collect();
    worst_first.sort_by(|&a, &b| losses[b].total_cmp(&losses[a]));
    let (mut left, mut sum) = (mass, 0.0);
    for i in worst_first {
        if left <= 0.0 {
            break;
        }
        let take = weight(i).min(left);
        sum += take * losses[i];
        left -= take;
    }
    sum / mass
}

fn check_risk(p: &Problem, x: &[f64], a: &Allocation, tol: f64) -> Result<(), AllocError> {
    let losses = p.losses(x);
    let (var, _) = cvar_of_losses(&losses, p.weights.as_deref(), p.tail_level);
    let cvar = tail_average(&losses, p.weights.as_deref(), p.tail_level);
    let mean_abs: f64 = losses
        .iter()
        .enumerate()
        .map(|(s, l)| p.weight(s) * l.abs())
        .sum();
    let scale = mean_abs
        .max(cvar.abs())
        .max(p.max_tail_loss.map_or(0.0, f64::abs))
        .max(1e-12);
    if (cvar - a.tail_loss).abs() > tol * scale || (var - a.value_at_risk).abs() > tol * scale {
        return Err(fail(format!(
            "the reported tail loss {} / VaR {} differ from the recomputed {cvar} / {var}",
            a.tail_loss, a.value_at_risk
        )));
    }
    if let Some(limit) = p.max_tail_loss {
        if cvar > limit + tol * scale {
            return Err(fail(format!(
                "the tail loss {cvar} exceeds the limit {limit}"
            )));
        }
    }
    let means = p.mean_returns();
    let expected: f64 = x.iter().zip(&means).map(|(v, m)| v * m).sum();
    let escale = expected.abs().max(mean_abs).max(1e-12);
    if (expected - a.expected_net_return).abs() > tol * escale {
        return Err(fail(format!(
            "the reported expected net return {} differs from the recomputed {expected}",
            a.expected_net_return
        )));
    }
    Ok(())
}

#[cfg(test)]
mod tail_tests {
    use super::*;

    /// Ten equally likely losses 1..10 at level 0.85: the worst 1.5
    /// futures are 10 and half of 9, so CVaR = (10 + 4.5) / 1.5 (worked by
    /// hand from the definition).
    #[test]
    fn tail_average_by_hand() {
        let losses: Vec<f64> = (1..=10).map(f64::from).collect();
        let v = tail_average(&losses, None, 0.85);
        assert!((v - 14.5 / 1.5).abs() < 1e-12, "{v}");
        // Weights: the same as listing each loss as often as its weight.
        let w = [2.0, 1.0, 1.0];
        let a = tail_average(&[5.0, 1.0, 3.0], Some(&w), 0.5);
        let b = tail_average(&[5.0, 5.0, 1.0, 3.0], None, 0.5);
        assert!((a - b).abs() < 1e-12 && (a - 5.0).abs() < 1e-12, "{a} {b}");
    }

    /// Agrees with the solver's formula on scattered weighted samples.
    #[test]
    fn tail_average_agrees_with_the_solver_formula() {
        use rand::RngExt;
        let mut rng = crate::rng::stream(5, 77, 0);
        for _ in 0..200 {
            let n = rng.random_range(1..60);
            let l: Vec<f64> = (0..n)
                .map(|_| rng.random::<f64>() * 200.0 - 100.0)
                .collect();
            let w: Vec<f64> = (0..n).map(|_| rng.random::<f64>() + 0.01).collect();
            let level = rng.random::<f64>() * 0.98 + 0.01;
            for weights in [None, Some(w.as_slice())] {
                let a = tail_average(&l, weights, level);
                let b = cvar_of_losses(&l, weights, level).1;
                assert!((a - b).abs() <= 1e-9 * (1.0 + b.abs()), "{a} {b} {level}");
            }
        }
    }
}
