//! What one more unit of budget, or of tolerated tail loss, is worth.
//!
//! microlp reports no duals, so they are measured by re-solving with the
//! budget (or the limit) moved by a small relative step `h` on both sides:
//! `(V(b + h) - V(b)) / h` is the worth of one more unit and
//! `(V(b) - V(b - h)) / h` the cost of one unit less. For a linear program the
//! value function is piecewise linear and concave, so both are exact slopes
//! unless `b` sits on a kink, where they bracket every valid dual (the shadow
//! price a simplex solver would report is one point of that interval). A row
//! with slack has dual zero (complementary slackness) and is not re-solved.

use super::cuts::risk_scale;
use super::engine::{Engine, Failure, Point};
use super::problem::Problem;
use super::result::Duals;

/// How the duals were obtained, for the report.
pub(crate) const METHOD: &str = "finite-difference re-solve (relative step, both sides)";

/// Share of a row's size within which it counts as binding.
const BINDING: f64 = 1e-7;

/// Both-sided finite-difference duals at `base` (the optimum for the
/// problem's own budget and limit).
pub(crate) fn estimate(
    engine: &mut Engine,
    p: &Problem,
    base: &Point,
    step: f64,
) -> Result<Duals, Failure> {
    let (budget, budget_below) = budget_dual(engine, p, base, step)?;
    let (risk, risk_below) = risk_dual(engine, p, base, step)?;
    Ok(Duals {
        budget,
        budget_below,
        risk,
        risk_below,
    })
}

fn budget_dual(
    engine: &mut Engine,
    p: &Problem,
    base: &Point,
    step: f64,
) -> Result<(f64, Option<f64>), Failure> {
    let used: f64 = base.x.iter().zip(&p.costs).map(|(a, c)| a * c).sum();
    if p.budget > 0.0 && used < p.budget * (1.0 - BINDING) {
        return Ok((0.0, Some(0.0)));
    }
    let h = step
        * if p.budget > 0.0 {
            p.budget
        } else {
            p.total_cost()
        };
    if h <= 0.0 {
        return Ok((0.0, None));
    }
    let up = slope(engine.max_return(p.budget + h, p.max_tail_loss), base, h)?;
    let floor: f64 = p
        .effective_minimums()
        .iter()
        .zip(&p.costs)
        .map(|(m, c)| m * c)
        .sum();
    if p.budget - h < floor {
        return Ok((up.unwrap_or(0.0), None));
    }
    let down = slope(engine.max_return(p.budget - h, p.max_tail_loss), base, -h)?;
    Ok((up.unwrap_or(0.0), down))
}

fn risk_dual(
    engine: &mut Engine,
    p: &Problem,
    base: &Point,
    step: f64,
) -> Result<(f64, Option<f64>), Failure> {
    let Some(limit) = p.max_tail_loss else {
        return Ok((0.0, None));
    };
    let losses = p.losses(&base.x);
    let (_, cvar) = super::cvar::cvar_of_losses(&losses, p.weights.as_deref(), p.tail_level);
    let scale = risk_scale(p, &losses, Some(limit));
    if cvar < limit - BINDING * scale {
        return Ok((0.0, Some(0.0)));
    }
    let h = step * scale;
    let up = slope(engine.max_return(p.budget, Some(limit + h)), base, h)?;
    let down = slope(engine.max_return(p.budget, Some(limit - h)), base, -h)?;
    Ok((up.unwrap_or(0.0), down))
}

/// `(V(moved) - V(base)) / h` for `h > 0`, `(V(base) - V(moved)) / |h|` for
/// `h < 0`; `None` when the moved problem is infeasible. Slopes are clamped
/// at zero: more budget or a looser limit never lowers the optimum.
fn slope(moved: Result<Point, Failure>, base: &Point, h: f64) -> Result<Option<f64>, Failure> {
    match moved {
        Ok(m) => Ok(Some(((m.objective - base.objective) / h).max(0.0))),
        Err(Failure::Infeasible) => Ok(None),
        Err(e) => Err(e),
    }
}
