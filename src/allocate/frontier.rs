//! The efficient frontier: the best expected net return for each tail-loss
//! limit, from the smallest achievable tail loss to the tail loss of the
//! unconstrained optimum, at evenly spaced limits (Rockafellar & Uryasev 2000
//! trace it the same way, by varying the CVaR bound). One engine serves every
//! point, so the cuts found for one limit are reused for the next.

use super::cvar::cvar_of_losses;
use super::engine::{Engine, Failure};
use super::error::AllocError;
use super::problem::Problem;
use super::result::{items, Item};
use super::solve::{infeasible, polish, SolveOptions};
use serde::Serialize;

/// One point of the frontier.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FrontierPoint {
    /// The tail-loss limit of this point.
    pub max_tail_loss: f64,
    /// Best expected net return under that limit.
    pub expected_net_return: f64,
    /// CVaR of loss of the allocation, recomputed from the scenarios.
    pub tail_loss: f64,
    /// VaR of loss of the allocation.
    pub value_at_risk: f64,
    /// Spend.
    pub budget_used: f64,
    /// Fraction and spend per id.
    pub allocation: Vec<Item>,
}

/// `points` evenly spaced limits from the minimum achievable tail loss to the
/// unconstrained optimum's tail loss (one point when the two coincide). The
/// problem's own `max_tail_loss` is ignored.
pub fn frontier(
    p: &Problem,
    points: usize,
    opts: &SolveOptions,
) -> Result<Vec<FrontierPoint>, AllocError> {
    p.validate()?;
    opts.validate()?;
    if points < 2 {
        return Err(AllocError::invalid(
            "--points",
            format!("{points} is too few; ask for at least 2"),
        ));
    }
    let fail = |f: Failure| infeasible(f, p, opts);
    let whole = opts.whole_tiers;
    if whole && p.n() > opts.max_binary_vars {
        let top = Engine::new(p, opts, false)
            .max_return(p.budget, None)
            .map_err(fail)?;
        return Err(AllocError::WholeTiersTooLarge {
            variables: p.n(),
            max_binary_vars: opts.max_binary_vars,
            continuous_expected_return: top.objective,
        });
    }
    let mut engine = Engine::new(p, opts, whole);
    let lo = tail_loss(p, &engine.min_tail_loss(p.budget).map_err(fail)?.x);
    let top = engine.max_return(p.budget, None).map_err(fail)?;
    let hi = tail_loss(p, &top.x);
    let span = (hi - lo).max(0.0);
    if span <= 1e-9 * hi.abs().max(lo.abs()).max(1e-12) {
        return Ok(vec![point(p, &engine, &top.x, hi)]);
    }
    (0..points)
        .map(|k| {
            let limit = lo + span * k as f64 / (points - 1) as f64;
            solve_at(p, &mut engine, limit, span, whole).map_err(fail)
        })
        .collect()
}

fn solve_at(
    p: &Problem,
    engine: &mut Engine,
    limit: f64,
    span: f64,
    whole: bool,
) -> Result<FrontierPoint, Failure> {
    // At the very minimum the LP may be infeasible by rounding; nudge once.
    let result = match engine.max_return(p.budget, Some(limit)) {
        Err(Failure::Infeasible) => engine.max_return(p.budget, Some(limit + 1e-9 * span)),
        other => other,
    }?;
    let x = if whole {
        result.x
    } else {
        polish(p, &result.x, Some(limit), engine)
    };
    Ok(point(p, engine, &x, limit))
}

fn tail_loss(p: &Problem, x: &[f64]) -> f64 {
    cvar_of_losses(&p.losses(x), p.weights.as_deref(), p.tail_level).1
}

fn point(p: &Problem, engine: &Engine, x: &[f64], limit: f64) -> FrontierPoint {
    let (var, cvar) = cvar_of_losses(&p.losses(x), p.weights.as_deref(), p.tail_level);
    FrontierPoint {
        max_tail_loss: limit,
        expected_net_return: engine.expected(x),
        tail_loss: cvar,
        value_at_risk: var,
        budget_used: x.iter().zip(&p.costs).map(|(a, c)| a * c).sum(),
        allocation: items(p, x),
    }
}
